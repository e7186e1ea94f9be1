"""The finding: the one shape every stage reports problems in.

Built-in findings that are not rules (file, YAML, schema, unit, reference and
waiver problems, internal errors) use the reserved ids in :data:`BUILTIN_IDS`.
Rule findings use the ids of the rule pack in ``rules/``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

Severity = Literal["error", "warning", "info"]

SEVERITY_ORDER: dict[str, int] = {"info": 0, "warning": 1, "error": 2}

# Reserved ids of the built-in findings, with a one-line meaning each.
BUILTIN_IDS: dict[str, str] = {
    "input-unreadable": "an input path is missing, unreadable or not a regular file (exit 2)",
    "input-outside-root": "compare was given a path outside the repository it reads at a revision (exit 2)",
    "text-encoding": "the file is not valid UTF-8 text, or holds forbidden characters",
    "yaml-syntax": "the YAML text cannot be parsed",
    "yaml-structure": (
        "the document has the wrong shape (empty, several documents, root not a mapping, directive, undefined alias)"
    ),
    "yaml-limit": "a size, depth, alias or node budget of the loader was exceeded",
    "yaml-tag": "an explicit YAML tag was used; specs carry plain values only",
    "yaml-key": "a mapping key is duplicated or is not a string",
    "number-invalid": "a number is not finite, out of range or ambiguous",
    "schema-violation": "the spec does not match the published schema",
    "unit-invalid": "a dimensional value has a missing, unknown or wrong unit",
    "reference-invalid": "a library reference cannot be resolved safely",
    "waiver-invalid": "a waiver is malformed, expired, unused or not allowed",
    "rule-not-applicable": "a rule could not be applied because the spec lacks what it needs",
    "config-invalid": "the policy file (.specguard.yaml) cannot be read or is invalid (exit 2, before any analysis)",
    "baseline-invalid": "the baseline file is missing, damaged or of an unknown version (exit 2; never read as empty)",
    "output-error": "a report or baseline file cannot be written where asked, or its lock stays taken (exit 2)",
    "internal-error": "specguard itself failed; please report it (exit 3)",
}


@dataclass(frozen=True, slots=True)
class Location:
    """A place in a file: repo-relative posix path, 1-based line and column
    (counted in code points), optional end, the document path as a tuple
    of keys and indices (``("motor", "terminal_inductance")``), and for a related
    location a label naming what it is."""

    file: str
    line: int = 1
    column: int = 1
    end_line: int | None = None
    end_column: int | None = None
    path: tuple[str | int, ...] = ()
    # what a related location is, for a reader: its document path and the spec's
    # value there ("motor.terminal_inductance = 179 uH"); "" where none is given
    label: str = field(default="", compare=False)

    @property
    def pointer(self) -> str:
        """The document path as a JSON Pointer (RFC 6901)."""
        if not self.path:
            return ""
        parts = (str(p).replace("~", "~0").replace("/", "~1") for p in self.path)
        return "/" + "/".join(parts)


@dataclass(frozen=True, slots=True)
class Change:
    """One edit of a fix: the JSON pointer of a value in the axis file as written and
    the value to write there, in units as text ("26.5 kHz"), or a whole section as
    (key, value) pairs where one is added (``/chokes``)."""

    pointer: str
    value: object
    # where the value stands in the axis file (file, line, column, end line, end
    # column) when it is written there; None where the change adds a key
    region: tuple[str, int, int, int, int] | None = None


@dataclass(frozen=True, slots=True)
class Fix:
    """A verified fix: applied exactly as printed, it clears its finding at the
    finding's band (``reaches``: "clear", or the lower band the rule still reaches)
    and creates no new finding at or above the fail level."""

    text: str
    changes: tuple[Change, ...]
    clears: tuple[str, ...] = ()  # the rule ids of the findings it clears
    reaches: str = "clear"
    side_effects: tuple[str, ...] = ()
    cost: float = 0.0  # relative size of the change (ordering)


@dataclass(frozen=True, slots=True)
class Finding:
    rule: str
    severity: Severity
    message: str
    location: Location
    related: tuple[Location, ...] = ()
    operating_point: str | None = None
    # (figure name, SI value, SI unit) triples behind the message
    figures: tuple[tuple[str, float, str], ...] = ()
    remedies: tuple[str, ...] = ()
    help: str = ""
    waived: str | None = None  # the waiver's justification when waived
    meta: tuple[tuple[str, str], ...] = field(default=())
    baselined: bool = False  # held by the baseline file (--baseline)
    fixes: tuple[Fix, ...] = ()  # verified, structured (``remedies`` holds their texts)
    # the finding this one is a consequence of ("rule-id at 'point'"): one cause, reported once
    explained_by: str | None = None
    # what a fix aims at: (threshold of the band that fired, threshold of the lowest
    # band, the lowest band's name); set by the engine for rules with remedies
    aim: tuple[float, float, str] | None = field(default=None, compare=False)

    @property
    def suppressed(self) -> bool:
        """Waived or baselined: shown in every output, never counted for the exit status."""
        return self.waived is not None or self.baselined

    def sort_key(self) -> tuple:
        loc = self.location
        return (loc.file, loc.line, loc.column, self.rule, self.operating_point or "", self.message)


def cause_name(finding: Finding) -> str:
    """How a consequence names its cause (``explained_by``): "rule-id at 'point'"."""
    return f"{finding.rule} at '{finding.operating_point}'" if finding.operating_point else finding.rule


def dotted(path: tuple[str | int, ...]) -> str:
    """A document path for messages: ``operating_points[2].speed``."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += f".{part}" if out else str(part)
    return out


def kind_of(value) -> str:
    """The kind of a plain value as messages name it, in the words of the format
    reference (docs/format.md): "null", "a boolean", "an integer", "a number", "a
    string", "a mapping", "a list"."""
    if value is None:
        return "null"
    if value is True or value is False:
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    return f"a {type(value).__name__}"
