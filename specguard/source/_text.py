"""Bytes to text: strict UTF-8, BOM handling, forbidden characters, positions."""

from __future__ import annotations

import re
from bisect import bisect_right

# Line breaks as editors count them (LF, CRLF, lone CR). The YAML parsers also break
# lines at NEL, LS and PS, which most editors do not; those three are rejected before
# parsing (FORBIDDEN), so parser marks and this index always agree with the editor's
# view of lines and columns (docs/reliability.md E04).
_BREAK = re.compile("\r\n|[\n\r]")

# C0 controls other than tab, LF and CR; DEL; C1 controls (NEL among them); the line
# and paragraph separators; the two non-characters the YAML parsers refuse.
FORBIDDEN = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u2028\u2029\ufffe\uffff]")

# Characters that change how text is shown without being seen: bidirectional
# controls (they reorder the displayed text, "Trojan Source") and invisible
# characters (zero-width space, joiners, word joiner, invisible operators, soft
# hyphen, a BOM after the start). A reviewer cannot see them; the tool reads them.
# They are warnings at their own line:column; a key or value that holds one usually
# fails the schema as well (docs/reliability.md G16).
BIDI = "\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069"
INVISIBLE = "\u00ad\u180e\u200b-\u200d\u2060-\u2064\ufeff"
HIDDEN = re.compile(f"[{BIDI}{INVISIBLE}]")
_BIDI_ONLY = re.compile(f"[{BIDI}]")

_CONTROL_NAMES = {
    0x00: "NUL",
    0x07: "bell",
    0x08: "backspace",
    0x0B: "vertical tab",
    0x0C: "form feed",
    0x1B: "escape",
    0x7F: "delete",
    0x85: "next-line",
    0x2028: "line separator",
    0x2029: "paragraph separator",
    0x061C: "Arabic letter mark",
    0x200E: "left-to-right mark",
    0x200F: "right-to-left mark",
    0x202A: "left-to-right embedding",
    0x202B: "right-to-left embedding",
    0x202C: "pop directional formatting",
    0x202D: "left-to-right override",
    0x202E: "right-to-left override",
    0x2066: "left-to-right isolate",
    0x2067: "right-to-left isolate",
    0x2068: "first strong isolate",
    0x2069: "pop directional isolate",
    0x00AD: "soft hyphen",
    0x180E: "Mongolian vowel separator",
    0x200B: "zero-width space",
    0x200C: "zero-width non-joiner",
    0x200D: "zero-width joiner",
    0x2060: "word joiner",
    0x2061: "function application",
    0x2062: "invisible times",
    0x2063: "invisible separator",
    0x2064: "invisible plus",
    0xFEFF: "zero-width no-break space, a byte order mark after the start",
}

# Why a line-breaking character is refused (appended to its finding).
_BREAK_NOTE = "; YAML parsers count it as a line break but most editors do not, so every later line number would differ"

UTF8_BOM = b"\xef\xbb\xbf"


class TextIndex:
    """Offsets (code points) to 1-based line/column, built lazily."""

    __slots__ = ("text", "_starts")

    def __init__(self, text: str) -> None:
        self.text = text
        self._starts: list[int] | None = None

    def pos(self, offset: int) -> tuple[int, int]:
        starts = self._starts
        if starts is None:
            starts = [0]
            starts.extend(m.end() for m in _BREAK.finditer(self.text))
            self._starts = starts
        offset = max(0, min(offset, len(self.text)))
        line = bisect_right(starts, offset)
        return line, offset - starts[line - 1] + 1


def position_in(text: str, offset: int) -> tuple[int, int]:
    return TextIndex(text).pos(offset)


def hidden_note(ch: str) -> str:
    """Why a hidden character is reported (the end of its warning)."""
    if _BIDI_ONLY.match(ch):
        return "a bidirectional control reorders how the text is displayed, so a reviewer may read something else"
    return "it is invisible, so a reviewer cannot see it"


