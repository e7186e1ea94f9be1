"""The rule file format (``rules/<id>.yaml``) and the parsed rule pack.

A rule is data: it names one figure (:mod:`specguard.figures.registry`), the
threshold bands that turn the figure's value into a finding, where the finding
points, its message template, what it checks and why, its sources, the remedies
to compute and one passing and one failing example. Nothing in a rule file is
ever evaluated as code: comparisons are the four comparators and ``is`` below,
and the message is a template of named placeholders filled by plain string
substitution.

The pydantic model here is the single source of truth of the format;
``schemas/rule-v1.schema.json`` is generated from it (``python -m
specguard.schema``). Checks that need the figure registry or the spec model
(threshold units, placeholders, paths) run after the model in
:func:`semantic_problems`, so that each problem is located at its own line.
"""

from __future__ import annotations

import math
import re
import string
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import Annotated, Any, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, StringConstraints

from ..figures.registry import FIGURE_DEFS, FORMER_FIGURE_NAMES, REMEDIES, FigureDef
from ..model.spec import PwmScheme
from ..model.units import UnitError, format_si, parse_quantity

SEVERITIES = ("info", "warning", "error")  # least severe first
SEVERITY_RANK = {s: i for i, s in enumerate(SEVERITIES)}
COMPARATORS = ("above", "below", "at_least", "at_most", "is")
COMPARATOR_WORDS = {
    "above": "above",
    "below": "below",
    "at_least": "at least",
    "at_most": "at most",
    "is": "is",
}
# Words a rule id may not contain: severity is configuration, not identity.
SEVERITY_WORDS = frozenset({"error", "errors", "warning", "warn", "info", "notice", "fatal", "critical"})
# Placeholders a message may use besides the figure names.
SPECIAL_PLACEHOLDERS = ("limit", "point")
POINT = "{point}"

_CONFIG = ConfigDict(strict=True, extra="forbid", frozen=True, hide_input_in_errors=True, defer_build=True)


def _as_tuple(value: object) -> object:
    return tuple(value) if isinstance(value, list) else value


AsTuple = BeforeValidator(_as_tuple)

RuleId = Annotated[str, StringConstraints(min_length=3, max_length=63, pattern=r"^[a-z]+(?:-[a-z]+)+$")]
# A document path, slash-separated keys; the rule's "at" and "related" may hold {point}.
DocPath = Annotated[
    str,
    StringConstraints(max_length=200, pattern=r"^[a-z_]+(?:/(?:[a-z_]+|\{point\}))*$"),
]
FigureName = Annotated[str, StringConstraints(pattern=r"^[a-z][a-z0-9_]*$", max_length=64)]
Line = Annotated[str, StringConstraints(min_length=1, max_length=200)]
Paragraph = Annotated[str, StringConstraints(min_length=1, max_length=2000)]
Tag = Annotated[str, StringConstraints(min_length=1, max_length=64, pattern=r"^[A-Za-z0-9][A-Za-z0-9_.\-]*$")]
Threshold = float | Annotated[str, StringConstraints(min_length=1, max_length=40)]


class _Model(BaseModel):
    model_config = _CONFIG


class Band(_Model):
    """One threshold band: the finding takes ``severity`` when the figure's value
    passes the one comparator given (the most severe matching band wins)."""

    severity: Literal["error", "warning", "info"] = Field(description="severity of a finding in this band")
    above: Threshold | None = Field(None, description="matches when the value is greater than this")
    below: Threshold | None = Field(None, description="matches when the value is less than this")
    at_least: Threshold | None = Field(None, description="matches when the value is this or more")
    at_most: Threshold | None = Field(None, description="matches when the value is this or less")
    is_: bool | None = Field(None, alias="is", description="for flag figures: matches when the flag has this value")

    @property
    def comparator(self) -> str:
        for name in COMPARATORS:
            if getattr(self, "is_" if name == "is" else name) is not None:
                return name
        return ""

    @property
    def comparators(self) -> list[str]:
        return [n for n in COMPARATORS if getattr(self, "is_" if n == "is" else n) is not None]

    @property
    def threshold(self) -> float | str | bool | None:
        name = self.comparator
        return getattr(self, "is_" if name == "is" else name) if name else None


