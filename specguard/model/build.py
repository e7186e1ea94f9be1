"""Build the typed, frozen model from plain data, with every problem located.

pydantic runs strict (no ``"5"`` for 5, no ``true`` for 1, no NaN), so that the
model and the published JSON Schema accept the same documents. Errors become
findings: unit problems are ``unit-invalid``, a quantity whose number underflows
to zero is ``number-invalid`` (as the loader says of a plain number), everything
else ``schema-violation``. An unknown key points at the key itself with a
"did you mean" suggestion; a missing key points at its parent mapping.
"""

from __future__ import annotations

import difflib
import types
import typing
from collections.abc import Callable, Mapping
from typing import Any

from pydantic import BaseModel, ValidationError

from ..findings import Finding, Location, dotted, kind_of
from .spec import Spec
from .units import foreign_letters

Locate = Callable[..., tuple[Location, tuple[Location, ...]]]

_KIND = {
    "string_type": "a string",
    "int_type": "an integer",
    "float_type": "a number",
    "bool_type": "true or false",
    "dict_type": "a mapping",
    "model_type": "a mapping",
    "model_attributes_type": "a mapping",
    "tuple_type": "a list",
    "list_type": "a list",
}

_YAML11_BOOLEANS = {"yes", "no", "on", "off", "y", "n", "Yes", "No", "On", "Off", "YES", "NO"}


def _lookup(data: Any, path: tuple) -> tuple[bool, Any]:
    node = data
    for part in path:
        if isinstance(node, dict) and isinstance(part, str) and part in node:
            node = node[part]
        elif isinstance(node, list) and isinstance(part, int) and 0 <= part < len(node):
            node = node[part]
        else:
            return False, None
    return True, node


def _unwrap(annotation: Any) -> list[Any]:
    """The concrete classes inside Optional/Union/tuple/Annotated."""
    origin = typing.get_origin(annotation)
    if origin is typing.Annotated:
        return _unwrap(typing.get_args(annotation)[0])
    if origin in (typing.Union, types.UnionType, tuple, list):
        out: list[Any] = []
        for arg in typing.get_args(annotation):
            if arg is not Ellipsis:
                out.extend(_unwrap(arg))
        return out
    return [annotation]


def model_at(path: tuple) -> type[BaseModel] | None:
    """The model class that describes the mapping at ``path`` (indices skipped)."""
    current: type[BaseModel] | None = Spec
    for part in path:
        if current is None:
            return None
        if isinstance(part, int):
            continue
        field = current.model_fields.get(part)
        if field is None:
            return None
        models = [c for c in _unwrap(field.annotation) if isinstance(c, type) and issubclass(c, BaseModel)]
        current = models[0] if models else None
    return current


def _field_path(loc: tuple) -> tuple:
    # pydantic inserts no union member names for Optional fields, but a
    # function-validator tag may appear; keep only keys and indices we know.
    return tuple(p for p in loc if isinstance(p, (str, int)))


