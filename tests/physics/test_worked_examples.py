"""docs/physics.md §8 worked examples and standards tables (sources named per value)."""

from __future__ import annotations

import math

import pytest

from specguard import physics as p

REL = 1e-3  # docs/physics.md §8.0: 1e-3 relative for closed forms


def close(value, expected, rel=REL):
    return value == pytest.approx(expected, rel=rel)


# ---------------------------------------------------------------- E1
def test_e1_chopper_rl_exact():
    # docs/physics.md, worked example E1 (inputs of the kind in Rashid, 3rd ed., ch. 5)
    r = p.ripple_exact(220.0, 7.5e-3, 5.0, 1e3, 0.5, "unipolar_single", 0.0)
    assert close(7.5e-3 / 5.0, 1.5e-3)  # tau_e, docs/physics.md, worked example E1
    assert close(r.minimum, 18.367)  # worked example E1, recomputed
    assert close(r.maximum, 25.633)  # worked example E1, recomputed
    assert close(r.peak_to_peak, 7.266)  # docs/physics.md, worked example E1 (= 44 tanh(1/6)), recomputed
    assert close(r.peak_to_peak, 44.0 * math.tanh(1.0 / 6.0), rel=1e-12)  # docs/physics.md, worked example E1
    assert close(r.average, 22.000)  # docs/physics.md, worked example E1
    assert close(r.rms, 22.10)  # worked example E1, recomputed
    assert close(r.linear_peak_to_peak, 7.333)  # docs/physics.md, worked example E1 linear estimate
    assert close(p.ripple_peak_to_peak_worst(220.0, 7.5e-3, 5.0, 1e3, "unipolar_single"), 7.266)


# ---------------------------------------------------------------- E2
def test_e2_inductance_for_ripple_limit():
    # docs/physics.md, worked example E2 (inputs of the kind in Rashid, 3rd ed., ch. 5):
    # linear 27.500 mH, exact 27.499 mH, recomputed
    exact = p.inductance_min_worst(550.0, 0.25, 250.0, "unipolar_single", 20.0)
    linear = p.inductance_min_worst(550.0, 0.0, 250.0, "unipolar_single", 20.0)
    assert close(linear, 27.500e-3)
    assert exact == pytest.approx(27.499e-3, abs=0.6e-6)
    # the exact inverse really meets the target (docs/physics.md §1.4 tanh form)
    assert close(p.ripple_peak_to_peak_worst(550.0, exact, 0.25, 250.0, "unipolar_single"), 20.0, 1e-12)
    # docs/physics.md, worked example E2 variant, recomputed: 8.333 / 8.332 mH
    assert close(p.inductance_min_worst(500.0, 0.0, 500.0, "unipolar_single", 30.0), 8.333e-3)
    assert p.inductance_min_worst(500.0, 0.30, 500.0, "unipolar_single", 30.0) == pytest.approx(8.332e-3, abs=0.6e-6)


# ---------------------------------------------------------------- E4
def test_e4_dc_servo_operating_point():
    # docs/physics.md, worked example E4 (derived here from §1, §4, §6.1)
    omega = 4000.0 * 2.0 * math.pi / 60.0
    assert close(omega, 418.879)  # docs/physics.md, worked example E4
    emf = p.back_emf(0.030, omega)
    assert close(emf, 12.566)  # docs/physics.md, worked example E4
    r20 = p.resistance_at_temperature(1.00, 298.15, 293.15)
    assert close(r20, 0.98073)  # docs/physics.md, worked example E4
    r80 = p.resistance_at_temperature(1.00, 298.15, 353.15)
    assert close(r80, 1.21198)  # docs/physics.md, worked example E4
    v_term = p.terminal_voltage_dc(0.030, omega, 2.0, r80)
    assert close(v_term, 14.990)  # docs/physics.md, worked example E4
    m = p.modulation_required(v_term, 24.0)
    assert close(m, 0.62460)  # docs/physics.md, worked example E4
    assert close(p.leg_duty(m, "bipolar"), 0.81230)  # docs/physics.md, worked example E4
    expected_point = {"bipolar": 1.830, "unipolar_single": 1.407, "unipolar_phase_shifted": 0.703}
    expected_worst = {"bipolar": 3.000, "unipolar_single": 1.500, "unipolar_phase_shifted": 0.750}
    expected_derated = {"bipolar": 5.489, "unipolar_single": 4.221, "unipolar_phase_shifted": 2.110}
    low, high = p.inductance_estimate_range(0.20e-3)  # 1/3: common practice (docs/physics.md §5.3)
    assert high == 0.20e-3
    for scheme in p.SCHEMES:
        lin = p.ripple_peak_to_peak_linear(24.0, 0.20e-3, 20e3, m, scheme)
        assert close(lin, expected_point[scheme])  # docs/physics.md, worked example E4 (linear values)
        # docs/physics.md, worked example E4: T_pwm/tau_e = 0.25, linear formula within 0.2 % of the exact
        exact = p.ripple_peak_to_peak(24.0, 0.20e-3, 1.0, 20e3, m, scheme)
        assert exact <= lin and exact == pytest.approx(lin, rel=2e-3)
        worst = p.ripple_peak_to_peak_linear_worst(24.0, 0.20e-3, 20e3, scheme)
        assert close(worst, expected_worst[scheme])  # docs/physics.md, worked example E4
        derated = p.ripple_peak_to_peak_linear(24.0, low, 20e3, m, scheme)
        assert close(derated, expected_derated[scheme])  # worked example E4 (one-third derating, common practice)
    assert close(p.ripple_period_to_time_constant(1.0, 0.2e-3, 20e3), 0.25)  # docs/physics.md, worked example E4