class Applies(_Model):
    """Which specs the rule applies to. The topology filters (motor types,
    schemes, windings, tags, absent) skip a spec silently; a missing
    ``requires`` path, or a missing ``equals`` path, makes the rule report
    that it could not be applied."""

    motor_types: Annotated[tuple[Literal["brushed-dc", "three-phase"], ...], AsTuple] = Field(
        (), description="only these motor types (empty: all)"
    )
    schemes: Annotated[
        tuple[PwmScheme, ...],
        AsTuple,
    ] = Field((), description="only these PWM schemes (empty: all)")
    windings: Annotated[tuple[Literal["iron-core", "coreless", "slotless"], ...], AsTuple] = Field(
        (), description="only these winding constructions (empty: all)"
    )
    tags: Annotated[tuple[Tag, ...], AsTuple] = Field(
        (), description="only axes carrying at least one of these tags (empty: all)"
    )
    requires: Annotated[tuple[DocPath, ...], AsTuple] = Field(
        (),
        description="spec paths that must be present; when one is missing the rule says it could not be applied",
    )
    present: Annotated[tuple[DocPath, ...], AsTuple] = Field(
        (),
        description="spec paths that must be present (a spec without one is skipped: e.g. no chokes fitted)",
    )
    absent: Annotated[tuple[DocPath, ...], AsTuple] = Field(
        (), description="spec paths that must be absent (a spec that has one is skipped)"
    )
    equals: Mapping[DocPath, bool | str | float] = Field(
        default_factory=dict,
        description="spec path -> value it must have (another value: skipped; missing: not applicable)",
    )


class Examples(_Model):
    """A passing and a failing example: overlays deep-merged over a base spec."""

    base: Annotated[str, StringConstraints(pattern=r"^[a-z][a-z0-9-]*$", max_length=64)] = Field(
        description="name of a complete base spec in the examples/ folder beside the rules"
    )
    pass_: dict[str, Any] = Field(
        alias="pass",
        description="overlay for the passing example (mappings merge key by key, lists and scalars "
        "replace, null removes the key)",
    )
    fail: dict[str, Any] = Field(description="overlay for the failing example (same merge rules)")


class When(_Model):
    """When another wording of the message fits: every condition given must hold.
    A figure condition takes one comparator, like a band; a figure that could not be
    computed never matches."""

    present: Annotated[tuple[DocPath, ...], AsTuple] = Field((), description="spec paths that must be present")
    absent: Annotated[tuple[DocPath, ...], AsTuple] = Field((), description="spec paths that must be absent")
    equals: Mapping[DocPath, bool | str | float] = Field(
        default_factory=dict, description="spec path -> the value it must have"
    )
    figure: FigureName | None = Field(None, description="a figure compared with the one threshold given")
    above: Threshold | None = Field(None, description="the figure is greater than this")
    below: Threshold | None = Field(None, description="the figure is less than this")
    at_least: Threshold | None = Field(None, description="the figure is this or more")
    at_most: Threshold | None = Field(None, description="the figure is this or less")
    is_: bool | None = Field(None, alias="is", description="for flag figures: the flag has this value")

    @property
    def comparators(self) -> list[str]:
        return [n for n in COMPARATORS if getattr(self, "is_" if n == "is" else n) is not None]

    @property
    def threshold(self) -> float | str | bool | None:
        names = self.comparators
        return getattr(self, "is_" if names[0] == "is" else names[0]) if names else None


class MessageCase(_Model):
    """Another wording of the message for the findings it fits (say only what is true
    of this spec: no chokes named where none are fitted, the reason a bound is zero)."""

    when: When = Field(description="the conditions under which this wording is used")
    message: Paragraph = Field(description="the message template for these findings (same placeholders)")


