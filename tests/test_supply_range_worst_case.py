"""Worst case over the declared supply range: ripple, worst-case ripple, the bus
energy the capacitors take before the trip and the choke peak at the TOP of
``stage.supply.range`` (a full battery); modulation, duty and headroom at its
BOTTOM (docs/physics.md §4.6).

Check values: the same figures of the same axis with the nominal voltage moved to
the range's end (the figures without a range are the single-voltage model, checked
against ngspice and the worked examples elsewhere), and the capacitor energy
C (V_trip^2 - V^2) / 2 by hand (energy of a capacitor, any physics textbook).
"""

from __future__ import annotations

import pytest

from specguard.figures import compute
from tests.engine.helpers import base_spec

RANGE = {"stage": {"supply": {"voltage": "24 V", "range": ["21 V", "27 V"]}}}


def _figures(overlay):
    spec, _locate = base_spec("dc-axis", overlay)
    return compute(spec)


def test_ripple_is_judged_at_the_top_and_headroom_at_the_bottom():
    ranged = _figures(RANGE)
    top = _figures({"stage": {"supply": {"voltage": "27 V"}}})
    bottom = _figures({"stage": {"supply": {"voltage": "21 V"}}})
    for point in ("hold", "run"):
        assert ranged.value("ripple_pp", point) == pytest.approx(top.value("ripple_pp", point), rel=1e-12)
        assert ranged.value("modulation", point) == pytest.approx(bottom.value("modulation", point), rel=1e-12)
        assert ranged.value("duty", point) == pytest.approx(bottom.value("duty", point), rel=1e-12)
        assert ranged.value("modulation_ratio", point) == pytest.approx(
            bottom.value("modulation_ratio", point), rel=1e-12
        )
    assert ranged.value("ripple_pp_worst") == pytest.approx(top.value("ripple_pp_worst"), rel=1e-12)
    assert ranged.value("choke_peak_current") == pytest.approx(top.value("choke_peak_current"), rel=1e-12)
    assert ranged.value("supply_voltage_high") == 27.0 and ranged.value("supply_voltage_low") == 21.0


def test_braking_from_a_full_supply_leaves_less_room_below_the_trip():
    ranged = _figures(RANGE)
    # 470 uF from 27 V (the top of the range) to the 30 V trip: 0.5 * 470e-6 * (30^2 - 27^2)
    assert ranged.value("bus_absorbable_energy") == pytest.approx(0.5 * 470e-6 * (30.0**2 - 27.0**2), rel=1e-12)
    nominal = _figures({})
    assert ranged.value("bus_absorbable_energy") < nominal.value("bus_absorbable_energy")


def test_without_a_range_every_figure_uses_the_nominal_voltage():
    plain = _figures({})
    assert plain.value("supply_voltage_high") == plain.value("supply_voltage_low") == 24.0
    # 470 uF from 24 V to 30 V
    assert plain.value("bus_absorbable_energy") == pytest.approx(0.5 * 470e-6 * (30.0**2 - 24.0**2), rel=1e-12)


def test_holding_torque_at_standstill_heats_one_phase_with_the_amplitude():
    """A three-phase axis holding torque at standstill: the current vector stands still
    and one phase carries the amplitude (sqrt 2 times the RMS phase current) continuously
    (common practice: the stall rating of a servo motor is below its rated current for
    this reason); the thermal and stage checks use it. Check value: sqrt 2 by hand."""
    import math

    from specguard.figures import compute as figures_of

    spec, _ = base_spec(
        "three-phase-axis",
        {
            "operating_points": [
                {"name": "hold", "speed": "0 rpm", "torque": "0.3 N*m", "ambient": "30 degC"},
                {"name": "run", "speed": "1000 rpm", "torque": "0.3 N*m", "ambient": "30 degC"},
            ]
        },
    )
    fs = figures_of(spec)
    assert fs.value("standstill_hold", "hold") is True and fs.value("standstill_hold", "run") is False
    held = math.hypot(fs.value("operating_current", "hold") * math.sqrt(2.0), fs.value("ripple_rms", "hold"))
    assert fs.value("rms_current", "hold") == pytest.approx(held, rel=1e-12)
    running = math.hypot(fs.value("operating_current", "run"), fs.value("ripple_rms", "run"))
    assert fs.value("rms_current", "run") == pytest.approx(running, rel=1e-12)
