"""Which parser runs: the C parser of ruamel.yaml.clib behind the pre-scan, or the
pure-Python parser of ruamel.yaml."""

from __future__ import annotations

import os
from collections.abc import Callable
from typing import Any

ENV_PURE = "SPECGUARD_PURE_YAML"

# Tests set this to "c" or "pure" to pin a path; None means: decide from the
# environment variable and from whether the extension imports.
FORCE: str | None = None

_c_parser: Any = None
_c_checked = False
_c_error = ""


def _load_c_parser() -> Any:
    global _c_parser, _c_checked, _c_error
    if not _c_checked:
        _c_checked = True
        try:
            from _ruamel_yaml import CParser  # the module ruamel.yaml.main uses for typ="safe"

            _c_parser = CParser
        except Exception as exc:  # missing or broken extension: fall back to pure
            _c_error = f"{type(exc).__name__}: {exc}"
            _c_parser = None
    return _c_parser


def env_wants_pure() -> bool:
    return os.environ.get(ENV_PURE, "").strip() not in ("", "0")


def active() -> str:
    """ "c" or "pure": the path the next load takes."""
    if FORCE == "pure":
        return "pure"
    if FORCE != "c" and env_wants_pure():
        return "pure"
    return "c" if _load_c_parser() is not None else "pure"


def open_events(text: str, kind: str, max_depth: int) -> tuple[Callable[[], Any], Callable[[], None]]:
    """(next_event, dispose) for the given parser path."""
    if kind == "c":
        parser = _load_c_parser()(text)
        return parser.get_event, parser.dispose
    from ruamel.yaml import YAML

    yaml = YAML(typ="safe", pure=True)
    yaml.max_depth = max_depth  # only ruamel's composer reads it; our composer checks depth itself
    gen = yaml.parse(text)
    return gen.__next__, gen.close


def describe(max_depth: int = 64) -> str:
    kind = active()
    if kind == "c":
        return "C parser (ruamel.yaml.clib) behind a depth/size pre-scan"
    if FORCE == "pure" or env_wants_pure():
        why = f"{ENV_PURE} is set"
    elif _c_error:
        why = "ruamel.yaml.clib not importable"
    else:
        why = "C parser not available"
    return f"pure-Python parser (max_depth {max_depth}; {why})"
