"""Make spec-derived text safe to print: no raw control or bidi characters."""

from __future__ import annotations

import re

# C0 controls except tab, DEL and C1 controls, bidi embeddings/overrides/isolates,
# line and paragraph separators, and lone surrogates.
_UNSAFE = re.compile(
    "[\x00-\x08\x0a-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029"
    "\ud800-\udfff]"
)


def escape_controls(text: str) -> str:
    """Show control, bidi and separator characters as visible ``\\uXXXX`` escapes."""
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)
