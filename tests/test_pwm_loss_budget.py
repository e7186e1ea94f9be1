"""The PWM eddy loss in the thermal budget (docs/pwm-losses.md).

Check values: the two-node steady state (docs/physics.md §6.2, §6.3) with an extra
loss P in the housing node is the same state with the ambient raised by P R_ha
(energy balance of the housing node, derived by hand: T_h = T_a + (P_cu + P) R_ha,
T_w = T_h + P_cu R_wh); the calibrated loss at the reference point is the reference
loss itself (docs/physics.md §5.6: calibration in ratio form).
"""

from __future__ import annotations

import pytest

from specguard.figures import compute
from specguard.figures.compute import profile_segments
from specguard.physics.eddy import EDDY_MATERIALS
from tests.engine.helpers import base_spec

# the dc-axis rule example (rules/examples/dc-axis.yaml) as an iron-core motor with its thermal data
IRON = {"motor": {"winding": "iron-core"}}


def _figures(overlay):
    spec, _ = base_spec("dc-axis", overlay)
    return spec, compute(spec)


def test_without_calibration_the_estimate_stays_out_of_the_temperature():
    spec, fs = _figures(IRON)
    assert fs.value("pwm_loss_estimated") is True
    for point in fs.point_names():
        assert fs.value("pwm_eddy_loss", point) > fs.value("pwm_loss_low", point) > 0.0
    # same winding temperature as with no PWM loss at all: compare with a loss-free model
    # (a calibration of a vanishing loss)
    _, zero = _figures(
        {
            **IRON,
            "motor": {
                **IRON["motor"],
                "pwm_loss": {"extra_loss": "0.001 mW", "at_ripple": "1 A", "at_frequency": "20 kHz"},
            },
        }
    )
    for point in fs.point_names():
        assert fs.value("winding_temperature", point) == pytest.approx(
            zero.value("winding_temperature", point), abs=1e-3
        )


def test_a_calibrated_loss_heats_the_housing_node_exactly_like_a_warmer_ambient():
    calibration = {"extra_loss": "0.8 W", "at_ripple": "500 mA", "at_frequency": "20 kHz", "at_duty": 0.5}
    spec, fs = _figures({"motor": {"winding": "iron-core", "pwm_loss": calibration}})
    assert fs.value("pwm_loss_estimated") is False  # calibrated: not an estimate (a flag, False)
    r_ha = spec.motor.thermal.housing_to_ambient
    for index, point in enumerate(spec.operating_points):
        loss = fs.value("pwm_eddy_loss", point.name)
        assert loss > 0.0
        warmer = {
            "motor": {"winding": "iron-core"},
            "operating_points": [
                {
                    "name": p.name,
                    "speed": f"{p.speed} rad/s",
                    "torque": f"{p.torque} N*m",
                    "ambient": f"{(p.ambient + loss * r_ha) if i == index else p.ambient} K",
                }
                for i, p in enumerate(spec.operating_points)
            ],
        }
        _, reference = _figures(warmer)
        assert fs.value("winding_temperature", point.name) == pytest.approx(
            reference.value("winding_temperature", point.name), rel=1e-9
        )
        assert fs.value("pwm_loss_temperature_rise", point.name) == pytest.approx(loss * r_ha, rel=1e-12)


def test_the_reference_point_gives_back_the_reference_loss():
    # the calibration's own ripple and frequency: ratio form, exact
    spec, fs = _figures(IRON)
    point = spec.operating_points[0].name
    ripple, f_r = fs.value("ripple_pp", point), fs.value("ripple_frequency")
    calibration = {
        "extra_loss": "1.5 W",
        "at_ripple": f"{ripple!r} A",
        "at_frequency": f"{f_r!r} Hz",
        "regime": "skin-limited",
    }
    _, calibrated = _figures({"motor": {"winding": "iron-core", "pwm_loss": calibration}})
    assert calibrated.value("pwm_eddy_loss", point) == pytest.approx(1.5, rel=1e-9)


def test_a_choke_lowers_the_pwm_loss():
    # common practice (docs/pwm-losses.md): the loss falls with added inductance
    _, bare = _figures({**IRON, "chokes": None})
    _, choked = _figures(IRON)  # the example's 100 uH per lead
    for point in bare.point_names():
        assert choked.value("pwm_eddy_loss", point) < bare.value("pwm_eddy_loss", point)