class Rule(_Model):
    """One rule of the pack: a figure, its threshold bands and everything a
    reviewer needs to act on a finding."""

    id: RuleId = Field(description="stable id: lower-case words joined by hyphens, never encoding a severity")
    title: Line = Field(description="one line saying what a finding means")
    figure: FigureName = Field(description="the figure the rule judges (a name of the figure registry)")
    scope: Literal["point", "axis"] = Field(
        description="point: judged at each operating point; axis: once per spec (must match the figure's scope)"
    )
    bands: Annotated[tuple[Band, ...], AsTuple] = Field(
        min_length=1, max_length=3, description="threshold bands, one per severity"
    )
    applies: Applies = Field(default_factory=Applies, description="which specs the rule applies to")
    at: DocPath = Field(description="document path the finding points at; {point} is the operating point's index")
    related: Annotated[tuple[DocPath, ...], AsTuple] = Field(
        (),
        description="further document paths shown as related locations (when present in the spec)",
    )
    message: Paragraph = Field(
        description="message template: {figure_name} shows a figure with its unit (ratios as percent), "
        "{limit} the crossed threshold, {point} the operating point's name"
    )
    message_cases: Annotated[tuple[MessageCase, ...], AsTuple] = Field(
        (),
        max_length=4,
        description="other wordings of the message: the first case whose conditions hold (and whose "
        "figures are computed) gives the finding's message; otherwise 'message'",
    )
    checks: Paragraph = Field(description="what the rule checks, in plain words")
    why: Paragraph = Field(description="why it matters")
    formula: Paragraph = Field(description="the relation behind the figure, as text")
    sources: Annotated[tuple[Line, ...], AsTuple] = Field(
        min_length=1,
        description="published sources, or the words 'common practice, no published source'",
    )
    remedies: Annotated[tuple[FigureName, ...], AsTuple] = Field(
        (), description="remedies to compute (names of the remedy registry)"
    )
    aliases: Annotated[tuple[RuleId, ...], AsTuple] = Field((), description="former ids of this rule")
    explains: Annotated[tuple[RuleId, ...], AsTuple] = Field(
        (),
        description=(
            "ids of rules whose findings this rule's finding explains (one cause): when both fire at the same "
            "operating point, or either on the whole axis, those are reported as its consequences"
        ),
    )
    examples: Examples

    @property
    def default_severity(self) -> str:
        return max((b.severity for b in self.bands), key=SEVERITY_RANK.__getitem__)


# ----------------------------------------------------------------- semantics
def with_current_figure_names(data: object) -> object:
    """A rule document with the former names of renamed figures
    (:data:`~specguard.figures.registry.FORMER_FIGURE_NAMES`) replaced by the current
    ones, in ``figure``, the message placeholders and the message cases; a team's rule
    file written before a rename keeps working."""
    if not isinstance(data, dict):
        return data

    def name(value: object) -> object:
        return FORMER_FIGURE_NAMES.get(value, value) if isinstance(value, str) else value

    def text(value: object) -> object:
        if not isinstance(value, str):
            return value
        return re.sub(r"\{([a-z][a-z0-9_]*)\}", lambda m: "{" + FORMER_FIGURE_NAMES.get(m[1], m[1]) + "}", value)

    out = dict(data)
    if "figure" in out:
        out["figure"] = name(out["figure"])
    if "message" in out:
        out["message"] = text(out["message"])
    cases = out.get("message_cases")
    if isinstance(cases, list):
        fixed = []
        for case in cases:
            if isinstance(case, dict):
                case = dict(case)
                if "message" in case:
                    case["message"] = text(case["message"])
                when = case.get("when")
                if isinstance(when, dict) and "figure" in when:
                    case["when"] = {**when, "figure": name(when["figure"])}
            fixed.append(case)
        out["message_cases"] = fixed
    return out


def split_path(text: str) -> tuple[str, ...]:
    return tuple(text.split("/")) if text else ()


def spec_path_exists(parts: tuple[str, ...]) -> bool:
    """Whether a slash path names a field of the spec model ({point} after operating_points)."""
    from ..model import model_at

    current = model_at(())
    for i, part in enumerate(parts):
        if part == POINT:
            if i == 0 or parts[i - 1] != "operating_points":
                return False
            continue
        if current is None or part not in current.model_fields:
            return False
        current = model_at(tuple(p for p in parts[: i + 1] if p != POINT))
    return True


def template_names(template: str) -> list[str]:
    """The placeholder names of a message template; raises ValueError on anything else."""
    names: list[str] = []
    for _literal, name, spec, conversion in string.Formatter().parse(template):
        if name is None:
            continue
        if spec or conversion or not re.fullmatch(r"[a-z][a-z0-9_]*", name):
            raise ValueError(
                f"placeholder {{{name}{'!' + conversion if conversion else ''}{':' + spec if spec else ''}}} "
                "is not allowed; write {name} with a figure name, {limit} or {point}"
            )
        if name not in names:
            names.append(name)
    return names


