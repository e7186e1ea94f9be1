"""Text output: one line per finding, ``path:line:column: severity: message [rule]``."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import os
from typing import Any, TextIO

from ..findings import cause_name
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


def related_label(rel) -> str:
    """What a related location is: the engine's label, else its document path."""
    from ..findings import dotted

    return rel.label or dotted(rel.path) or "related place"


def related_line(rel) -> str:
    """``    motor.terminal_inductance = 179 uH  (robot/library/motors/x.yaml:7:24)``."""
    return f"    {escape_controls(related_label(rel))}  ({shown_path(rel.file)}:{rel.line}:{rel.column})"


SEVERITIES = ("error", "warning", "info")


def parse_show(text: str) -> tuple[str, ...]:
    """The severities a ``--show`` value names ("error,warning"); ValueError otherwise."""
    names = tuple(part.strip() for part in text.split(",") if part.strip())
    unknown = [n for n in names if n not in SEVERITIES]
    if unknown or not names:
        raise ValueError(f"{', '.join(unknown) or repr(text)}: name severities among error, warning, info")
    return tuple(s for s in SEVERITIES if s in names)


_UNAPPLIED = "rule-not-applicable"


def _unapplied_reason(finding) -> str:
    rule = dict(finding.meta).get("rule", "?")
    reason = finding.message.split(" could not be applied: ", 1)[-1]
    if reason.startswith("the spec does not give "):
        reason = "needs " + reason[len("the spec does not give ") :]
    return f"{rule} ({reason})"


def unapplied_line(findings, colour: bool = False) -> str:
    """The rule-not-applicable findings of one file as one line."""
    first = findings[0]
    loc = first.location
    severity = f"{_COLOURS['info']}info{_RESET}" if colour else "info"
    rules = "; ".join(escape_controls(_unapplied_reason(f)) for f in findings)
    return (
        f"{shown_path(loc.file)}:{loc.line}:{loc.column}: {severity}: {len(findings)} rules could not be applied: "
        f"{rules} [{_UNAPPLIED}]"
    )


def render(
    report: Report,
    colour: bool = False,
    *,
    show: tuple[str, ...] = SEVERITIES,
    show_baselined: bool = False,
    summary_only: bool = False,
) -> str:
    """The text report. ``show``: the severities whose findings are printed (counts
    and exit status are unchanged); baselined findings are left out unless
    ``show_baselined``; ``summary_only``: one line per file instead of the findings.
    Each file's rule-not-applicable findings are gathered in one line."""
    lines: list[str] = []
    for result in report.files:
        if result.input_error is not None:
            lines.append(
                f"{shown_path(result.file)}: error: cannot read input: "
                f"{escape_controls(result.input_error)} [input-unreadable]"
            )
    if summary_only:
        lines.extend(file_summary(report, result) for result in report.files if result.input_error is None)
        lines.append(summary(report, show=show, show_baselined=show_baselined))
        return "\n".join(lines) + "\n"
    shown = [
        f for f in report.findings if f.severity in show and (show_baselined or not getattr(f, "baselined", False))
    ]
    unapplied: dict[str, list] = {}
    for f in shown:
        if f.rule == _UNAPPLIED and not f.suppressed:
            unapplied.setdefault(f.location.file, []).append(f)
    # each related location is printed once, under the first finding it explains;
    # the findings below that it also explains do not repeat it (JSON and SARIF keep
    # every finding's whole list)
    printed: set[tuple] = set()
    consequences = _consequences(shown)
    placed = {id(c) for group in consequences.values() for c in group}
    for finding in shown:
        group = unapplied.get(finding.location.file) if finding.rule == _UNAPPLIED else None
        if group is not None and len(group) > 1 and not finding.suppressed:
            if finding is group[0]:
                lines.append(unapplied_line(group, colour))
            continue
        if id(finding) in placed:
            continue  # printed under its cause
        lines.append(finding_line(finding, colour))
        for rel in finding.related:
            key = (rel.file, rel.line, rel.column)
            if key not in printed:
                printed.add(key)
                lines.append(related_line(rel))
        for remedy in finding.remedies:
            lines.append(f"    fix: {escape_controls(remedy)}")
        for other in consequences.get(id(finding), ()):
            lines.append("    same cause: " + finding_line(other, colour))
    lines.append(summary(report, show=show, show_baselined=show_baselined))
    return "\n".join(lines) + "\n"


