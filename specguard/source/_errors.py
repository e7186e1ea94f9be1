"""Turn any exception raised while parsing into one located finding."""

from __future__ import annotations

from typing import Any

from specguard.findings import Finding, Location

from ._text import TextIndex


def _one_line(s: Any, n: int = 120) -> str:
    s = " ".join(str(s or "").split())
    return s if len(s) <= n else s[: n - 3] + "..."


def _mark_pos(mark: Any) -> tuple[int, int] | None:
    try:
        return int(mark.line) + 1, int(mark.column) + 1
    except Exception:
        return None


def _char_at(text: str, mark: Any) -> str:
    try:
        i = int(mark.index)
        return text[i] if 0 <= i < len(text) else ""
    except Exception:
        return ""


def _message(exc: Any, text: str, pmark: Any, cpos: tuple[int, int] | None) -> str:
    problem = _one_line(getattr(exc, "problem", None))
    context = _one_line(getattr(exc, "context", None))
    at = f" at {cpos[0]}:{cpos[1]}" if cpos else ""
    if "cannot start any token" in problem:
        ch = _char_at(text, pmark) if pmark is not None else ""
        if ch == "\t" or "'\\t'" in problem:
            return "tab character here: YAML indentation and separation must use spaces"
        shown = repr(ch) if ch else "this character"
        return f"{shown} cannot start a value (quote the value if it is text)"
    if "unexpected end of stream" in problem and "quoted scalar" in context:
        return f"quoted text that starts{at} is never closed"
    if "mapping values are not allowed" in problem:
        return "': ' is not allowed here (quote a value that contains ': ', or fix the indentation)"
    if "block mapping" in context:
        return f"bad indentation: this line does not line up with the mapping that starts{at}"
    if "block collection" in context:
        return f"bad indentation: this line does not line up with the list that starts{at}"
    if "flow sequence" in context:
        return f"the list opened with '['{at} is not closed properly: expected ',' or ']'"
    if "flow mapping" in context:
        return f"the mapping opened with '{{'{at} is not closed properly: expected ',' or '}}'"
    if "document start" in problem:
        return "unexpected text after the end of the document"
    if "an alias" in context or "an anchor" in context:
        return "a name must follow '&' (anchor) or '*' (alias)"
    if "escape" in problem:
        return "unknown escape sequence in double-quoted text"
    if "tag" in context:
        return "malformed tag"
    if problem or context:
        detail = problem or context
        extra = f" ({context}{at})" if problem and context else ""
        return f"YAML syntax error: {detail}{extra}"
    return f"the YAML parser failed ({type(exc).__name__}: {_one_line(exc)})"


def exception_finding(exc: BaseException, last_event: Any, text: str, index: TextIndex, file: str) -> Finding:
    pmark = getattr(exc, "problem_mark", None)
    cmark = getattr(exc, "context_mark", None)
    pos = _mark_pos(pmark) if pmark is not None else None
    cpos = _mark_pos(cmark) if cmark is not None else None
    rule = "yaml-syntax"
    if pos is None and hasattr(exc, "position") and hasattr(exc, "reason"):
        # ReaderError: a character offset, no mark
        rule = "text-encoding"
        try:
            pos = index.pos(int(exc.position))
        except Exception:
            pos = None
        message = f"character not allowed in YAML text ({_one_line(getattr(exc, 'reason', ''))})"
    else:
        if pos is None:
            pos = cpos
        message = _message(exc, text, pmark, cpos if pmark is not None else None)
    if pos is None and last_event is not None:
        pos = _mark_pos(getattr(last_event, "end_mark", None))
    line, col = pos if pos is not None else (1, 1)
    return Finding(rule, "error", message, Location(file, max(1, line), max(1, col)))
