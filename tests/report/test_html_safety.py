"""The HTML report keeps markup from specs and file names inert (docs/reliability.md §7.1, G14, G16).

Every spec-derived field is filled with a markup payload (the built model is
copied with the payloads put in without validation, so the reporter meets
values the schema would have refused too), the report is parsed with
html.parser and walked: no active element, no event attribute, no
script-capable or external URL, the CSP meta present, no raw control or bidi
character. A second report comes through the real pipeline from files whose
names and texts carry payloads.
"""

from __future__ import annotations

import dataclasses
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from specguard.figures import FigureSet
from specguard.findings import Finding, Location
from specguard.model.spec import Waiver
from specguard.pipeline import Report, check_paths
from specguard.report import html as html_report

from .figset import REPO, make_figures
from .payloads import PAYLOADS

assert len(PAYLOADS) >= 20

DANGEROUS_TAGS = {
    "script",
    "iframe",
    "object",
    "embed",
    "link",
    "base",
    "form",
    "img",
    "image",
    "foreignobject",
    "frame",
    "frameset",
    "applet",
    "audio",
    "video",
    "source",
    "input",
    "button",
    "textarea",
    "math",
    "template",
    "portal",
}
URL_ATTRS = {"href", "src", "xlink:href", "action", "formaction", "data", "poster", "background", "srcset"}
_RAW_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029]")


class Walker(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, list[tuple[str, str | None]]]] = []
        self.styles: list[str] = []
        self._in_style = False

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, attrs))
        self._in_style = tag == "style"

    def handle_startendtag(self, tag, attrs):
        self.tags.append((tag, attrs))

    def handle_endtag(self, tag):
        if tag == "style":
            self._in_style = False

    def handle_data(self, data):
        if self._in_style:
            self.styles.append(data)


def walk(document: str) -> Walker:
    w = Walker()
    w.feed(document)
    w.close()
    return w


def assert_inert(document: str) -> Walker:
    w = walk(document)
    names = [t for t, _ in w.tags]
    assert not DANGEROUS_TAGS & set(names), sorted(DANGEROUS_TAGS & set(names))
    svg_count = names.count("svg")
    for tag, attrs in w.tags:
        for key, value in attrs:
            assert not key.startswith("on"), (tag, key, value)
            assert key != "style" or "url(" not in (value or ""), (tag, value)
            if key in URL_ATTRS:
                v = re.sub(r"[\x00-\x20]", "", value or "").lower()
                assert not v.startswith(("javascript:", "data:", "vbscript:")), (tag, key, value)
                if not v.startswith("#"):
                    # The only outside URL allowed: a https datasheet link, marked rel.
                    assert tag == "a" and key == "href" and v.startswith("https://"), (tag, key, value)
                    assert dict(attrs).get("rel") == "noopener noreferrer", attrs
                    assert html_report.safe_url(value) == value
        if tag == "meta":
            d = dict(attrs)
            assert d.get("http-equiv") in (None, "Content-Security-Policy"), attrs
    csp = [dict(a) for t, a in w.tags if t == "meta" and dict(a).get("http-equiv") == "Content-Security-Policy"]
    assert csp == [
        {
            "http-equiv": "Content-Security-Policy",
            "content": "default-src 'none'; style-src 'unsafe-inline'; img-src data:",
        }
    ]
    # Our stylesheet plus matplotlib's one-line style in each inline SVG; nothing fetched.
    assert names.count("style") == 1 + svg_count
    for css in w.styles:
        assert "url(" not in css and "@import" not in css and "evil" not in css
    assert "<foreignObject" not in document and "<foreignobject" not in document.lower()
    assert not _RAW_UNSAFE.search(document)
    assert "<script" not in document.lower()
    return w


def _inject(spec, p: str, i: int):
    axis = spec.axis.model_copy(update={"name": p, "description": p, "tags": (p, f"tag{i}")})
    datasheet = p if i % 2 else f"https://example.org/sheet?q={p}"
    motor = spec.motor.model_copy(update={"datasheet": datasheet})
    points = tuple(op.model_copy(update={"name": f"{p}{k}"}) for k, op in enumerate(spec.operating_points))
    waiver = Waiver.model_construct(rule=p, at=p, path=p, reason=p, approved_by=p, expires=p)
    return spec.model_copy(
        update={"axis": axis, "motor": motor, "operating_points": points, "notes": p, "waivers": (waiver,)}
    )


def _injected_figures(spec, p: str, full: bool) -> FigureSet:
    clean = make_figures(spec)
    points = []
    for k, (_name, vals) in enumerate(clean.points):
        vals = dict(vals) if full else {"ripple_pp": vals["ripple_pp"], "operating_current": vals["operating_current"]}
        vals[p] = 1.0  # an unknown figure name
        points.append((f"{p}{k}", vals))
    axis = dict(clean.axis) if full else {"motor_rated_current": clean.axis["motor_rated_current"]}
    return FigureSet(axis=axis, points=tuple(points), missing={p: p, "supply_min": p}, notes={"loop_inductance": p})


