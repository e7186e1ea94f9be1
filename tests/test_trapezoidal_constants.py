"""Six-step (trapezoidal) motors and their constants (docs/physics.md §4.2, §4.4).

A line-to-line peak back-EMF constant of a trapezoidal motor is the flat top of its
line-to-line EMF: exactly what the two conducting phases put against the bridge. Check
values by hand on the six-step belt drive (tests/mutation/belt-drive.axis.yaml:
k_e = 3.6 V/krpm line-to-line peak, k_t = 34.4 mN*m/A per A of block current): the loop
EMF at a speed is k_e times the speed (it used to be 2/sqrt3 = 1.155 times that, above
the line-to-line peak, which no trapezoidal motor can produce), and the terminal voltage
is that EMF plus the block current times the hot terminal resistance.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from specguard.model import conventions
from specguard.pipeline import check_paths

ROOT = Path(__file__).resolve().parents[1]
SPEC = ROOT / "tests" / "mutation" / "belt-drive.axis.yaml"


def _result():
    return check_paths([str(SPEC)], root=ROOT).files[0]


def test_the_loop_emf_is_the_line_to_line_flat_top():
    spec = _result().spec
    ke = 3.6 / (1000.0 * 2.0 * math.pi / 60.0)  # 3.6 V/krpm in V*s/rad
    assert conventions.loop_emf_constant(spec) == pytest.approx(ke, rel=1e-12)
    assert conventions.torque_constant_model(spec) == pytest.approx(34.4e-3, rel=1e-12)


def test_terminal_voltage_from_the_flat_top_constant():
    from specguard.physics.thermal import resistance_at_temperature, winding_temperature_limit

    result = _result()
    spec, fs = result.spec, result.figures
    ke = conventions.loop_emf_constant(spec)
    thermal = spec.motor.thermal
    limit = thermal.max_winding_temperature or winding_temperature_limit(thermal.insulation_class)
    tr = spec.motor.terminal_resistance
    r_hot = float(resistance_at_temperature(tr.value, tr.at, limit))  # IEC 60028 copper, at the limit
    for point in spec.operating_points:
        current = fs.value("operating_current", point.name)
        expected = ke * point.speed + current * r_hot  # two phases in series: terminal values
        assert fs.value("terminal_voltage", point.name) == pytest.approx(expected, rel=1e-9)


def test_an_rms_constant_does_not_fit_a_trapezoidal_motor():
    text = SPEC.read_text(encoding="utf-8").replace("voltage: line-to-line-peak", "voltage: line-to-line-rms")
    tmp = SPEC.parent / "_rms.axis.yaml"
    tmp.write_text(text, encoding="utf-8")
    try:
        report = check_paths([str(tmp)], root=ROOT)
    finally:
        tmp.unlink()
    errors = [f for f in report.findings if f.severity == "error"]
    assert any("does not fit a six-step (trapezoidal) motor" in f.message for f in errors), [f.message for f in errors]
    assert all(f.location.pointer.startswith("/motor/back_emf_constant") for f in errors if "trapezoidal" in f.message)
