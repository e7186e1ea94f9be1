"""Load the rule pack and evaluate it against one spec's figures.

The built-in rules are read through ``importlib.resources.files("specguard.pack")``
(the top-level ``rules/`` folder, installed as that package), never through the
source tree. A team's rule directories are read the same way and validated by
the same model. The parsed built-in pack is cached per process.

Evaluation, per rule: topology filters (motor type, scheme, winding, tags,
absent paths) skip a spec silently; a missing required path or figure gives one
``rule-not-applicable`` info finding (never a silent pass, never a guess); else
the figure is compared with the bands at each operating point (scope point) or
once (scope axis) and the most severe matching band gives the finding. A rule
that raises becomes an ``internal-error`` finding naming the rule and its file.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Collection, Mapping, Sequence
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from ..figures.registry import FIGURE_DEFS
from ..findings import Finding, Location, cause_name, dotted
from .pack import (
    POINT,
    CompiledBand,
    OverrideError,
    Pack,
    PackError,
    PackRule,
    Rule,
    compile_rule,
    figure_form,
    format_value,
    limit_text,
    merge_overlay,
    one_line,
    plain_number,
    semantic_problems,
    threshold_si,
    with_current_figure_names,
)
from .types import RuleOverride

BUILTIN_PACKAGE = "specguard.pack"
EXAMPLES_FOLDER = "examples"

Locate = Callable[..., tuple[Location, tuple[Location, ...]]]

__all__ = [
    "Pack",
    "PackError",
    "OverrideError",
    "applicability",
    "effective_bands",
    "evaluate",
    "example_data",
    "load_pack",
    "validate_override",
]


# ------------------------------------------------------------------ loading
def _builtin_root():
    from importlib.resources import files

    return files(BUILTIN_PACKAGE)


def _locate_in(result, path: tuple, key: bool = False) -> tuple[int, int]:
    probe = tuple(path)
    while True:
        loc = result.locations.get(probe)
        if loc is not None:
            span = loc.key if key and loc.key is not None else loc.value
            return span.line, span.column
        if not probe:
            return 1, 1
        probe = probe[:-1]


def parse_rule_bytes(raw: bytes, display: str, examples_dirs: tuple, builtin: bool) -> PackRule:
    """Validate one rule file; raises PackError with located problems."""
    from ..source import load_bytes

    result = load_bytes(raw, display)
    problems = [
        f"{display}:{f.location.line}:{f.location.column}: {f.message}"
        for f in result.findings
        if f.severity == "error"
    ]
    if problems or result.data is None:
        raise PackError(problems or [f"{display}:1:1: the rule file could not be read"])
    try:
        rule = Rule.model_validate(with_current_figure_names(result.data))
    except ValidationError as exc:
        out = []
        for err in exc.errors(include_url=False):
            loc = tuple(p for p in err.get("loc", ()) if isinstance(p, (str, int)))
            kind = err.get("type", "")
            line, col = _locate_in(result, loc if kind != "missing" else loc[:-1], key=kind == "extra_forbidden")
            where = dotted(loc) or "rule"
            msg = err.get("msg", "invalid value")
            if kind == "extra_forbidden":
                msg = f"unknown key '{loc[-1]}'"
            elif kind == "missing":
                msg = f"missing required key '{loc[-1]}'"
            out.append(f"{display}:{line}:{col}: {where}: {msg}")
        raise PackError(out) from None
    stem = display.rsplit("/", 1)[-1]
    stem = stem[: -len(".yaml")] if stem.endswith(".yaml") else stem
    semantic = semantic_problems(rule, stem)
    base = rule.examples.base + ".yaml"
    if not any(_is_file(d, base) for d in examples_dirs):
        semantic.append((("examples", "base"), f"no base spec '{base}' in the examples folder"))
    if semantic:
        out = []
        for path, message in semantic:
            line, col = _locate_in(result, path)
            out.append(f"{display}:{line}:{col}: {dotted(path) or 'rule'}: {message}")
        raise PackError(out)
    return compile_rule(rule, display, examples_dirs, builtin)


def _is_file(folder, name: str) -> bool:
    try:
        return (folder / name).is_file()
    except OSError:
        return False


def _read_dir(folder, display_prefix: str, examples_dirs: tuple, builtin: bool) -> tuple[list[PackRule], list[str]]:
    rules: list[PackRule] = []
    problems: list[str] = []
    entries = sorted(
        (e for e in folder.iterdir() if e.name.endswith(".yaml") and e.is_file()),
        key=lambda e: e.name,
    )
    for entry in entries:
        display = f"{display_prefix}/{entry.name}"
        try:
            rules.append(parse_rule_bytes(entry.read_bytes(), display, examples_dirs, builtin))
        except PackError as exc:
            problems.extend(exc.problems)
    return rules, problems


PACK_CACHE_FORMAT = 1


@functools.lru_cache(maxsize=4)
def _builtin_rules(pack_cache: str | None = None) -> tuple[PackRule, ...]:
    """The built-in pack, parsed and validated once per process.

    With ``pack_cache`` (a cache directory) the validated rules are also kept on
    disk as JSON keyed by the sha256 of every rule file and the tool version: a
    fresh process then skips the YAML parse and the validation of the whole pack
    (about 80 ms of a pre-commit run with 75 rules). The entry holds only data
    that came from validated rule files; a damaged or foreign entry is ignored.
    """
    root = _builtin_root()
    examples = (root / EXAMPLES_FOLDER,)
    entries = sorted(
        (e for e in root.iterdir() if e.name.endswith(".yaml") and e.is_file()),
        key=lambda e: e.name,
    )
    blobs = [(e.name, e.read_bytes()) for e in entries]
    target = _pack_cache_file(pack_cache, blobs) if pack_cache else None
    if target is not None:
        cached = _read_pack_cache(target, examples)
        if cached is not None:
            return cached
    rules: list[PackRule] = []
    problems: list[str] = []
    for name, raw in blobs:
        try:
            rules.append(parse_rule_bytes(raw, f"{BUILTIN_PACKAGE}/{name}", examples, True))
        except PackError as exc:
            problems.extend(exc.problems)
    if problems:
        raise PackError(problems)
    if target is not None:
        _write_pack_cache(target, rules)
    return tuple(rules)


def _pack_cache_file(directory: str, blobs) -> str:
    import hashlib
    import os

    from .. import __version__
    from . import pack as pack_module

    digest = hashlib.sha256(f"{PACK_CACHE_FORMAT}\0{__version__}\0".encode())
    # the rule model's code too: an edited checkout must never reuse an old shape
    for module_file in (pack_module.__file__, __file__):
        with open(module_file, "rb") as handle:
            digest.update(hashlib.sha256(handle.read()).digest())
    for name, raw in blobs:
        digest.update(name.encode() + b"\0" + hashlib.sha256(raw).digest())
    return os.path.join(directory, f"pack-v{PACK_CACHE_FORMAT}", digest.hexdigest() + ".json")


def _read_pack_cache(path: str, examples) -> tuple[PackRule, ...] | None:
    import json

    try:
        with open(path, encoding="utf-8") as handle:
            document = json.load(handle)
        if document.get("pack_cache_format") != PACK_CACHE_FORMAT:
            return None
        return tuple(
            compile_rule(_construct(Rule, item["rule"]), item["source"], examples, True) for item in document["rules"]
        )
    except Exception:  # damaged, foreign or unreadable entry: parse the pack instead
        return None


def _write_pack_cache(path: str, rules: list[PackRule]) -> None:
    import json
    import os

    from ..atomic import WriteError, write_atomic
    from ..cache import make_dirs

    document = {
        "pack_cache_format": PACK_CACHE_FORMAT,
        "rules": [{"source": r.source, "rule": r.rule.model_dump(mode="json")} for r in rules],
    }
    try:
        folder = os.path.dirname(path)
        make_dirs(os.path.dirname(folder), folder)
        write_atomic(Path(path), json.dumps(document, sort_keys=True))
    except (OSError, WriteError):
        pass  # the cache is an optimisation only


def _construct(model, data: dict):
    """Rebuild a validated model from its own ``model_dump`` without validating again."""
    import typing

    from pydantic import BaseModel

    def rebuild(annotation, value):
        origin = typing.get_origin(annotation)
        if origin is typing.Annotated:
            return rebuild(typing.get_args(annotation)[0], value)
        if origin in (typing.Union, getattr(__import__("types"), "UnionType", None)):
            if value is None:
                return None
            options = [a for a in typing.get_args(annotation) if a is not type(None)]
            return rebuild(options[0], value) if len(options) == 1 else value
        if origin is tuple and isinstance(value, list):
            args = typing.get_args(annotation)
            item = args[0] if args else Any
            return tuple(rebuild(item, v) for v in value)
        if isinstance(annotation, type) and issubclass(annotation, BaseModel) and isinstance(value, dict):
            return _construct(annotation, value)
        return value

    # pydantic keeps each field's evaluated annotation (Annotated metadata split off)
    fields = model.model_fields
    values = {name: rebuild(fields[name].annotation, data[name]) for name in fields if name in data}
    return model.model_construct(**values)


def load_pack(extra_dirs: Sequence[Path] = (), pack_cache: str | None = None) -> Pack:
    """The built-in rules plus the rule files (``*.yaml``) of ``extra_dirs``.

    Raises PackError (every problem as "file:line:column: message") for an
    invalid rule file, a missing directory, or a duplicate id or alias.
    """
    rules = list(_builtin_rules(pack_cache))
    problems: list[str] = []
    builtin_examples = _builtin_root() / EXAMPLES_FOLDER
    for directory in extra_dirs:
        directory = Path(directory)
        if not directory.is_dir():
            problems.append(f"{directory.as_posix()}: rule directory not found")
            continue
        found, errs = _read_dir(directory, directory.as_posix(), (directory / EXAMPLES_FOLDER, builtin_examples), False)
        rules.extend(found)
        problems.extend(errs)
    by_id: dict[str, PackRule] = {}
    aliases: dict[str, str] = {}
    for prule in rules:
        for name in (prule.id, *prule.rule.aliases):
            other = by_id.get(name) or (by_id.get(aliases[name]) if name in aliases else None)
            if other is not None:
                problems.append(f"{prule.source}:1:1: rule id or alias '{name}' is already used by {other.source}")
        by_id.setdefault(prule.id, prule)
        for alias in prule.rule.aliases:
            aliases.setdefault(alias, prule.id)
    for prule in rules:
        for name in prule.rule.explains:
            if name not in by_id and name not in aliases:
                problems.append(f"{prule.source}:1:1: explains '{name}', which is no rule of the pack")
    if problems:
        raise PackError(problems)
    return Pack(tuple(rules), by_id, aliases)


def example_data(prule: PackRule, which: str) -> dict:
    """The plain data of a rule's 'pass' or 'fail' example: the base spec with the overlay merged."""
    from ..source import load_bytes

    if which not in ("pass", "fail"):
        raise ValueError("which is 'pass' or 'fail'")
    name = prule.rule.examples.base + ".yaml"
    for folder in prule.examples_dirs:
        if _is_file(folder, name):
            entry = folder / name
            break
    else:
        raise PackError([f"{prule.source}:1:1: no base spec '{name}'"])
    result = load_bytes(entry.read_bytes(), f"examples/{name}")
    if result.data is None:
        raise PackError(
            [f"examples/{name}:{f.location.line}:{f.location.column}: {f.message}" for f in result.findings]
        )
    overlay = prule.rule.examples.pass_ if which == "pass" else prule.rule.examples.fail
    merged = merge_overlay(result.data, overlay)
    assert isinstance(merged, dict)  # a mapping merged with a mapping overlay
    return merged


