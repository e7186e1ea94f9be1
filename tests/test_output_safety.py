"""Spec-derived text stays inert in every output (docs/reliability.md §7.1, §7.4, G14, G16).

A repository of real files carries the payloads of :mod:`tests.payloads_xss` in
every spec-derived field: file names (a file per payload at the root, so its
path starts the text lines), axis name, description, tags, notes, operating
point names, unknown keys, waiver reason and approver, datasheet URLs, and the
contents of referenced library files. The CLI writes text, JSON and SARIF and the
Markdown summary; the HTML report is rendered from the same pipeline run.

Checked: the HTML has no active element, event attribute or script-capable URL
and its CSP meta; no raw C0 (tab and newline aside), C1, bidi or separator
character in any output; JSON and SARIF parse; no text or Markdown line starts
with spec-derived text (nor with "::" after leading blanks, which the GitHub
runner trims); and every payload's file name did reach every output, escaped.
"""

from __future__ import annotations

import dataclasses
import html
import json
import os
import re
import shutil
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import pytest

from specguard.pipeline import RunOptions, check_paths
from specguard.report import html as html_report
from specguard.report.safe import escape_controls
from specguard.report.text import shown_path

from .payloads_xss import PAYLOADS

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "examples" / "robot"
# Raw characters that must never appear: C0 but tab and newline, DEL, C1, bidi
# marks/embeddings/overrides/isolates, line and paragraph separators, surrogates.
RAW_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029\ud800-\udfff]")
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
    "noscript",
    "xmp",
    "details",
    "marquee",
    "meta",
}
URL_ATTRS = {
    "href",
    "src",
    "xlink:href",
    "action",
    "formaction",
    "data",
    "poster",
    "background",
    "srcset",
    "ping",
    "cite",
}
CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"
EXTRA_NAMES = (
    "::error::x",
    " ::warning::y",
    "\t::notice::z",
    "\r::error::w",
    "\x1b[2Jclear",
    "\u202eevil",
    "\u00a0::error::nbsp",
    "-rf",
    "##[error]forged",
)


def file_stem(p: str, k: int) -> str:
    """A payload as a file name: no '/' or NUL, other lone surrogates as raw bytes
    where Linux allows them (PEP 383), at most about 150 bytes."""
    name = p.replace("/", "\u2215").replace("\x00", "NUL")
    name = "".join(c if not 0xD800 <= ord(c) <= 0xDFFF or 0xDC80 <= ord(c) <= 0xDCFF else "\udcff" for c in name)
    while len(os.fsencode(name)) > 150:
        name = name[:-1]
    return f"{name}.{k}"


def _spec_text(
    axis: str,
    description: str,
    point: str,
    motor: str,
    notes: str,
    waiver: tuple,
    tags: list[str],
    datasheet: str | None,
    extra_key: str | None,
) -> str:
    q = json.dumps
    lines = [
        "format: 1",
        "axis:",
        f"  name: {q(axis)}",
        f"  description: {q(description)}",
        f"  tags: [{', '.join(q(t) for t in tags)}]",
        "motor:",
        f"  from: {q(motor)}",
        "  rated_current: 1.9 A",
    ]
    if datasheet is not None:
        lines.append(f"  datasheet: {q(datasheet)}")
    lines += [
        "stage:",
        "  from: lib/stages/bridge-48v-8a.yaml",
        "  supply: { voltage: 24 V, range: [22 V, 26 V], absorbs_braking_energy: false }",
        "chokes:",
        "  from: lib/chokes/choke-47uh-6a.yaml",
        "load:",
        "  inertia: 18 g*cm^2",
        "operating_points:",
        f"  - {{ name: {q(point)}, speed: 0 rpm, torque: 12 mN*m, ambient: 40 degC }}",
        "  - { name: lift, speed: 5200 rpm, torque: 22 mN*m, ambient: 40 degC }",
        f"notes: {q(notes)}",
        "waivers:",
        f"  - {{ rule: ripple-over-rated-current, at: lift, reason: {q(waiver[0])}, "
        f"approved_by: {q(waiver[1])}, expires: '2099-12-31' }}",
    ]
    if extra_key is not None:
        lines.append(f"{q(extra_key)}: 1")
    return "\n".join(lines) + "\n"


