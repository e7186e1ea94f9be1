"""Figures of whole specs checked against the worked examples of docs/physics.md §8.

The specs are built so that the figures reproduce a published or derived check
value; the source is named beside each value. docs/physics.md, worked example E4 lists the linear
ripple values; the figures use the exact periodic solution, which at
T_pwm/tau_e = 0.25 lies within 0.2 % below the linear value (docs/physics.md §1.5 table).
"""

from __future__ import annotations

import copy
import math

import pytest

from specguard.figures import FIGURE_DEFS, FigureSettings, compute
from specguard.findings import Location
from specguard.model import build

E4 = {
    "format": 1,
    "axis": {"name": "e4"},
    "motor": {
        "type": "brushed-dc",
        "winding": "iron-core",
        "terminal_resistance": {"value": "1.00 ohm", "at": "25 degC"},
        # measured at or above every ripple frequency here (up to 40 kHz for the
        # phase-shifted scheme): no derating, as docs/physics.md, worked example E4 uses 0.20 mH as is
        "terminal_inductance": {"value": "0.20 mH", "measured_at": "40 kHz"},
        "torque_constant": {"value": "0.030 N*m/A", "current": "dc"},
        "back_emf_constant": {"value": "0.030 V*s/rad", "voltage": "terminal"},
        "rated_current": "2.0 A",
        "thermal": {
            "winding_to_housing": "2 K/W",
            "housing_to_ambient": "6 K/W",
            # E4 puts the winding at 80 degC; the figures use R at the limit
            "max_winding_temperature": "80 degC",
        },
    },
    "stage": {
        "supply": {"voltage": "24 V"},
        "pwm": {"frequency": "20 kHz", "frequency_is": "leg", "scheme": "bipolar", "max_duty": 1.0},
    },
    "operating_points": [
        # 4000 rpm, I = 2.0 A -> torque = k_t I = 0.06 N*m
        {"name": "e4", "speed": "4000 rpm", "torque": "0.06 N*m", "ambient": "25 degC"},
    ],
}


def figures_of(data, settings=None):
    spec, findings = build(data, lambda p, key=False: (Location("x", 1, 1, path=tuple(p)), ()))
    assert spec is not None, findings
    return compute(spec, settings)


# The worked example's "one-third derated inductance" as an estimate curve: a step to
# k = 1/3 above the catalogue frequency (a steep exponent held at a floor of 1/3).
ONE_THIRD = FigureSettings(
    inductance_curves=tuple((w, (60.0, 1.0 / 3.0)) for w in ("iron-core", "slotless", "coreless"))
)


def with_scheme(scheme, data=E4):
    out = copy.deepcopy(data)
    out["stage"]["pwm"]["scheme"] = scheme
    return out


def test_e4_operating_point():
    fs = figures_of(E4)
    # docs/physics.md, worked example E4: V_term = 14.990 V, m = 0.62460, bipolar D = 0.81230
    assert fs.value("terminal_voltage", "e4") == pytest.approx(14.990, rel=1e-4)
    assert fs.value("modulation", "e4") == pytest.approx(0.62460, rel=1e-4)
    assert fs.value("duty", "e4") == pytest.approx(0.81230, rel=1e-4)
    assert fs.value("operating_current", "e4") == pytest.approx(2.0, rel=1e-12)
    # docs/physics.md, worked example E4: tau_e = 0.2 ms with R = R25 = 1 ohm; here R is hot (80 degC),
    # R(80 degC) = 1.21198 ohm (E4), so tau = 0.2 mH / 1.21198 ohm
    assert fs.value("electrical_time_constant") == pytest.approx(0.2e-3 / 1.21198, rel=1e-4)


@pytest.mark.parametrize(
    "scheme, at_point, worst",
    [
        # docs/physics.md, worked example E4: ripple at the operating point and worst cases (linear values)
        ("bipolar", 1.830, 3.000),
        ("unipolar-single", 1.407, 1.500),
        ("unipolar-phase-shifted", 0.703, 0.750),
    ],
)
def test_e4_ripple_by_scheme(scheme, at_point, worst):
    fs = figures_of(with_scheme(scheme))
    # exact <= linear, within 0.3 % at T/tau ~ 0.3 (docs/physics.md §1.5)
    assert fs.value("ripple_pp", "e4") == pytest.approx(at_point, rel=3e-3)
    assert fs.value("ripple_pp", "e4") <= at_point * (1 + 5e-4)
    assert fs.value("ripple_pp_worst") == pytest.approx(worst, rel=3e-3)
    assert fs.value("ripple_ratio_worst") == pytest.approx(worst / 2.0, rel=3e-3)