# ---------------------------------------------------------------- overrides
def effective_bands(prule: PackRule, override: RuleOverride | None) -> tuple[CompiledBand, ...]:
    """The rule's bands with the override's thresholds applied (most severe first)."""
    if override is None or not override.thresholds:
        return prule.bands
    by_severity = {b.severity: b for b in prule.bands}
    figure = prule.figure
    out = []
    for severity in override.thresholds:
        if severity not in by_severity:
            raise OverrideError(f"rule '{prule.id}' has no {severity} band (it has: {', '.join(by_severity)})")
    for band in prule.bands:
        if band.severity in override.thresholds:
            written = override.thresholds[band.severity]
            try:
                value = threshold_si(written, figure, band.comparator)
            except ValueError as exc:
                raise OverrideError(f"rule '{prule.id}', {band.severity} threshold: {exc}") from None
            band = CompiledBand(band.severity, band.comparator, value, written)
        out.append(band)
    return tuple(out)


def validate_override(pack: Pack, name: str, override: RuleOverride) -> list[str]:
    """Problems of one policy override (for the config layer to report, exit 2)."""
    prule = pack.get(name)
    if prule is None:
        hint = pack.suggest(name)
        return [f"unknown rule '{name}'" + (f"; did you mean '{hint}'?" if hint else "")]
    try:
        effective_bands(prule, override)
    except OverrideError as exc:
        return [str(exc)]
    return []


