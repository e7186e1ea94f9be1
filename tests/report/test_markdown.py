"""Markdown summary: the escape rules (property test) and the shape of the comment."""

from __future__ import annotations

import dataclasses
import re

from hypothesis import example, given, settings
from hypothesis import strategies as st

from specguard.findings import Finding, Location
from specguard.pipeline import Report
from specguard.report import markdown
from specguard.report.markdown import SPECIAL, escape

from .figset import demo_report
from .payloads import PAYLOADS


def unescaped_specials(text: str) -> list[str]:
    """Special characters in ``text`` not preceded by an escaping backslash."""
    found, i = [], 0
    while i < len(text):
        c = text[i]
        if c == "\\":
            assert i + 1 < len(text), "a trailing lone backslash"
            i += 2
            continue
        if c in SPECIAL:
            found.append(c)
        i += 1
    return found


def _without_escapes(text: str) -> str:
    return re.sub(r"\\.", "", text)


@settings(max_examples=500, derandomize=True, deadline=None)
@given(st.text())
@example("[x](javascript:alert(1))")
@example("![i](https://evil.example/p.png)")
@example("<img src=x onerror=alert(1)>")
@example("https://evil.example www.evil.example a@b.example")
@example("\\[not a link\\](x)")
def test_escape_leaves_no_markup(text):
    out = escape(text)
    assert "\n" not in out and "\r" not in out
    assert unescaped_specials(out) == []
    bare = _without_escapes(out)
    assert "](" not in bare and "![" not in bare and "<" not in bare and "`" not in bare
    assert "://" not in bare and not re.search(r"(?i)www\.", bare)


def _report_with(text: str) -> Report:
    loc = Location(f"{text}.axis.yaml", 2, 3)
    f = Finding(
        rule=text, severity="error", message=text, location=loc, operating_point=text, remedies=(text,), waived=None
    )
    w = Finding(rule="x", severity="warning", message=text, location=loc, waived=text)
    base = demo_report()
    first = next(r for r in base.files if getattr(r, "figures", None) is not None)
    spec = first.spec.model_copy(update={"axis": first.spec.axis.model_copy(update={"name": text})})
    result = dataclasses.replace(first, file=loc.file, findings=(f, w), spec=spec)
    return Report((result,))


OUR_LINE_STARTS = (
    "### ",
    "> ",
    "| ",
    "|---",
    "**",
    "- **",
    "  - fix: ",
    "  - **",
    "  - consequence: ",
    "    - fix: ",
    "    - consequence: ",
    "      - fix: ",
    "- consequence: ",
    "Written by specguard",
)


@settings(max_examples=100, derandomize=True, deadline=None)
@given(st.sampled_from(PAYLOADS) | st.text(min_size=1))
def test_every_line_starts_with_our_text(text):
    out = markdown.render(_report_with(text))
    assert "<" not in _without_escapes(out).replace("\u2013", "")
    for line in out.split("\n"):
        assert line == "" or line.startswith(OUR_LINE_STARTS), line
        assert not line.startswith("::")


def test_summary_shape_on_demo():
    out = markdown.render(demo_report())
    lines = out.split("\n")
    assert lines[0].startswith("### specguard: ")
    assert lines[4].startswith("| axis | verdict | errors | warnings | info | waived | worst ripple")
    assert any(line.startswith("| examples/robot/axes/sample\\-lift") or "sample-lift" in line for line in lines)
    assert "- **axis sample-lift (examples/robot/axes/sample-lift.axis.yaml)**" in lines
    assert "- **\u21b3 " in out and "(consequence of " in out  # consequences stand under their cause
    assert "left out" not in out  # the demo fits
    assert "specguard is a design aid, not a safety assessment." in out
    assert "<" not in out.replace("\u2013", "")


def test_huge_report_stays_under_the_limit_and_says_what_it_left_out():
    base = demo_report()
    failing = next(r for r in base.files if r.file.endswith("pipette-x.axis.yaml"))
    copies = tuple(dataclasses.replace(failing, file=f"axes/copy-{k:03d}.axis.yaml") for k in range(300))
    report = Report(copies, fail_level=base.fail_level)
    out = markdown.render(report, full_report="review.html")
    assert len(out) <= markdown.LIMIT < 65_536
    total = 300 * len(failing.findings)
    last = [line for line in out.split("\n") if "findings left out" in line]
    assert len(last) == 1, last
    left = int(last[0].removeprefix("> ").strip("*").split(" of ")[0])
    assert 0 < left < total and f" of {total} findings left out" in last[0]
    assert "review.html" in last[0]
    assert out.count("| fails |") >= 1