def test_estimate_curve_per_winding_is_continuous_and_reaches_a_third():
    """Common practice, no published source (docs/physics.md §5.3): an iron-core
    winding's inductance at 20 kHz is about a third of its 1 kHz catalogue value;
    slotless and coreless windings fall less; the curve has no step and a floor."""
    from specguard.physics.inductance import ESTIMATE_CURVES, inductance_estimated

    n, floor = ESTIMATE_CURVES["iron-core"]
    assert inductance_estimated(1.0, 1e3, 20e3, n, floor) == pytest.approx(1.0 / 3.0, rel=2e-3)
    for winding, (n, floor) in ESTIMATE_CURVES.items():
        assert inductance_estimated(1.0, 1e3, 1e3, n, floor) == 1.0  # no step at the catalogue frequency
        assert inductance_estimated(1.0, 1e3, 1.001e3, n, floor) == pytest.approx(1.0, rel=1e-3), winding
        assert inductance_estimated(1.0, 1e3, 1e7, n, floor) == floor  # held at the floor
    at = {w: inductance_estimated(1.0, 1e3, 25e3, *c) for w, c in ESTIMATE_CURVES.items()}
    assert at["iron-core"] < at["slotless"] < at["coreless"] < 1.0


def test_catalogue_value_measured_near_the_ripple_frequency_is_used_as_is():
    data = with_scheme("bipolar")
    data["motor"]["terminal_inductance"]["measured_at"] = "17 kHz"  # within 20 % below 20 kHz
    fs = figures_of(data)
    assert fs.value("inductance_estimated") is False
    assert fs.value("loop_inductance") == pytest.approx(0.2e-3, rel=1e-12)


@pytest.mark.parametrize(
    "scheme, derated_at_point",
    [
        # docs/physics.md, worked example E4: with a one-third derated inductance 5.489 / 4.221 / 2.110 A
        # (linear); at L/3 the period is 0.74 tau, the exact value lies ~1-2 % lower
        ("bipolar", 5.489),
        ("unipolar-single", 4.221),
        ("unipolar-phase-shifted", 2.110),
    ],
)
def test_e4_derated_inductance(scheme, derated_at_point):
    data = with_scheme(scheme)
    data["motor"]["terminal_inductance"]["measured_at"] = "1 kHz"
    fs = figures_of(data, ONE_THIRD)
    assert fs.value("inductance_estimated") is True
    assert fs.value("loop_inductance") == pytest.approx(0.2e-3 / 3, rel=1e-12)
    assert fs.value("ripple_pp", "e4") == pytest.approx(derated_at_point, rel=2.5e-2)
    assert fs.value("ripple_pp", "e4") < derated_at_point
    # the catalogue value gives the other end of the range (E4 values again)
    catalogue = {"bipolar": 1.830, "unipolar-single": 1.407, "unipolar-phase-shifted": 0.703}[scheme]
    assert fs.value("ripple_pp_catalogue", "e4") == pytest.approx(catalogue, rel=3e-3)


def test_e5_svpwm_worst_ripple():
    # docs/physics.md, worked example E5: V = 48 V, f = 20 kHz, L_tt = 200 uH -> L_ph = 100 uH;
    # SVPWM at M = 2/sqrt3 gives dI_max = 4.000 A
    data = copy.deepcopy(E4)
    data["motor"].update(
        {
            "type": "three-phase",
            "terminal_inductance": {"value": "200 uH", "measured_at": "20 kHz"},
            "torque_constant": {"value": "0.05 N*m/A", "current": "phase-rms"},
            "back_emf_constant": {"value": "0.05 V*s/rad", "voltage": "line-to-line-rms"},
            "pole_pairs": 4,
        }
    )
    data["motor"]["torque_constant"]["value"] = f"{0.05 * math.sqrt(3):.12f} N*m/A"
    data["stage"]["supply"]["voltage"] = "48 V"
    data["stage"]["pwm"]["scheme"] = "space-vector"
    fs = figures_of(data)
    assert fs.value("ripple_pp_worst") == pytest.approx(4.000, rel=1e-3)
    # k_t,rms = sqrt3 k_e,ll,rms (docs/physics.md §4.4): consistent constants
    assert fs.value("constant_mismatch") == pytest.approx(0.0, abs=1e-9)


def test_dc_supply_window_top_holds_at_a_standstill_point():
    """Bipolar PWM: the ripple bound is tightest where the terminal voltage is lowest,
    V_ripple = L f dI + sqrt((L f dI)^2 + V_req^2), about 2 L f dI at standstill
    (docs/physics.md §4.6, linear form; the figures solve the exact ripple, within 1 % of
    it at T_pwm/tau_e = 0.25, docs/physics.md §1.5). The E4 point alone sets a higher top."""
    alone = figures_of(E4).value("supply_max")
    data = copy.deepcopy(E4)
    data["operating_points"].append({"name": "hold", "speed": "0 rpm", "torque": "0.03 N*m", "ambient": "25 degC"})
    fs = figures_of(data)
    lf_di = 0.20e-3 * 20e3 * 0.2 * 2.0  # L f dI_max with dI_max = 20 % of the 2 A rated current
    v_req = fs.value("terminal_voltage", "hold")
    assert fs.value("supply_max") == pytest.approx(lf_di + math.sqrt(lf_di**2 + v_req**2), rel=1e-2)
    assert fs.value("supply_max") < alone