# ------------------------------------------------------------- applicability
_MISSING = object()


def _get(spec: Any, parts: tuple) -> Any:
    node = spec
    for part in parts:
        if isinstance(part, int):
            if not isinstance(node, tuple) or not 0 <= part < len(node):
                return _MISSING
            node = node[part]
        else:
            node = getattr(node, part, _MISSING)
        if node is None or node is _MISSING:
            return _MISSING
    return node


def _present(spec: Any, parts: tuple) -> bool:
    return _get(spec, parts) is not _MISSING


@functools.lru_cache(maxsize=4096)
def _parts(text: str) -> tuple[str, ...]:
    """A rule file's spec path ``a/b/c`` as its parts (parsed once, not per variant)."""
    return tuple(text.split("/"))


def applicability(prule: PackRule, spec: Any, figures) -> tuple[str, str, tuple]:
    """("skip" | "not-applicable" | "applies", reason, document path to point at)."""
    ap = prule.rule.applies
    if ap.motor_types and spec.motor.type not in ap.motor_types:
        return "skip", f"motor type is {spec.motor.type}", ()
    if ap.schemes and spec.stage.pwm.scheme not in ap.schemes:
        return "skip", f"PWM scheme is {spec.stage.pwm.scheme}", ()
    if ap.windings and spec.motor.winding not in ap.windings:
        return "skip", f"winding is {spec.motor.winding}", ()
    if ap.tags and not set(ap.tags) & set(spec.axis.tags):
        return "skip", "axis has none of the tags " + ", ".join(ap.tags), ()
    for text in ap.present:
        if not _present(spec, _parts(text)):
            return "skip", f"the spec does not give {text.replace('/', '.')}", ()
    for text in ap.absent:
        if _present(spec, _parts(text)):
            return "skip", f"the spec gives {text.replace('/', '.')}", ()
    for text in (*ap.requires, *ap.equals):
        if not _present(spec, _parts(text)):
            return (
                "not-applicable",
                f"the spec does not give {text.replace('/', '.')}",
                _parts(text),
            )
    for text, wanted in ap.equals.items():
        value = _get(spec, _parts(text))
        if value != wanted or isinstance(value, bool) != isinstance(wanted, bool):
            return "skip", f"{text.replace('/', '.')} is {value!r}", ()
    for name in prule.figures_used:
        if name in figures.missing:
            reason = f"figure '{name}' could not be computed: {figures.missing[name]}"
            return "not-applicable", reason, _fixed_prefix(prule.at)
    return "applies", "", ()


