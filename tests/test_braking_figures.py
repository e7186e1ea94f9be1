"""Braking into real supplies, in the figures (docs/physics.md §7.6).

Check values by hand (energy of a capacitor C (V2^2 - V1^2) / 2, kinetic energy
J w^2 / 2, peak braking power J w^2 / t for a linear stop, brake resistor R <= V_on^2 /
P_peak: an energy balance any physics or drives textbook gives) on the dc-axis rule
example (rules/examples/dc-axis.yaml: 24 V, 470 uF, trip 30 V, 40 g*cm^2 load, fastest
point 6000 rpm).
"""

from __future__ import annotations

import math

import pytest

from specguard.figures import compute, remedy
from tests.engine.helpers import base_spec

C, V, TRIP = 470e-6, 24.0, 30.0
W1 = 6000.0 * 2.0 * math.pi / 60.0


def _figures(supply=None, load=None, stage=None):
    overlay = {"stage": {"supply": supply or {}, **(stage or {})}, "load": load or {}}
    spec, _ = base_spec("dc-axis", overlay)
    return spec, compute(spec)


def _inertia(spec):
    return spec.load.inertia + (spec.motor.rotor_inertia or 0.0)


def test_a_supply_that_tolerates_less_than_the_trip_lowers_the_capacitor_budget():
    spec, fs = _figures(
        {"absorbs_braking_energy": False, "returned_energy": {"takes": "nothing", "back_voltage_max": "27 V"}}
    )
    assert fs.value("bus_absorbable_energy") == pytest.approx(0.5 * C * (27.0**2 - V**2), rel=1e-12)
    energy = 0.5 * _inertia(spec) * W1**2
    assert fs.value("braking_energy") == pytest.approx(energy, rel=1e-12)
    assert fs.value("braking_supply_energy") == 0.0
    assert fs.value("braking_energy_ratio") == pytest.approx(energy / (0.5 * C * (27.0**2 - V**2)), rel=1e-12)


def test_a_battery_with_room_takes_it_all_and_a_blocked_one_takes_nothing():
    battery = {"takes": "battery", "full_charge_voltage": "29 V", "charge_current_max": "10 A"}
    spec, fs = _figures({"absorbs_braking_energy": True, "returned_energy": battery}, {"stop_time": "50 ms"})
    peak = _inertia(spec) * W1**2 / 0.05
    assert fs.value("braking_power_peak") == pytest.approx(peak, rel=1e-12)
    assert 10.0 * V > peak  # the charge limit is above the peak braking power
    assert fs.value("braking_supply_energy") == pytest.approx(fs.value("braking_energy"), rel=1e-9)
    assert fs.value("braking_energy_ratio") == pytest.approx(0.0, abs=1e-9)
    _, blocked = _figures(
        {"absorbs_braking_energy": True, "returned_energy": {**battery, "charging_blocked": True}},
        {"stop_time": "50 ms"},
    )
    assert blocked.value("braking_supply_energy") == 0.0
    assert blocked.value("braking_energy_ratio") == pytest.approx(
        blocked.value("braking_energy") / (0.5 * C * (TRIP**2 - V**2)), rel=1e-12
    )


def test_the_brake_resistor_fix_takes_the_peak_power_at_its_turn_on_voltage():
    spec, fs = _figures({"absorbs_braking_energy": False}, {"stop_time": "50 ms"})
    peak = _inertia(spec) * W1**2 / 0.05
    fix = remedy("brake_resistor", spec, fs, point=None, limit=1.0)
    # turn-on: the middle of [24 V x 1.05, 30 V x 0.95] = 26.85 V (docs/physics.md §7.6)
    v_on = (24.0 * 1.05 + 30.0 * 0.95) / 2.0
    assert fix.value == pytest.approx(v_on**2 / peak, rel=1e-12)
    # fitted: the capacitors take only up to the turn-on voltage, the resistor the rest
    _, fitted = _figures(
        {"absorbs_braking_energy": False},
        {"stop_time": "50 ms"},
        {"brake_resistor": {"resistance": f"{fix.value!r} ohm", "turn_on_voltage": f"{v_on!r} V"}},
    )
    room = 0.5 * C * (v_on**2 - V**2)
    assert fitted.value("braking_resistor_energy") == pytest.approx(fitted.value("braking_energy") - room, rel=1e-9)
    assert fitted.value("braking_energy_ratio") == pytest.approx(room / (0.5 * C * (TRIP**2 - V**2)), rel=1e-9)
    assert fitted.value("bus_voltage_after_braking") == pytest.approx(v_on, rel=1e-9)
