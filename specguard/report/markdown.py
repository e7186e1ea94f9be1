"""Markdown summary for a pull-request comment.

A verdict line, one table of axes (verdict, counts by severity, the figures that
matter), then the findings grouped by axis and by operating point (the point named
once), each consequence under its cause, with the fixes and their edits. At most
:data:`LIMIT` characters (pull-request comments take 65,536): what does not fit is
left out with a line saying how many findings and where the full list is. No HTML. Every piece of
text that comes from a spec, a file name or a message goes through
:func:`escape`, which backslash-escapes the characters that could start a link,
an image, an HTML tag, a table cell, code or emphasis, and breaks the bare-URL
and e-mail autolinks; every line starts with text of our own (``|``, ``-``,
``**``, ``>``, ``#``), never with spec-derived text. A pure function of the report.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..figures.registry import Fig

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import math
import re

from ..findings import SEVERITY_ORDER
from .safe import escape_controls
from .text import grouped

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
    if n and result.spec is None:  # read, but not a spec this format accepts
        return "not a valid spec"
    return "fails" if n else "passes"


def _figure_values(fs, name: str) -> list[float]:
    out = []
    for _, vals in fs.points:
        v = vals.get(name)
        if v is not None and not isinstance(v, bool) and math.isfinite(float(v)):
            out.append(float(v))
    return out


# Pull-request comments take at most 65,536 characters; the summary is designed for
# at most this many and says what it left out.
LIMIT = 60_000
# Room kept for the truncation note and the closing line.
_RESERVE = 600
_SEV_WORD = {"error": "**error**", "warning": "**warning**", "info": "**info**"}


def _axis_name(r) -> str:
    return getattr(getattr(r.spec, "axis", None), "name", None) or ""


def _change_text(value) -> str:
    if isinstance(value, (tuple, list)) and value and all(isinstance(v, tuple) and len(v) == 2 for v in value):
        return ", ".join(f"{escape(k)} = {escape(v)}" for k, v in value)
    if isinstance(value, (tuple, list)):
        return ", ".join(escape(v) for v in value)
    return escape(value)


def _finding_lines(f, indent: str, point_shown: str | None, consequence: bool) -> list[str]:
    loc = f.location
    mark = ""
    if f.waived is not None:
        mark = f" (waived: {escape(f.waived)})"
    elif getattr(f, "baselined", False):
        mark = " (baselined)"
    point = ""
    if f.operating_point and f.operating_point != point_shown:
        point = f" at {escape(f.operating_point)}"
    sev = f"**\u21b3 {f.severity}**" if consequence else _SEV_WORD.get(f.severity, "**?**")
    cause = f" (consequence of {escape(f.explained_by)})" if consequence else ""
    lines = [f"- {sev} line {loc.line}{point} {escape(f.rule)}: {escape(f.message)}{cause}{mark}"]
    fixes = getattr(f, "fixes", ()) or ()
    if fixes:
        for fx in fixes:
            edits = "; ".join(f"{escape(c.pointer)} = {_change_text(c.value)}" for c in fx.changes)
            lines.append(f"  - fix: {escape(fx.text)}" + (f" (edit: {edits})" if edits else ""))
    else:
        lines.extend(f"  - fix: {escape(r)}" for r in f.remedies)
    return lines


def _file_blocks(r) -> list[tuple[int, list[str]]]:
    """Blocks of lines of one file's findings: (findings in the block, lines); the first
    block is the heading. Axis findings first, then those of each operating point
    under one line naming the point."""
    name = _axis_name(r)
    title = f"{escape(name)} ({escape(r.file)})" if name else escape(r.file)
    blocks: list[tuple[int, list[str]]] = [(0, ["", f"- **axis {title}**"])]
    groups = grouped(r.findings)
    order: list[str | None] = []
    for cause, _ in groups:
        if cause.operating_point not in order:
            order.append(cause.operating_point)
    order.sort(key=lambda p: (p is not None,))  # axis findings first, points in report order
    for point in order:
        head = [f"- **at {escape(point)}:**"] if point is not None else []
        indent = ""
        first = True
        for cause, consequences in groups:
            if cause.operating_point != point:
                continue
            lines = list(head) if first else []
            first = False
            lines += _finding_lines(cause, indent, point, False)
            for c in consequences:
                lines += _finding_lines(c, indent, point, True)
            blocks.append((1 + len(consequences), lines))
    return blocks


def render(report: Report, limit: int = LIMIT, full_report: str | None = None) -> str:
    """The summary, at most ``limit`` characters: findings that do not fit are left out
    with one line saying how many and where the full list is (``full_report``, else the
    HTML review report)."""
    counts = report.counts()
    status = report.exit_status()
    word = {0: "PASS", 1: "FAIL", 2: "INCOMPLETE", 3: "INTERNAL ERROR"}.get(status, "FAIL")
    files = report.file_count
    lines = [
        f"### specguard: {word} \u2013 {counts['error']} error(s), {counts['warning']} warning(s), "
        f"{counts['info']} info in {files} file(s) (fail level {report.fail_level})",
        "",
        f"> {CAUTION}",
        "",
        "| axis | verdict | errors | warnings | info | waived | worst ripple / rated | highest duty | "
        "smallest winding margin |",
        "|---|---|---:|---:|---:|---:|---:|---:|---:|",
    ]
    size = sum(len(x) + 1 for x in lines)
    rows_left = 0
    for r in report.files:
        c = _counts(r)
        name = _axis_name(r)
        label = f"{escape(name)} ({escape(r.file)})" if name else escape(r.file)
        fs = getattr(r, "figures", None)
        ripple = duty = margin = "\u2013"
        if fs is not None:
            duties = _figure_values(fs, Fig.duty)
            margins = _figure_values(fs, Fig.winding_margin)
            ripple = _ratio(fs.axis.get(Fig.ripple_ratio_worst))
            duty = _ratio(max(duties) if duties else None)
            margin = _num(min(margins) if margins else None, "{:.3g} K")
        row = (
            f"| {label} | {_verdict(r, report.fail_level_of(r))} | {c['error']} | {c['warning']} | "
            f"{c['info']} | {c['waived']} | {ripple} | {duty} | {margin} |"
        )
        if size + len(row) + 1 > limit // 2:
            rows_left += 1
            continue
        lines.append(row)
        size += len(row) + 1
    if rows_left:
        lines.append(f"> **{rows_left} more file(s) left out of this table.**")
        size += len(lines[-1]) + 1
    where = escape(full_report) if full_report else "the HTML review report (specguard report \\-\\-html FILE)"
    total = sum(len(r.findings) for r in report.files) + sum(1 for r in report.files if r.input_error)
    if total:
        lines += ["", "**Findings**"]
    shown = 0
    stopped = False
    for r in report.files:
        if not r.findings and r.input_error is None:
            continue
        blocks = _file_blocks(r)
        if r.input_error is not None:
            blocks.append((1, [f"- **error** cannot read input: {escape(r.input_error)} (input-unreadable)"]))
        for n, block in blocks:
            cost = sum(len(x) + 1 for x in block)
            if stopped or size + cost > limit - _RESERVE:
                stopped = True
                continue
            lines += block
            size += cost
            shown += n
    if shown < total:
        lines += [
            "",
            f"> **{total - shown} of {total} findings left out to keep this comment under {limit:,} characters; "
            f"all of them are in {where}.**",
        ]
    lines += ["", "Written by specguard; the HTML report has the plots and every figure."]
    return "\n".join(lines) + "\n"