# --------------------------------------------------------------- evaluation
def _matches(value: float | bool, band: CompiledBand) -> bool:
    c, t = band.comparator, band.threshold
    if c == "is":
        return bool(value) is t
    v = float(value)
    if math.isnan(v):
        return False
    if c == "above":
        return v > t
    if c == "below":
        return v < t
    if c == "at_least":
        return v >= t
    return v <= t  # at_most


def _resolve(parts: tuple[str, ...], index: int | None) -> tuple:
    return tuple(index if p == POINT else p for p in parts)


def _render(prule: PackRule, values: Mapping[str, Any], limit: str, point: str | None, template=None) -> str:
    out = []
    for literal, name in template if template is not None else prule.template:
        out.append(literal)
        if name is None:
            continue
        if name == "limit":
            out.append(limit)
        elif name == "point":
            out.append(point or "")
        else:
            out.append(format_value(values[name], FIGURE_DEFS[name].dimension, figure_form(name)))
    return "".join(out)


# ------------------------------------------------------- related locations
# A finding's related locations, in this order, each place once (file, line and
# column) and each document path once, none on the finding's own line:
#   1. the references (`from:` lines) through which its own location is reached,
#      when it points into a library file: they say which axis file uses it;
#   2. the rule file's `related:` paths the spec gives, in the rule's order;
#   3. only when the rule lists none: one input path of the judged figure
#      (registry order) that holds one value (never a whole section or list);
# and at most MAX_RELATED locations of 2 and 3 together: the rule's first paths are
# the ones that explain its finding (what a fix would change), the message quotes
# the rest. A value reached through a library reference is shown where it is
# written (the library file), not at the `from:` line that brings it in. Each
# location carries a label: its document path and the spec's value there in
# readable units.
MAX_RELATED = 2
MAX_FIGURE_PATHS = 1


def _dimension_in(annotation: Any) -> str | None:
    """The unit dimension of a field annotation (``Annotated[float, Quantity(...)]``,
    possibly inside Optional or a tuple), or None."""
    import typing

    for meta in getattr(annotation, "__metadata__", ()):
        dimension = getattr(meta, "dimension", None)
        if isinstance(dimension, str):
            return dimension
    for arg in typing.get_args(annotation):
        if arg is not Ellipsis:
            found = _dimension_in(arg)
            if found is not None:
                return found
    return None


def _field_dimension(owner: Any, name: str) -> str | None:
    fields = getattr(type(owner), "model_fields", None)
    if not fields or name not in fields:
        return None
    info = fields[name]
    for meta in info.metadata:
        dimension = getattr(meta, "dimension", None)
        if isinstance(dimension, str):
            return dimension
    return _dimension_in(info.annotation)