def _error_to_finding(err: Mapping[str, Any], data: dict, locate: Locate) -> Finding:
    path = _field_path(err.get("loc", ()))
    kind = err.get("type", "")
    where = dotted(path) or "spec"
    exists, value = _lookup(data, path)

    if kind == "unit_invalid":
        loc, rel = locate(path)
        return Finding("unit-invalid", "error", f"{where}: {err['ctx']['message']}", loc, rel)
    if kind == "number_invalid":  # a quantity whose number underflows to zero
        loc, rel = locate(path)
        return Finding("number-invalid", "error", f"{where}: {err['ctx']['message']}", loc, rel)
    if kind == "extra_forbidden":
        parent = model_at(path[:-1])
        known = list(parent.model_fields) if parent else []
        key = str(path[-1]) if path else ""
        hint = difflib.get_close_matches(key, known, n=1, cutoff=0.6)
        # a key with a letter of another script looks exactly like the known one
        foreign, _plain = foreign_letters(key)
        message = f"{where}: unknown key '{key}'{foreign}"
        if hint:
            message += f"; did you mean '{hint[0]}'?"
        elif known:
            message += f" (allowed here: {', '.join(known)})"
        loc, rel = locate(path, key=True)
        return Finding("schema-violation", "error", message, loc, rel)
    if kind == "missing":
        return _missing_keys(path[:-1], [str(path[-1])], locate)

    loc, rel = locate(path)
    if kind == "value_range":
        message = f"{where}: {err['ctx']['message']}"
    elif kind == "literal_error":
        message = _not_allowed(where, path, value, err.get("ctx", {}).get("expected", ""))
    elif kind in _KIND:
        message = f"{where}: expected {_KIND[kind]}, got {kind_of(value) if exists else 'nothing'}"
        if kind == "bool_type" and isinstance(value, str) and value in _YAML11_BOOLEANS:
            message += " (YAML 1.2 booleans are true and false only)"
        elif kind in ("int_type", "float_type") and isinstance(value, str) and ":" in value:
            message += " (YAML 1.2 reads 1:30 as text, not as a sexagesimal number)"
        elif kind in ("int_type", "float_type") and isinstance(value, str):
            message += " (write numbers without quotes)"
        elif kind == "int_type" and isinstance(value, float):
            message += " (write a whole number without a decimal point)"
    elif kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        message = f"{where}: {value!r} {err['msg'].replace('Input should be ', 'should be ')}"
    elif kind in ("too_short", "too_long"):
        message = f"{where}: {err['msg'].replace('Tuple', 'list').replace('List', 'list')}"
    elif kind == "string_pattern_mismatch":
        pattern = err.get("ctx", {}).get("pattern", "")
        message = f"{where}: {value!r} does not have the expected form ({_pattern_hint(pattern)})"
    elif kind in ("string_too_long", "string_too_short"):
        message = f"{where}: {err['msg'].replace('String', 'text')}"
    elif kind == "value_error":
        message = f"{where}: {err['msg'].replace('Value error, ', '')}"
    else:
        message = f"{where}: {err.get('msg', 'invalid value')}"
    return Finding("schema-violation", "error", message, loc, rel)


def _required_keys(path: tuple) -> list[str]:
    """The keys the mapping at ``path`` must have, in the order of the format."""
    model = model_at(path)
    if model is None:
        return []
    return [f.alias or name for name, f in model.model_fields.items() if f.is_required()]


def _quoted_list(keys: list[str]) -> str:
    quoted = [f"'{k}'" for k in keys]
    return quoted[0] if len(quoted) == 1 else ", ".join(quoted[:-1]) + " and " + quoted[-1]


def _missing_keys(parent: tuple, keys: list[str], locate: Locate) -> Finding:
    """One finding for the required keys missing from one mapping, at the mapping,
    naming every key the mapping needs."""
    needed = _required_keys(parent)
    keys = sorted(keys, key=lambda k: needed.index(k) if k in needed else len(needed))
    where = dotted(parent) or "the top level"
    noun = "key" if len(keys) == 1 else "keys"
    message = f"{where}: missing required {noun} {_quoted_list(keys)}"
    if needed and needed != keys:
        message += f" (this mapping needs {', '.join(needed)})"
    loc, rel = locate(parent)
    return Finding("schema-violation", "error", message, loc, rel)


# Names a value of a closed list is often written with elsewhere, and the value the
# format uses for it (checked before the nearest spelling, so "brushless" never
# reads as "brushed-dc").
_ALSO_WRITTEN = {
    "bldc": "three-phase",
    "pmsm": "three-phase",
    "brushless": "three-phase",
    "brushless-dc": "three-phase",
    "3-phase": "three-phase",
    "3phase": "three-phase",
    "dc": "brushed-dc",
    "brushed": "brushed-dc",
    "svpwm": "space-vector",
    "svm": "space-vector",
    "space-vector-pwm": "space-vector",
    "spwm": "sinusoidal",
    "sine": "sinusoidal",
    "sinusoidal-pwm": "sinusoidal",
    "ironless": "coreless",
    "slotted": "iron-core",
    "centre": "center",
    "center-aligned": "center",
    "edge-aligned": "edge",
}


def _shown(value: Any) -> str:
    """A plain value as it reads in YAML."""
    if value is None:
        return "null"
    if value is True or value is False:
        return "true" if value else "false"
    return repr(value)


def _allowed_values(path: tuple) -> list[Any]:
    """The values a closed-list field accepts, in the order of the format."""
    if not path or not isinstance(path[-1], str):
        return []
    model = model_at(path[:-1])
    field = model.model_fields.get(path[-1]) if model is not None else None
    if field is None:
        return []
    out: list[Any] = []
    for literal in _unwrap(field.annotation):
        if typing.get_origin(literal) is typing.Literal:
            out.extend(typing.get_args(literal))
    return out


