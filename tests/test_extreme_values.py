"""Extreme values in every numeric field: never a crash, never "inf" or "nan" in words.

For every numeric field of the unit-mutation reference specs (tests/test_unit_mutation.py)
and the two demo specs not among them, the value is multiplied by 1e-9, 1e-6, 1e6 and
1e9 (nanoamperes, kiloseconds, megahenry: wild but mostly still valid numbers), and
then replaced by the edge values 0, -1, 5e-324 (the smallest float), 1e-300 and
1e300 in its own unit (plain numbers: 0, 0.5, 1, -1, 1e300). Each spec is run
through the model, the figures and the rule pack in this process and must come back
as findings: no exception (which the CLI turns into exit 3), no internal-error
finding, and no message or fix that says "inf" or "nan" instead of a number. This
scan found a division by zero in the thermal eigenvalues of a runaway profile (a
torque constant times 1e-9), and divisions by zero and "inf %" messages for the
edge values, which the model now rejects (a nonzero SI magnitude outside 1e-12 to
1e12, model/quantity.py).
"""

from __future__ import annotations

import copy
import re

import pytest

from specguard.engine.evaluate import load_pack

from .test_unit_mutation import _QUANTITY, SPECS, Checker, _leaves, _set, assemble_spec, mutate_value

EXTRA = ("examples/robot/axes/pipette-x.axis.yaml", "examples/medical/axes/infusion-drive.axis.yaml")
FACTORS = (1e-9, 1e-6, 1e6, 1e9)
EDGE_NUMBERS = ("0", "-1", "5e-324", "1e-300", "1e300")
EDGE_PLAIN = (0, 0.5, 1, -1, 1e300)


def _variants(value):
    for factor in FACTORS:
        new = mutate_value(value, factor)
        if new is not None:
            yield f"x{factor:g}", new
    if isinstance(value, str):
        m = _QUANTITY.match(value)
        lead, _number, space, unit, trail = m.groups()
        for text in EDGE_NUMBERS:
            yield f"= {text}", f"{lead}{text}{space}{unit}{trail}"
    else:
        for plain in EDGE_PLAIN:
            if plain != value:
                yield f"= {plain}", plain


_NOT_A_NUMBER = re.compile(r"(?<![\w.])-?(inf|nan)(?![\w])", re.IGNORECASE)


@pytest.fixture(scope="module")
def problems():
    checker = Checker(load_pack())
    found: list[str] = []
    count = 0
    for rel in SPECS + EXTRA:
        doc = assemble_spec(rel)
        for path, value in list(_leaves(doc.data)):
            for how, new in _variants(value):
                count += 1
                data = copy.deepcopy(doc.data)
                _set(data, path, new)
                where = f"{rel} {'/'.join(map(str, path))} {how}"
                try:
                    findings = checker.findings(data, doc.locate)
                except Exception as exc:  # the CLI would report exit 3
                    found.append(f"{where}: {type(exc).__name__}: {exc}")
                    continue
                for f in findings:
                    if f.rule == "internal-error":
                        found.append(f"{where}: {f.message}")
                    for text in (f.message, *f.remedies):
                        if _NOT_A_NUMBER.search(text):
                            found.append(f"{where}: [{f.rule}] {text}")
    return count, found


def test_extreme_values_give_findings_not_crashes(problems):
    count, found = problems
    assert count > 1500  # five specs, dozens of numeric fields each, nine variants
    assert not found, "\n".join(found[:20])


def _relation_edits(d):
    """Edits that put one value exactly on another: limits met with equality, idle
    points, zero resistances, the hottest permitted ambient."""
    from specguard.model.units import parse_quantity

    stage, pwm = d["stage"], d["stage"]["pwm"]
    volts = parse_quantity(stage["supply"]["voltage"], "voltage")
    f_pwm = parse_quantity(pwm["frequency"], "frequency")
    thermal = d["motor"].get("thermal", {})

    def put(*path_value):
        *path, value = path_value

        def edit(x):
            node = x
            for part in path[:-1]:
                node = node.setdefault(part, {})
            node[path[-1]] = value

        return edit

    def every(where, **values):
        def edit(x):
            items = x.get(where, []) if where == "operating_points" else x.get("profile", {}).get("segments", [])
            for item in items:
                item.update(values)

        return edit

    yield "trip = supply", put("stage", "overvoltage_trip", f"{volts} V")
    yield "trip below supply", put("stage", "overvoltage_trip", f"{volts / 2} V")
    yield "rating = supply", put("stage", "max_supply_voltage", f"{volts} V")
    yield "range [V, V]", put("stage", "supply", "range", [f"{volts} V", f"{volts} V"])
    yield "max_duty 1", put("stage", "pwm", "max_duty", 1.0)
    yield "max_duty just above 0.5", put("stage", "pwm", "max_duty", 0.5000001)
    yield "min_pulse = period", put("stage", "pwm", "min_pulse", f"{1 / f_pwm} s")
    yield "dead time a quarter period", put("stage", "pwm", "dead_time", f"{1 / (4 * f_pwm)} s")
    yield "dead times fill the period", put("stage", "pwm", "dead_time", f"{1 / (2 * f_pwm)} s")
    yield "timer clock = PWM frequency", put("stage", "pwm", "timer_clock", f"{f_pwm} Hz")
    yield (
        "loop bandwidth = PWM frequency",
        put("stage", "current_loop", {"bandwidth": f"{f_pwm} Hz", "sampling": "single-update"}),
    )
    yield "points idle", every("operating_points", speed="0 rpm", torque="0 N*m")
    yield "profile idle", every("profile", speed="0 rpm", torque="0 N*m")
    yield "load inertia 0", put("load", {"inertia": "0 kg*m^2"})
    yield "switch resistance 0", put("stage", "switch_resistance", "0 ohm")
    yield "no-load current 0", put("motor", "no_load_current", "0 A")
    if d["motor"].get("max_speed"):
        yield "points at max speed", every("operating_points", speed=d["motor"]["max_speed"])
    if thermal.get("max_winding_temperature"):
        limit = thermal["max_winding_temperature"]
        yield (
            "ambient = winding limit",
            lambda x: (
                every("operating_points", ambient=limit)(x),
                x.get("profile", {}).__setitem__("ambient", limit) if "profile" in x else None,
            ),
        )
    if thermal.get("winding_time_constant"):
        yield "time constants equal", put("motor", "thermal", "motor_time_constant", thermal["winding_time_constant"])


def test_values_on_each_other_give_findings_not_crashes():
    checker = Checker(load_pack())
    found, count = [], 0
    for rel in SPECS + EXTRA:
        doc = assemble_spec(rel)
        for how, edit in _relation_edits(doc.data):
            data = copy.deepcopy(doc.data)
            edit(data)
            count += 1
            try:
                findings = checker.findings(data, doc.locate)
            except Exception as exc:
                found.append(f"{rel} {how}: {type(exc).__name__}: {exc}")
                continue
            found += [
                f"{rel} {how}: [{f.rule}] {f.message}"
                for f in findings
                if f.rule == "internal-error" or any(_NOT_A_NUMBER.search(t) for t in (f.message, *f.remedies))
            ]
    assert count > 80
    assert not found, "\n".join(found[:20])