def compile_template(template: str) -> tuple[tuple[str, str | None], ...]:
    """(literal text, placeholder name or None) pairs; braces doubled in the file are kept single."""
    return tuple((literal, name) for literal, name, _s, _c in string.Formatter().parse(template))


def threshold_si(value: object, figure: FigureDef, comparator: str) -> float | bool:
    """A band threshold in SI for ``figure``; raises ValueError with a plain message."""
    if figure.dimension == "flag":
        if comparator != "is" or not isinstance(value, bool):
            raise ValueError(f"figure '{figure.name}' is a flag: write 'is: true' or 'is: false'")
        return value
    if comparator == "is":
        raise ValueError(f"'is' is for flag figures; '{figure.name}' is a {figure.dimension}")
    if figure.dimension == "ratio":
        if isinstance(value, str) and figure_form(figure.name) == "percent":
            share = percent_value(value)
            if share is not None:
                return share
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            if figure_form(figure.name) in ("count", "number"):
                raise ValueError(f"figure '{figure.name}' is a plain number: write it without a unit (e.g. 10)")
            raise ValueError(f"figure '{figure.name}' is a ratio: write a plain number or a percentage (0.2 or '20 %')")
        return float(value)
    if not isinstance(value, str):
        raise ValueError(
            f"figure '{figure.name}' is a {figure.dimension.replace('_', ' ')}: write the threshold "
            f"with its unit as text, e.g. '{_example(figure.dimension)}'"
        )
    from ..model.units import underflow_message

    too_small = underflow_message(value, figure.dimension)
    if too_small is not None:  # parse_quantity would read it as a silent zero
        raise ValueError(too_small)
    try:
        return parse_quantity(value, figure.dimension)
    except UnitError as exc:
        raise ValueError(str(exc)) from None


_PERCENT = re.compile(r"^\s*([+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+))\s*%\s*$")


def percent_value(text: str) -> float | None:
    """A threshold written as a percentage ("30 %", "2.5%") as a ratio (0.3); None for other text."""
    match = _PERCENT.match(text)
    if match is None:
        return None
    value = float(match.group(1)) / 100.0
    return value if math.isfinite(value) else None


def _example(dimension: str) -> str:
    from ..model.units import DIMENSIONS

    return DIMENSIONS[dimension].example


