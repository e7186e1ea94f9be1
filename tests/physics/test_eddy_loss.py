"""PWM eddy loss in watts (docs/physics.md §5.6): the plate laws against a numerical
solution of the 1-D magnetic diffusion equation (scipy solve_bvp), the properties of the
ripple-loss scaling (hypothesis), and a calibrated example from a bench observation of
the trade."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from specguard import physics as p

integrate = pytest.importorskip("scipy.integrate")

SETTINGS = settings(derandomize=True, deadline=None, database=None, max_examples=150)

MU0 = 4e-7 * math.pi  # [H/m], the package's VACUUM_PERMEABILITY (SI 2019 value differs by 5e-10)
# Silicon steel as in the skin-depth table of docs/physics.md §5.1 (assumed values).
STEEL_RHO = 0.5e-6  # [Ohm m]
STEEL_MU_R = 1000.0  # [-]


# ---------------------------------------------------------------- numerical reference


def _diffusion_reference(frequency, thickness, resistivity, relative_permeability, surface_flux_density):
    """Loss density [W/m^3] and complex mean flux density [T] of a plate from the diffusion equation.

    The phasor field H(x) = u + j v obeys H'' = j omega mu sigma H (1-D magnetic diffusion),
    H = H_s on both faces.  By symmetry the half-plate [0, a] is solved with H'(0) = 0; in
    y = x / delta the equation is H'' = 2 j H.  Extra states integrate |H'|^2 (the loss,
    J = dH/dx) and H (the mean flux), so the solver's tolerance covers them.  Independent of
    the closed forms: scipy solve_bvp, no hyperbolic functions.
    """
    mu = MU0 * relative_permeability
    delta = math.sqrt(2.0 * resistivity / (2.0 * math.pi * frequency * mu))
    a = 0.5 * thickness / delta  # half-thickness in skin depths
    h_s = surface_flux_density / mu

    def rhs(y, s):
        u, du, v, dv = s[0], s[1], s[2], s[3]
        return np.vstack([du, -2.0 * v, dv, 2.0 * u, du * du + dv * dv, u, v])

    def bc(left, right):
        return np.array([left[1], left[3], left[4], left[5], left[6], right[0] - 1.0, right[2]])

    mesh = np.linspace(0.0, a, 401)
    guess = np.zeros((7, mesh.size))
    guess[0] = np.exp(mesh - a)  # the skin-limited shape, fine for thin plates too
    sol = integrate.solve_bvp(rhs, bc, mesh, guess, tol=1e-9, max_nodes=200000)
    assert sol.success, sol.message
    end = sol.y[:, -1]
    loss = resistivity * h_s * h_s / (2.0 * delta * delta) * end[4] / a  # <rho |J|^2 / 2>
    mean_flux = mu * h_s * complex(end[5], end[6]) / a
    return loss, mean_flux


# skin depth from 0.1 to 10 times the half-thickness (xi = d/delta from 20 down to 0.2)
DELTA_OVER_HALF = np.geomspace(0.1, 10.0, 15)
FREQUENCY = 20e3  # [Hz]


@pytest.mark.parametrize("delta_over_half", DELTA_OVER_HALF, ids=lambda r: f"delta/a={r:.3g}")
def test_plate_laws_against_the_diffusion_equation(delta_over_half):
    delta = p.skin_depth(FREQUENCY, STEEL_RHO, STEEL_MU_R)
    thickness = 2.0 * delta / delta_over_half
    b_s = 0.01  # [T] surface amplitude (linear material: the value only scales)
    # reference: scipy solve_bvp of the diffusion equation (helper above)
    loss, mean_flux = _diffusion_reference(FREQUENCY, thickness, STEEL_RHO, STEEL_MU_R, b_s)
    # closed forms, Stoll 1974 (the infinite plate) / Lammeraner and Stafl 1964 (docs/physics.md §5.6)
    surface = p.plate_eddy_loss_density_surface(FREQUENCY, b_s, thickness, STEEL_RHO, STEEL_MU_R)
    mean = p.plate_eddy_loss_density(FREQUENCY, abs(mean_flux), thickness, STEEL_RHO, STEEL_MU_R)
    assert surface == pytest.approx(loss, rel=0.02)
    assert mean == pytest.approx(loss, rel=0.02)
    # the same solution: B_mean / B_s = tanh(u)/u, u = (1 + j) d/(2 delta) (docs/physics.md §5.3)
    u = (1 + 1j) * thickness / (2.0 * delta)
    assert mean_flux / b_s == pytest.approx(np.tanh(u) / u, rel=1e-5)
    # the asymptotes inside the bands of plate_regime (errors stated in its docstring)
    regime = p.plate_regime(FREQUENCY, thickness, STEEL_RHO, STEEL_MU_R)
    thin = p.plate_eddy_loss_density_thin(FREQUENCY, b_s, thickness, STEEL_RHO)
    skin = p.plate_eddy_loss_density_skin(FREQUENCY, b_s, thickness, STEEL_RHO, STEEL_MU_R)
    if regime == "resistance-limited":
        assert thin == pytest.approx(loss, rel=0.04)
        assert p.plate_eddy_loss_density_thin(FREQUENCY, abs(mean_flux), thickness, STEEL_RHO) == pytest.approx(
            loss, rel=0.002
        )
    elif regime == "skin-limited":
        assert skin == pytest.approx(loss, rel=0.053)
    else:
        assert thin > loss * 1.04 and abs(skin / loss - 1.0) > 0.05  # neither asymptote is good there


def test_plate_limits_and_sources():
    # thin-plate law, closed form (pi f B d)^2/(6 rho), Stoll 1974: 0.35 mm steel, 1.5 T, 50 Hz
    # -> (pi 50 1.5 0.35e-3)^2 / (6 0.5e-6) = 2267 W/m^3 (hand evaluation), 0.30 W/kg at
    # 7650 kg/m^3: the order of the classical share of 0.35 mm sheet at 1.5 T, 50 Hz
    assert p.plate_eddy_loss_density_thin(50.0, 1.5, 0.35e-3, 0.5e-6) == pytest.approx(2267.0, rel=1e-3)
    # at 50 Hz the sheet is thin (delta = 0.5 mm > d): exact within 0.2 % of the thin law
    exact = p.plate_eddy_loss_density(50.0, 1.5, 0.35e-3, 0.5e-6, 1000.0)
    assert exact == pytest.approx(2267.0, rel=2e-3) and exact < 2267.0
    # thick plate: skin law rho H_s^2/(delta d), the semi-infinite conductor, Stoll 1974
    d = 40.0 * p.skin_depth(50e3, 1.5e-6, 1.05)
    assert p.plate_eddy_loss_density_surface(50e3, 0.01, d, 1.5e-6, 1.05) == pytest.approx(
        p.plate_eddy_loss_density_skin(50e3, 0.01, d, 1.5e-6, 1.05), rel=1e-12
    )
    # skin-limited at a fixed surface field: loss ~ sqrt(f) (docs/physics.md §5.6)
    ratio = p.plate_eddy_loss_density_surface(4 * 50e3, 0.01, d, 1.5e-6, 1.05) / p.plate_eddy_loss_density_surface(
        50e3, 0.01, d, 1.5e-6, 1.05
    )
    assert ratio == pytest.approx(2.0, rel=0.03)
    # no overflow far into the skin regime, and the thin limit at xi = 0
    assert math.isfinite(p.plate_eddy_loss_density(1e9, 0.1, 1e-2, 1e-8, 1e4))
    assert p.plate_eddy_loss_density(1e-9, 1.0, 1e-3, 1e-6) == pytest.approx(
        p.plate_eddy_loss_density_thin(1e-9, 1.0, 1e-3, 1e-6), rel=1e-12
    )
    # series and closed forms meet at xi = 1 (continuity across the switch)
    delta = p.skin_depth(20e3, STEEL_RHO, STEEL_MU_R)
    below = p.plate_eddy_loss_density_surface(20e3, 0.01, delta * (1 - 1e-12), STEEL_RHO, STEEL_MU_R)
    above = p.plate_eddy_loss_density_surface(20e3, 0.01, delta * (1 + 1e-12), STEEL_RHO, STEEL_MU_R)
    assert below == pytest.approx(above, rel=1e-10)
    # regime bands on the half-thickness (edges stated in plate_regime)
    assert p.plate_regime(20e3, 0.9 * delta, STEEL_RHO, STEEL_MU_R) == "resistance-limited"
    assert p.plate_regime(20e3, 2.0 * delta, STEEL_RHO, STEEL_MU_R) == "transition"
    assert p.plate_regime(20e3, 4.1 * delta, STEEL_RHO, STEEL_MU_R) == "skin-limited"


def test_triangle_constants_against_harmonic_sums():
    # docs/physics.md §3.2 harmonics of a triangle (rms.triangle_harmonic_amplitude)
    n = np.arange(1, 400_001, dtype=float)
    amp = p.triangle_harmonic_amplitude(1.0, 0.5, n)
    # skin-limited: sum I_n,rms^2 sqrt(n) (tail beyond n ~ 4e5 below 1e-13)
    assert np.sum(amp * amp / 2 * np.sqrt(n)) == pytest.approx(p.TRIANGLE_SQRT_HARMONIC_SUM, rel=1e-9)
    # resistance-limited: sum I_n,rms^2 omega_n^2 equals the mean square slope (Parseval)
    for duty in (0.5, 0.2):
        amp = p.triangle_harmonic_amplitude(2.0, duty, n)
        parseval = np.sum(amp * amp / 2 * (2 * math.pi * 1e3 * n) ** 2)
        assert parseval == pytest.approx(p.triangle_slope_mean_square(2.0, 1e3, duty), rel=1e-5)
    # triangle slope vs the voltage form <v_r^2>/L^2 (docs/physics.md §2.4, §5.4)
    pp = p.ripple_peak_to_peak_linear(48.0, 1e-4, 20e3, 0.3, "unipolar_single")
    expected = p.ripple_slope_mean_square(p.ripple_voltage_mean_square_hbridge(48.0, 0.3, "unipolar_single"), 1e-4)
    assert p.triangle_slope_mean_square(pp, 20e3, 0.3) == pytest.approx(expected, rel=1e-12)
    # the default range: positive, ordered, iron-core above coreless, linear in R
    for regime in ("resistance-limited", "skin-limited"):
        ranges = [p.ripple_loss_coefficient_default(c, 1.0, regime) for c in p.WINDING_CONSTRUCTIONS]
        lows, highs = zip(*ranges, strict=True)
        assert all(0 < lo < hi for lo, hi in zip(lows, highs, strict=True))
        assert lows[0] > lows[2] and highs[0] > highs[2]
        assert p.ripple_loss_coefficient_default("slotless", 2.0, regime)[1] == pytest.approx(2 * highs[1])
    # resistance-limited default is an extra resistance r R_dc at 20 kHz for a sine of 20 kHz
    k_low, _ = p.ripple_loss_coefficient_default("iron-core", 0.5, "resistance-limited")
    sine_slope_ms = (2 * math.pi * 20e3) ** 2 * 1.0  # 1 A rms
    assert k_low * sine_slope_ms == pytest.approx(1.0 * 0.5 * 1.0, rel=1e-12)
    with pytest.raises(ValueError, match="transition"):
        p.ripple_loss_measure(1.0, 20e3, 0.5, "transition")
    with pytest.raises(ValueError, match="construction"):
        p.ripple_loss_coefficient_default("outrunner", 1.0, "skin-limited")
    with pytest.raises(ValueError, match="ripple"):
        p.calibrate_ripple_loss(1.0, 0.0, 20e3, 0.5, "skin-limited")


# ---------------------------------------------------------------- properties

volts = st.floats(5.0, 600.0)
inductance = st.floats(1e-6, 1e-2)
frequency = st.floats(2e3, 1e5)
modulation = st.floats(0.05, 0.95) | st.floats(-0.95, -0.05)
schemes = st.sampled_from(p.SCHEMES)
regimes = st.sampled_from(("resistance-limited", "skin-limited"))


def _operating_point(v, ind, r, f, m, scheme):
    """(ripple pp [A], ripple frequency [Hz], load-wave duty [-]) from the hbridge functions."""
    pp = p.ripple_peak_to_peak(v, ind, r, f, m, scheme)
    return pp, p.ripple_frequency(f, scheme), p.load_wave_duty(m, scheme)


@SETTINGS
@given(volts, inductance, frequency, modulation, schemes, regimes, st.floats(0.0, 0.2), st.floats(1.2, 10.0))
def test_loss_falls_as_inverse_square_of_inductance(v, ind, f, m, scheme, regime, x, k):
    # exact ripple with T_r/tau_e = x <= 0.2 at the smaller L: dI departs from 1/L by
    # about x^2/48 (docs/physics.md §1.5), so the loss ratio is 1/k^2 within 1 %
    r = x * ind * p.ripple_frequency(f, scheme)
    base = _operating_point(v, ind, r, f, m, scheme)
    calibration = p.calibrate_ripple_loss(1.0, *base, regime)
    more_l = p.ripple_loss(calibration, *_operating_point(v, k * ind, r, f, m, scheme))
    assert more_l == pytest.approx(1.0 / (k * k), rel=0.01)


@SETTINGS
@given(volts, inductance, frequency, modulation, schemes, st.floats(1.01, 10.0), st.floats(0.0, 50.0))
def test_resistance_limited_loss_does_not_rise_with_pwm_frequency(v, ind, f, m, scheme, k, r):
    duty = p.load_wave_duty(m, scheme)
    fr = p.ripple_frequency(f, scheme)
    pp = p.ripple_peak_to_peak_linear(v, ind, f, m, scheme)
    calibration = p.calibrate_ripple_loss(1.0, pp, fr, duty, "resistance-limited")
    pp_high = p.ripple_peak_to_peak_linear(v, ind, k * f, m, scheme)
    # small-ripple triangle: the measure is <v_r^2>/L^2 whatever f (equal up to rounding)
    assert p.ripple_loss(calibration, pp_high, p.ripple_frequency(k * f, scheme), duty) <= 1.0 + 1e-12
    # exact waveform with R: the triangle measure never exceeds its R = 0 value (the same
    # <v_r^2>/L^2), which it approaches from below as f rises
    exact = p.ripple_peak_to_peak(v, ind, r, k * f, m, scheme)
    assert p.ripple_loss(calibration, exact, p.ripple_frequency(k * f, scheme), duty) <= 1.0 + 1e-12


@SETTINGS
@given(st.floats(1e-3, 1e3), st.floats(1e-3, 100.0), frequency, st.floats(0.01, 0.99), regimes, st.floats(0.0, 100.0))
def test_calibration_scales_exactly(loss, pp, fr, duty, regime, other_pp):
    calibration = p.calibrate_ripple_loss(loss, pp, fr, duty, regime)
    assert p.ripple_loss(calibration, pp, fr, duty) == loss  # bit for bit (ratio form)
    doubled = p.calibrate_ripple_loss(2.0 * loss, pp, fr, duty, regime)
    for point in ((other_pp, fr, duty), (pp, 2.0 * fr, 0.5), (other_pp, 0.3 * fr, 1.0 - duty)):
        assert p.ripple_loss(doubled, *point) == 2.0 * p.ripple_loss(calibration, *point)
    # temperature form: dT / R_th is the reference loss
    thermal = p.calibrate_ripple_loss_from_temperature_rise(12.0, 8.0, pp, fr, duty, regime)
    assert p.ripple_loss(thermal, pp, fr, duty) == 1.5
    assert thermal.coefficient * thermal.reference_measure == pytest.approx(1.5, rel=1e-15)


@SETTINGS
@given(volts, inductance, frequency, schemes, regimes, st.sampled_from((-1.0, 1.0, 0.0)))
def test_zero_without_ripple(v, ind, f, scheme, regime, m):
    calibration = p.calibrate_ripple_loss(3.0, 1.0, 20e3, 0.5, regime)
    assert p.ripple_loss(calibration, 0.0, p.ripple_frequency(f, scheme), 0.5) == 0.0
    # full modulation leaves no ripple in any scheme; m = 0 none in the unipolar ones
    if m != 0.0 or scheme != "bipolar":
        assert p.ripple_loss(calibration, *_operating_point(v, ind, 0.0, f, m, scheme)) == 0.0
    assert p.ripple_loss_from_coefficient(1e-9, 0.0, 20e3, 0.0, regime) == 0.0


@SETTINGS
@given(volts, inductance, frequency, st.floats(-0.98, 0.98), st.floats(0.0, 0.2))
def test_two_level_loses_more_than_three_level(v, ind, f, m, x):
    # same operating point (same average load voltage m): bipolar (two-level load wave)
    # against both unipolar (three-level) schemes
    r = x * ind * f
    slope = {s: p.ripple_slope_mean_square(p.ripple_voltage_mean_square_hbridge(v, m, s), ind) for s in p.SCHEMES}
    skin = {s: p.skin_ripple_measure(*_operating_point(v, ind, r, f, m, s)[:2]) for s in p.SCHEMES}
    for three_level in ("unipolar_single", "unipolar_phase_shifted"):
        assert slope["bipolar"] > slope[three_level]
        assert skin["bipolar"] > skin[three_level]


def test_vector_equals_scalar_loop():
    rng = np.random.default_rng(11)
    n = 48
    f = 10 ** rng.uniform(1, 6, n)
    d = 10 ** rng.uniform(-5, -1, n)
    rho = 10 ** rng.uniform(-8, -5, n)
    mu_r = 10 ** rng.uniform(0, 4, n)
    b = rng.uniform(0, 2, n)
    pp = rng.uniform(0, 10, n)
    pp[:3] = 0.0
    duty = rng.uniform(0.01, 0.99, n)
    for func in (p.plate_eddy_loss_density, p.plate_eddy_loss_density_surface, p.plate_eddy_loss_density_skin):
        vec = func(f, b, d, rho, mu_r)
        loop = [func(float(f[i]), float(b[i]), float(d[i]), float(rho[i]), float(mu_r[i])) for i in range(n)]
        assert np.allclose(vec, loop, rtol=1e-13, atol=0), func.__name__
    thin = p.plate_eddy_loss_density_thin(f, b, d, rho)
    assert np.allclose(thin, [p.plate_eddy_loss_density_thin(*(float(x[i]) for x in (f, b, d, rho))) for i in range(n)])
    regimes = p.plate_regime(f, d, rho, mu_r)
    assert regimes.tolist() == [p.plate_regime(*(float(x[i]) for x in (f, d, rho, mu_r))) for i in range(n)]
    assert set(regimes.tolist()) == {"resistance-limited", "transition", "skin-limited"}
    for regime in ("resistance-limited", "skin-limited"):
        calibration = p.calibrate_ripple_loss(2.0, 1.0, 20e3, 0.5, regime)
        vec = p.ripple_loss(calibration, pp, f, duty)
        loop = [p.ripple_loss(calibration, float(pp[i]), float(f[i]), float(duty[i])) for i in range(n)]
        assert np.allclose(vec, loop, rtol=1e-13, atol=0) and (vec[:3] == 0).all()
        vec_cal = p.calibrate_ripple_loss(b + 1.0, pp + 0.1, f, duty, regime)
        scaled = p.ripple_loss(vec_cal, pp + 0.1, f, duty)
        assert np.array_equal(scaled, b + 1.0)


# ---------------------------------------------------------------- calibrated example

# A fact of the trade (common practice, no published source): a small high-speed motor
# showed about 12 K of extra temperature rise at 50 % duty and 54 kHz ripple with 100 uH
# of added series inductance, and ran hotter with less inductance or a lower PWM
# frequency.  Assumed here (invented, plausible): 30 uH terminal inductance at the ripple
# frequency, 0.3 Ohm hot loop resistance, 24 V two-level load wave of 24 V step (unipolar
# single-leg, m = 0.5), winding-to-ambient thermal resistance 8 K/W, and the loss dominated
# by 0.35 mm silicon-steel laminations (0.5 uOhm m, mu_r 1000), skin-limited at the ripple
# frequencies of the example.
EX_V, EX_L_MOTOR, EX_L_ADDED, EX_R, EX_R_TH = 24.0, 30e-6, 100e-6, 0.3, 8.0
EX_DUTY, EX_F_REF, EX_F_LOW, EX_RISE = 0.5, 54e3, 20e3, 12.0


def _example_pp(inductance, ripple_frequency):
    return p.ripple_peak_to_peak_two_level(EX_V, EX_DUTY, 1.0 / ripple_frequency, inductance, EX_R)


def test_calibrated_example_rise_grows_without_choke_and_at_lower_frequency():
    for f in (EX_F_REF, EX_F_LOW):  # the laminations stay skin-limited at both frequencies
        assert p.plate_regime(f, 0.35e-3, STEEL_RHO, STEEL_MU_R) == "skin-limited"
    pp_ref = _example_pp(EX_L_MOTOR + EX_L_ADDED, EX_F_REF)
    assert pp_ref == pytest.approx(0.855, rel=1e-2)  # 24 V 0.25 / (130 uH 54 kHz), linear estimate
    cal = p.calibrate_ripple_loss_from_temperature_rise(EX_RISE, EX_R_TH, pp_ref, EX_F_REF, EX_DUTY, "skin-limited")
    assert cal.reference_loss == 1.5  # 12 K / 8 K/W
    no_choke = EX_R_TH * p.ripple_loss(cal, _example_pp(EX_L_MOTOR, EX_F_REF), EX_F_REF, EX_DUTY)
    low_f = EX_R_TH * p.ripple_loss(cal, _example_pp(EX_L_MOTOR + EX_L_ADDED, EX_F_LOW), EX_F_LOW, EX_DUTY)
    assert EX_R_TH * p.ripple_loss(cal, pp_ref, EX_F_REF, EX_DUTY) == EX_RISE
    # 1/L^2: (130/30)^2 = 18.8 -> about 225 K (a linear estimate: the motor would not survive it)
    assert no_choke > EX_RISE and no_choke == pytest.approx(EX_RISE * (130 / 30) ** 2, rel=0.02)
    # dI^2 sqrt(f): (54/20)^1.5 = 4.44 -> about 53 K
    assert low_f > EX_RISE and low_f == pytest.approx(EX_RISE * (54 / 20) ** 1.5, rel=0.02)
    # were the dominant part resistance-limited (e.g. magnets), removing the choke would
    # still raise the loss as 1/L^2, but a lower PWM frequency would not: the trade's report
    # then points to skin-limited parts or to the ripple's copper loss (docs/physics.md §3.1)
    cal_r = p.calibrate_ripple_loss_from_temperature_rise(
        EX_RISE, EX_R_TH, pp_ref, EX_F_REF, EX_DUTY, "resistance-limited"
    )
    linear = p.ripple_peak_to_peak_two_level(EX_V, EX_DUTY, 1.0 / EX_F_LOW, EX_L_MOTOR + EX_L_ADDED, 0.0)
    linear_ref = p.ripple_peak_to_peak_two_level(EX_V, EX_DUTY, 1.0 / EX_F_REF, EX_L_MOTOR + EX_L_ADDED, 0.0)
    cal_lin = p.calibrate_ripple_loss(1.0, linear_ref, EX_F_REF, EX_DUTY, "resistance-limited")
    assert p.ripple_loss(cal_lin, linear, EX_F_LOW, EX_DUTY) == pytest.approx(1.0, rel=1e-12)
    assert EX_R_TH * p.ripple_loss(cal_r, _example_pp(EX_L_MOTOR, EX_F_REF), EX_F_REF, EX_DUTY) > EX_RISE