# ---------------------------------------------------------------- E5
@pytest.mark.parametrize(
    "strategy,m,f_expected",
    [
        # docs/physics.md, worked example E5 F values (§2.3; polynomials of Hava et al. 1999 and Holmes & Lipo 2003)
        ("spwm", 0.2, 0.044157),
        ("spwm", 0.4, 0.127660),
        ("spwm", 0.6, 0.209452),
        ("spwm", 0.8, 0.291678),
        ("spwm", 1.0, 0.419684),
        ("svpwm", 0.2, 0.043941),
        ("svpwm", 0.4, 0.124197),
        ("svpwm", 0.6, 0.191920),
        ("svpwm", 0.8, 0.236270),
        ("svpwm", 1.0, 0.284409),
        ("svpwm", 1.1547, 0.364204),
    ],
)
def test_e5_polynomial(strategy, m, f_expected):
    assert close(p.ripple_rms_polynomial(m, strategy), f_expected)


def test_e5_three_phase_ripple():
    # docs/physics.md, worked example E5: V = 48 V, 20 kHz, L_tt = 200 uH -> L_ph = 100 uH, I_base = 24 A
    l_ph = p.star_equivalent_inductance(200e-6)
    assert close(p.ripple_base_current(48.0, l_ph, 20e3), 24.0)  # docs/physics.md, worked example E5
    assert close(p.phase_ripple_rms(48.0, l_ph, 20e3, 1.0, "svpwm"), 0.5333)  # docs/physics.md, worked example E5
    assert close(p.phase_ripple_peak_to_peak_max(48.0, l_ph, 20e3, 1.0, "svpwm"), 3.464)  # E5
    m_max = 2.0 / math.sqrt(3.0)
    assert close(p.phase_ripple_rms(48.0, l_ph, 20e3, m_max, "svpwm"), 0.6035)  # docs/physics.md, worked example E5
    assert close(p.phase_ripple_peak_to_peak_max(48.0, l_ph, 20e3, m_max, "svpwm"), 4.000)  # E5
    assert close(p.phase_ripple_rms(48.0, l_ph, 20e3, 0.8, "spwm"), 0.5401)  # docs/physics.md, worked example E5
    assert close(p.phase_ripple_peak_to_peak_max(48.0, l_ph, 20e3, 0.8, "spwm"), 2.880)  # E5
    assert close(p.phase_ripple_rms(48.0, l_ph, 20e3, 1.0, "spwm"), 0.6478)  # docs/physics.md, worked example E5
    # docs/physics.md, worked example E5: mean-square ripple voltage at M = 1 is 0.058776 V^2 (both schemes)
    assert close(p.ripple_voltage_mean_square_three_phase(48.0, 1.0), 0.058776 * 48.0**2)