def _scalar_text(value: Any, dimension: str | None) -> str | None:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and dimension is not None:
        from ..model.units import format_si

        return format_si(value, dimension)
    if isinstance(value, (int, float)):
        return plain_number(value, 4)
    if isinstance(value, str):
        return value
    return None


def value_text(spec: Any, path: tuple) -> tuple[str | None, bool]:
    """(the spec's value at ``path`` in readable units, whether it is one value):
    a scalar, a list of scalars, or a section holding a ``value`` (a catalogue value
    with its conditions). (None, False) for a section or a path the spec lacks."""
    owner: Any = None
    node: Any = spec
    for part in path:
        owner = node
        if isinstance(part, int):
            if not isinstance(node, tuple) or not 0 <= part < len(node):
                return None, False
            node = node[part]
        else:
            node = getattr(node, part, None)
        if node is None:
            return None, False
    name = path[-1] if path and isinstance(path[-1], str) else None
    dimension = _field_dimension(owner, name) if owner is not None and name is not None else None
    if isinstance(node, tuple):
        items = [_scalar_text(v, dimension) for v in node]
        if node and all(t is not None for t in items):
            return "[" + ", ".join(t for t in items if t is not None) + "]", True
        return None, False
    if hasattr(type(node), "model_fields"):
        inner = getattr(node, "value", None)
        if inner is not None and "value" in type(node).model_fields:
            text = _scalar_text(inner, _field_dimension(node, "value"))
            return text, text is not None
        return None, False
    text = _scalar_text(node, dimension)
    return text, text is not None


def location_label(spec: Any, path: tuple) -> str:
    """What a related location is: "motor.terminal_inductance = 179 uH", "operating_points[1]
    (point 'lift')", "operating_points (3 entries)", "motor.thermal (section)"."""
    where = dotted(path) or "the spec"
    text, _one = value_text(spec, path)
    if text is not None:
        return f"{where} = {text}"
    node = _get(spec, path)
    if isinstance(node, tuple):
        return f"{where} ({len(node)} entr{'y' if len(node) == 1 else 'ies'})"
    name = getattr(node, "name", None)
    if isinstance(name, str) and path and isinstance(path[-1], int):
        return f"{where} (point '{name}')" if path[0] == "operating_points" else f"{where} ('{name}')"
    return f"{where} (section)"


def _labelled(loc: Location, label: str) -> Location:
    return Location(loc.file, loc.line, loc.column, loc.end_line, loc.end_column, loc.path, label)


def _reference_labels(target: str, via: Sequence[Location], locate: Locate | None = None, path: tuple = ()) -> list:
    """The `from:` locations of a path, deepest first, each labelled with the section it
    brings in and the file it comes from ("motor from robot/library/motors/x.yaml")."""
    out = []
    for ref in via:
        section = "a section"
        if locate is not None:
            for depth in range(1, len(path) + 1):
                refs = locate(path[:depth])[1]
                if any((r.file, r.line, r.column) == (ref.file, ref.line, ref.column) for r in refs):
                    section = dotted(path[:depth])
                    break
        out.append(_labelled(ref, f"{section} from {target}"))
        target = ref.file
    return out


def related_locations(prule: PackRule, spec: Any, locate: Locate, index: int | None, loc: Location, via) -> tuple:
    """The related locations of one finding of ``prule`` (see the order above)."""
    out: list[Location] = []
    seen_places = {(loc.file, loc.line, loc.column)}
    seen_paths = {tuple(loc.path)}

    def add(item: Location) -> bool:
        place = (item.file, item.line, item.column)
        if place in seen_places or (item.path and tuple(item.path) in seen_paths):
            return False
        if item.file == loc.file and item.line == loc.line:
            return False  # on the finding's own line: the reader is there already
        seen_places.add(place)
        if item.path:
            seen_paths.add(tuple(item.path))
        out.append(item)
        return True

    for ref in _reference_labels(loc.file, via, locate, tuple(loc.path)):
        add(ref)
    values = 0
    for path in (_resolve(p, index) for p in prule.related):
        if values < MAX_RELATED and _present(spec, path):
            rloc, _refs = locate(path)
            values += add(_labelled(rloc, location_label(spec, path)))
    taken = 0
    for fpath in () if prule.related else prule.figure.paths:
        if taken >= MAX_FIGURE_PATHS or values >= MAX_RELATED:
            break
        path = tuple(fpath)
        if index is not None and path == ("operating_points",):
            path = ("operating_points", index)
        if not _present(spec, path) or not value_text(spec, path)[1]:
            continue
        rloc, _refs = locate(path)
        if add(_labelled(rloc, location_label(spec, path))):
            taken += 1
            values += 1
    return tuple(out)


def _unit(name: str) -> str:
    return FIGURE_DEFS[name].unit


