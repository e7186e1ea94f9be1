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