@pytest.mark.parametrize(
    "m,spwm_rms,spwm_pp,svpwm_rms,svpwm_pp",
    [
        # docs/physics.md §2.3 reference table (simulation, 720 angles; derived here)
        (0.2, 0.00876, 0.04500, 0.00873, 0.04250),
        (0.4, 0.01489, 0.08000, 0.01468, 0.07000),
        (0.6, 0.01907, 0.10500, 0.01825, 0.08660),
        (0.8, 0.02250, 0.12000, 0.02025, 0.11547),
        (1.0, 0.02699, 0.14434, 0.02222, 0.14434),
    ],
)
def test_section_2_3_reference_table(m, spwm_rms, spwm_pp, svpwm_rms, svpwm_pp):
    # rounding of the table is 5 decimals: absolute 6e-6 of I_base
    for strategy, rms_value, pp_value in (
        ("spwm", spwm_rms, spwm_pp),
        ("svpwm", svpwm_rms, svpwm_pp),
    ):
        assert p.phase_ripple_rms(1.0, 1.0, 1.0, m, strategy) == pytest.approx(rms_value, abs=6e-6)
        assert p.phase_ripple_peak_to_peak_max(1.0, 1.0, 1.0, m, strategy) == pytest.approx(pp_value, abs=6e-6)
        numeric = p.phase_ripple_numeric(1.0, 1.0, 1.0, m, strategy, angle_count=720)
        assert numeric.rms == pytest.approx(rms_value, abs=6e-6)
        assert numeric.peak_to_peak_max == pytest.approx(pp_value, abs=6e-6)


def test_section_2_3_svpwm_full_modulation_row():
    # docs/physics.md §2.3 table, M = 1.1547: SVPWM rms 0.02515, pp max 0.16667 (derived here)
    numeric = p.phase_ripple_numeric(1.0, 1.0, 1.0, 1.1547, "svpwm")
    assert numeric.rms == pytest.approx(0.02515, abs=6e-6)
    assert numeric.peak_to_peak_max == pytest.approx(0.16667, abs=6e-6)


# ---------------------------------------------------------------- E8
def test_e8_rms_form_factor_copper():
    # docs/physics.md, worked example E8 (IEC 60028 coefficient)
    assert close(p.current_rms_with_ripple(5.0, 2.0), 5.0332)
    assert close(p.form_factor(5.0, 2.0), 1.006645)
    assert close(p.ripple_copper_loss_relative(5.0, 2.0), 0.01333)
    assert close(p.resistance_at_temperature(1.0, 293.15, 428.15), 1.53055)  # E8
    assert close(p.resistance_at_temperature(1.0, 298.15, 293.15), 0.980729)  # E8
    assert close(p.copper_temperature_coefficient(298.15), 0.003854)  # E8, alpha25
    assert close(p.copper_temperature_coefficient(313.15), 0.003644)  # E8, alpha40


def test_iec_60028_copper_constants():
    # IEC 60028:1925 (docs/physics.md §6.1):
    # resistivity 1/58 Ohm mm^2/m = 0.017241, alpha20 = 0.00393 1/K
    assert p.COPPER_ALPHA_20 == 0.00393
    assert p.COPPER_RESISTIVITY_20 == pytest.approx(0.017241e-6, rel=1e-4)
    # 1/alpha20 - 20 = 234.5 (docs/physics.md §6.1): the two forms of R(T) agree
    r = p.resistance_at_temperature(1.0, 273.15 + 40.0, 273.15 + 120.0)
    assert r == pytest.approx((234.5 + 120.0) / (234.5 + 40.0), rel=2e-4)


@pytest.mark.parametrize(
    "designation,celsius",
    # IEC 60085:2007 thermal classes (docs/physics.md §6.6)
    [
        ("Y", 90),
        ("A", 105),
        ("E", 120),
        ("B", 130),
        ("F", 155),
        ("H", 180),
        ("N", 200),
        ("R", 220),
        (250, 250),
        ("275", 275),
    ],
)
def test_iec_60085_classes(designation, celsius):
    assert p.insulation_class_temperature(designation) == pytest.approx(celsius + 273.15)
    # default limit = class - 10 K (docs/physics.md §6.6, common practice)
    assert p.winding_temperature_limit(designation) == pytest.approx(celsius + 263.15)


def test_iec_60085_unknown_class():
    with pytest.raises(ValueError):
        p.insulation_class_temperature("Q")
    with pytest.raises(ValueError):
        p.insulation_class_temperature(160)