def _e5_axis(scheme="space-vector", points=None):
    data = copy.deepcopy(E4)
    data["motor"].update(
        {
            "type": "three-phase",
            "terminal_inductance": {"value": "200 uH", "measured_at": "20 kHz"},
            "torque_constant": {"value": f"{0.05 * math.sqrt(3):.12f} N*m/A", "current": "phase-rms"},
            "back_emf_constant": {"value": "0.05 V*s/rad", "voltage": "line-to-line-rms"},
            "pole_pairs": 4,
        }
    )
    data["stage"]["supply"]["voltage"] = "48 V"
    data["stage"]["pwm"]["scheme"] = scheme
    if points is not None:
        data["operating_points"] = points
    return data


@pytest.mark.parametrize("scheme", ["space-vector", "sinusoidal"])
def test_three_phase_supply_window_top_is_the_ripple_edge(scheme):
    """The window's upper end for a three-phase axis is the supply at which the
    highest point's maximum peak-to-peak ripple reaches the window's ripple limit,
    20 % of the rated current (docs/physics.md §7.4, common practice). Check: the figures computed
    again with the supply set there show that ripple (the forward closed form read
    back through the whole pipeline), 5 % above it more and 5 % below it less."""
    points = [
        {"name": "slow", "speed": "300 rpm", "torque": "0.05 N*m", "ambient": "25 degC"},
        {"name": "fast", "speed": "1500 rpm", "torque": "0.05 N*m", "ambient": "25 degC"},
    ]
    data = _e5_axis(scheme, points)
    data["motor"]["rated_current"] = "5 A"
    top = figures_of(data).value("supply_max")
    assert top is not None and 10.0 < top < 48.0, top
    for factor, above in ((1.0, None), (1.05, True), (0.95, False)):
        moved = copy.deepcopy(data)
        moved["stage"]["supply"]["voltage"] = f"{top * factor:.9f} V"
        fs = figures_of(moved)
        worst = max(fs.value("ripple_pp", name) for name in ("slow", "fast"))
        if above is None:
            assert worst == pytest.approx(0.2 * 5.0, rel=1e-6)
        else:
            assert (worst > 1.0) == above


def test_rms_rating_standing_in_for_a_peak_counts_as_its_amplitude():
    """Peak ratings are instantaneous; with no peak rating given, the rated (motor) or
    continuous (stage) RMS phase current of a sinusoidal axis stands in as its
    amplitude, sqrt 2 times it (a sinusoid's peak; fact of the trade). Before, a
    motor run exactly at its rated current read as 141 % of its limit."""
    data = _e5_axis(points=[{"name": "p", "speed": "1000 rpm", "torque": "0.075 N*m", "ambient": "25 degC"}])
    data["motor"]["rated_current"] = "1 A"  # k_t = 0.0866 N*m/A: the point needs 0.866 A RMS
    data["motor"]["terminal_inductance"]["value"] = "4 mH"  # a small ripple beside 1.22 A amplitude
    data["stage"]["current_limit"] = {"continuous": "2 A"}
    fs = figures_of(data)
    peak = fs.value("peak_current_reached")
    assert fs.value("peak_current_ratio_motor") == pytest.approx(peak / (math.sqrt(2) * 1.0), rel=1e-12)
    assert fs.value("peak_current_ratio_stage") == pytest.approx(peak / (math.sqrt(2) * 2.0), rel=1e-12)
    assert fs.value("peak_current_ratio_motor") < 1.0  # below rated: no peak-current error
    # a brushed DC axis keeps the DC rating as it is (docs/physics.md, worked example E4: 2.0 A)
    dc = figures_of(E4)
    assert dc.value("peak_current_ratio_motor") == pytest.approx(dc.value("peak_current_reached") / 2.0, rel=1e-12)


