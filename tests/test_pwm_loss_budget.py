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
        assert fs.value("pwm_loss", point) > fs.value("pwm_loss_low", point) > 0.0
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
    assert fs.value("pwm_loss_estimated") is None  # calibrated: not an estimate
    r_ha = spec.motor.thermal.housing_to_ambient
    for index, point in enumerate(spec.operating_points):
        loss = fs.value("pwm_loss", point.name)
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
    assert calibrated.value("pwm_loss", point) == pytest.approx(1.5, rel=1e-9)


def test_a_choke_lowers_the_pwm_loss():
    # common practice (docs/pwm-losses.md): the loss falls with added inductance
    _, bare = _figures({**IRON, "chokes": None})
    _, choked = _figures(IRON)  # the example's 100 uH per lead
    for point in bare.point_names():
        assert choked.value("pwm_loss", point) < bare.value("pwm_loss", point)