_NOWHERE = Location("", 1, 1)  # lean findings: the variant's verdict, not a place


def _not_applicable(prule: PackRule, reason: str, locate: Locate, path: tuple) -> Finding:
    loc, rel = locate(path)
    message = f"rule '{prule.id}' could not be applied: {reason}"
    return Finding(
        "rule-not-applicable",
        "info",
        message,
        loc,
        tuple(_reference_labels(loc.file, rel, locate, tuple(path))),
        help=f"{prule.rule.title}; give what the rule needs, or disable it in the config",
        meta=(("rule", prule.id), ("rule_file", prule.source)),
    )


def _fixed_prefix(parts: tuple[str, ...]) -> tuple[str, ...]:
    return parts[: parts.index(POINT)] if POINT in parts else parts


def _evaluate_rule(
    prule: PackRule,
    spec: Any,
    figures,
    locate: Locate,
    override: RuleOverride | None,
    point_values: Mapping[str, Mapping[str, Any]],
    point_index: Mapping[str, int],
    remedy_fn,
    lean: bool = False,
) -> list[Finding]:
    status, reason, path = applicability(prule, spec, figures)
    if status == "skip":
        return []
    if status == "not-applicable":
        return [_not_applicable(prule, reason, locate, path)]
    bands = effective_bands(prule, override)
    lowest = bands[-1]
    used = prule.figures_used
    rule = prule.rule
    out: list[Finding] = []
    lacking: list[str] = []
    targets: list[tuple[str | None, Mapping[str, Any]]]
    if rule.scope == "point":
        targets = [(name, values) for name, values in figures.points]
    else:
        targets = [(None, {})]
    for point, values in targets:
        merged: dict[str, Any] = {}
        for name in used:
            v = values.get(name) if FIGURE_DEFS[name].scope == "point" else figures.axis.get(name)
            if v is None:
                break
            merged[name] = v
        else:
            v = merged[rule.figure]
            band = next((b for b in bands if _matches(v, b)), None)
            if band is not None and lean:
                severity = override.severity if override is not None and override.severity else band.severity
                out.append(Finding(rule.id, severity, "", _NOWHERE, operating_point=point))  # type: ignore[arg-type]
            elif band is not None:
                out.append(
                    _finding(
                        prule,
                        spec,
                        figures,
                        locate,
                        override,
                        band,
                        lowest,
                        merged,
                        point,
                        point_index,
                        remedy_fn,
                        values,
                    )
                )
            continue
        lacking.append(point or "")
    if lacking:
        where = f" at operating point(s) {', '.join(lacking)}" if rule.scope == "point" else ""
        out.append(
            _not_applicable(
                prule,
                f"figure(s) {', '.join(n for n in used)} not computed{where}",
                locate,
                _fixed_prefix(prule.at),
            )
        )
    return out


def _equal(value: Any, wanted: object) -> bool:
    return value == wanted and isinstance(value, bool) == isinstance(wanted, bool)


def _message_case(prule: PackRule, spec: Any, figures, point_values: Mapping[str, Any], index: int | None):
    """(template, the values of the figures it shows beyond the rule's own) of the first
    message case whose conditions hold and whose figures are computed; the rule's
    message template otherwise."""
    for case in prule.cases:
        if any(not _present(spec, _resolve(p, index)) for p in case.present):
            continue
        if any(_present(spec, _resolve(p, index)) for p in case.absent):
            continue
        if any(not _equal(_get(spec, _resolve(p, index)), wanted) for p, wanted in case.equals):
            continue

        def value(name: str) -> Any:
            return point_values.get(name) if FIGURE_DEFS[name].scope == "point" else figures.axis.get(name)

        if case.figure is not None:
            v = value(case.figure)
            if v is None or case.band is None or not _matches(v, case.band):
                continue
        shown = {name: value(name) for name in case.message_figures}
        if any(v is None for v in shown.values()):
            continue
        return case.template, shown
    return prule.template, {}


