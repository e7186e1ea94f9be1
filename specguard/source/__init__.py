"""The guarded loader: bytes in, plain JSON-compatible data plus a location index
and located findings out. It never raises on spec content.

Pipeline (docs/reliability.md §7.5): size cap -> strict UTF-8 (BOM stripped) and a ban
on control characters and the line breaks editors do not show (NEL, LS, PS) ->
warnings for bidirectional controls and invisible characters -> pre-scan (directives, nesting depth) -> parser events
(C parser of ruamel.yaml.clib, or the pure-Python parser) -> our own composer,
which resolves scalars by the YAML 1.2 core schema, rejects tags and non-string
or duplicate keys, and charges aliases their expanded size against the budgets.
"""

from __future__ import annotations

import re

from specguard.findings import Finding, Location

from . import _backend
from ._reading import InputError, ReferenceProblem, open_reference, read_limited
from ._types import Limits, LoadResult, NodeLoc, Span

__all__ = [
    "InputError",
    "Limits",
    "LoadResult",
    "NodeLoc",
    "ReferenceProblem",
    "Span",
    "load_bytes",
    "open_reference",
    "parser_path",
    "read_limited",
]

_DEFAULT_LIMITS = Limits()

# libyaml refuses surrogate escapes outright ("invalid Unicode character escape");
# a document that has one goes through the pure parser, so that a valid pair is
# joined into its character and a lone one is reported at its scalar.
_SURROGATE_ESCAPE = re.compile(r"\\(?:u[dD][89a-fA-F][0-9a-fA-F]{2}|U0000[dD][89a-fA-F][0-9a-fA-F]{2})")


def parser_path() -> str:
    """Human text naming the parser path the loader takes (for ``--version``)."""
    return _backend.describe(_DEFAULT_LIMITS.max_depth)


def _result(findings: list[Finding], parser: str, data=None, locations=None) -> LoadResult:
    return LoadResult(data, locations if locations is not None else {}, tuple(findings), parser)


def load_bytes(raw: bytes, file: str, limits: Limits = _DEFAULT_LIMITS, *, size: int | None = None) -> LoadResult:
    """Load one spec file's bytes. ``size`` is the real file size when ``raw`` was
    cut short by the reader. Never raises: every problem is a located finding, and
    ``data`` is None when any finding is an error."""
    kind = "pure"
    try:
        kind = _backend.active()
        return _load(raw, file, limits, size, kind)
    except Exception as exc:  # a bug of ours; still no traceback for the caller
        msg = " ".join(f"{type(exc).__name__}: {exc}".split())[:200]
        finding = Finding("internal-error", "error", f"the loader failed: {msg}", Location(file, 1, 1))
        return _result([finding], kind)


def _load(raw: bytes, file: str, limits: Limits, size: int | None, kind: str) -> LoadResult:
    from ._compose import compose, fmt_size
    from ._prescan import prescan
    from ._text import TextIndex, decode, hidden_characters

    real = max(size or 0, len(raw))
    if real > limits.max_bytes:
        msg = f"file is {fmt_size(real)} ({real:,} bytes), above the {fmt_size(limits.max_bytes)} limit"
        return _result([Finding("yaml-limit", "error", msg, Location(file, 1, 1))], kind)

    text, problems = decode(raw)
    if text is None or problems:
        findings = [Finding(p.rule, "error", p.message, Location(file, p.line, p.column)) for p in problems]
        return _result(findings, kind)

    # Bidirectional controls and invisible characters: warnings wherever they are
    # (comments and free text included); they come first in every outcome below.
    hidden = [Finding(p.rule, "warning", p.message, Location(file, p.line, p.column)) for p in hidden_characters(text)]

    pre = prescan(text, limits.max_depth)
    if pre:
        errors = [Finding(p.rule, "error", p.message, Location(file, p.line, p.column)) for p in pre]
        return _result(hidden + errors, kind)

    if kind == "c" and "\\" in text and _SURROGATE_ESCAPE.search(text):
        kind = "pure"
    index = TextIndex(text)
    next_event, dispose = _backend.open_events(text, kind, limits.max_depth)
    try:
        data, locations, findings = compose(next_event, text, index, file, limits)
        findings = hidden + findings
    finally:
        try:
            dispose()
        except Exception:
            pass
    if data is not None and any(f.severity == "error" for f in findings):
        data = None
    return _result(findings, kind, data, locations)
