"""Markdown summary for a pull-request comment.

A verdict line, a table of files with counts by severity, the findings as a
compact list, and the figures that matter per axis. No HTML. Every piece of
text that comes from a spec, a file name or a message goes through
:func:`escape`, which backslash-escapes the characters that could start a link,
an image, an HTML tag, a table cell, code or emphasis, and breaks the bare-URL
and e-mail autolinks; every line starts with text of our own (``|``, ``-``,
``**``, ``>``, ``#``), never with spec-derived text. A pure function of the report.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import math
import re

from ..findings import SEVERITY_ORDER
from .safe import escape_controls
from .text import related_label

CAUTION = (
    "specguard is a design aid, not a safety assessment. Drive electronics work with high "
    "voltages, large currents and stored energy that can injure or kill. Follow the applicable "
    "standards, local codes and licensed engineering practice, and verify every design by measurement."
)

# CommonMark allows a backslash before any ASCII punctuation; these are the ones
# that can open inline markup anywhere in a line: links, images, HTML, code,
# emphasis, table cells, entities, strike-through, math ($), and the autolinks
# ("@" in e-mail addresses; "://" and "www." are broken below).
# Characters that matter only at the start of a line (# + - = . digits) need no
# escape: a line never starts with spec-derived text.
SPECIAL = frozenset("\\`*_{}[]()<>!|&~@$")
_ESCAPE = {c: "\\" + c for c in SPECIAL}
_SPACE = re.compile(r"\s+")
_WWW = re.compile(r"(www)\.", re.IGNORECASE)
_SCHEME = re.compile(r":(?=/)")


def escape(value: object) -> str:
    """Spec-derived text for inline Markdown: one line, every special character escaped.

    Control and bidi characters become visible ``\\uXXXX`` escapes first (their
    backslash is then escaped too), whitespace runs become one space.
    """
    text = escape_controls(str(value))
    text = _SPACE.sub(" ", text).strip()
    text = "".join(_ESCAPE.get(c, c) for c in text)
    text = _SCHEME.sub(r"\\:", text)
    return _WWW.sub(r"\1\\.", text)


def _num(v: float | None, fmt: str) -> str:
    if v is None or isinstance(v, bool):
        return "\u2013"
    v = float(v)
    if not math.isfinite(v):
        return "unbounded"
    return fmt.format(v)


def _ratio(v) -> str:
    return _num(None if v is None else v * 100.0, "{:.3g} %")


def _suppressed(f) -> bool:
    return f.waived is not None or bool(getattr(f, "baselined", False))


def _counts(result) -> dict[str, int]:
    counts = {"error": 0, "warning": 0, "info": 0, "waived": 0}
    for f in result.findings:
        if _suppressed(f):
            counts["waived"] += 1
        else:
            counts[f.severity] += 1
    return counts


def _verdict(result, fail_level: str) -> str:
    if result.input_error is not None:
        return "could not be read"
    threshold = SEVERITY_ORDER[fail_level]
    n = sum(1 for f in result.findings if not _suppressed(f) and SEVERITY_ORDER[f.severity] >= threshold)
    if n and result.spec is None:
        return "could not be read"
    return "fails" if n else "passes"


def _figure_values(fs, name: str) -> list[float]:
    out = []
    for _, vals in fs.points:
        v = vals.get(name)
        if v is not None and not isinstance(v, bool) and math.isfinite(float(v)):
            out.append(float(v))
    return out


def render(report: Report) -> str:
    counts = report.counts()
    status = report.exit_status()
    word = {0: "PASS", 1: "FAIL", 2: "INCOMPLETE", 3: "INTERNAL ERROR"}.get(status, "FAIL")
    files = len(report.files)
    lines = [
        f"### specguard: {word} \u2013 {counts['error']} error(s), {counts['warning']} warning(s), "
        f"{counts['info']} info in {files} file(s) (fail level {report.fail_level})",
        "",
        f"> {CAUTION}",
        "",
        "| file | verdict | errors | warnings | info | waived |",
        "|---|---|---:|---:|---:|---:|",
    ]
    for r in report.files:
        c = _counts(r)
        lines.append(
            f"| {escape(r.file)} | {_verdict(r, report.fail_level_of(r))} | {c['error']} | {c['warning']} | "
            f"{c['info']} | {c['waived']} |"
        )
    unread = [r for r in report.files if r.input_error is not None]
    findings = report.findings
    if findings or unread:
        lines += ["", "**Findings**", ""]
    for r in unread:
        lines.append(f"- **error** {escape(r.file)}: cannot read input: {escape(r.input_error)} (input-unreadable)")
    for f in findings:
        loc = f.location
        where = f"{escape(loc.file)}:{loc.line}:{loc.column}"
        point = f" at {escape(f.operating_point)}" if f.operating_point else ""
        mark = ""
        if f.waived is not None:
            mark = f" (waived: {escape(f.waived)})"
        elif getattr(f, "baselined", False):
            mark = " (baselined)"
        lines.append(f"- **{f.severity}** {where}{point}: {escape(f.message)} ({escape(f.rule)}){mark}")
        for rel in f.related:
            lines.append(f"  - related: {escape(related_label(rel))} ({escape(rel.file)}:{rel.line}:{rel.column})")
        for remedy in f.remedies:
            lines.append(f"  - fix: {escape(remedy)}")
    axes = [r for r in report.files if getattr(r, "figures", None) is not None]
    if axes:
        lines += [
            "",
            "**Figures that matter**",
            "",
            "| axis | worst ripple / rated current | highest duty | smallest winding margin |",
            "|---|---:|---:|---:|",
        ]
        for r in axes:
            fs = r.figures
            assert fs is not None  # picked above for having figures
            name = getattr(getattr(r.spec, "axis", None), "name", None) or r.file
            ripple = fs.axis.get("ripple_ratio_worst")
            duties = _figure_values(fs, "duty")
            margins = _figure_values(fs, "winding_margin")
            lines.append(
                f"| {escape(name)} | {_ratio(ripple)} | {_ratio(max(duties) if duties else None)} | "
                f"{_num(min(margins) if margins else None, '{:.3g} K')} |"
            )
    lines += ["", "Written by specguard; the HTML report has the plots and every figure."]
    return "\n".join(lines) + "\n"