def _finding(
    prule, spec, figures, locate, override, band, lowest, values, point, point_index, remedy_fn, point_values=None
) -> Finding:
    rule = prule.rule
    index = point_index.get(point) if point is not None else None
    limit = limit_text(band.threshold, prule.figure.dimension, figure_form(prule.figure.name))
    template, shown = _message_case(prule, spec, figures, point_values or {}, index)
    values = {**shown, **values}
    message = _render(prule, values, limit, point, template)
    loc, via = locate(_resolve(prule.at, index))
    related = related_locations(prule, spec, locate, index, loc, via)
    remedies: list[str] = []
    aim = None
    if rule.remedies and lowest.comparator != "is":
        # a fix aims at the band that fired (clearing an error needs less than
        # clearing the warning below it); the verification says which band it reaches
        aim = (float(band.threshold), float(lowest.threshold), lowest.severity)
        for name in rule.remedies:
            found = remedy_fn(name, spec, figures, point=point, limit=aim[0])
            if found is not None:
                remedies.append(found.text)
    severity = override.severity if override is not None and override.severity else band.severity
    return Finding(
        rule.id,
        severity,
        message,
        loc,
        related,
        operating_point=point,
        figures=tuple((name, values[name], _unit(name)) for name in dict.fromkeys((*prule.figures_used, *shown))),
        remedies=tuple(remedies),
        help=one_line(rule.why),
        aim=aim,
    )


def band_of(prule: PackRule, override: RuleOverride | None, severity: str) -> CompiledBand:
    """The band of ``severity`` in force under ``override``; where the policy gives
    every band one severity, the lowest (clearing that severity takes it)."""
    bands = effective_bands(prule, override)
    return next((b for b in bands if b.severity == severity), bands[-1])


def top_severity(prule: PackRule, override: RuleOverride | None) -> str:
    """The most severe finding the rule can give under ``override``."""
    if override is not None and override.severity:
        return str(override.severity)
    return effective_bands(prule, override)[0].severity


_RESOLVED: list[tuple[Pack, Mapping[str, RuleOverride], dict[str, RuleOverride], int]] = []


def resolved_overrides(pack: Pack, overrides: Mapping[str, RuleOverride]) -> dict[str, RuleOverride]:
    """The policy's overrides keyed by rule id (an alias resolved); an unknown rule raises.
    The last resolution is kept: a check judges many variants with the same overrides
    (the objects are held, so their identity cannot be reused)."""
    held = _RESOLVED[0] if _RESOLVED else None
    if held is not None and held[0] is pack and held[1] is overrides and held[3] == len(overrides):
        return held[2]
    resolved = _resolve_overrides(pack, overrides)
    _RESOLVED[:] = [(pack, overrides, resolved, len(overrides))]
    return resolved


def _resolve_overrides(pack: Pack, overrides: Mapping[str, RuleOverride]) -> dict[str, RuleOverride]:
    resolved: dict[str, RuleOverride] = {}
    for name, given in overrides.items():
        prule = pack.get(name)
        if prule is None:
            raise OverrideError(f"unknown rule '{name}' in the overrides")
        resolved[prule.id] = given
    return resolved


def evaluate(
    spec: Any,
    figures,
    locate: Locate,
    pack: Pack,
    overrides: Mapping[str, RuleOverride] = {},
    *,
    remedy: Callable[..., Any] | None = None,
    debug: bool = False,
    lean: bool = False,
    rules: Collection[str] | None = None,
) -> list[Finding]:
    """Findings of every rule of ``pack`` on one spec (of the rule ids in ``rules``
    only, when given).

    ``overrides`` maps a rule id (or alias) to the policy's override.
    ``remedy`` defaults to :func:`specguard.figures.remedy`. With ``debug`` a
    rule that raises re-raises instead of becoming an internal-error finding.
    An invalid override raises OverrideError (a config problem, exit 2).
    With ``lean`` the findings carry only rule, severity and operating point (no
    message, locations or remedies): what judging a design variant needs.
    """
    if remedy is None:
        from ..figures import remedy as remedy_default

        remedy = remedy_default
    resolved = resolved_overrides(pack, overrides)
    point_values = dict(figures.points)
    point_index = {op.name: i for i, op in enumerate(spec.operating_points)}
    out: list[Finding] = []
    for prule in pack.rules:
        if rules is not None and prule.id not in rules:
            continue
        override: RuleOverride | None = resolved.get(prule.id)
        if override is not None and not override.enabled:
            continue
        if override is not None and override.thresholds:
            effective_bands(prule, override)  # a bad override is a config error, not an internal one
        try:
            out.extend(_evaluate_rule(prule, spec, figures, locate, override, point_values, point_index, remedy, lean))
        except (KeyboardInterrupt, SystemExit, OverrideError):
            raise
        except Exception as exc:
            if debug:
                raise
            loc, _ = locate(())
            text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
            out.append(
                Finding(
                    "internal-error",
                    "error",
                    f"rule '{prule.id}' (rule file {prule.source}) failed on this file: {text} "
                    "(run with --debug for the traceback)",
                    loc,
                    meta=(("rule", prule.id), ("rule_file", prule.source)),
                )
            )
    return out