def _finding(p: str, file: str, severity: str, waived: str | None) -> Finding:
    loc = Location(file, 3, 5, path=("motor", p, 2))
    return Finding(
        rule=p,
        severity=severity,
        message=p,
        location=loc,
        related=(Location(p, 1, 1),),
        operating_point=p,
        figures=((p, 1.5, p), ("ripple_ratio", 0.42, "1")),
        remedies=(p, f"add {p}"),
        help=p,
        waived=waived,
        meta=((p, p),),
    )


def injected_report() -> Report:
    base = check_paths([str(REPO / "examples/robot/axes/sample-lift.axis.yaml")], root=REPO).files[0]
    files = []
    for i, p in enumerate(PAYLOADS):
        name = f"axes/{p}.axis.yaml"
        spec = _inject(base.spec, p, i)
        if i % 12:
            spec = spec.model_copy(update={"profile": None})  # keeps the test fast: fewer plots
        findings = (_finding(p, name, "error", None), _finding(p, name, "warning", p))
        files.append(
            dataclasses.replace(
                base,
                file=name,
                spec=spec,
                findings=findings,
                figures=_injected_figures(base.spec, p, full=i % 12 == 0),
                input_error=p if i % 9 == 4 else None,
            )
        )
    return Report(tuple(files), fail_level="warning")


@pytest.fixture(scope="module")
def injected_html() -> str:
    return html_report.render(injected_report())


def test_injected_report_is_inert(injected_html):
    w = assert_inert(injected_html)
    assert sum(1 for t, _ in w.tags if t == "svg") >= 4  # the plots were drawn for some axes
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in injected_html
    assert "\\u202egnp.exe" in injected_html  # bidi override shown as a visible escape
    assert "\\ud800lone surrogate" in injected_html
    injected_html.encode("utf-8")  # no lone surrogate reached the text


def test_every_payload_reaches_the_report_escaped(injected_html):
    import html

    from specguard.report.safe import escape_controls

    for p in PAYLOADS:
        assert html.escape(escape_controls(p), quote=True) in injected_html, p


def test_datasheet_links_only_for_https(injected_html):
    w = walk(injected_html)
    links = [dict(a) for t, a in w.tags if t == "a" and not dict(a).get("href", "#").startswith("#")]
    assert links, "the https datasheets should be links"
    for attrs in links:
        assert attrs["href"].startswith("https://example.org/sheet?q=")
        assert attrs["rel"] == "noopener noreferrer"
    for bad in (
        "javascript:alert(1)",
        "data:text/html;base64,PHNj",
        "vbscript:msgbox(1)",
        "//evil.example/x",
        "https:evil.example",
        "https://evil.example/\\@good.example",
        " https://example.org/",
    ):
        assert html_report.safe_url(bad) is None, bad
    assert html_report.safe_url("https://example.org/a?b=c") == "https://example.org/a?b=c"


def _yaml_spec(p: str) -> str:
    text = (REPO / "examples/robot/axes/sample-lift.axis.yaml").read_text(encoding="utf-8")
    text = text.replace("  description: Vertical lift of the tube gripper", f"  description: {json.dumps(p)}")
    text = text.replace("../library/", "library/")
    text = text[: text.index("profile:")]  # no profile plot: keeps the many-file test fast
    return text + f"notes: {json.dumps(p)}\n"


def test_real_files_with_markup_names_and_texts(tmp_path: Path):
    import shutil

    (tmp_path / ".git").mkdir()
    axes = tmp_path / "axes"
    axes.mkdir()
    shutil.copytree(REPO / "examples/robot/library", axes / "library")
    # A file name can hold anything but "/" and NUL (shown as a look-alike slash here).
    names = sorted(
        {
            p.replace("/", "\u2215")
            for p in PAYLOADS
            if "\x00" not in p and not any(0xD800 <= ord(c) <= 0xDFFF for c in p) and len(p.encode()) < 200
        }
    )
    assert len(names) >= 20
    for k, p in enumerate(names):
        (axes / f"{p}.axis.yaml").write_text(_yaml_spec(PAYLOADS[k % len(PAYLOADS)]), encoding="utf-8")
    # a datasheet with a javascript: URL (refused by the schema; the message must stay inert)
    (axes / "js-datasheet.axis.yaml").write_text(
        _yaml_spec("x").replace("motor:\n", 'motor:\n  datasheet: "javascript:alert(1)"\n'), encoding="utf-8"
    )
    report = check_paths([str(axes)], root=tmp_path)
    assert len(report.files) == len(names) + 1
    assert sum(1 for r in report.files if r.spec is not None) >= 20
    # Text parts for every file (plots are covered by the injected report and below).
    document = html_report.render(report, plots=False)
    assert_inert(document)
    # The plots of a few of these axes, whose point names and texts are spec-derived.
    with_plots = html_report.render(dataclasses.replace(report, files=report.files[:3]))
    assert "<svg" in with_plots
    assert_inert(with_plots)
    assert "&quot;&gt;&lt;img src=x onerror=alert(1)&gt;.axis.yaml" in document
