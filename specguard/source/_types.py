"""Public value types of the guarded loader."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from specguard.findings import Finding


@dataclass(frozen=True)
class Limits:
    """Budgets of the loader (defaults: docs/reliability.md G4)."""

    max_bytes: int = 256 * 1024
    max_nodes: int = 50_000  # expanded nodes: an alias is charged the size it expands to
    max_depth: int = 64
    max_aliases: int = 100
    max_scalar_bytes: int = 64 * 1024
    max_int: int = 2**53


@dataclass(frozen=True)
class Span:
    """A region of the text: 1-based line and column (in code points) of the first
    character, and of the position just after the last one (exclusive end)."""

    line: int
    column: int
    end_line: int
    end_column: int


@dataclass(frozen=True)
class NodeLoc:
    """Where a value sits: the span of its key (None for sequence items and the root)
    and the span of the value itself."""

    key: Span | None
    value: Span


@dataclass(frozen=True)
class LoadResult:
    """Outcome of :func:`load_bytes`.

    ``data`` is None when any finding has severity "error". ``locations`` maps a
    document path tuple (str keys, int indices; ``()`` is the root) to its place in
    the text. Values reached through an alias or a merge key share the objects of
    the anchored value and are located at the alias.
    """

    data: dict | None
    locations: Mapping[tuple, NodeLoc]
    findings: tuple[Finding, ...]
    parser: str  # "c" or "pure"
