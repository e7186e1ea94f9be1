"""The format v1 model: strictness, SI conversion, located errors, cross-field checks.

Check values: unit factors are those of the unit table (verified against pint in
test_units.py); the traps are rows of docs/reliability.md (F09, F10, F11, D08,
G01, G06) as named beside each case.
"""

from __future__ import annotations

import copy
import math

import pytest

from specguard.findings import Location
from specguard.model import Spec, build

BASE = {
    "format": 1,
    "axis": {"name": "test-axis"},
    "motor": {
        "type": "brushed-dc",
        "winding": "coreless",
        "terminal_resistance": {"value": "2.3 ohm", "at": "25 degC"},
        "terminal_inductance": {"value": "85 uH", "measured_at": "1 kHz"},
        "torque_constant": {"value": "13.6 mN*m/A", "current": "dc"},
        "back_emf_constant": {"value": "1.424 mV/rpm", "voltage": "terminal"},
        "rated_current": "2.0 A",
        "thermal": {
            "winding_to_housing": "4.1 K/W",
            "housing_to_ambient": "11 K/W",
            "max_winding_temperature": "125 degC",
        },
    },
    "stage": {
        "supply": {"voltage": "24 V", "range": ["22 V", "26 V"]},
        "pwm": {"frequency": "25 kHz", "scheme": "unipolar-single", "max_duty": 0.95},
    },
    "operating_points": [
        {"name": "hold", "speed": "0 rpm", "torque": "12 mN*m", "ambient": "40 degC"},
        {"name": "lift", "speed": "5200 rpm", "torque": "22 mN*m", "ambient": "40 degC"},
    ],
}


def locate(path, key=False):
    return Location("spec.axis.yaml", 1, 1, path=tuple(path)), ()


def run(data):
    return build(data, locate)


def with_change(path, value, data=BASE):
    out = copy.deepcopy(data)
    node = out
    for part in path[:-1]:
        node = node[part]
    if value is KeyError:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    return out


def test_base_spec_builds_with_si_values():
    spec, findings = run(BASE)
    assert findings == []
    assert isinstance(spec, Spec)
    # SI conversions; factors from the unit table (checked against pint in test_units.py)
    assert spec.motor.terminal_inductance.value == pytest.approx(85e-6, rel=1e-12)
    assert spec.motor.terminal_resistance.at == pytest.approx(298.15)
    assert spec.operating_points[1].speed == pytest.approx(5200 * 2 * math.pi / 60)
    assert spec.motor.back_emf_constant.value == pytest.approx(1.424e-3 * 60 / (2 * math.pi))
    assert spec.stage.supply.range == (22.0, 26.0)
    assert isinstance(spec.operating_points, tuple)


def test_model_is_frozen():
    spec, _ = run(BASE)
    import pydantic

    with pytest.raises(pydantic.ValidationError, match="frozen"):
        spec.motor.rated_current = 3.0  # type: ignore[misc]


@pytest.mark.parametrize(
    "path, value, rule, pattern",
    [
        # docs/reliability.md G06: a dimensioned number without a unit
        (("motor", "rated_current"), 2, "unit-invalid", r"bare number.*current.*e\.g\."),
        # G01: MH for mH (case) with a hint
        (("motor", "terminal_inductance", "value"), "2.5 MH", "unit-invalid", r"mH"),
        # issue 2 units list: wrong dimension
        (("motor", "terminal_inductance", "value"), "25 kHz", "unit-invalid", r"frequency"),
        # comma decimal
        (("stage", "pwm", "frequency"), "1,5 kHz", "unit-invalid", r"decimal point"),
        # non-finite value
        (("stage", "supply", "voltage"), "nan V", "unit-invalid", r"finite|nan"),
        # F09: pole_pairs true, pydantic lax would give 1
        (("motor", "pole_pairs"), True, "schema-violation", r"expected an integer, got a boolean"),
        # F10: quoted number for a number field
        (("stage", "pwm", "max_duty"), "0.95", "schema-violation", r"write numbers without quotes"),
        # F11 policy: 4.5 is not an integer
        (("motor", "pole_pairs"), 4.5, "schema-violation", r"integer"),
        # F08: a YAML 1.1 boolean word in a boolean field
        (("stage", "supply", "absorbs_braking_energy"), "yes", "schema-violation", r"true and false"),
        # F07: sexagesimal-looking text in a number field
        (("stage", "pwm", "max_duty"), "1:30", "schema-violation", r"sexagesimal"),
        # F13: zero and negative physical magnitudes
        (("motor", "terminal_resistance", "value"), "-0.8 ohm", "schema-violation", r"greater than 0"),
        (("motor", "terminal_inductance", "value"), "0 uH", "schema-violation", r"greater than 0"),
        # an enum value that does not exist
        (("stage", "pwm", "scheme"), "trapezoid", "schema-violation", r"is not allowed; allowed: 'bipolar'"),
    ],
)
def test_traps_give_located_findings(path, value, rule, pattern):
    spec, findings = run(with_change(path, value))
    assert spec is None
    assert len(findings) == 1, findings
    finding = findings[0]
    assert finding.rule == rule
    assert finding.location.path == path
    import re

    assert re.search(pattern, finding.message), finding.message


