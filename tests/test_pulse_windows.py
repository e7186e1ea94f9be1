"""Sampling windows at the operating points (docs/physics.md §7.8).

Check values by hand on the dc-axis rule example (rules/examples/dc-axis.yaml, 40 kHz
leg frequency: a 25 us period): at a leg duty D the on-time is D x 25 us and the
off-time (1 - D) x 25 us.
"""

from __future__ import annotations

import pytest

from specguard.figures import compute
from tests.engine.helpers import base_spec

PERIOD = 1.0 / 40e3


def test_pulse_and_sense_window_at_each_points_duty():
    spec, _ = base_spec(
        "dc-axis",
        {"stage": {"pwm": {"scheme": "unipolar-single", "min_pulse": "500 ns", "current_sense_window": "3 us"}}},
    )
    fs = compute(spec)
    for name in fs.point_names():
        duty = fs.value("duty", name)
        on, off = duty * PERIOD, (1.0 - duty) * PERIOD
        switching = [t for t in (on, off) if 0.0 < t < PERIOD]
        expected = min(switching) / 500e-9 if switching else float("inf")
        assert fs.value("pulse_window_ratio", name) == pytest.approx(expected, rel=1e-12)
        assert fs.value("sense_window_ratio", name) == pytest.approx(off / 3e-6, rel=1e-12)


def test_without_windows_the_figures_say_why():
    spec, _ = base_spec("dc-axis", {})
    fs = compute(spec)
    assert "min_pulse" in fs.missing["pulse_window_ratio"]
    assert "current_sense_window" in fs.missing["sense_window_ratio"]
