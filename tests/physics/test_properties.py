"""Property tests (hypothesis) for the physics invariants."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from specguard import physics as p

SETTINGS = settings(derandomize=True, deadline=None, database=None, max_examples=300)

volts = st.floats(1.0, 1000.0)
inductance = st.floats(1e-6, 1e-1)
resistance = st.floats(0.0, 100.0)
frequency = st.floats(100.0, 2e5)
unit = st.floats(0.0, 1.0)
schemes = st.sampled_from(p.SCHEMES)


@SETTINGS
@given(volts, inductance, resistance, frequency, st.floats(0.0, 0.5))
def test_unipolar_symmetric_and_largest_at_half(v, ind, r, f, m):
    for scheme in ("unipolar_single", "unipolar_phase_shifted"):
        # 1 - m rounds for tiny m (relative error ~eps/m in the complement), so
        # compare D = m' with 1 - m' where m' = 1 - (1 - m) is exactly representable
        m = 1.0 - (1.0 - m)
        a = p.ripple_peak_to_peak(v, ind, r, f, m, scheme)
        b = p.ripple_peak_to_peak(v, ind, r, f, 1.0 - m, scheme)
        c = p.ripple_peak_to_peak(v, ind, r, f, -m, scheme)
        worst = p.ripple_peak_to_peak_worst(v, ind, r, f, scheme)
        # 1 - m rounds for tiny m: compare on the scale of the worst case
        assert a == pytest.approx(b, rel=1e-9, abs=1e-12 * worst)
        assert a == pytest.approx(c, rel=1e-9, abs=1e-12 * worst)
        assert a <= p.ripple_peak_to_peak(v, ind, r, f, 0.5, scheme) * (1 + 1e-12)
        assert p.ripple_peak_to_peak(v, ind, r, f, 0.5, scheme) == pytest.approx(
            p.ripple_peak_to_peak_worst(v, ind, r, f, scheme), rel=1e-9
        )


@SETTINGS
@given(volts, inductance, resistance, frequency, st.floats(-1.0, 1.0), schemes, st.floats(1.01, 10.0))
def test_ripple_falls_with_inductance_and_frequency(v, ind, r, f, m, scheme, k):
    base = p.ripple_peak_to_peak(v, ind, r, f, m, scheme)
    assert p.ripple_peak_to_peak(v, k * ind, r, f, m, scheme) <= base * (1 + 1e-12)
    assert p.ripple_peak_to_peak(v, ind, r, k * f, m, scheme) <= base * (1 + 1e-12)


@SETTINGS
@given(volts, inductance, resistance, frequency, st.floats(-1.0, 1.0), schemes)
def test_nothing_negative_and_exact_below_linear(v, ind, r, f, m, scheme):
    exact = p.ripple_exact(v, ind, max(r, 1e-3), f, m, scheme, 0.0)
    pp = p.ripple_peak_to_peak(v, ind, r, f, m, scheme)
    lin = p.ripple_peak_to_peak_linear(v, ind, f, m, scheme)
    assert 0.0 <= pp <= lin * (1 + 1e-12) + 1e-300
    assert p.ripple_peak_offset(v, ind, r, f, m, scheme) >= 0.0
    assert p.ripple_trough_offset(v, ind, r, f, m, scheme) >= 0.0
    assert p.ripple_rms(v, ind, r, f, m, scheme) >= 0.0
    assert exact.ripple_rms <= exact.peak_to_peak / 2.0 * (1 + 1e-9) + 1e-300
    rr = max(r, 1e-3)
    scale = p.ripple_peak_to_peak_worst(v, ind, rr, f, scheme)
    assert exact.peak_to_peak == pytest.approx(
        p.ripple_peak_offset(v, ind, rr, f, m, scheme) + p.ripple_trough_offset(v, ind, rr, f, m, scheme),
        rel=1e-9,
        abs=1e-12 * scale,
    )
    assert exact.maximum >= exact.average >= exact.minimum
    assert exact.peak_to_peak == pytest.approx(
        exact.maximum - exact.minimum, rel=1e-9, abs=1e-9 * abs(exact.average) + 1e-12 * scale
    )


@SETTINGS
@given(st.floats(0.0, 1.0), st.floats(0.0, 1e-3))
def test_exact_tends_to_linear_as_resistance_vanishes(m, r):
    # R -> 0: the exact forms must tend to the linear ones without 0/0
    lin = p.ripple_peak_to_peak_linear(24.0, 1e-3, 20e3, m, "unipolar_single")
    assert p.ripple_peak_to_peak(24.0, 1e-3, r, 20e3, m, "unipolar_single") == pytest.approx(lin, rel=1e-6, abs=1e-15)
    assert p.ripple_rms(24.0, 1e-3, r, 20e3, m, "unipolar_single") == pytest.approx(
        lin / (2 * math.sqrt(3.0)), rel=1e-6, abs=1e-15
    )


def test_vector_equals_scalar_loop():
    rng = np.random.default_rng(7)
    n = 64
    v = rng.uniform(5, 400, n)
    ind = 10 ** rng.uniform(-6, -2, n)
    r = rng.uniform(0, 20, n)
    r[:4] = 0.0
    f = 10 ** rng.uniform(3, 5, n)
    m = rng.uniform(-1, 1, n)
    m[4:8] = [0.0, 1.0, -1.0, 0.5]
    emf = rng.uniform(-10, 10, n)
    for scheme in p.SCHEMES:
        vec = p.ripple_exact(v, ind, r + 0.1, f, m, scheme, emf)
        for field in vec._fields:
            loop = [
                getattr(
                    p.ripple_exact(*(float(x[i]) for x in (v, ind, r + 0.1, f, m)), scheme, float(emf[i])),
                    field,
                )
                for i in range(n)
            ]
            assert np.allclose(np.broadcast_to(getattr(vec, field), (n,)), loop, rtol=1e-12, atol=0), field
        vec_pp = p.ripple_peak_to_peak(v, ind, r, f, m, scheme)
        assert np.allclose(
            vec_pp,
            [p.ripple_peak_to_peak(v[i], ind[i], r[i], f[i], m[i], scheme) for i in range(n)],
            rtol=1e-12,
            atol=0,
        )
        vmax = p.supply_voltage_max_ripple(v * 0.3, ind, r, f, 1.0, scheme)
        loop = [
            p.supply_voltage_max_ripple(float(v[i] * 0.3), float(ind[i]), float(r[i]), float(f[i]), 1.0, scheme)
            for i in range(n)
        ]
        assert np.allclose(vmax, loop, rtol=1e-8, atol=0)
    i = rng.uniform(0, 20, n)
    steady = p.winding_temperature_steady(i, 0.5, 1.0, 3.0, 300.0, housing_loss=2.0)
    assert np.array_equal(
        steady,
        [p.winding_temperature_steady(float(x), 0.5, 1.0, 3.0, 300.0, housing_loss=2.0) for x in i],
    )
    mm = rng.uniform(0, 1.15, n)
    assert np.allclose(
        p.phase_ripple_rms(48.0, 1e-4, 2e4, mm, "svpwm"),
        [p.phase_ripple_rms(48.0, 1e-4, 2e4, float(x), "svpwm") for x in mm],
        rtol=1e-13,
    )
    spwm = p.phase_ripple_peak_to_peak_max(48.0, 1e-4, 2e4, mm, "spwm")
    assert np.isnan(spwm[mm > 1.0]).all() and np.isfinite(spwm[mm <= 1.0]).all()


@SETTINGS
@given(
    volts,
    inductance,
    st.floats(0.0, 5.0),
    frequency,
    st.floats(0.05, 0.95),
    schemes,
    st.floats(0.5, 50.0),
    st.floats(0.05, 0.5),
)
def test_remedies_applied_meet_target(v, ind, r, f, m, scheme, rated, fraction):
    target = fraction * rated
    tol = 1 + 1e-9
    added = p.added_inductance_min(v, ind, r, f, scheme, rated, fraction, modulation=m, added_inductance_bound=10.0)
    if added is not None:
        assert p.ripple_peak_to_peak(v, ind + added, r, f, m, scheme) <= target * tol
        if added > 0.0:  # and it is the minimum: a little less does not do
            assert p.ripple_peak_to_peak(v, ind + added * 0.999, r, f, m, scheme) > target
    worst = p.added_inductance_min(v, ind, r, f, scheme, rated, fraction, added_inductance_bound=10.0)
    if worst is not None:
        assert p.ripple_peak_to_peak_worst(v, ind + worst, r, f, scheme) <= target * tol
    f_min = p.pwm_frequency_min(v, ind, r, scheme, rated, fraction, modulation=m, frequency_bound=1e7)
    if f_min:
        assert p.ripple_peak_to_peak(v, ind, r, f_min, m, scheme) <= target * tol
        assert p.ripple_peak_to_peak(v, ind, r, f_min * 0.999, m, scheme) > target
    f_worst = p.pwm_frequency_min(v, ind, r, scheme, rated, fraction, frequency_bound=1e7)
    if f_worst:
        assert p.ripple_peak_to_peak_worst(v, ind, r, f_worst, scheme) <= target * tol
    v_term = m * v
    v_max = p.supply_voltage_max_for_ripple(ind, r, f, scheme, rated, fraction, terminal_voltage=v_term)
    if v_max is not None and math.isfinite(v_max):
        assert p.ripple_peak_to_peak(v_max, ind, r, f, v_term / v_max, scheme) <= target * tol
        above = v_max * 1.001
        assert p.ripple_peak_to_peak(above, ind, r, f, v_term / above, scheme) > target
    v_worst = p.supply_voltage_max_for_ripple(ind, r, f, scheme, rated, fraction)
    assert p.ripple_peak_to_peak_worst(v_worst, ind, r, f, scheme) == pytest.approx(target, rel=1e-9)
    v_min = p.supply_voltage_min_for_operating_point(v_term, 0.97, scheme, current=rated, series_resistance=0.05)
    m_needed = p.modulation_required(v_term, v_min, rated, 0.05, scheme=scheme)
    assert m_needed == pytest.approx(p.modulation_max(0.97, scheme), rel=1e-9)


@SETTINGS
@given(
    st.floats(0.0, 30.0),
    st.floats(0.01, 5.0),
    st.floats(0.1, 5.0),
    st.floats(0.1, 10.0),
    st.floats(250.0, 350.0),
)
def test_steady_temperature_is_a_fixed_point_or_runaway(i, r20, r_wh, r_ha, t_a):
    t_w = p.winding_temperature_steady(i, r20, r_wh, r_ha, t_a)
    k = p.runaway_number(i, r20, r_wh, r_ha)
    if k >= 1.0:
        assert t_w == math.inf
        return
    loss = i * i * p.resistance_at_temperature(r20, 293.15, t_w)
    assert t_w - t_a == pytest.approx((r_wh + r_ha) * loss, rel=1e-9, abs=1e-9)
    assert t_w >= t_a
    if t_w - t_a > 1.0:
        i_max = p.current_continuous_max(t_w, t_a, r20, r_wh, r_ha)
        assert i_max == pytest.approx(i, rel=1e-9)