def test_unknown_key_points_at_key_with_suggestion():
    # docs/reliability.md D08: a misspelt key gets a "did you mean"
    data = with_change(("motor", "rated_curent"), "2 A")
    data = with_change(("motor", "rated_current"), KeyError, data)
    spec, findings = run(data)
    messages = sorted(f.message for f in findings)
    assert "motor.rated_curent: unknown key 'rated_curent'; did you mean 'rated_current'?" in messages
    assert any(m.startswith("motor: missing required key 'rated_current' (this mapping needs ") for m in messages)
    missing = next(f for f in findings if "missing" in f.message)
    assert missing.location.path == ("motor",)  # a missing key points at its parent


def test_integral_float_is_accepted_for_integers():
    # docs/reliability.md F11: one policy at both layers; JSON Schema integer accepts 4.0
    spec, findings = run(with_change(("motor", "pole_pairs"), 4.0))
    assert findings == []
    assert spec.motor.pole_pairs == 4 and isinstance(spec.motor.pole_pairs, int)


@pytest.mark.parametrize(
    "path, value, pattern",
    [
        (("stage", "pwm", "scheme"), "space-vector", r"three-phase motor; a brushed DC motor takes"),
        (("motor", "torque_constant", "current"), "phase-rms", r"dc current"),
        (("motor", "terminal_inductance"), KeyError, r"inductance_vs_frequency"),
        (("stage", "supply", "range"), ["26 V", "22 V"], r"lowest < highest"),
        (("stage", "supply", "voltage"), "30 V", r"outside the declared range"),
        (("operating_points", 1, "name"), "hold", r"used twice"),
    ],
)
def test_cross_field_checks(path, value, pattern):
    import re

    spec, findings = run(with_change(path, value))
    assert spec is None
    assert any(re.search(pattern, f.message) for f in findings), [f.message for f in findings]


def test_three_phase_needs_pole_pairs_and_conventions():
    data = copy.deepcopy(BASE)
    data["motor"]["type"] = "three-phase"
    data["stage"]["pwm"]["scheme"] = "space-vector"
    spec, findings = run(data)
    messages = " | ".join(f.message for f in findings)
    assert "pole_pairs" in messages
    assert "phase-rms, phase-peak or block" in messages
    assert "line-to-line or phase" in messages


def test_table_must_ascend():
    data = with_change(
        ("motor", "inductance_vs_frequency"),
        [
            {"frequency": "10 kHz", "inductance": "120 uH"},
            {"frequency": "1 kHz", "inductance": "200 uH"},
        ],
    )
    spec, findings = run(data)
    assert [f.location.path for f in findings] == [("motor", "inductance_vs_frequency", 1, "frequency")]


def test_waiver_date_must_exist():
    waiver = {
        "rule": "pwm-audible",
        "at": "hold",
        "reason": "short hold",
        "approved_by": "review",
        "expires": "2027-02-30",
    }
    spec, findings = run(with_change(("waivers",), [waiver]))
    assert spec is None
    assert findings[0].location.path == ("waivers", 0, "expires")


# ------------------------------------------------------- under- and overflow (F02)


def _quantity_fields():
    """Every dimensional field of the model: (dotted path, Quantity metadata)."""
    import typing

    from pydantic import BaseModel

    from specguard.model.quantity import Quantity

    out: dict[str, Quantity] = {}

    def walk(model, prefix):
        for name, field in model.model_fields.items():
            todo = [field.annotation, *field.metadata]
            while todo:
                a = todo.pop()
                if isinstance(a, Quantity):
                    out[".".join(prefix + (name,))] = a
                elif typing.get_origin(a) is typing.Annotated:
                    todo.extend(typing.get_args(a))
                elif isinstance(a, type) and issubclass(a, BaseModel):
                    walk(a, prefix + (name,))
                else:
                    todo.extend(x for x in typing.get_args(a) if x is not Ellipsis)

    walk(Spec, ())
    return out


QUANTITY_FIELDS = _quantity_fields()


def test_the_scan_sees_every_dimensional_field():
    # the fields that took "1e-400 <unit>" silently before: every ge=0 field read it
    # as 0 and every absolute temperature as 0 degC (273.15 K)
    silent_before = {
        "motor.no_load_current",
        "stage.pwm.dead_time",
        "stage.switch_resistance",
        "stage.output_inductance",
        "chokes.resistance",
        "cable.resistance",
        "load.inertia",
        "operating_points.speed",
        "operating_points.torque",
        "profile.segments.speed",
        "profile.segments.torque",
        "motor.terminal_resistance.at",
        "operating_points.ambient",
        "motor.thermal.max_winding_temperature",
        "profile.ambient",
    }
    assert silent_before <= set(QUANTITY_FIELDS)
    assert len(QUANTITY_FIELDS) >= 45


