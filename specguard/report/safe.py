"""Make spec-derived text safe to print: no raw control or bidi characters."""

from __future__ import annotations

import re

# C0 controls except tab, DEL and C1 controls, bidi marks (U+200E, U+200F, the
# Arabic letter mark U+061C), embeddings/overrides/isolates, line and paragraph
# separators, invisible characters (zero-width space and joiners, word joiner,
# invisible operators, soft hyphen, U+FEFF) and lone surrogates. The loader warns
# about the same bidi and invisible characters at their line:column.
_UNSAFE = re.compile(
    "[\x00-\x08\x0a-\x1f\x7f-\x9f\u00ad\u061c\u180e\u200b-\u200f\u202a-\u202e"
    "\u2060-\u2064\u2066-\u2069\u2028\u2029\ufeff\ud800-\udfff]"
)


def escape_controls(text: str) -> str:
    """Show control, bidi and separator characters as visible ``\\uXXXX`` escapes."""
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)