# ---------------------------------------------------------------- E10
def test_e10_two_node_transient():
    # docs/physics.md, worked example E10 (§6.2): R_wh 2 K/W, R_ha 6 K/W (final 80 K / housing 60 K at 10 W)
    c_w, c_h = p.capacitances_from_time_constants(20.0, 1200.0, 2.0, 6.0)
    assert (c_w, c_h) == (10.0, 200.0)  # docs/physics.md, worked example E10
    fast, slow = p.two_node_time_constants(c_w, c_h, 2.0, 6.0)
    assert close(fast, 19.033) and close(slow, 1260.97)  # docs/physics.md, worked example E10
    expected = {
        20.0: (12.744, 13.634),
        60.0: (20.201, 21.931),
        600.0: (41.536, 43.608),
        1200.0: (56.100, 57.927),
        3600.0: (76.437, 77.013),
    }  # docs/physics.md, worked example E10
    for t, (exact, decoupled) in expected.items():
        theta_w, _ = p.two_node_temperature_rise(t, 10.0, 0.0, c_w, c_h, 2.0, 6.0)
        assert close(theta_w, exact)
        assert close(p.two_node_temperature_rise_decoupled(t, 10.0, 2.0, 6.0, 20.0, 1200.0), decoupled)
    theta_w, theta_h = p.two_node_temperature_rise(1e6, 10.0, 0.0, c_w, c_h, 2.0, 6.0)
    assert close(theta_w, 80.0) and close(theta_h, 60.0)  # docs/physics.md, worked example E10 final values


# ---------------------------------------------------------------- E12
def test_e12_inductance_table():
    # docs/physics.md, worked example E12 (§5.2)
    f = [1e3, 10e3, 50e3]
    inductance = [200e-6, 120e-6, 70e-6]
    v20 = p.inductance_at_frequency(20e3, f, inductance)
    assert close(v20.value, 95.141e-6) and v20.extrapolated is False  # E12
    assert close(p.inductance_at_frequency(5e3, f, inductance).value, 139.947e-6)  # E12
    v100 = p.inductance_at_frequency(100e3, f, inductance)
    assert close(v100.value, 70e-6) and v100.extrapolated is True  # E12: held, flagged
    assert p.table_non_monotonic(f, inductance) is False
    assert p.table_non_monotonic(f, [200e-6, 90e-6, 120e-6]) is True


# ---------------------------------------------------------------- E14
def test_e14_control_and_rules_of_thumb():
    # docs/physics.md, worked example E14 (§4.5-4.6, §7)
    assert close(p.current_loop_bandwidth_max(20e3, math.radians(45.0)), 1666.7)  # E14
    assert close(p.current_loop_bandwidth_max(20e3, math.radians(60.0)), 1111.1)  # E14
    assert close(p.current_step_headroom_voltage(1666.7, 100e-6, 10.0), 10.47)  # E14
    assert close(p.speed_ripple_peak_to_peak(0.05, 1.0, 1e-5, 20e3), 0.03125)  # E14
    for scheme, expected in (
        ("bipolar", 1.20e-3),
        ("unipolar_single", 0.60e-3),
        ("unipolar_phase_shifted", 0.30e-3),
    ):  # E14 minimum inductance
        assert close(p.inductance_min_worst(48.0, 0.0, 20e3, scheme, 0.2 * 5.0), expected)
    assert close(p.supply_voltage_max_ripple_linear(15.0, 0.2e-3, 20e3, 1.0, "bipolar"), 19.524)  # E14
    assert close(p.supply_voltage_max_ripple_linear(0.0, 0.2e-3, 20e3, 1.0, "bipolar"), 8.0)  # E14
    assert close(p.supply_voltage_max_ripple_linear(15.0, 0.2e-3, 20e3, 1.0, "unipolar_single"), 20.455)
    # the exact bound with R = 0 is the linear one (E14 values)
    assert close(p.supply_voltage_max_ripple(15.0, 0.2e-3, 0.0, 20e3, 1.0, "bipolar"), 19.524)
    assert close(p.supply_voltage_max_ripple(15.0, 0.2e-3, 0.0, 20e3, 1.0, "unipolar_single"), 20.455)
    peak = p.choke_peak_current(15.0, 1.0)
    assert close(peak, 15.5) and close(p.saturation_current_required(peak, 0.25), 19.375)  # E14
    assert close(p.dead_time_fraction(500e-9, 20e3), 0.010)  # E14
    # docs/physics.md §7.4: SVPWM full modulation, L_ph,min = V / (6 r I f)
    added = p.added_phase_inductance_min(48.0, 0.0, 20e3, 2.0 / math.sqrt(3.0), "svpwm", 5.0, 0.2)
    assert close(added, 48.0 / (6.0 * 0.2 * 5.0 * 20e3))
