"""Text output: one line per finding, ``path:line:column: severity: message [rule]``."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import os
from typing import TextIO

from .safe import escape_controls

_COLOURS = {"error": "\x1b[31m", "warning": "\x1b[33m", "info": "\x1b[36m"}
_RESET = "\x1b[0m"


def use_colour(stream: TextIO, requested: bool | None = None) -> bool:
    """Colour only on a terminal, never when NO_COLOR is set (https://no-color.org)."""
    if requested is not None:
        return requested
    if os.environ.get("NO_COLOR"):
        return False
    return bool(getattr(stream, "isatty", lambda: False)())


def shown_path(path: str) -> str:
    """A file path as the first thing on a line: controls escaped, and never
    starting with ':' (CI logs read lines starting with '::' as commands)."""
    text = escape_controls(path)
    # The runner trims leading whitespace before it looks for "::", so a name that
    # starts with a space, a tab or another blank gets the prefix too; so does one
    # starting with '#' ("##[error]", "##[group]" are log commands as well).
    return "./" + text if text[:1] in (":", "#") or text[:1].isspace() else text


def finding_line(finding, colour: bool = False) -> str:
    loc = finding.location
    severity = finding.severity
    if colour:
        severity = f"{_COLOURS[severity]}{severity}{_RESET}"
    waived = " (waived)" if finding.waived is not None else ""
    if getattr(finding, "baselined", False):
        waived = " (baselined)"
    message = escape_controls(finding.message)
    return f"{shown_path(loc.file)}:{loc.line}:{loc.column}: {severity}: {message} [{finding.rule}]{waived}"


def render(report: Report, colour: bool = False) -> str:
    lines: list[str] = []
    for result in report.files:
        if result.input_error is not None:
            lines.append(
                f"{shown_path(result.file)}: error: cannot read input: "
                f"{escape_controls(result.input_error)} [input-unreadable]"
            )
    for finding in report.findings:
        lines.append(finding_line(finding, colour))
        for rel in finding.related:
            lines.append(f"    {shown_path(rel.file)}:{rel.line}:{rel.column}: related location")
        for remedy in finding.remedies:
            lines.append(f"    fix: {escape_controls(remedy)}")
    lines.append(summary(report))
    return "\n".join(lines) + "\n"


def summary(report: Report) -> str:
    counts = report.counts()
    files = len(report.files)
    parts = [
        f"{counts['error']} error{'s' if counts['error'] != 1 else ''}",
        f"{counts['warning']} warning{'s' if counts['warning'] != 1 else ''}",
        f"{counts['info']} info",
    ]
    waived = sum(1 for f in report.findings if f.waived is not None)
    if waived:
        parts.append(f"{waived} waived")
    unread = len(report.input_errors)
    tail = f", {unread} unreadable" if unread else ""
    line = f"specguard: {', '.join(parts)} in {files} file{'s' if files != 1 else ''}{tail}"
    outcome = getattr(report, "baseline", None)
    if outcome is not None:
        n = outcome.suppressed
        line += (
            f"\nspecguard: {n} finding{'s' if n != 1 else ''} suppressed by the baseline "
            f"{escape_controls(outcome.file)}"
        )
        if outcome.stale_count:
            k = outcome.stale_count
            line += f"; {k} stale entr{'ies' if k != 1 else 'y'} matched no finding" + (
                " (--strict-baseline: fails the run)" if outcome.strict else " (write the baseline again to drop them)"
            )
    return line
