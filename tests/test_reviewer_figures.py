"""The figures a reviewer computes by hand, checked by hand (docs/figures.md).

Check values: the copper resistance at temperature with the IEC 60028 coefficient
0.00393 1/K at 20 degC; the two-node steady state (docs/physics.md §6.2): housing =
ambient + P R_ha, winding = housing + P_cu R_wh; the runaway current 1/sqrt(alpha R_th
R20) (docs/physics.md §6.3); the d/q phase voltage of a PMSM (Krishnan, Permanent
Magnet Synchronous and Brushless DC Motor Drives, 2010): |(v_d, v_q)| is the peak phase
voltage, omega_e = p omega_m.
"""

from __future__ import annotations

import math

import pytest

from specguard.figures import compute
from tests.engine.helpers import base_spec

ALPHA_20 = 0.00393  # IEC 60028


def test_copper_loss_housing_temperature_and_runaway_current():
    spec, _ = base_spec("dc-axis", {})
    fs = compute(spec)
    th = spec.motor.thermal
    tr = spec.motor.terminal_resistance
    r20 = tr.value / (1.0 + ALPHA_20 * (tr.at - 293.15))
    for name in fs.point_names():
        t_w = fs.value("winding_temperature", name)
        i = fs.value("rms_current", name)
        copper = i * i * r20 * (1.0 + ALPHA_20 * (t_w - 293.15))
        assert fs.value("copper_loss", name) == pytest.approx(copper, rel=1e-9)
        ambient = next(p.ambient for p in spec.operating_points if p.name == name)
        assert fs.value("housing_temperature", name) == pytest.approx(
            ambient + copper * th.housing_to_ambient, rel=1e-9
        )
        assert t_w == pytest.approx(fs.value("housing_temperature", name) + copper * th.winding_to_housing, rel=1e-9)
    r_th = th.winding_to_housing + th.housing_to_ambient
    assert fs.value("runaway_current") == pytest.approx(1.0 / math.sqrt(ALPHA_20 * r_th * r20), rel=1e-6)


def test_d_and_q_voltages_of_a_three_phase_point():
    spec, _ = base_spec("three-phase-axis", {})
    fs = compute(spec)
    p = spec.motor.pole_pairs
    for point in spec.operating_points:
        v_d, v_q = fs.value("voltage_d", point.name), fs.value("voltage_q", point.name)
        assert fs.value("electrical_speed", point.name) == pytest.approx(p * point.speed, rel=1e-12)
        # the peak line-to-line terminal voltage is sqrt3 times the peak phase voltage
        assert math.hypot(v_d, v_q) * math.sqrt(3.0) == pytest.approx(
            fs.value("terminal_voltage", point.name), rel=1e-12
        )
        assert v_d <= 0.0  # -omega_e L_q i_q with i_d = 0