@pytest.mark.parametrize("field", sorted(QUANTITY_FIELDS))
def test_every_dimensional_field_refuses_underflow_and_overflow(field):
    """A nonzero number that reads as 0.0 (1e-400, -1e-400, 1e-318 uA) or as inf
    (1e999) is an error on every dimensional field, in every accepted unit."""
    from typing import Annotated

    from pydantic import TypeAdapter, ValidationError

    from specguard.model import units

    quantity = QUANTITY_FIELDS[field]
    adapter = TypeAdapter(Annotated[float, quantity])
    for unit in units.accepted_units(quantity.dimension):
        for number, kind, words in (
            ("1e-400", "number_invalid", "underflows to zero"),
            ("-1e-400", "number_invalid", "underflows to zero"),
            ("1e-330", "number_invalid", "underflows to zero"),
            ("1e999", "unit_invalid", "too large"),
            ("-1e999", "unit_invalid", "too large"),
        ):
            with pytest.raises(ValidationError) as info:
                adapter.validate_python(f"{number} {unit}")
            (err,) = info.value.errors()
            assert err["type"] == kind, (field, unit, number, err)
            assert words in err["ctx"]["message"], (field, unit, number, err)
    # a zero written with an exponent is a zero, not an underflow
    zero = f"0e-400 {units.accepted_units(quantity.dimension)[0]}"
    try:
        adapter.validate_python(zero)
    except ValidationError as exc:
        assert "underflows" not in str(exc)


@pytest.mark.parametrize(
    "path, value, pattern",
    [
        (("motor", "rated_current"), "1e-400 A", r"motor\.rated_current: '1e-400 A' underflows to zero"),
        (("motor", "no_load_current"), "-1e-400 mA", r"underflows to zero"),
        (("operating_points", 0, "ambient"), "1e-400 degC", r"underflows to zero.*in degC"),
        # the written number is a float (subnormal), its SI value is not
        (("motor", "terminal_inductance", "value"), "1e-320 nH", r"underflows to zero.*in H;"),
    ],
)
def test_underflow_is_a_number_finding(path, value, pattern):
    import re

    spec, findings = run(with_change(path, value))
    assert spec is None
    (finding,) = findings
    assert finding.rule == "number-invalid" and finding.location.path == path
    assert re.search(pattern, finding.message), finding.message


# ------------------------------------------------------- look-alike letters


@pytest.mark.parametrize(
    "path, value, pattern",
    [
        # Cyrillic capital A for the ampere
        (("motor", "rated_current"), "2 \u0410", r"U\+0410 CYRILLIC CAPITAL LETTER A.*did you mean A\?"),
        (("motor", "rated_current"), "2 m\u0410", r"did you mean mA\?"),
        # a full-width V
        (("stage", "supply", "voltage"), "24 \uff36", r"U\+FF36 FULLWIDTH LATIN CAPITAL LETTER V.*did you mean V\?"),
        # the Greek small mu is a micro sign (allowed), the Cyrillic small u is not
        (("motor", "terminal_inductance", "value"), "85 \u0443H", r"U\+0443 CYRILLIC SMALL LETTER U"),
    ],
)
def test_look_alike_letters_in_units_are_named(path, value, pattern):
    import re

    spec, findings = run(with_change(path, value))
    (finding,) = findings
    assert finding.rule == "unit-invalid"
    assert re.search(pattern, finding.message), finding.message


def test_micro_signs_stay_accepted():
    spec, findings = run(with_change(("motor", "terminal_inductance", "value"), "85 \u03bcH"))
    assert findings == [] and spec.motor.terminal_inductance.value == pytest.approx(85e-6)


def test_look_alike_letter_in_a_key_is_named():
    data = with_change(("motor", "rated_current"), KeyError)
    data["m\u043etor"] = data.pop("motor")  # Cyrillic small o
    spec, findings = run(data)
    unknown = [f for f in findings if "unknown key" in f.message]
    assert unknown and "U+043E CYRILLIC SMALL LETTER O" in unknown[0].message
    assert "did you mean 'motor'" in unknown[0].message
    data = copy.deepcopy(BASE)
    data["motor"]["rated\u200b_current"] = data["motor"].pop("rated_current")
    _, findings = run(data)
    (unknown,) = [f for f in findings if "unknown key" in f.message]
    assert "U+200B ZERO WIDTH SPACE" in unknown.message
    assert "'\u200b'" not in unknown.message  # an invisible character is named, not printed