def semantic_problems(rule: Rule, file_stem: str | None = None) -> list[tuple[tuple, str]]:
    """Problems the model cannot see: (document path in the rule file, message)."""
    out: list[tuple[tuple, str]] = []
    figure = FIGURE_DEFS.get(rule.figure)
    if file_stem is not None and file_stem != rule.id:
        out.append(
            (
                ("id",),
                f"the file must be named after the rule id: '{rule.id}.yaml', not '{file_stem}.yaml'",
            )
        )
    words = set(rule.id.split("-"))
    for alias in rule.aliases:
        words |= set(alias.split("-"))
    bad_words = sorted(words & SEVERITY_WORDS)
    if bad_words:
        out.append(
            (
                ("id",),
                f"a rule id never encodes a severity (found '{bad_words[0]}'); severity is configuration",
            )
        )
    if rule.id in rule.aliases:
        out.append((("aliases",), "a rule id cannot be its own alias"))
    if figure is None:
        hint = _close(rule.figure, FIGURE_DEFS)
        out.append(
            (
                ("figure",),
                f"unknown figure '{rule.figure}'" + (f"; did you mean '{hint}'?" if hint else ""),
            )
        )
    elif figure.scope != rule.scope:
        out.append(
            (
                ("scope",),
                f"figure '{figure.name}' has {figure.scope} scope; write 'scope: {figure.scope}'",
            )
        )
    seen_severities: set[str] = set()
    for i, band in enumerate(rule.bands):
        comps = band.comparators
        if len(comps) != 1:
            out.append((("bands", i), "a band takes exactly one of above, below, at_least, at_most, is"))
            continue
        if band.severity in seen_severities:
            out.append(
                (
                    ("bands", i, "severity"),
                    f"two bands with severity '{band.severity}'; one band per severity",
                )
            )
        seen_severities.add(band.severity)
        if figure is not None:
            key = "is" if comps[0] == "is" else comps[0]
            try:
                threshold_si(band.threshold, figure, comps[0])
            except ValueError as exc:
                out.append((("bands", i, key), str(exc)))
    if figure is not None and figure.dimension == "flag" and rule.remedies:
        out.append((("remedies",), "a rule on a flag figure has no threshold to compute remedies for"))
    out.extend(_template_problems(rule.message, ("message",), rule.scope))
    for i, case in enumerate(rule.message_cases):
        out.extend(_template_problems(case.message, ("message_cases", i, "message"), rule.scope))
        out.extend(_when_problems(case.when, ("message_cases", i, "when"), rule.scope))
    for key, paths in (("at", (rule.at,)), ("related", rule.related)):
        for j, text in enumerate(paths):
            where = (key,) if key == "at" else (key, j)
            parts = split_path(text)
            if POINT in parts and rule.scope != "point":
                out.append((where, "{point} needs 'scope: point'"))
            if not spec_path_exists(parts):
                out.append((where, f"'{text}' is not a path of the spec format"))
    for key in ("requires", "present", "absent"):
        for j, text in enumerate(getattr(rule.applies, key)):
            if not spec_path_exists(split_path(text)):
                out.append((("applies", key, j), f"'{text}' is not a path of the spec format"))
    for text in rule.applies.equals:
        if not spec_path_exists(split_path(text)):
            out.append((("applies", "equals", text), f"'{text}' is not a path of the spec format"))
    for j, name in enumerate(rule.remedies):
        if name not in REMEDIES:
            hint = _close(name, REMEDIES)
            out.append(
                (
                    ("remedies", j),
                    f"unknown remedy '{name}'" + (f"; did you mean '{hint}'?" if hint else ""),
                )
            )
    return out


def _template_problems(template: str, where: tuple, scope: str) -> list[tuple[tuple, str]]:
    out: list[tuple[tuple, str]] = []
    try:
        names = template_names(template)
    except ValueError as exc:
        return [(where, str(exc))]
    for name in names:
        if name in SPECIAL_PLACEHOLDERS:
            if name == "point" and scope != "point":
                out.append((where, "{point} needs 'scope: point'"))
            continue
        fdef = FIGURE_DEFS.get(name)
        if fdef is None:
            hint = _close(name, [*FIGURE_DEFS, *SPECIAL_PLACEHOLDERS])
            out.append((where, f"unknown placeholder {{{name}}}" + (f"; did you mean {{{hint}}}?" if hint else "")))
        elif fdef.scope == "point" and scope == "axis":
            out.append((where, f"{{{name}}} is a per-point figure; an axis rule can only show axis figures"))
    return out


def _when_problems(when: When, where: tuple, scope: str) -> list[tuple[tuple, str]]:
    out: list[tuple[tuple, str]] = []
    comps = when.comparators
    if when.figure is None:
        if comps:
            out.append((where, "a threshold needs 'figure:', the figure it compares"))
        if not when.present and not when.absent and not when.equals:
            out.append((where, "give at least one of present, absent, equals and figure"))
    else:
        fdef = FIGURE_DEFS.get(when.figure)
        if fdef is None:
            hint = _close(when.figure, FIGURE_DEFS)
            out.append(
                (where + ("figure",), f"unknown figure '{when.figure}'" + (f"; did you mean '{hint}'?" if hint else ""))
            )
        elif fdef.scope == "point" and scope == "axis":
            out.append(
                (where + ("figure",), f"'{when.figure}' is a per-point figure; an axis rule compares axis figures")
            )
        elif len(comps) != 1:
            out.append((where, "a figure condition takes exactly one of above, below, at_least, at_most, is"))
        else:
            try:
                threshold_si(when.threshold, fdef, comps[0])
            except ValueError as exc:
                out.append((where + (comps[0],), str(exc)))
    for key in ("present", "absent", "equals"):
        for j, text in enumerate(getattr(when, key)):
            at = where + (key, text if key == "equals" else j)
            parts = split_path(text)
            if POINT in parts and scope != "point":
                out.append((at, "{point} needs 'scope: point'"))
            if not spec_path_exists(parts):
                out.append((at, f"'{text}' is not a path of the spec format"))
    return out