def test_choke_peak_from_an_rms_operating_current_is_its_amplitude():
    """With neither a stage peak limit nor a motor peak current, the choke's peak is
    the largest operating current plus half the worst ripple (docs/physics.md §7.5); on a
    sinusoidal axis that current is an RMS phase current, so its amplitude (sqrt 2
    times it) is what the choke carries at the crest."""
    data = _e5_axis(points=[{"name": "p", "speed": "1000 rpm", "torque": "0.075 N*m", "ambient": "25 degC"}])
    data["chokes"] = {"inductance": "100 uH", "placement": "per-phase", "count": 3, "saturation_current": "5 A"}
    fs = figures_of(data)
    i_rms = fs.value("operating_current", "p")
    expected = math.sqrt(2) * i_rms + fs.value("ripple_pp_worst") / 2
    assert fs.value("choke_peak_current") == pytest.approx(expected, rel=1e-12)


def test_three_phase_supply_window_has_no_ripple_top_when_ripple_stays_low():
    """With four times the inductance the ripple can never reach 20 % of the rated
    current (its supremum a/(2 L_ph f), docs/physics.md §2.3): only the duty floor bounds
    the window, at 2 V_ph / 0.2."""
    data = _e5_axis(points=[{"name": "p", "speed": "1000 rpm", "torque": "0.05 N*m", "ambient": "25 degC"}])
    data["motor"]["terminal_inductance"]["value"] = "800 uH"
    fs = figures_of(data)
    v_ph = fs.value("terminal_voltage", "p") / math.sqrt(3)
    assert fs.value("supply_max") == pytest.approx(2 * v_ph / 0.2, rel=1e-9)


def test_inconsistent_constants_show():
    # k_e given in V/krpm where V*s/rad was meant: x 104.72 (docs/physics.md §4.4)
    data = copy.deepcopy(E4)
    data["motor"]["back_emf_constant"]["value"] = "0.030 V/krpm"
    fs = figures_of(data)
    assert fs.value("constant_mismatch") == pytest.approx(104.72 - 1, rel=1e-3)


def test_thermal_figures_match_closed_form():
    # docs/physics.md §6.3 closed form, evaluated by hand for the E4 spec at 25 degC ambient:
    # I_rms^2 = 4 + ripple_rms^2; R20 = 0.98073 ohm (E8); R_th = 8 K/W; alpha = 0.00393
    fs = figures_of(E4)
    i_rms = fs.value("rms_current", "e4")
    r20 = 1.0 / (1 + 0.00393 * 5)
    k = 0.00393 * 8 * i_rms**2 * r20
    rise = 8 * i_rms**2 * r20 * (1 + 0.00393 * 5) / (1 - k)
    assert fs.value("winding_temperature", "e4") == pytest.approx(298.15 + rise, rel=1e-9)
    assert fs.value("runaway_number", "e4") == pytest.approx(k, rel=1e-9)
    assert fs.value("winding_margin", "e4") == pytest.approx(353.15 - 298.15 - rise, rel=1e-9)


def test_missing_inputs_are_reported_not_guessed():
    fs = figures_of(E4)
    assert "loop_bandwidth_ratio" in fs.missing and "current_loop" in fs.missing["loop_bandwidth_ratio"]
    assert "choke_saturation_ratio" in fs.missing
    assert fs.value("choke_saturation_ratio") is None


def test_every_computed_figure_is_registered():
    fs = figures_of(E4)
    names = set(fs.axis) | {k for _, values in fs.points for k in values}
    assert names <= set(FIGURE_DEFS)
    for name in names:
        scope = FIGURE_DEFS[name].scope
        assert (name in fs.axis) == (scope == "axis"), name


def test_ambiguous_frequency_reads_conservatively():
    data = with_scheme("unipolar-phase-shifted")
    del data["stage"]["pwm"]["frequency_is"]
    fs = figures_of(data)
    assert fs.value("pwm_frequency_ambiguous") is True
    # taken as the ripple frequency (the lower reading): ripple at 20 kHz, legs at 10 kHz
    assert fs.value("ripple_frequency") == pytest.approx(20e3)
    assert fs.value("pwm_frequency_leg") == pytest.approx(10e3)


def test_runaway_profile_is_reported_not_crashed():
    """A profile whose current makes the winding's R(T) feedback outrun its cooling
    (runaway number far above 1, docs/physics.md §6.3) has no periodic steady state: the
    profile figures are missing with that reason. Found by a boundary scan: a torque
    constant slipped by 1e-9 divided by zero in the thermal eigenvalues (exit 3)."""
    data = copy.deepcopy(E4)
    data["motor"]["thermal"].update({"winding_time_constant": "15 s", "motor_time_constant": "600 s"})
    data["profile"] = {
        "ambient": "25 degC",
        "segments": [
            {"duration": "1 s", "speed": "1000 rpm", "torque": "3e7 N*m"},
            {"duration": "2 s", "speed": "0 rpm", "torque": "0.01 N*m"},
        ],
    }
    fs = figures_of(data)
    assert fs.value("profile_peak_temperature") is None
    assert "runaway" in fs.missing["profile_peak_temperature"]
