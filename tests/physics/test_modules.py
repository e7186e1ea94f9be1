"""Behaviour of the smaller modules; derived relations checked against hand values
computed from the formulas of docs/physics.md (section named per check)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from specguard import physics as p


def test_discontinuous_conduction_detection():
    # docs/physics.md §1.6: diode freewheeling, |I_avg| < dI/2 -> discontinuous
    v, ind, r, f, m = 24.0, 100e-6, 1.0, 20e3, 0.5
    peak = p.ripple_peak_offset(v, ind, r, f, m, "unipolar_single")
    trough = p.ripple_trough_offset(v, ind, r, f, m, "unipolar_single")
    assert p.conduction_discontinuous(0.5 * trough, peak, trough) is True
    assert p.conduction_discontinuous(2.0 * trough, peak, trough) is False
    assert p.conduction_discontinuous(-0.5 * peak, peak, trough) is True
    assert p.conduction_discontinuous(0.5 * trough, peak, trough, "synchronous") is False
    vec = p.conduction_discontinuous(np.array([0.5, 2.0]) * trough, peak, trough)
    assert vec.tolist() == [True, False]
    assert not p.conduction_discontinuous(np.array([0.1]), peak, trough, "synchronous").any()


def test_scheme_tables():
    # docs/physics.md §1.2 scheme table
    assert p.ripple_frequency(20e3, "unipolar_phase_shifted") == 40e3
    assert p.ripple_frequency(20e3, "bipolar") == 20e3
    assert p.leg_duty(0.4, "bipolar") == pytest.approx(0.7)
    assert p.leg_duty(-0.4, "unipolar_single") == pytest.approx(0.4)
    assert p.load_wave_duty(-0.4, "unipolar_single") == pytest.approx(0.6)
    assert p.modulation_max(0.95, "bipolar") == pytest.approx(0.9)
    assert p.modulation_max(0.95, "unipolar_single") == pytest.approx(0.95)
    assert p.switching_leg_count("unipolar_single") == 1
    with pytest.raises(ValueError):
        p.ripple_frequency(1.0, "trapezoidal")


def test_three_phase_helpers():
    # docs/physics.md §2.1
    assert p.star_equivalent_resistance(2.0) == 1.0
    assert p.phase_inductance_conservative(80e-6, 120e-6) == 80e-6
    assert p.terminal_inductance_salient(80e-6, 120e-6, 0.0) == pytest.approx(160e-6)
    assert p.terminal_inductance_salient(80e-6, 120e-6, math.pi / 2) == pytest.approx(240e-6)
    # docs/physics.md §2.2: six-step chop_one worst V/(4 L_tt f), chop_both V/(2 L_tt f)
    assert p.six_step_ripple_peak_to_peak_worst(48.0, 200e-6, 0.0, 20e3, "six_step_chop_one") == pytest.approx(3.0)
    assert p.six_step_ripple_peak_to_peak_worst(48.0, 200e-6, 0.0, 20e3, "six_step_chop_both") == pytest.approx(6.0)
    assert p.six_step_ripple_peak_to_peak(48.0, 200e-6, 0.0, 20e3, 0.5, "six_step_chop_one") == pytest.approx(3.0)
    assert p.modulation_index_limit("svpwm") == pytest.approx(1.1547, rel=1e-4)
    assert math.isnan(p.ripple_rms_polynomial(1.2, "svpwm"))


def test_operating_sinusoidal_and_window():
    # docs/physics.md §4.3 dq model with i_d = 0: v_q = R i_q + w psi, v_d = -w L_q i_q
    v = p.phase_voltage_peak_dq(300.0, 4, 0.01, 0.2, 100e-6, 10.0)
    assert v == pytest.approx(math.hypot(0.2 * 10 + 1200 * 0.01, 1200 * 100e-6 * 10))
    assert p.torque_dq(4, 0.01, 10.0) == pytest.approx(0.6)
    assert p.q_current_for_torque(0.6, 4, 0.01) == pytest.approx(10.0)
    # SVPWM needs V >= sqrt3 V_ph (docs/physics.md §4.3)
    assert p.supply_voltage_min_sinusoidal(10.0, "svpwm") == pytest.approx(10 * math.sqrt(3))
    assert p.phase_voltage_peak_max(
        p.supply_voltage_min_sinusoidal(10.0, "spwm", 0.97, 1e-6, 2e4), "spwm", 0.97, 1e-6, 2e4
    ) == pytest.approx(10.0)
    assert p.modulation_index(10.0, 40.0) == 0.5
    # window (docs/physics.md §4.5-4.6): a generous inductance gives a non-empty window ...
    ok = p.supply_voltage_window(15.0, 12.0, 2.0, 1.0, 0.95, "bipolar", 1e-3, 1.2, 20e3, 1.0)
    assert not ok.empty and ok.minimum < ok.maximum
    assert ok.minimum == pytest.approx(15.0 / 0.9)
    assert ok.maximum_from_duty == pytest.approx(60.0)
    # ... a tiny one makes it empty
    bad = p.supply_voltage_window(15.0, 12.0, 2.0, 1.0, 0.95, "bipolar", 20e-6, 1.2, 20e3, 0.2)
    assert bad.empty
    assert p.modulation_headroom(0.8, 0.9) == pytest.approx(1 / 9)
    assert p.supply_voltage_min(10.0, 0.9, dead_time=1e-3, pwm_frequency=1e3) == math.inf
    assert p.dead_time_voltage(24.0, 500e-9, 20e3, 2) == pytest.approx(0.48)
    assert p.terminal_voltage_six_step(0.02, 500.0, 3.0, 0.4, 0.01) == pytest.approx(10.0 + 1.26)
    assert p.current_for_torque(0.1, 0.05, 0.1) == pytest.approx(2.1)


def test_remedies_not_reachable():
    assert (
        p.added_inductance_min(48.0, 1e-6, 0.1, 20e3, "bipolar", 1.0, 0.1, modulation=0.0, added_inductance_bound=1e-5)
        is None
    )
    assert p.pwm_frequency_min(48.0, 1e-6, 0.1, "bipolar", 1.0, 0.1, modulation=0.0, frequency_bound=1e5) is None
    assert p.supply_voltage_min_for_operating_point(30.0, 0.95, "bipolar", voltage_bound=24.0) is None
    # already met -> 0.0; the ripple can never reach the limit (y >= 1) -> 0.0
    assert p.added_inductance_min(24.0, 10e-3, 1.0, 20e3, "bipolar", 10.0, 0.2, modulation=0.2) == 0.0
    assert p.inductance_min_worst(10.0, 10.0, 20e3, "bipolar", 3.0) == 0.0
    assert p.pwm_frequency_min_three_phase(48.0, 1e-4, 1.0, "svpwm", 5.0, 0.2) == pytest.approx(
        48.0 * (math.sqrt(3) / 12) / (1e-4 * 1.0)
    )
    assert p.pwm_frequency_min_three_phase(48.0, 1e-4, 1.0, "svpwm", 5.0, 0.2, frequency_bound=1e3) is None


def test_rms_and_harmonic_loss():
    # docs/physics.md §3.2: fundamental share of the mean square 98.55 % (D = 0.5),
    # 91.4 % (D = 0.3), 72.6 % (D = 0.1)
    for duty, share in ((0.5, 0.9855), (0.3, 0.914), (0.1, 0.726)):
        i1 = p.triangle_harmonic_amplitude(1.0, duty, 1)
        assert (i1 * i1 / 2) / (1.0 / 12.0) == pytest.approx(share, abs=1e-3)
    # flat R_s(f): the harmonic loss equals R dI^2/12 (sum of harmonics = mean square)
    loss = p.ripple_harmonic_loss(2.0, 0.3, 20e3, [1e3, 1e6], [0.5, 0.5], harmonic_count=2000)
    assert loss == pytest.approx(p.ripple_copper_loss(0.5, 2.0), rel=1e-3)
    vec = p.ripple_harmonic_loss(np.array([2.0, 1.0]), 0.3, 20e3, [1e3, 1e6], [0.5, 0.5])
    assert vec[0] == pytest.approx(4 * vec[1])
    assert p.three_phase_copper_loss(0.5, 2.0) == 6.0
    assert p.three_phase_current_rms(3.0, 4.0) == 5.0
    assert p.ripple_rms_triangular(2 * math.sqrt(3)) == pytest.approx(1.0)


def test_eddy_index():
    # docs/physics.md §2.4: bipolar V^2 (1 - m^2), unipolar V^2 |m|(1 - |m|)
    assert p.ripple_voltage_mean_square_hbridge(10.0, 0.5, "bipolar") == pytest.approx(75.0)
    assert p.ripple_voltage_mean_square_hbridge(10.0, -0.3, "unipolar_single") == pytest.approx(21.0)
    assert p.ripple_voltage_mean_square_hbridge(10.0, 0.3, "unipolar_phase_shifted") == pytest.approx(21.0)
    assert p.ripple_slope_mean_square(4.0, 2e-3) == pytest.approx(1e6)
    assert p.eddy_loss_index(3.0, 1.5) == 2.0
    # docs/physics.md §5.1 skin depths: copper 0.47 mm at 20 kHz, NdFeB 4.3 mm at 20 kHz
    # (table values are rounded to 2 significant digits: half a unit of the last digit)
    assert p.skin_depth(20e3, 17.2e-9) == pytest.approx(0.47e-3, abs=0.005e-3)
    assert p.skin_depth(20e3, 1.5e-6, 1.05) == pytest.approx(4.3e-3, abs=0.05e-3)
    assert p.conduction_regime(0.35e-3, 0.5e-3) == "resistance-limited"
    assert p.conduction_regime(1.5e-3, 0.5e-3) == "skin-limited"
    assert p.conduction_regime(np.array([0.7e-3]), 0.5e-3).tolist() == ["transition"]


def test_thermal_extras():
    # docs/physics.md §6.4 ambient derating and ripple share
    i40 = p.current_continuous_max(418.15, 313.15, 1.0, 2.0, 6.0)
    i25 = p.current_continuous_max(418.15, 298.15, 1.0, 2.0, 6.0)
    assert p.current_continuous_max_at_ambient(i25, 418.15, 298.15, 313.15) == pytest.approx(i40)
    assert p.average_current_continuous_max(5.0, 3.0) == pytest.approx(4.0)
    assert p.runaway_current(1.0, 2.0, 6.0) == pytest.approx(1 / math.sqrt(0.00393 * 8))
    # docs/physics.md §6.5 single-node on/off: peak = P R (1 - e^{-ton/tau}) / (1 - e^{-T/tau})
    assert p.winding_temperature_rise_peak_on_off(10.0, 2.0, 20.0, 10.0, 40.0) == pytest.approx(
        20 * (1 - math.exp(-0.5)) / (1 - math.exp(-2.0))
    )
    runaway = p.winding_temperature_cyclic([p.Segment(1e4, 30.0)], 1.0, 10.0, 200.0, 2.0, 6.0, 298.15)
    assert runaway.runaway and runaway.peak_winding_temperature == math.inf
    assert p.winding_temperature_steady(30.0, 1.0, 2.0, 6.0, 298.15) == math.inf


def test_control_choke_braking_consistency_audible():
    assert p.current_loop_bandwidth_max(20e3, math.pi / 4, double_update=True) == pytest.approx(3333.3, rel=1e-4)
    assert p.pwm_resolution_counts(100e6, 20e3) == 2500.0
    assert p.pwm_counts_used(2500.0, 0.04) == pytest.approx(100.0)
    assert p.pulse_on_time(0.02, 20e3) == pytest.approx(1e-6)
    assert p.pulse_off_time(0.98, 20e3) == pytest.approx(1e-6)
    assert p.mechanical_time_constant(1.0, 1e-5, 0.05, 0.05) == pytest.approx(4e-3)
    assert p.loop_inductance(100e-6, 47e-6, 2) == pytest.approx(194e-6)
    assert p.loop_resistance(1.0, 0.05, 2, 0.02, 0.01, 2, 0.005) == pytest.approx(1.145)
    assert p.saturation_margin(19.375, 15.5) == pytest.approx(0.25)
    assert p.rms_current_utilisation(3.0, 4.0) == 0.75
    # docs/physics.md §7.6 energy balance
    e = p.regenerative_energy(1e-3, 300.0, 0.0)
    assert e == pytest.approx(45.0)
    cap = p.capacitor_absorbable_energy(1e-3, 48.0, 60.0)
    assert cap == pytest.approx(0.648)
    assert p.bus_voltage_after_braking(1e-3, 48.0, cap) == pytest.approx(60.0)
    assert p.shunt_resistance_max(56.0, p.braking_peak_power(2.0, 300.0)) == pytest.approx(56.0**2 / 600.0)
    assert p.braking_average_power(45.0, 3.0) == 15.0
    # docs/physics.md §4.4 conventions
    k_e_ll_pk = 0.1
    assert p.torque_constant_expected(k_e_ll_pk, "line_peak_per_phase_rms") == pytest.approx(math.sqrt(1.5) * 0.1)
    assert p.torque_constant_expected(k_e_ll_pk, "line_peak_per_phase_peak") == pytest.approx(
        1.5 * 4 * p.flux_linkage_from_line_back_emf_peak(k_e_ll_pk, 4)
    )
    assert p.torque_constant_mismatch(0.0525, 0.05, "dc") == pytest.approx(0.05)
    assert p.back_emf_constant_from_volts_per_krpm(104.72) == pytest.approx(1.0, rel=1e-5)
    assert p.back_emf_constant_at_temperature(0.1, 393.15, -0.001) == pytest.approx(0.09)
    with pytest.raises(ValueError):
        p.torque_constant_expected(1.0, "per_krpm")
    # docs/physics.md §7.1 bands (common practice 16 / 20 kHz)
    assert p.audible_band(8e3) == "audible"
    assert p.audible_band(18e3) == "audible_to_young_listeners"
    assert p.audible_band(p.ripple_frequency(12e3, "unipolar_phase_shifted")) == "above_hearing"
    assert p.audible_band(np.array([1e3, 17e3, 3e4])).tolist() == [
        "audible",
        "audible_to_young_listeners",
        "above_hearing",
    ]


def test_inductance_helpers():
    est = p.inductance_derated(300e-6)
    assert est == pytest.approx(100e-6)  # common practice 1/3, no published source
    assert p.inductance_derated(300e-6, 0.5) == pytest.approx(150e-6)
    vals = p.inductance_at_frequency(np.array([500.0, 20e3]), [1e3, 10e3, 50e3], [200e-6, 120e-6, 70e-6])
    assert vals.extrapolated.tolist() == [True, False]
    assert p.inductance_from_measured_ripple(24.0, 12.0, 0.5, 50e-6, 1.5) == pytest.approx(2e-4)
    with pytest.raises(ValueError):
        p.inductance_at_frequency(1e3, [1e3, 1e3], [1e-4, 2e-4])


@pytest.mark.parametrize(
    "extra_conductance",
    [0.0, 0.3, 0.9, 1e3, 1e9, 1e15],  # 0: no R(T) feedback; above 1/R_wh: runaway
)
def test_two_node_eigenvalues_against_lapack(extra_conductance):
    """The eigenvalues of the two-node thermal matrix (docs/physics.md §6.2) against
    numpy.linalg.eigvals (LAPACK). With a large R(T) feedback the winding entry turns
    positive (runaway) and the plain sum form cancelled to 0 and divided by zero."""
    from specguard.physics import thermal
    from specguard.physics._num import namespace

    a = thermal._system(4.0, 200.0, 2.5, 6.5, extra_conductance=extra_conductance)
    fast, slow = thermal._eigen(*a, namespace(1.0))
    expected = sorted(np.linalg.eigvals(np.array([[a[0], a[1]], [a[2], a[3]]])).real)
    assert fast == pytest.approx(expected[0], rel=1e-9)
    assert slow == pytest.approx(expected[1], rel=1e-9, abs=1e-18)
