"""Physics against independent numerical references: scipy solve_ivp (piecewise per
switching interval) for the R-L loop and the thermal network, and a time-stepping
three-phase inverter simulation written here (carrier comparison, centre-aligned,
min-max zero-sequence injection for SVPWM)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from specguard import physics as p

integrate = pytest.importorskip("scipy.integrate")


def _load_voltage_intervals(scheme, volts, m, period):
    """Piecewise-constant load voltage over one PWM period from the two leg waveforms
    (built here from the switching rules, independent of the physics scheme table)."""
    half = 0.5 * period
    if scheme == "bipolar":
        d_a = 0.5 * (1.0 + m)
        legs = [(d_a, False), (d_a, True)]  # B is the complement of A
    elif scheme == "unipolar_single":
        legs = [(m, False), None]
    else:
        legs = [(0.5 * (1.0 + m), False), (0.5 * (1.0 - m), False)]
    edges = {0.0, period}
    for leg in legs:
        if leg:
            edges |= {half - leg[0] * half, half + leg[0] * half}
    edges = sorted(edges)

    def state(leg, t):
        if leg is None:
            return 0.0
        high = abs(t - half) < leg[0] * half
        return float(high != leg[1])

    out = []
    for t0, t1 in zip(edges[:-1], edges[1:], strict=True):
        if t1 > t0:
            mid = 0.5 * (t0 + t1)
            out.append((t0, t1, volts * (state(legs[0], mid) - state(legs[1], mid))))
    return out


def _simulate_period(intervals, resistance, inductance, emf, i0):
    """Integrate [i, int i, int i^2] over one period, interval by interval."""
    state = np.array([i0, 0.0, 0.0])
    peak, trough = i0, i0
    for t0, t1, v in intervals:
        sol = integrate.solve_ivp(
            lambda t, y, v=v: [(v - resistance * y[0] - emf) / inductance, y[0], y[0] ** 2],
            (t0, t1),
            state,
            method="RK45",
            rtol=1e-11,
            atol=1e-12,
        )
        state = sol.y[:, -1]
        peak, trough = max(peak, sol.y[0].max()), min(trough, sol.y[0].min())
    return state, peak, trough


RL_CASES = [
    (scheme, m, ratio)
    for scheme, m in (
        ("bipolar", -0.35),
        ("unipolar_single", 0.25),
        ("unipolar_phase_shifted", 0.8),
    )
    for ratio in (0.1, 1.0, 4.0)
]


@pytest.mark.parametrize("scheme,m,ratio", RL_CASES, ids=[f"solve_ivp-{c[0]}-{c[1]}-{c[2]}" for c in RL_CASES])
def test_rl_loop_against_solve_ivp(scheme, m, ratio):
    volts, resistance, inductance = 36.0, 0.8, 150e-6
    tau = inductance / resistance
    t_r = ratio * tau
    f_pwm = 0.5 / t_r if scheme == "unipolar_phase_shifted" else 1.0 / t_r
    emf = m * volts - resistance * 1.2
    intervals = _load_voltage_intervals(scheme, volts, m, 1.0 / f_pwm)
    # Periodic steady state by shooting: the one-period map is affine, i1 = a i0 + b.
    b = _simulate_period(intervals, resistance, inductance, emf, 0.0)[0][0]
    a = _simulate_period(intervals, resistance, inductance, emf, 1.0)[0][0] - b
    i0 = b / (1.0 - a)
    (i_end, integral, integral_sq), peak, trough = _simulate_period(intervals, resistance, inductance, emf, i0)
    period = 1.0 / f_pwm
    exact = p.ripple_exact(volts, inductance, resistance, f_pwm, m, scheme, emf)
    # check values: scipy solve_ivp RK45 of the loop equation (docs/physics.md §1.1)
    assert exact.peak_to_peak == pytest.approx(peak - trough, rel=1e-6)
    assert exact.maximum == pytest.approx(peak, rel=1e-6)
    assert exact.minimum == pytest.approx(trough, rel=1e-6, abs=1e-9)
    assert exact.average == pytest.approx(integral / period, rel=1e-6)
    assert exact.rms == pytest.approx(math.sqrt(integral_sq / period), rel=1e-6)
    time, current = p.current_waveform(volts, inductance, resistance, f_pwm, m, scheme, emf, 4001)
    assert current.max() == pytest.approx(peak, rel=1e-6)
    assert current.min() == pytest.approx(trough, rel=1e-6, abs=1e-9)


def _inverter_simulation(m, strategy, carrier_ratio=360, samples=2000):
    """Own time-stepping simulation, V = L = f = 1: regular-sampled references per
    carrier period, triangle carrier comparison, isolated-neutral phase voltage,
    forward-Euler current; ripple = current minus its per-period mean."""
    theta = 2.0 * np.pi * np.arange(carrier_ratio) / carrier_ratio
    refs = 0.5 * m * np.cos(theta[:, None] - np.array([0.0, 2.0, 4.0]) * np.pi / 3.0)
    if strategy == "svpwm":
        refs = refs - 0.5 * (refs.max(axis=1, keepdims=True) + refs.min(axis=1, keepdims=True))
    dt = 1.0 / samples
    t = (np.arange(samples) + 0.5) * dt
    carrier = np.abs(2.0 * t - 1.0)  # 1 at the period ends, 0 at the centre
    high = (0.5 + refs)[:, None, :] > carrier[None, :, None]
    v_phase = high[:, :, 0] - high.mean(axis=2)
    # back-EMF equal to the per-period average phase voltage (the fundamental drive),
    # so the simulated current carries no fundamental ramp, only ripple and an offset
    emf = (refs[:, 0] - refs.mean(axis=1))[:, None]
    current = np.cumsum((v_phase - emf).ravel()) * dt  # time stepping, whole fundamental
    per_period = current.reshape(carrier_ratio, samples)
    ripple = per_period - per_period.mean(axis=1, keepdims=True)
    return math.sqrt(np.mean(ripple * ripple)), float((ripple.max(axis=1) - ripple.min(axis=1)).max())


@pytest.mark.parametrize(
    "strategy,m",
    [("spwm", 0.3), ("spwm", 0.9), ("spwm", 1.0), ("svpwm", 0.4), ("svpwm", 0.8), ("svpwm", 1.15)],
)
def test_three_phase_against_own_inverter_simulation(strategy, m):
    rms_sim, pp_sim = _inverter_simulation(m, strategy)  # check values: simulation above
    assert p.phase_ripple_rms(1.0, 1.0, 1.0, m, strategy) == pytest.approx(rms_sim, rel=1e-2)
    assert p.phase_ripple_peak_to_peak_max(1.0, 1.0, 1.0, m, strategy) == pytest.approx(pp_sim, rel=1e-2)
    numeric = p.phase_ripple_numeric(1.0, 1.0, 1.0, m, strategy, angle_count=360)
    assert numeric.rms == pytest.approx(rms_sim, rel=1e-2)
    assert numeric.peak_to_peak_max == pytest.approx(pp_sim, rel=1e-2)


@pytest.mark.parametrize("strategy", ["spwm", "svpwm"])
@pytest.mark.parametrize("limit_share", [0.35, 0.45])
def test_supply_bound_for_phase_ripple_against_simulation(strategy, limit_share):
    """The highest supply voltage that keeps an operating point's ripple within a limit.
    Check values: the own inverter simulation above, at the bound (ripple equals the
    limit), and a root search (scipy brentq) over the supply voltage on the exact
    per-period path. The ripple flattens towards a/(2 L f) as the supply rises, so the
    comparison is made in ripple, where a 1 % simulation error stays 1 %."""
    optimize = pytest.importorskip("scipy.optimize")
    a, inductance, f_pwm = 20.0, 0.3e-3, 20e3  # phase voltage peak [V], L_ph [H], f [Hz]
    limit = limit_share * a / (inductance * f_pwm)  # between a/(2 sqrt3) and a/2 of the bound
    bound = p.threephase.supply_voltage_max_for_phase_ripple(a, inductance, f_pwm, strategy, limit)
    simulated = bound * _inverter_simulation(2.0 * a / bound, strategy)[1] / (inductance * f_pwm)
    assert simulated == pytest.approx(limit, rel=1e-2)
    for factor in (0.8, 1.25):  # below the bound inside the limit, above it outside
        volts = factor * bound
        pp = volts * _inverter_simulation(2.0 * a / volts, strategy)[1] / (inductance * f_pwm)
        assert (pp < limit) == (factor < 1.0)

    def excess(volts):
        m = 2.0 * a / volts
        return p.phase_ripple_numeric(volts, inductance, f_pwm, m, strategy, angle_count=720).peak_to_peak_max - limit

    low = 2.0 * a / p.threephase.modulation_index_limit(strategy) * 1.001
    assert optimize.brentq(excess, low, 50.0 * a, xtol=1e-9) == pytest.approx(bound, rel=1e-3)


def test_supply_bound_for_phase_ripple_limits():
    """No bound when the ripple can never reach the limit (it tends to a/(2 L f) as
    the supply rises, and vanishes at standstill); no voltage at all when the ripple
    exceeds it even at the top of the linear range (a/(2 sqrt3 L f), docs/physics.md §2.3)."""
    bound = p.threephase.supply_voltage_max_for_phase_ripple
    a, inductance, f_pwm = 20.0, 0.3e-3, 20e3
    unit = a / (inductance * f_pwm)
    for strategy in ("spwm", "svpwm"):
        assert bound(a, inductance, f_pwm, strategy, 0.5 * unit) == math.inf
        assert bound(0.0, inductance, f_pwm, strategy, 1e-3) == math.inf
        assert bound(a, inductance, f_pwm, strategy, 0.99 * unit / (2.0 * math.sqrt(3.0))) == 0.0
    # closed forms: SPWM a^2/(a - 2X), SVPWM 3a^2/(2a - 4X) with X = limit L f
    assert bound(a, 1.0, 1.0, "spwm", 0.4 * a) == pytest.approx(a * a / (a - 0.8 * a))
    assert bound(a, 1.0, 1.0, "svpwm", 0.4 * a) == pytest.approx(3 * a * a / (2 * a - 1.6 * a))


def test_rms_prefactor_one_over_24_from_simulation():
    # docs/physics.md §2.3: the 1/24 prefactor was set by simulation; guard it here.
    rms_sim, _ = _inverter_simulation(0.7, "spwm")
    ratio = rms_sim / math.sqrt(p.ripple_rms_polynomial(0.7, "spwm"))
    assert ratio == pytest.approx(1.0 / 24.0, rel=1e-2)


def _thermal_rhs(segment, r20, c_w, c_h, r_wh, r_ha, t_a):
    def rhs(t, x):
        loss = segment.current_rms**2 * r20 * (1.0 + p.COPPER_ALPHA_20 * (t_a + x[0] - 293.15))
        return [
            (loss - (x[0] - x[1]) / r_wh) / c_w,
            (segment.housing_loss + (x[0] - x[1]) / r_wh - x[1] / r_ha) / c_h,
            x[0],
        ]

    return rhs


def test_cyclic_thermal_against_solve_ivp():
    segments = [p.Segment(15.0, 4.0, 0.5), p.Segment(40.0, 1.0, 0.2), p.Segment(5.0, 6.0, 0.0)]
    r20, c_w, c_h, r_wh, r_ha, t_a = 0.8, 10.0, 200.0, 2.0, 6.0, 313.15
    result = p.winding_temperature_cyclic(segments, r20, c_w, c_h, r_wh, r_ha, t_a, samples_per_segment=64)
    # check values: scipy solve_ivp over many cycles with R(T) refreshed continuously
    cycle = sum(s.duration for s in segments)

    def one_cycle(x0, record=False):
        x = np.array([x0[0], x0[1], 0.0])
        peak = -np.inf
        for seg in segments:
            sol = integrate.solve_ivp(
                _thermal_rhs(seg, r20, c_w, c_h, r_wh, r_ha, t_a),
                (0.0, seg.duration),
                x,
                method="LSODA",
                rtol=1e-11,
                atol=1e-11,
                dense_output=True,
            )
            if record:
                peak = max(peak, sol.sol(np.linspace(0.0, seg.duration, 400))[0].max())
            x = sol.y[:, -1]
        return x, peak

    # Periodic state by shooting (the cycle map is affine in the two node rises).
    base = one_cycle([0.0, 0.0])[0][:2]
    columns = [one_cycle(e)[0][:2] - base for e in ([1.0, 0.0], [0.0, 1.0])]
    x0 = np.linalg.solve(np.eye(2) - np.column_stack(columns), base)
    x, peak = one_cycle(x0, record=True)
    assert x[:2] == pytest.approx(x0, abs=1e-6)
    assert result.peak_winding_temperature == pytest.approx(t_a + peak, abs=2e-3)
    assert result.mean_winding_temperature == pytest.approx(t_a + x[2] / cycle, abs=2e-3)
    assert not result.runaway


def test_steady_state_against_cyclic_and_fixed_point():
    # one constant segment: cyclic periodic state = closed-form steady state (§6.3)
    steady = p.winding_temperature_steady(5.0, 0.8, 2.0, 6.0, 313.15, housing_loss=1.5)
    cyc = p.winding_temperature_cyclic([p.Segment(30.0, 5.0, 1.5)], 0.8, 10.0, 200.0, 2.0, 6.0, 313.15)
    assert cyc.peak_winding_temperature == pytest.approx(steady, rel=1e-9)
    # and the fixed point of theta = R_th P(theta) + R_ha P_h, iterated (independent)
    theta = 0.0
    for _ in range(500):
        theta = 8.0 * 25.0 * 0.8 * (1.0 + 0.00393 * (313.15 + theta - 293.15)) + 6.0 * 1.5
    assert steady == pytest.approx(313.15 + theta, rel=1e-9)