def build_repo(root: Path) -> dict[str, str]:
    """The payload repository; returns {file name: payload} of the specs at the root."""
    (root / ".git").mkdir(parents=True)
    shutil.copytree(DEMO / "library", root / "lib")
    motor = (DEMO / "library" / "motors" / "coreless-22mm-24v.yaml").read_text(encoding="utf-8")
    names: dict[str, str] = {}
    for k, p in enumerate(PAYLOADS):
        plain = not any(c.isspace() for c in p)
        # 1. free-text fields carry the payload; names stay valid so the rules run
        fields = f"{file_stem(p, k)}.axis.yaml"
        (root / fields).write_text(
            _spec_text(
                f"fields-{k}",
                p,
                f"hold-{k}",
                "lib/motors/coreless-22mm-24v.yaml",
                p,
                (p, p),
                ["lab"],
                ("https://example.org/" + p) if plain else None,
                None,
            ),
            encoding="utf-8",
            errors="surrogateescape",
        )
        names[fields] = p
        # 2. names, tags, keys and a library file carry it (schema findings quote them)
        lib = root / "lib" / "motors" / f"payload-{k}.yaml"
        lib.write_text(
            motor.replace("motor:\n", f"motor:\n  {json.dumps(p)}: 1\n  datasheet: {json.dumps(p)}\n", 1),
            encoding="utf-8",
        )
        (root / "specs").mkdir(exist_ok=True)
        (root / "specs" / f"n{k:02d}.axis.yaml").write_text(
            _spec_text(p, "ok", p, f"../lib/motors/payload-{k}.yaml", "ok", ("ok", "ok"), [p], p, p).replace(
                "from: lib/", "from: ../lib/"
            ),
            encoding="utf-8",
        )
    template = (DEMO / "axes" / "sample-lift.axis.yaml").read_text(encoding="utf-8")
    template = template.replace("../library/", "lib/")
    template = template[: template.index("profile:")]
    for k, name in enumerate(EXTRA_NAMES):
        fname = f"{name}.x{k}.axis.yaml"
        (root / fname).write_text(template, encoding="utf-8")
        names[fname] = name
    (root / b"\xff\xfe-not-utf8.axis.yaml".decode("utf-8", "surrogateescape")).write_text(template, encoding="utf-8")
    return names


def _env(tmp: Path) -> dict:
    env = dict(os.environ)
    env.update(
        SOURCE_DATE_EPOCH="1700000000",
        SPECGUARD_CACHE_DIR=str(tmp / "cache"),
        PYTHONIOENCODING="utf-8:surrogateescape",
    )
    env.pop("NO_COLOR", None)
    return env


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("safety")
    root = tmp / "repo"
    names = build_repo(root)

    def run(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run(
            [sys.executable, "-m", "specguard", *args],
            cwd=root,
            env=_env(tmp),
            capture_output=True,
            timeout=300,
        )

    text = run("check", ".")
    got = {
        "text": text.stdout.decode("utf-8", "surrogateescape"),
        "stderr": text.stderr.decode("utf-8", "surrogateescape"),
    }
    assert text.returncode == 1, got["stderr"]
    for fmt in ("json", "sarif"):
        done = run("check", ".", "--format", fmt, "--output", str(tmp / f"r.{fmt}"))
        assert done.returncode == 1, done.stderr
        got[fmt] = (tmp / f"r.{fmt}").read_bytes().decode("utf-8")
    done = run("report", ".", "--markdown", str(tmp / "r.md"))
    assert done.returncode == 1, done.stderr
    got["markdown"] = (tmp / "r.md").read_bytes().decode("utf-8")
    import datetime as dt

    report = check_paths([str(root)], root=root, options=RunOptions(today=dt.date(2024, 1, 1)))
    got["html"] = html_report.render(report, plots=False)
    with_plots = [r for r in report.files if r.spec is not None][:3]
    assert len(with_plots) == 3
    got["html-plots"] = html_report.render(dataclasses.replace(report, files=tuple(with_plots)))
    got["report"] = report
    got["names"] = names
    return got


FORMATS = ("text", "stderr", "json", "sarif", "markdown", "html", "html-plots")


def test_enough_payloads_and_fields(outputs):
    assert len(PAYLOADS) >= 50
    report = outputs["report"]
    assert len(report.files) == 2 * len(PAYLOADS) + len(EXTRA_NAMES) + 1
    built = [r for r in report.files if r.spec is not None]
    # the free-text payloads went through the loader into built specs (some are
    # rejected by it: the control characters; their findings are checked instead)
    assert len(built) >= 40
    assert sum(1 for r in built for f in r.findings if f.waived) >= 30  # waiver reasons in use


@pytest.mark.parametrize("fmt", FORMATS)
def test_no_raw_control_or_bidi_character(outputs, fmt):
    found = RAW_UNSAFE.search(outputs[fmt])
    assert found is None, (fmt, repr(outputs[fmt][max(0, found.start() - 60) : found.end() + 60]))


def test_machine_outputs_parse(outputs):
    document = json.loads(outputs["json"])
    log = json.loads(outputs["sarif"])
    assert len(document["files"]) == len(outputs["report"].files)
    assert log["runs"][0]["results"]
    # the JSON values are the real names: escaping changed the text, not the value
    assert set(outputs["names"]) <= {f["file"] for f in document["files"]}


def _known_paths(outputs) -> set[str]:
    files = {f["file"] for f in json.loads(outputs["json"])["files"]}
    for r in outputs["report"].files:
        for f in r.findings:
            files.add(f.location.file)
            files.update(rel.file for rel in f.related)
    return files


@pytest.mark.parametrize("stream", ["text", "stderr"])
def test_text_lines_start_with_our_own_text(outputs, stream):
    shown = sorted({shown_path(p) for p in _known_paths(outputs)}, key=len, reverse=True)
    for p in shown:
        assert p[:1] != ":" and not p[:1].isspace(), p
    lines = outputs[stream].splitlines()
    assert stream == "stderr" or len(lines) > 200
    for line in lines:
        assert not line.lstrip().startswith("::"), line
        assert not line.lstrip().startswith("##["), line
        body = line[4:] if line.startswith("    ") else line
        if body.startswith(("fix: ", "specguard: ")):
            continue
        if body.startswith("same cause: "):  # a consequence: our own words, then its own location
            assert any(body[len("same cause: ") :].startswith(p + ":") for p in shown), line
            continue
        if line.startswith("    "):  # a related location: our own label first, its place at the end
            assert re.match(r"^[a-z_][a-z0-9_.\[\]]*( |$)", body), line
            assert any(
                body.endswith(f"  ({p}:" + body.rsplit(":", 2)[-2] + ":" + body.rsplit(":", 2)[-1]) for p in shown
            ), line
            continue
        assert any(body.startswith(p + ":") for p in shown), line


def test_text_shows_every_file_name_escaped(outputs):
    for name in outputs["names"]:
        assert shown_path(name) + ":" in outputs["text"], name


MARKDOWN_STARTS = (
    "### specguard: ",
    "> ",
    "| ",
    "|---",
    "- **",
    "  - fix: ",
    "  - related: ",
    "**Findings**",
    "**Figures that matter**",
    "Written by specguard",
)


def test_markdown_lines_start_with_our_own_text(outputs):
    for line in outputs["markdown"].splitlines():
        assert line == "" or line.startswith(MARKDOWN_STARTS), line
        assert not line.lstrip().startswith("::"), line


class Walker(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, list]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, attrs))

    handle_startendtag = handle_starttag