# ------------------------------------------------------------------ the motion profile
def _two_node_cycle_peak(spec, segments_loss, r20, node: str):
    """Peak winding temperature of the repeated profile from the two-node ODE integrated by
    scipy (independent of specguard's closed-form segment maps, docs/physics.md §6.5). With
    linear R(T) one cycle is an affine map x -> Phi x + g of the (winding, housing) rise;
    it is found by integrating from the origin and from the two unit vectors, its fixed
    point is the periodic steady state, and one more integrated cycle gives the peak."""
    import numpy as np
    from scipy.integrate import solve_ivp

    th = spec.motor.thermal
    r_wh, r_ha = th.winding_to_housing, th.housing_to_ambient
    c_w = th.winding_time_constant / r_wh  # C_w = tau_w / R_wh, C_h = tau_h / R_ha
    c_h = th.motor_time_constant / r_ha
    alpha, t20 = 0.00393, 293.15  # copper coefficient at 20 degC (IEC 60028)
    t_a = spec.profile.ambient

    def cycle(x0, samples=None):
        x = np.array(x0, dtype=float)
        peak = x[0]
        for duration, i_rms, extra in segments_loss:

            def rhs(_t, y, i_rms=i_rms, extra=extra):
                copper = i_rms * i_rms * r20 * (1.0 + alpha * (t_a + y[0] - t20))
                to_h = (y[0] - y[1]) / r_wh
                w_extra = extra if node == "winding" else 0.0
                h_extra = extra if node == "housing" else 0.0
                return [(copper + w_extra - to_h) / c_w, (to_h + h_extra - y[1] / r_ha) / c_h]

            sol = solve_ivp(rhs, (0.0, duration), x, method="LSODA", rtol=1e-11, atol=1e-11, dense_output=True)
            if samples:
                peak = max(peak, float(np.max(sol.sol(np.linspace(0.0, duration, samples))[0])))
            x = sol.y[:, -1]
        return x, peak

    g, _ = cycle([0.0, 0.0])
    phi = np.column_stack([cycle([1.0, 0.0])[0] - g, cycle([0.0, 1.0])[0] - g])
    start = np.linalg.solve(np.eye(2) - phi, g)
    _, peak = cycle(start, samples=200)
    return t_a + peak


def test_the_calibrated_pwm_loss_heats_the_profile_as_an_ode_solver_finds_it():
    from specguard import physics as P

    calibration = {"extra_loss": "0.8 W", "at_ripple": "500 mA", "at_frequency": "20 kHz", "at_duty": 0.5}
    spec, fs = _figures({"motor": {"winding": "iron-core", "pwm_loss": calibration}})
    _, bare = _figures(IRON)
    segments, r20 = profile_segments(spec)
    assert all(s.housing_loss > 0.0 and s.winding_loss == 0.0 for s in segments)
    # the segment's loss is the calibrated law at the segment's own ripple: the same law
    # the operating points use (a point with the same speed and torque gives the same watts)
    c_w, c_h = P.thermal.capacitances_from_time_constants(
        spec.motor.thermal.winding_time_constant,
        spec.motor.thermal.motor_time_constant,
        spec.motor.thermal.winding_to_housing,
        spec.motor.thermal.housing_to_ambient,
    )
    assert c_w == pytest.approx(spec.motor.thermal.winding_time_constant / spec.motor.thermal.winding_to_housing)
    ode = _two_node_cycle_peak(spec, [(s.duration, s.current_rms, s.housing_loss) for s in segments], r20, "housing")
    assert fs.value("profile_peak_temperature") == pytest.approx(ode, abs=0.02)
    rise = fs.value("profile_pwm_loss_temperature_rise")
    assert rise == pytest.approx(
        fs.value("profile_peak_temperature") - bare.value("profile_peak_temperature"), abs=1e-9
    )
    assert rise > 0.0


def test_a_coreless_winding_takes_the_profile_loss_in_the_winding_node():
    calibration = {"extra_loss": "0.3 W", "at_ripple": "500 mA", "at_frequency": "20 kHz"}
    spec, fs = _figures({"motor": {"winding": "coreless", "pwm_loss": calibration}})
    segments, r20 = profile_segments(spec)
    assert all(s.winding_loss > 0.0 and s.housing_loss == 0.0 for s in segments)
    ode = _two_node_cycle_peak(spec, [(s.duration, s.current_rms, s.winding_loss) for s in segments], r20, "winding")
    assert fs.value("profile_peak_temperature") == pytest.approx(ode, abs=0.02)


def test_an_uncalibrated_estimate_stays_out_of_the_profile():
    spec, fs = _figures(IRON)
    segments, _ = profile_segments(spec)
    assert all(s.housing_loss == 0.0 and s.winding_loss == 0.0 for s in segments)
    assert "profile_pwm_loss_temperature_rise" in fs.missing