def evaluate_batch(
    spec: Any,
    figures,
    pack: Pack,
    overrides: Mapping[str, RuleOverride] = {},
    size: int = 1,
) -> dict[str, Any]:
    """The verdicts of every rule of ``pack`` on a batch of ``size`` variants of one spec.

    ``figures`` holds arrays of ``size`` values (specguard.figures.batch); the verdict
    is what :func:`evaluate` with ``lean`` gives each variant: per rule id, the rank in
    SEVERITY_ORDER of its most severe finding over the operating points, -1 for none.
    A figure missing for the whole batch makes the rule not applicable (an info
    finding); a figure that is NaN for some variants does the same for those. A rule
    that fails is an internal error for every variant, as in a check.
    """
    import numpy as np

    from ..findings import SEVERITY_ORDER

    resolved = resolved_overrides(pack, overrides)
    info = SEVERITY_ORDER["info"]
    out: dict[str, Any] = {}

    def column(value: Any) -> Any:
        if isinstance(value, (bool, np.bool_)) or (hasattr(value, "dtype") and value.dtype == bool):
            return np.broadcast_to(np.asarray(value, dtype=bool), (size,))
        return np.broadcast_to(np.asarray(value, dtype=float), (size,))

    for prule in pack.rules:
        override = resolved.get(prule.id)
        if override is not None and not override.enabled:
            continue
        rank = np.full(size, -1, dtype=int)
        try:
            status, _reason, _path = applicability(prule, spec, figures)
            if status == "skip":
                continue
            if status == "not-applicable":
                out[prule.id] = np.full(size, info, dtype=int)
                continue
            bands = effective_bands(prule, override)
            rule = prule.rule
            targets = [values for _name, values in figures.points] if rule.scope == "point" else [{}]
            for values in targets:
                merged: dict[str, Any] = {}
                for name in prule.figures_used:
                    v = values.get(name) if FIGURE_DEFS[name].scope == "point" else figures.axis.get(name)
                    if v is None:
                        break
                    merged[name] = column(v)
                else:
                    present = np.ones(size, dtype=bool)
                    for v in merged.values():
                        if v.dtype != bool:
                            present &= ~np.isnan(v)
                    v = merged[rule.figure]
                    left = present.copy()
                    for band in bands:
                        hit = left & _matches_array(v, band)
                        if hit.any():
                            severity = band.severity
                            if override is not None and override.severity:
                                severity = override.severity
                            rank = np.where(hit, np.maximum(rank, SEVERITY_ORDER[severity]), rank)
                        left &= ~hit
                    rank = np.where(present, rank, np.maximum(rank, info))
                    continue
                rank = np.maximum(rank, info)  # not applicable at this point
        except (KeyboardInterrupt, SystemExit, OverrideError):
            raise
        except Exception:
            from ..debugging import went_on_without

            went_on_without(f"rule '{prule.id}' on a batch of variants")
            rank = np.full(size, SEVERITY_ORDER["error"], dtype=int)  # internal-error, as in a check
        out[prule.id] = rank
    return out


def _matches_array(value: Any, band: CompiledBand) -> Any:
    """:func:`_matches` on an array of values (NaN matches nothing)."""
    import numpy as np

    c, t = band.comparator, band.threshold
    if c == "is":
        return value.astype(bool) == bool(t)
    with np.errstate(invalid="ignore"):
        if c == "above":
            return value > t
        if c == "below":
            return value < t
        if c == "at_least":
            return value >= t
        return value <= t


def group_consequences(findings: list[Finding], pack: Pack) -> list[Finding]:
    """One problem reported once: a finding whose rule ``explains`` other rules takes
    their findings (at the same operating point, or where either is an axis finding) as
    its consequences; each consequence names its cause (``explained_by``). Counts and the
    exit status still include every finding. The grouping is data in the rule files."""
    from dataclasses import replace

    def canonical(rule_id: str) -> str:
        prule = pack.get(rule_id)
        return prule.id if prule is not None else rule_id

    by_rule: dict[str, list[int]] = {}
    for index, f in enumerate(findings):
        by_rule.setdefault(f.rule, []).append(index)
    cause_of: dict[int, int] = {}
    for index, f in enumerate(findings):
        prule = pack.get(f.rule)
        if prule is None or not prule.rule.explains or f.suppressed:
            continue
        for name in prule.rule.explains:
            for other in by_rule.get(canonical(name), ()):
                g = findings[other]
                if other == index or other in cause_of:
                    continue
                same_place = f.operating_point is None or g.operating_point in (None, f.operating_point)
                if same_place:
                    cause_of[other] = index
    if not cause_of:
        return findings
    out = list(findings)
    for other, index in cause_of.items():
        cause = findings[index]
        out[other] = replace(findings[other], explained_by=cause_name(cause))
    return out