def grouped(findings) -> list[tuple[Any, list[Any]]]:
    """Findings as (cause, consequences) in report order (the HTML and Markdown reports
    of one file); a consequence whose cause is not among the findings stands alone."""
    findings = list(findings)
    causes: dict[str, int] = {}
    for i, f in enumerate(findings):
        if f.explained_by is None:
            causes.setdefault(cause_name(f), i)
    under: dict[int, list[Any]] = {}
    top: list[int] = []
    for i, f in enumerate(findings):
        cause = causes.get(f.explained_by) if f.explained_by is not None else None
        if cause is None or cause == i:
            top.append(i)
        else:
            under.setdefault(cause, []).append(f)
    return [(findings[i], under.get(i, [])) for i in top]


def _consequences(findings) -> dict[int, list]:
    """id(cause) -> the findings that name it as their cause (``explained_by``), in order;
    the whole report's findings, so a cause is looked up in the consequence's own file."""
    causes: dict[tuple, object] = {}
    for f in findings:
        causes.setdefault((f.location.file, cause_name(f)), f)
    out: dict[int, list] = {}
    for f in findings:
        cause = causes.get((f.location.file, f.explained_by)) if f.explained_by else None
        if cause is not None and cause is not f:
            out.setdefault(id(cause), []).append(f)
    return out


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'s' if n != 1 and word != 'info' else ''}"


def file_summary(report: Report, result) -> str:
    """One file in one line: its counts and its verdict at its fail level."""
    counts = {"error": 0, "warning": 0, "info": 0}
    waived = baselined = 0
    for f in result.findings:
        if f.waived is not None:
            waived += 1
        elif getattr(f, "baselined", False):
            baselined += 1
        else:
            counts[f.severity] += 1
    level = report.fail_level_of(result)
    threshold = SEVERITIES.index(level)
    fails = any(counts[s] for s in SEVERITIES[: threshold + 1])
    parts = [_plural(counts["error"], "error"), _plural(counts["warning"], "warning"), _plural(counts["info"], "info")]
    if waived:
        parts.append(f"{waived} waived")
    if baselined:
        parts.append(f"{baselined} baselined")
    verdict = "fails" if fails else "passes"
    return f"{shown_path(result.file)}: {verdict}: {', '.join(parts)}"


def summary(report: Report, *, show: tuple[str, ...] = SEVERITIES, show_baselined: bool = True) -> str:
    counts = report.counts()
    files = report.file_count
    parts = [
        f"{counts['error']} error{'s' if counts['error'] != 1 else ''}",
        f"{counts['warning']} warning{'s' if counts['warning'] != 1 else ''}",
        f"{counts['info']} info",
    ]
    waived = sum(1 for f in report.findings if f.waived is not None)
    if waived:
        parts.append(f"{waived} waived")
    unread = sum(1 for r in report.input_errors if r.not_a_file is None)
    tail = f", {unread} unreadable" if unread else ""
    # paths named on the command line that hold no file: said, never counted as files
    missing = sum(1 for r in report.files if r.not_a_file == "missing")
    if missing:
        tail += f", {missing} missing path{'s' if missing != 1 else ''}"
    empty = sum(1 for r in report.files if r.not_a_file == "directory")
    if empty:
        tail += f", {empty} director{'ies' if empty != 1 else 'y'} without spec files"
    hidden = [s for s in SEVERITIES if s not in show and counts[s]]
    if hidden:
        tail += f" ({' and '.join(hidden)} not printed: --show {','.join(show)})"
    line = f"specguard: {', '.join(parts)} in {files} file{'s' if files != 1 else ''}{tail}"
    outcome = getattr(report, "baseline", None)
    if outcome is not None:
        n = outcome.suppressed
        line += (
            f"\nspecguard: {n} finding{'s' if n != 1 else ''} suppressed by the baseline "
            f"{escape_controls(outcome.file)}"
        )
        if n and not show_baselined:
            line += " (not printed; --show-baselined prints them)"
        if outcome.stale_count:
            k = outcome.stale_count
            line += f"; {k} stale entr{'ies' if k != 1 else 'y'} matched no finding" + (
                " (--strict-baseline: fails the run)" if outcome.strict else " (write the baseline again to drop them)"
            )
    return line