def _close(word: str, candidates) -> str | None:
    import difflib

    hit = difflib.get_close_matches(word, list(candidates), n=1, cutoff=0.6)
    return hit[0] if hit else None


# ------------------------------------------------------------- the parsed pack
@dataclass(frozen=True)
class CompiledBand:
    severity: str
    comparator: str
    threshold: float | bool  # SI
    written: object  # as written in the rule file (or the override)


@dataclass(frozen=True)
class CompiledCase:
    """A message case ready for evaluation."""

    present: tuple[tuple[str, ...], ...]
    absent: tuple[tuple[str, ...], ...]
    equals: tuple[tuple[tuple[str, ...], object], ...]
    figure: str | None
    band: CompiledBand | None  # the figure condition as a band (severity unused)
    template: tuple[tuple[str, str | None], ...]
    message_figures: tuple[str, ...]


@dataclass(frozen=True)
class PackRule:
    """A validated rule with what evaluation needs precomputed."""

    rule: Rule
    source: str  # where the rule file came from, for messages ("specguard.pack/x.yaml" or a path)
    examples_dirs: tuple[Any, ...]  # Traversables searched for the example base, in order
    bands: tuple[CompiledBand, ...]  # most severe first
    template: tuple[tuple[str, str | None], ...]
    message_figures: tuple[str, ...]  # figure names used by the message, in order
    at: tuple[str, ...]
    related: tuple[tuple[str, ...], ...]
    builtin: bool = True
    cases: tuple[CompiledCase, ...] = ()

    @property
    def id(self) -> str:
        return self.rule.id

    @property
    def figure(self) -> FigureDef:
        return FIGURE_DEFS[self.rule.figure]

    @cached_property
    def figures_used(self) -> tuple[str, ...]:
        """The judged figure, then the message's (computed once: judged for every variant)."""
        names = [self.rule.figure]
        names.extend(n for n in self.message_figures if n not in names)
        return tuple(names)


def compile_rule(rule: Rule, source: str, examples_dirs: tuple[Any, ...], builtin: bool) -> PackRule:
    figure = FIGURE_DEFS[rule.figure]
    bands = [
        CompiledBand(b.severity, b.comparator, threshold_si(b.threshold, figure, b.comparator), b.threshold)
        for b in rule.bands
    ]
    bands.sort(key=lambda b: -SEVERITY_RANK[b.severity])
    names = template_names(rule.message)
    cases = []
    for case in rule.message_cases:
        when, band = case.when, None
        if when.figure is not None:
            comparator = when.comparators[0]
            threshold = threshold_si(when.threshold, FIGURE_DEFS[when.figure], comparator)
            band = CompiledBand("info", comparator, threshold, when.threshold)
        cases.append(
            CompiledCase(
                present=tuple(split_path(p) for p in when.present),
                absent=tuple(split_path(p) for p in when.absent),
                equals=tuple((split_path(p), v) for p, v in when.equals.items()),
                figure=when.figure,
                band=band,
                template=compile_template(case.message),
                message_figures=tuple(n for n in template_names(case.message) if n in FIGURE_DEFS),
            )
        )
    return PackRule(
        rule=rule,
        source=source,
        examples_dirs=examples_dirs,
        bands=tuple(bands),
        template=compile_template(rule.message),
        message_figures=tuple(n for n in names if n in FIGURE_DEFS),
        at=split_path(rule.at),
        related=tuple(split_path(p) for p in rule.related),
        builtin=builtin,
        cases=tuple(cases),
    )


@dataclass(frozen=True)
class Pack:
    rules: tuple[PackRule, ...]
    by_id: Mapping[str, PackRule] = field(default_factory=dict)
    aliases: Mapping[str, str] = field(default_factory=dict)  # alias -> id

    def get(self, name: str) -> PackRule | None:
        """The rule with id or alias ``name``."""
        rule = self.by_id.get(name)
        if rule is None and name in self.aliases:
            rule = self.by_id[self.aliases[name]]
        return rule

    def suggest(self, name: str) -> str | None:
        return _close(name, [*self.by_id, *self.aliases])