def _nearest_allowed(value: str, allowed: list[Any]) -> tuple[str, str] | None:
    """(allowed value, a clause saying how ``value`` relates to it: "" or ending in
    "; ") for a slip in a closed-list value: another case or separator, a name the
    format writes differently, or the nearest spelling; None when nothing is near."""
    words = [a for a in allowed if isinstance(a, str)]
    key = "-".join(value.strip().lower().replace("_", " ").split())
    for word in words:
        if key == word.lower():
            return word, ""
    if _ALSO_WRITTEN.get(key) in words:
        return _ALSO_WRITTEN[key], f"a spec writes {key} as '{_ALSO_WRITTEN[key]}'; "
    names = words + [k for k, v in _ALSO_WRITTEN.items() if v in words]
    close = difflib.get_close_matches(key, names, n=1, cutoff=0.6)
    if not close:
        return None
    if close[0] in words:
        return close[0], ""
    word = _ALSO_WRITTEN[close[0]]
    return word, f"a spec writes {close[0]} as '{word}'; "


def _not_allowed(where: str, path: tuple, value: Any, expected: str) -> str:
    allowed = _allowed_values(path)
    listing = ", ".join(_shown(a) for a in allowed) if allowed else expected
    message = f"{where}: {_shown(value)} is not allowed"
    if isinstance(value, str):
        if any(not isinstance(a, str) and str(a) == value for a in allowed):
            return f"{message}; write {value} without quotes (allowed: {listing})"
        near = _nearest_allowed(value, allowed)
        if near is not None:
            return f"{message}; did you mean '{near[0]}'? ({near[1]}allowed: {listing})"
    return f"{message}; allowed: {listing}"


def _pattern_hint(pattern: str) -> str:
    if pattern.startswith("^https://"):
        return "an https:// link"
    if "\\d{4}" in pattern:
        return "a date YYYY-MM-DD"
    if pattern.startswith("^[a-z][a-z0-9-]"):
        return "a rule id in lower case with hyphens"
    if pattern.startswith("^[A-Za-z0-9]"):
        return "letters, digits, '.', '_' and '-', starting with a letter or digit"
    return f"pattern {pattern}"


def build(data: dict, locate: Locate) -> tuple[Spec | None, list[Finding]]:
    """Validate ``data`` into a :class:`Spec`; return it (or None) and the findings."""
    try:
        spec = Spec.model_validate(data)
    except ValidationError as exc:
        errors = exc.errors(include_url=False)
        # pydantic reports a list as too short when its items failed; the item
        # errors say what is wrong, so drop that echo.
        item_paths = {_field_path(e.get("loc", ()))[:-1] for e in errors}
        errors = [
            e
            for e in errors
            if not (
                e.get("type") == "too_short"
                and any(
                    p[: len(_field_path(e["loc"]))] == _field_path(e["loc"]) and len(p) > len(_field_path(e["loc"]))
                    for p in item_paths
                )
            )
        ]
        # the required keys missing from one mapping are one finding naming them all
        missing: dict[tuple, list[str]] = {}
        for e in errors:
            if e.get("type") == "missing":
                p = _field_path(e.get("loc", ()))
                missing.setdefault(p[:-1], []).append(str(p[-1]))
        findings = [_error_to_finding(err, data, locate) for err in errors if err.get("type") != "missing"]
        findings.extend(_missing_keys(parent, keys, locate) for parent, keys in missing.items())
        return None, findings
    findings = consistency(spec, locate)
    return (None if any(f.severity == "error" for f in findings) else spec), findings


DC_SCHEMES = ("bipolar", "unipolar-single", "unipolar-phase-shifted")
THREE_PHASE_SCHEMES = ("six-step-chop-one", "six-step-chop-both", "sinusoidal", "space-vector")