# ------------------------------------------------------------------ the eddy path
def _skin_depth(f, rho, mu_r):
    """delta = sqrt(2 rho / (omega mu0 mu_r)) (classical skin-depth formula), by hand."""
    import math

    return math.sqrt(2.0 * rho / (2.0 * math.pi * f * 4e-7 * math.pi * mu_r))


@pytest.mark.parametrize(
    ("part", "regime"),
    [
        # 0.35 mm electrical steel at the ripple frequency: half-thickness about 2 skin
        # depths or more (typical values 0.48 uohm*m, mu_r 1000: common practice)
        ({"material": "electrical-steel", "thickness": "0.5 mm"}, "skin-limited"),
        # a thin sintered magnet segment: far below its skin depth (about 4 mm at 20 kHz)
        ({"material": "ndfeb", "thickness": "1 mm"}, "resistance-limited"),
        # the user's own resistivity and permeability win over the material's typical ones
        (
            {"material": "ndfeb", "thickness": "1 mm", "resistivity": "1 nohm*m", "relative_permeability": 50},
            "skin-limited",
        ),
    ],
)
def test_the_eddy_path_sets_the_regime_from_its_skin_depth(part, regime):
    spec, fs = _figures({"motor": {"winding": "iron-core", "eddy_path": part}})
    rho, mu = EDDY_MATERIALS[part["material"]]
    if "resistivity" in part:
        rho, mu = 1e-9, 50.0
    thickness = float(part["thickness"].split()[0]) * 1e-3
    ratio = 0.5 * thickness / _skin_depth(fs.value("ripple_frequency"), rho, mu)
    assert fs.value("eddy_path_thickness_ratio") == pytest.approx(ratio, rel=1e-9)
    assert regime in fs.notes["eddy_path_thickness_ratio"]
    assert regime in fs.notes["pwm_eddy_loss"]


def test_an_eddy_path_in_transition_reports_the_larger_of_both_laws():
    # half-thickness between 0.5 and 2 skin depths: neither scaling holds, the larger
    # loss of the two laws is kept for the high end of the estimate (docs/pwm-losses.md)
    spec, fs = _figures({"motor": {"winding": "iron-core", "eddy_path": {"material": "ndfeb", "thickness": "5 mm"}}})
    assert 0.5 < fs.value("eddy_path_thickness_ratio") < 2.0
    assert "transition" in fs.notes["pwm_eddy_loss"]
    _, skin = _figures({"motor": {"winding": "iron-core", "pwm_loss": None}})
    _, res = _figures({"motor": {"winding": "iron-core", "eddy_path": {"material": "ndfeb", "thickness": "0.5 mm"}}})
    for point in fs.point_names():
        assert fs.value("pwm_eddy_loss", point) == pytest.approx(
            max(skin.value("pwm_eddy_loss", point), res.value("pwm_eddy_loss", point)), rel=1e-12
        )
        assert fs.value("pwm_loss_low", point) == pytest.approx(
            min(skin.value("pwm_loss_low", point), res.value("pwm_loss_low", point)), rel=1e-12
        )


def test_the_profile_plot_draws_the_same_cycle_as_the_figure():
    from specguard.figures import curves

    calibration = {"extra_loss": "0.8 W", "at_ripple": "500 mA", "at_frequency": "20 kHz"}
    spec, fs = _figures({"motor": {"winding": "iron-core", "pwm_loss": calibration}})
    trace = curves.profile_temperature(spec, fs)
    assert trace is not None and not trace.runaway
    assert trace.peak == pytest.approx(fs.value("profile_peak_temperature"), rel=1e-12)
    assert trace.mean == pytest.approx(fs.value("profile_mean_temperature"), rel=1e-12)


def test_the_ripple_is_the_cause_of_its_pwm_loss_findings():
    # the PWM eddy loss is made by the ripple alone (docs/pwm-losses.md): on the demo's
    # sample-lift axis the loss finding is reported under the worst-case ripple finding
    from pathlib import Path

    from specguard.pipeline import check_paths

    repo = Path(__file__).resolve().parents[1]
    report = check_paths([str(repo / "examples" / "robot" / "axes" / "sample-lift.axis.yaml")], root=repo)
    findings = report.files[0].findings
    assert any(f.rule == "worst-ripple-over-rated-current" for f in findings)
    loss = [f for f in findings if f.rule.startswith("pwm-loss-")]
    assert loss
    assert all(f.explained_by is not None and "worst-ripple-over-rated-current" in f.explained_by for f in loss)