class PackError(Exception):
    """A rule file (or the set of rule files) is invalid; ``problems`` holds one
    "file:line:column: message" line each."""

    def __init__(self, problems: list[str]) -> None:
        super().__init__("\n".join(problems))
        self.problems = list(problems)


class OverrideError(ValueError):
    """A policy override does not fit the rule (unknown band, bad threshold)."""


# ------------------------------------------------------------- text helpers
# How a figure reads in a message, where its dimension alone does not say it (the
# ``form`` of its entry in specguard.figures.registry.Fig):
#   percent  a ratio of like quantities (the default of ratios): "44.7 %"
#   factor   a ratio whose findings sit far from 1 (a percent would be silly): "43.8 : 1", "1 : 40"
#   count    a number of things: "7.5"
#   number   a dimensionless number judged against 1: "6.44"
#   under    a signed margin, positive when the quantity stays under its limit: "8.8 K below" / "357 K above"
#   over     a signed difference, positive when the quantity is over the reference: "3 V above" / "4.4 V below"
# A message template places the worded forms where the sign word belongs
# ("the winding settles at {winding_temperature}, {winding_margin} its limit").


def figure_form(name: str) -> str:
    """The form of a figure in messages (the table's ``form``, see above): a form
    name, or the figure's dimension for plain values."""
    fdef = FIGURE_DEFS.get(name)
    if fdef is not None and fdef.form is not None:
        return fdef.form
    dimension = fdef.dimension if fdef is not None else "ratio"
    return "percent" if dimension == "ratio" else dimension


def plain_number(value: float, digits: int = 3) -> str:
    """``value`` with ``digits`` significant digits, never in scientific notation;
    whole numbers from 10**digits up ("7512", "43.8", "0.0033", "0")."""
    v = float(value)
    if not math.isfinite(v):
        return str(v)
    if v == 0.0:
        return "0"
    magnitude = math.floor(math.log10(abs(v)))
    decimals = max(0, digits - 1 - magnitude)
    text = f"{v:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def percent_text(ratio: float) -> str:
    """A ratio of like quantities as a percentage: 3 significant digits, whole
    percents from 100 % up, never scientific notation ("44.7 %", "7512 %", "0.33 %")."""
    return f"{plain_number(float(ratio) * 100.0)} %"


def factor_text(ratio: float) -> str:
    """A ratio far from one as a proportion: "43.8 : 1", or "1 : 40" below one."""
    v = float(ratio)
    if v <= 0.0 or not math.isfinite(v):
        return f"{plain_number(v)} : 1"
    if v >= 1.0:
        return f"{plain_number(v)} : 1"
    return f"1 : {plain_number(1.0 / v)}"


def signed_text(value: float, dimension: str, positive_word: str, negative_word: str) -> str:
    """A signed difference worded by its sign: "8.842 K below", "357.3 K above"; "exactly at" for 0."""
    v = float(value)
    if v == 0.0:
        return "exactly at"
    word = positive_word if v > 0 else negative_word
    return f"{format_si(abs(v), dimension)} {word}"


def format_value(value: float | bool, dimension: str, form: str | None = None) -> str:
    """A figure value for messages: SI with its unit, ratios as percent, flags yes/no;
    ``form`` (:func:`figure_form`) for the forms a dimension does not say."""
    if dimension == "flag":
        return "yes" if value else "no"
    if form == "count" or form == "number":
        return plain_number(float(value))
    if form == "factor":
        return factor_text(float(value))
    if form == "under":
        return signed_text(float(value), dimension, "below", "above")
    if form == "over":
        return signed_text(float(value), dimension, "above", "below")
    if dimension == "ratio":
        return percent_text(float(value))
    return format_si(float(value), dimension)


def limit_text(value: float | bool, dimension: str, form: str) -> str:
    """A threshold in the form of its figure, unsigned forms plain (a limit has no sign word)."""
    if form in ("under", "over"):
        return format_value(value, dimension)
    return format_value(value, dimension, form)