def consistency(spec: Spec, locate: Locate) -> list[Finding]:
    """Cross-field rules of the format that a per-field schema cannot state."""
    out: list[Finding] = []

    def bad(path: tuple, message: str) -> None:
        loc, rel = locate(path)
        out.append(Finding("schema-violation", "error", f"{dotted(path)}: {message}", loc, rel))

    motor, stage = spec.motor, spec.stage
    scheme = stage.pwm.scheme
    if motor.type == "brushed-dc":
        if scheme not in DC_SCHEMES:
            bad(
                ("stage", "pwm", "scheme"),
                f"'{scheme}' drives a three-phase motor; a brushed DC motor takes one of " + ", ".join(DC_SCHEMES),
            )
        if motor.torque_constant.current != "dc":
            bad(
                ("motor", "torque_constant", "current"),
                "a brushed DC motor's torque constant refers to its dc current (write 'dc')",
            )
        if motor.back_emf_constant.voltage != "terminal":
            bad(
                ("motor", "back_emf_constant", "voltage"),
                "a brushed DC motor's back-EMF constant is a terminal voltage (write 'terminal')",
            )
    else:
        if scheme not in THREE_PHASE_SCHEMES:
            bad(
                ("stage", "pwm", "scheme"),
                f"'{scheme}' drives an H-bridge; a three-phase motor takes one of " + ", ".join(THREE_PHASE_SCHEMES),
            )
        if motor.pole_pairs is None:
            bad(("motor",), "a three-phase motor needs 'pole_pairs'")
        if motor.torque_constant.current == "dc":
            bad(
                ("motor", "torque_constant", "current"),
                "a three-phase motor's torque constant refers to phase-rms, phase-peak or block current",
            )
        if motor.back_emf_constant.voltage == "terminal":
            bad(
                ("motor", "back_emf_constant", "voltage"),
                "a three-phase motor's back-EMF constant is line-to-line or phase, peak or rms",
            )
    if motor.terminal_inductance is None and motor.inductance_vs_frequency is None:
        bad(("motor",), "give 'terminal_inductance' or a measured 'inductance_vs_frequency' table")
    from .conventions import convention_problem

    problem = convention_problem(spec)
    if problem is not None:
        bad(*problem)
    returned = spec.stage.supply.returned_energy
    if returned is not None and returned.takes == "battery":
        for key in ("full_charge_voltage", "charge_current_max"):
            if getattr(returned, key) is None:
                bad(("stage", "supply", "returned_energy"), f"a battery needs '{key}'")
    if returned is not None and spec.stage.supply.absorbs_braking_energy is not None:
        if (returned.takes == "nothing") == bool(spec.stage.supply.absorbs_braking_energy):
            bad(
                ("stage", "supply", "absorbs_braking_energy"),
                f"absorbs_braking_energy: {str(spec.stage.supply.absorbs_braking_energy).lower()} contradicts "
                f"returned_energy.takes: {returned.takes}",
            )
    if motor.pwm_loss is not None:
        given = [k for k in ("extra_loss", "extra_temperature_rise") if getattr(motor.pwm_loss, k) is not None]
        if len(given) != 1:
            bad(("motor", "pwm_loss"), "give exactly one of 'extra_loss' and 'extra_temperature_rise'")
        elif given == ["extra_temperature_rise"] and motor.thermal is None:
            bad(
                ("motor", "pwm_loss", "extra_temperature_rise"),
                "a temperature rise needs motor.thermal to turn it into a loss; give 'extra_loss' instead",
            )
    table = motor.inductance_vs_frequency or ()
    for i in range(1, len(table)):
        if not table[i].frequency > table[i - 1].frequency:
            bad(
                ("motor", "inductance_vs_frequency", i, "frequency"),
                "table rows must be in strictly ascending frequency",
            )
            break
    if (motor.d_axis_inductance is None) != (motor.q_axis_inductance is None):
        bad(("motor",), "give both 'd_axis_inductance' and 'q_axis_inductance', or neither")
    supply = stage.supply
    if supply.range is not None:
        low, high = supply.range
        if not low < high:
            bad(("stage", "supply", "range"), "the range must be [lowest, highest] with lowest < highest")
        elif not low <= supply.voltage <= high:
            bad(("stage", "supply", "voltage"), "the nominal voltage lies outside the declared range")
    if stage.overvoltage_trip is not None and stage.overvoltage_trip <= supply.voltage:
        bad(("stage", "overvoltage_trip"), "the over-voltage trip must be above the supply voltage")
    if spec.chokes is not None:
        expected = "per-lead" if motor.type == "brushed-dc" else "per-phase"
        if spec.chokes.placement != expected:
            bad(("chokes", "placement"), f"a {motor.type} motor takes chokes '{expected}'")
        top = 2 if motor.type == "brushed-dc" else 3
        if spec.chokes.count > top:
            bad(("chokes", "count"), f"at most {top} chokes fit a {motor.type} motor")
    seen: dict[str, int] = {}
    for i, point in enumerate(spec.operating_points):
        if point.name in seen:
            bad(
                ("operating_points", i, "name"),
                f"operating point name '{point.name}' is used twice (first at index {seen[point.name]})",
            )
        seen.setdefault(point.name, i)
    for i, waiver in enumerate(spec.waivers):
        if waiver.at is not None and waiver.at not in seen:
            bad(("waivers", i, "at"), f"no operating point is named '{waiver.at}'")
    return out
