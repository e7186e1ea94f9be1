"""The current loop as built (docs/physics.md §7.3): delay, crossover, phase margin and
the largest bandwidth for a margin, checked against scipy.signal and a textbook value."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize, signal

from specguard import physics as p

SETTINGS = settings(derandomize=True, deadline=None, database=None, max_examples=200)

BANDWIDTHS = (200.0, 1000.0, 3000.0)  # Hz
DELAYS = (20e-6, 75e-6, 150e-6)  # s
CORNERS = (None, 3e3, 20e3)  # Hz, None: no feedback filter
RATIOS = (0.5, 1.0, 2.0)  # L_tuned / L_actual
GRID = list(itertools.product(BANDWIDTHS, DELAYS, CORNERS, RATIOS))
TOLERANCE_DEG = 0.1
WORST = {"deg": 0.0}


def scipy_phase_margin_deg(bandwidth, delay, corner, ratio):
    """Outside reference (scipy.signal): the rational part of the open loop as an lti
    system, its gain crossover found by brentq on |H(j w)| = 1, the exact delay
    exp(-j w T_d) multiplied in numerically and the phase unwrapped along a grid up to the
    crossover; PM = 180 deg + phase."""
    gain = 2.0 * math.pi * bandwidth * ratio  # omega_c L_tuned / L_actual [rad/s]
    if corner is None:
        system = signal.lti([gain], [1.0, 0.0])
    else:
        system = signal.lti([gain], [1.0 / (2.0 * math.pi * corner), 1.0, 0.0])

    def log_gain(w):
        _, response = signal.freqresp(system, [w])
        return math.log(abs(response[0]))

    crossover = optimize.brentq(log_gain, gain * 1e-3, gain * 10.0, xtol=1e-12 * gain, rtol=1e-14)
    w = np.linspace(crossover * 1e-6, crossover, 4001)
    _, response = signal.freqresp(system, w)
    total = response * np.exp(-1j * w * delay)
    phase = np.unwrap(np.angle(total))[-1]
    return 180.0 + math.degrees(phase), crossover


@pytest.mark.parametrize("bandwidth,delay,corner,ratio", GRID)
def test_phase_margin_against_scipy_signal(bandwidth, delay, corner, ratio):
    # scipy.signal reference (lti, freqresp) with the exact delay; within 0.1 deg
    expected, crossover = scipy_phase_margin_deg(bandwidth, delay, corner, ratio)
    got = math.degrees(p.loop_phase_margin(bandwidth, delay, corner, ratio))
    WORST["deg"] = max(WORST["deg"], abs(got - expected))
    assert got == pytest.approx(expected, abs=TOLERANCE_DEG)
    x = p.loop_crossover_frequency(bandwidth, corner, ratio)
    assert 2.0 * math.pi * x == pytest.approx(crossover, rel=1e-9)  # scipy brentq crossover


def test_worst_deviation_against_scipy_is_printed(capsys):
    worst = 0.0
    for case in GRID:
        expected, _ = scipy_phase_margin_deg(*case)
        worst = max(worst, abs(math.degrees(p.loop_phase_margin(*case)) - expected))
    with capsys.disabled():
        print(f"\nloop phase margin: worst deviation from scipy.signal over {len(GRID)} cases: {worst:.2e} deg")
    assert worst < TOLERANCE_DEG


@pytest.mark.parametrize("delay,corner,margin_deg", list(itertools.product(DELAYS, CORNERS, (30.0, 45.0, 60.0))))
def test_bandwidth_max_for_margin_gives_the_margin_in_scipy(delay, corner, margin_deg):
    # the bandwidth returned gives the requested margin in the scipy.signal reference
    bandwidth = p.loop_bandwidth_max_for_margin(delay, math.radians(margin_deg), corner)
    expected, _ = scipy_phase_margin_deg(bandwidth, delay, corner, 1.0)
    assert expected == pytest.approx(margin_deg, abs=TOLERANCE_DEG)
    assert math.degrees(p.loop_phase_margin(bandwidth, delay, corner)) == pytest.approx(margin_deg, abs=1e-6)
    # and a little more bandwidth loses it (largest such value)
    assert p.loop_phase_margin(bandwidth * 1.001, delay, corner) < math.radians(margin_deg)


def test_textbook_fs_over_12_at_45_degrees():
    # Buso and Mattavelli, Digital Control in Power Electronics, Morgan & Claypool, 2006
    # (1st ed.): synchronous sampling with one sample of computation gives a loop delay of
    # 1.5 sampling periods (half a sample of hold, one of computation).  Without a filter,
    # PM = 90 deg - 360 deg f_c T_d; 90 - 360 f_c 1.5 / f_s = 45 -> f_c = 45 f_s / 540 = f_s/12.
    f_s = 20e3
    delay = p.loop_total_delay(f_s, 1.0)
    assert delay == pytest.approx(1.5 / f_s, rel=1e-15)
    assert delay == pytest.approx(p.sampling_delay(f_s), rel=1e-15)
    assert p.loop_bandwidth_max_for_margin(delay, math.pi / 4) == pytest.approx(f_s / 12.0, rel=1e-12)
    assert p.loop_phase_margin(f_s / 12.0, delay) == pytest.approx(math.pi / 4, rel=1e-12)
    # the existing delay-limited relation is the same function (docs/physics.md, worked example E14)
    assert p.current_loop_bandwidth_max(f_s, math.pi / 4) == pytest.approx(1666.6667, rel=1e-7)
    assert p.current_loop_bandwidth_max(f_s, math.pi / 3) == pytest.approx(
        p.loop_bandwidth_max_for_margin(delay, math.pi / 3), rel=1e-15
    )
    # 60 deg: 90 - 540 f_c / f_s = 60 -> f_s/18 (docs/physics.md §7.3)
    assert p.loop_bandwidth_max_for_margin(delay, math.pi / 3) == pytest.approx(f_s / 18.0, rel=1e-12)


def test_delay_parts_and_hand_values():
    # derived here (docs/physics.md §7.3): T_d = (1/2 + n_c)/f_s + T_x
    assert p.loop_total_delay(10e3, 0.0) == pytest.approx(50e-6)  # hold only: 0.5 / 10 kHz
    assert p.loop_total_delay(10e3, 2.0, 5e-6) == pytest.approx(255e-6)  # 2.5 / 10 kHz + 5 us
    # a wrong inductance moves the crossover by L_tuned / L_actual (no filter)
    assert p.loop_crossover_frequency(1000.0, None, 2.0) == 2000.0
    # with a filter at the bandwidth: w^2 + w^4/wf^2 = wc^2 -> (w/wc)^2 = (sqrt 5 - 1)/2
    assert p.loop_crossover_frequency(1000.0, 1000.0) == pytest.approx(1000.0 * math.sqrt((math.sqrt(5.0) - 1) / 2))
    # no delay, filter only: atan(f_x/f_f) = 90 - 45 -> f_x = f_f, f_c = f_x sqrt(2)
    assert p.loop_bandwidth_max_for_margin(0.0, math.pi / 4, 1000.0) == pytest.approx(1000.0 * math.sqrt(2.0))
    assert p.loop_bandwidth_max_for_margin(0.0, math.pi / 4) == math.inf
    assert p.loop_bandwidth_max_for_margin(50e-6, math.pi / 2) == 0.0
    assert p.loop_bandwidth_max_for_margin(50e-6, 2.0) == 0.0
    # the worst plant the gains must tolerate: L_actual = L_tuned / 2 halves the bandwidth
    assert p.loop_bandwidth_max_for_margin(75e-6, math.pi / 4, None, 2.0) == pytest.approx(20e3 / 24.0)


def test_array_path_matches_scalar_path():
    delays = np.array([20e-6, 75e-6, 0.0, 0.0, 150e-6, 75e-6])
    corners = np.array([3e3, np.inf, 5e3, np.inf, 20e3, 3e3])
    margins = np.array([0.5, 0.8, 0.7, 0.7, 1.0, 1.7])
    got = p.loop_bandwidth_max_for_margin(delays, margins, corners)
    for i in range(len(delays)):
        corner = None if math.isinf(corners[i]) else float(corners[i])
        expected = p.loop_bandwidth_max_for_margin(float(delays[i]), float(margins[i]), corner)
        assert got[i] == pytest.approx(expected, rel=1e-10)
    bw = np.array([200.0, 1000.0, 3000.0])
    pm = p.loop_phase_margin(bw, 75e-6, np.array([3e3, np.inf, 20e3]), 1.5)
    for i, corner in enumerate((3e3, None, 20e3)):
        assert pm[i] == pytest.approx(p.loop_phase_margin(float(bw[i]), 75e-6, corner, 1.5), rel=1e-12)


# ---------------------------------------------------------------- properties (hypothesis)

bandwidths = st.floats(10.0, 2e4)
delays = st.floats(1e-6, 5e-4)
corners = st.floats(100.0, 1e6)
factors = st.floats(1.01, 10.0)


@SETTINGS
@given(bandwidths, delays, corners, factors)
def test_margin_falls_with_bandwidth_delay_and_a_lower_filter_corner(bw, delay, corner, k):
    base = p.loop_phase_margin(bw, delay, corner)
    assert p.loop_phase_margin(k * bw, delay, corner) < base
    assert p.loop_phase_margin(bw, k * delay, corner) < base
    # A lower corner also lowers the crossover, and with it the delay lag.  With
    # r = w_x/w_f: PM = pi/2 - a/sqrt(1 + r^2) - atan(r), a = w_c T_d, and r rises as the
    # corner falls; dPM/dr < 0 iff a r < sqrt(1 + r^2), which PM > 0 implies
    # (a < sqrt(1 + r^2) atan(1/r) and r atan(1/r) < 1).  Derived here (docs/physics.md §7.3):
    # the property holds for every stable loop; an unstable one may gain a little.
    if base > 0.0:
        assert p.loop_phase_margin(bw, delay, corner / k) < base
        assert p.loop_phase_margin(bw, delay, None) > base  # no filter: the corner at infinity


@SETTINGS
@given(bandwidths, delays, st.one_of(st.none(), corners), factors)
def test_less_inductance_than_tuned_lowers_the_margin(bw, delay, corner, ratio):
    assert p.loop_phase_margin(bw, delay, corner, ratio) < p.loop_phase_margin(bw, delay, corner, 1.0)
    assert p.loop_phase_margin(bw, delay, corner, 1.0 / ratio) > p.loop_phase_margin(bw, delay, corner, 1.0)


@SETTINGS
@given(delays, st.one_of(st.none(), corners), st.floats(0.05, 1.5))
def test_bandwidth_max_round_trip_and_monotone(delay, corner, margin):
    bandwidth = p.loop_bandwidth_max_for_margin(delay, margin, corner)
    assert bandwidth > 0.0
    assert p.loop_phase_margin(bandwidth, delay, corner) == pytest.approx(margin, abs=1e-9)
    assert p.loop_bandwidth_max_for_margin(2.0 * delay, margin, corner) < bandwidth
    if corner is not None:
        assert p.loop_bandwidth_max_for_margin(delay, margin, corner / 2.0) < bandwidth
        assert p.loop_bandwidth_max_for_margin(delay, margin) > bandwidth