@pytest.mark.parametrize("fmt", ["html", "html-plots"])
def test_html_is_inert(outputs, fmt):
    document = outputs[fmt]
    w = Walker()
    w.feed(document)
    w.close()
    names = [t for t, _ in w.tags]
    metas = [dict(a) for t, a in w.tags if t == "meta"]
    assert {"http-equiv": "Content-Security-Policy", "content": CSP} in metas
    for tag, attrs in w.tags:
        if tag == "meta":
            assert set(dict(attrs)) <= {"charset", "http-equiv", "content", "name"}, attrs
            continue
        if tag in ("html", "head", "body"):
            assert tag != "body" or not attrs, attrs  # ours, once, no attributes
            continue
        assert tag not in DANGEROUS_TAGS, (tag, attrs)
        for key, value in attrs:
            assert not key.startswith("on"), (tag, key, value)
            v = re.sub(r"[\x00-\x20]", "", html.unescape(value or "")).lower()
            if key in URL_ATTRS:
                assert not v.startswith(("javascript:", "vbscript:", "data:")), (tag, key, value)
                if not v.startswith("#"):
                    assert tag == "a" and key == "href" and v.startswith("https://"), (
                        tag,
                        key,
                        value,
                    )
                    assert dict(attrs).get("rel") == "noopener noreferrer"
            if key == "style":
                assert "url(" not in v and "expression(" not in v, (tag, value)
    assert names.count("body") == 1
    assert "<script" not in document.lower() and "<foreignobject" not in document.lower()
    if fmt == "html-plots":
        assert names.count("svg") >= 3


def test_html_shows_payloads_as_text(outputs):
    document = outputs["html"]
    for name in outputs["names"]:
        assert html.escape(escape_controls(name), quote=True) in document, name
    # the free-text fields of the built specs, as text
    shown = sum(1 for p in PAYLOADS if html.escape(escape_controls(p), quote=True) in document)
    assert shown >= len(PAYLOADS) - 12
    # datasheet links: only https, and never with a payload's markup unescaped
    assert (
        'href="https://example.org/&lt;script&gt;' in document
        or 'href="https://example.org/&quot;&gt;&lt;img' in document
    )


def test_markdown_shows_file_names_escaped(outputs):
    md = outputs["markdown"]
    # every "<", "[", "(" from a spec is backslash-escaped: no tag, link or image opens
    assert not re.search(r"(?<!\\)<[a-zA-Z/!?]", md)
    assert not re.search(r"(?<!\\)\]\(", md)
    assert "\\<script\\>" in md