def describe_char(ch: str) -> str:
    code = ord(ch)
    name = _CONTROL_NAMES.get(code)
    if name is None:
        if code < 0x20:
            name = "control character"
        elif 0x80 <= code <= 0x9F:
            name = "C1 control character"
        else:
            name = "non-character"
    return f"U+{code:04X} ({name})"


class TextProblem:
    """One problem found while turning bytes into text (rule, message, line, col)."""

    __slots__ = ("rule", "message", "line", "column")

    def __init__(self, rule: str, message: str, line: int = 1, column: int = 1) -> None:
        self.rule = rule
        self.message = message
        self.line = line
        self.column = column


def _looks_wide(raw: bytes) -> bool:
    """True when the first four bytes look like UTF-16/32 text without a BOM
    (an ASCII character next to zero bytes)."""
    if len(raw) < 4:
        return False
    zeros = tuple(b == 0 for b in raw[:4])
    return zeros in _WIDE_PATTERNS


_WIDE_PATTERNS = {
    (False, True, False, True),  # UTF-16LE
    (True, False, True, False),  # UTF-16BE
    (False, True, True, True),  # UTF-32LE
    (True, True, True, False),  # UTF-32BE
}


def decode(raw: bytes, max_problems: int = 10) -> tuple[str | None, list[TextProblem]]:
    """Strict UTF-8 decode with a stripped UTF-8 BOM. Returns (text, problems);
    text is None when the bytes cannot be used at all."""
    if raw.startswith((b"\x00\x00\xfe\xff", b"\xff\xfe\x00\x00")):
        return None, [TextProblem("text-encoding", "file is UTF-32 (byte order mark found); it must be UTF-8")]
    if raw.startswith((b"\xfe\xff", b"\xff\xfe")):
        return None, [TextProblem("text-encoding", "file is UTF-16 (byte order mark found); it must be UTF-8")]
    skip = 3 if raw.startswith(UTF8_BOM) else 0
    body = raw[skip:] if skip else raw
    if _looks_wide(body):
        return None, [
            TextProblem(
                "text-encoding", "file looks like UTF-16 or UTF-32 (zero bytes between letters); it must be UTF-8"
            )
        ]
    try:
        text = body.decode("utf-8")
    except UnicodeDecodeError as exc:
        off = exc.start
        line, col = position_in(body[:off].decode("utf-8"), off)  # prefix is valid
        bad = body[off]
        if exc.reason == "unexpected end of data":
            msg = f"file ends inside a multi-byte UTF-8 sequence (byte offset {off + skip}); it must be UTF-8"
        else:
            msg = f"byte 0x{bad:02X} at byte offset {off + skip} is not valid UTF-8; the file must be UTF-8"
        return None, [TextProblem("text-encoding", msg, line, col)]
    problems: list[TextProblem] = []
    m = FORBIDDEN.search(text)
    if m is not None:
        index = TextIndex(text)
        for hit in FORBIDDEN.finditer(text, m.start()):
            line, col = index.pos(hit.start())
            ch = hit.group()
            note = _BREAK_NOTE if ch in "\x85\u2028\u2029" else ""
            problems.append(
                TextProblem("text-encoding", f"{describe_char(ch)} is not allowed in spec text{note}", line, col)
            )
            if len(problems) >= max_problems:
                break
    return text, problems


def hidden_characters(text: str, max_problems: int = 10) -> list[TextProblem]:
    """Bidirectional controls and invisible characters in the text, comments
    included (warnings; at most ``max_problems``, the last one says how many more)."""
    m = HIDDEN.search(text)
    if m is None:
        return []
    index = TextIndex(text)
    hits = list(HIDDEN.finditer(text, m.start()))
    problems: list[TextProblem] = []
    for hit in hits[:max_problems]:
        ch = hit.group()
        line, col = index.pos(hit.start())
        problems.append(
            TextProblem("text-encoding", f"{describe_char(ch)} in the text: {hidden_note(ch)}; remove it", line, col)
        )
    if len(hits) > max_problems:
        last = problems[-1]
        last.message += f" ({len(hits) - max_problems} more such characters in this file are not listed)"
    return problems
