"""The current loop as built, in the figures (docs/physics.md §7.3, "The loop as built").

Check values by hand on the dc-axis rule example (rules/examples/dc-axis.yaml: 40 kHz
leg frequency, single update, 2 kHz bandwidth): a first-order loop with a pure delay of
1.5 samples keeps PM = 90 deg - 360 deg f_c T_d = 90 - 360 x 2000 x 1.5 / 40000 = 63 deg
(the delay convention of Buso and Mattavelli, Digital Control in Power Electronics, 2006);
the 45 deg bandwidth is f_s / 12 = 3333 Hz.
"""

from __future__ import annotations

import math

import pytest

from specguard.figures import compute
from tests.engine.helpers import base_spec


def _figures(loop):
    spec, _ = base_spec("dc-axis", {"stage": {"current_loop": loop}})
    return compute(spec)


def test_delay_only_loop_against_the_hand_values():
    fs = _figures({"bandwidth": "2 kHz", "sampling": "single-update"})
    assert math.degrees(fs.value("loop_phase_margin")) == pytest.approx(63.0, rel=1e-12)
    assert fs.value("loop_bandwidth_max") == pytest.approx(40e3 / 12.0, rel=1e-12)


def test_own_sampling_rate_filter_and_tuning_inductance_take_margin():
    base = _figures({"bandwidth": "2 kHz", "sampling": "single-update"}).value("loop_phase_margin")
    slower = _figures({"bandwidth": "2 kHz", "sampling": "single-update", "sampling_frequency": "20 kHz"})
    # 1.5 samples at 20 kHz: 90 - 360 x 2000 x 1.5 / 20000 = 36 deg
    assert math.degrees(slower.value("loop_phase_margin")) == pytest.approx(36.0, rel=1e-12)
    filtered = _figures({"bandwidth": "2 kHz", "sampling": "single-update", "feedback_filter": "5 kHz"})
    assert filtered.value("loop_phase_margin") < base
    fs = _figures({"bandwidth": "2 kHz", "sampling": "single-update", "tuned_for_inductance": "1 mH"})
    assert fs.value("loop_crossover_shift") == pytest.approx(1e-3 / fs.value("loop_inductance"), rel=1e-12)
    assert fs.value("loop_phase_margin") < base  # tuned for more inductance: crosses over higher


def test_mechanical_corner_of_the_loaded_axis_against_the_hand_value():
    # rules/examples/dc-axis.yaml: R = 2.0 ohm at 25 degC -> 20 degC with the copper
    # coefficient of IEC 60028 (1/alpha_20 = 254.45 K): 2.0 x 254.45 / 259.45 = 1.96145 ohm;
    # J = 10 + 40 g*cm^2 = 5.0e-6 kg*m^2; k_t = k_e = 0.020 (SI);
    # tau_m = R J / (k_t k_e) = 24.518 ms (Hughes and Drury, ch. 3); f = 1 / (2 pi tau_m)
    spec, _ = base_spec("dc-axis")
    fs = compute(spec)
    r20 = 2.0 * 254.45 / 259.45
    tau = r20 * 5.0e-6 / (0.020 * 0.020)
    assert fs.value("mechanical_corner_frequency") == pytest.approx(1.0 / (2.0 * math.pi * tau), rel=2e-4)
    assert fs.value("loop_bandwidth_over_mechanical") == pytest.approx(
        spec.stage.current_loop.bandwidth * 2.0 * math.pi * tau, rel=2e-4
    )


@pytest.mark.parametrize("bandwidth", ["150 Hz", "300 Hz", "1 kHz"])
def test_a_plausible_bandwidth_is_never_called_a_slip(bandwidth):
    # common controller defaults of a few hundred hertz (common practice): above the
    # loaded axis' mechanical corner (6.5 Hz here), so the rule stays quiet
    from specguard.engine.evaluate import evaluate, load_pack

    spec, locate = base_spec("dc-axis", {"stage": {"current_loop": {"bandwidth": bandwidth}}})
    found = evaluate(spec, compute(spec), locate, load_pack())
    assert not [f for f in found if f.rule == "current-loop-bandwidth-low"]


def test_a_bandwidth_below_the_mechanics_is_flagged_with_both_numbers():
    from specguard.engine.evaluate import evaluate, load_pack

    spec, locate = base_spec("dc-axis", {"stage": {"current_loop": {"bandwidth": "5 Hz"}}})
    found = [f for f in evaluate(spec, compute(spec), locate, load_pack()) if f.rule == "current-loop-bandwidth-low"]
    assert len(found) == 1 and found[0].severity == "info"
    assert "5 Hz" in found[0].message and "6.491 Hz" in found[0].message