def band_text(band: CompiledBand, figure: FigureDef) -> str:
    """'warning above 20 %' / 'warning below 16 kHz' / 'info when yes'."""
    if band.comparator == "is":
        return f"{band.severity} when {'yes' if band.threshold else 'no'}"
    form = figure_form(figure.name)
    text = f"{band.severity} {COMPARATOR_WORDS[band.comparator]} {limit_text(band.threshold, figure.dimension, form)}"
    if figure.dimension == "ratio" and form == "percent":
        text += f" ({band.written})"  # as the rule file and a config override write it
    return text


def one_line(text: str) -> str:
    return " ".join(text.split())


def dump_overlay(value: object, indent: int = 0) -> list[str]:
    """A small YAML rendering of an example overlay (plain mappings, lists, scalars)."""
    pad = "  " * indent
    lines: list[str] = []
    if isinstance(value, dict):
        if not value:
            return [pad + "{}"]
        for key, item in value.items():
            if isinstance(item, (dict, list)) and item:
                lines.append(f"{pad}{key}:")
                lines.extend(dump_overlay(item, indent + 1))
            else:
                lines.append(f"{pad}{key}: {_scalar(item)}")
        return lines
    if isinstance(value, list):
        for item in value:
            if isinstance(item, dict) and item:
                inner = ", ".join(f"{k}: {_scalar(v)}" for k, v in item.items())
                lines.append(f"{pad}- {{ {inner} }}")
            else:
                lines.append(f"{pad}- {_scalar(item)}")
        return lines
    return [pad + _scalar(value)]


def _scalar(value: object) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (dict, list)):
        return "{}" if isinstance(value, dict) else "[]"
    return str(value)


def explain_text(prule: PackRule) -> str:
    """The plain-text explanation `specguard explain` prints."""
    rule, figure = prule.rule, prule.figure
    lines = [f"{rule.id}: {rule.title}", ""]
    if rule.aliases:
        lines += [f"formerly: {', '.join(rule.aliases)}", ""]
    lines += [
        f"figure: {figure.name} ({figure.unit or 'flag'}, {figure.scope}) - {figure.meaning}",
        f"judged: {'at each operating point' if rule.scope == 'point' else 'once per axis'}",
        "thresholds: " + "; ".join(band_text(b, figure) for b in prule.bands),
        "",
        "What it checks:",
        "  " + one_line(rule.checks),
        "",
        "Why it matters:",
        "  " + one_line(rule.why),
        "",
        "Formula:",
        "  " + one_line(rule.formula),
        "",
        "Sources:",
        *(f"  - {s}" for s in rule.sources),
    ]
    if rule.remedies:
        lines += ["", "Remedies computed:", *(f"  - {REMEDIES[r]}" for r in rule.remedies)]
    ap = rule.applies
    filters = []
    for label, values in (
        ("motor types", ap.motor_types),
        ("schemes", ap.schemes),
        ("windings", ap.windings),
        ("axis tags", ap.tags),
        ("needs", ap.requires),
        ("only with", ap.present),
        ("only without", ap.absent),
    ):
        if values:
            filters.append(f"{label}: {', '.join(values)}")
    for path, value in ap.equals.items():
        filters.append(f"only when {path} is {_scalar(value)}")
    if filters:
        lines += ["", "Applies to:", *(f"  - {f}" for f in filters)]
    lines += ["", f"Examples (overlays on the base spec '{rule.examples.base}'):", "  passes:"]
    lines += dump_overlay(rule.examples.pass_, 2)
    lines += ["  fails:"]
    lines += dump_overlay(rule.examples.fail, 2)
    lines += ["", f"rule file: {prule.source}"]
    return "\n".join(lines) + "\n"


def merge_overlay(base: object, overlay: object) -> object:
    """Deep-merge an example overlay: mappings key by key, null removes a key,
    lists and scalars replace."""
    if isinstance(base, dict) and isinstance(overlay, dict):
        merged = dict(base)
        for key, value in overlay.items():
            if value is None:
                merged.pop(key, None)
            elif key in merged:
                merged[key] = merge_overlay(merged[key], value)
            else:
                merged[key] = _strip_nulls(value)
        return merged
    return _strip_nulls(overlay)


def _strip_nulls(value: object) -> object:
    if isinstance(value, dict):
        return {k: _strip_nulls(v) for k, v in value.items() if v is not None}
    return value
