"""figures.curves against outside references (the source is named beside each value)."""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest

from specguard.figures import FigureSet, curves
from specguard.physics import hbridge

from .figset import demo_report


def _spec(scheme: str, volts: float, rated: float, max_duty: float = 0.95, profile=None):
    return SimpleNamespace(
        stage=SimpleNamespace(
            supply=SimpleNamespace(voltage=volts),
            pwm=SimpleNamespace(scheme=scheme, frequency_is="leg", max_duty=max_duty, frequency=None),
        ),
        motor=SimpleNamespace(rated_current=rated, thermal=None, type="brushed-dc"),
        profile=profile,
    )


def _figs(volts, inductance, resistance, f_leg, rated, points=()):
    axis = {
        "supply_voltage": volts,
        "loop_inductance": inductance,
        "loop_resistance_hot": resistance,
        "pwm_frequency_leg": f_leg,
        "motor_rated_current": rated,
    }
    return FigureSet(axis=axis, points=tuple(points))


def _trapezoid_mean(t, y):
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(t)) / (t[-1] - t[0]))


def test_waveform_matches_textbook_chopper_e1():
    # docs/physics.md, worked example E1 (Rashid, Power Electronics, 3rd ed., ch. 5, chopper with RL load):
    # V1 = 220 V, V2 = 0, E = 0, R = 5 ohm, L = 7.5 mH, f = 1 kHz, D = 0.5
    # -> I_min = 18.367 A, I_max = 25.633 A, dI = 7.266 A, I_avg = 22.000 A.
    # A single-leg unipolar bridge at m = 0.5 is that chopper (docs/physics.md §1.2 table).
    spec = _spec("unipolar-single", 220.0, 20.0)
    figs = _figs(
        220.0, 7.5e-3, 5.0, 1000.0, 20.0, [("p", {"modulation": 0.5, "operating_current": 22.0, "ripple_pp": 7.0})]
    )
    wave = curves.current_waveform(spec, figs)
    assert wave is not None and wave.point == "p"
    assert wave.back_emf == pytest.approx(0.0, abs=1e-12)
    assert wave.peak_to_peak == pytest.approx(7.266, abs=5e-4)
    assert wave.peak_to_peak == pytest.approx(44.0 * math.tanh(1.0 / 6.0), rel=1e-12)  # E1: 44 tanh(1/6)
    assert float(wave.current.max()) == pytest.approx(25.633, abs=5e-4)
    assert float(wave.current.min()) == pytest.approx(18.367, abs=5e-4)
    assert float(wave.current.max() - wave.current.min()) == pytest.approx(wave.peak_to_peak, rel=1e-9)
    # docs/physics.md §1.4: I_avg = (D V1 + (1 - D) V2 - E) / R = (0.5 * 220 + 0 - 0) / 5
    assert _trapezoid_mean(wave.time, wave.current) == pytest.approx((0.5 * 220.0) / 5.0, rel=1e-4)
    assert wave.time[-1] == pytest.approx(1e-3)


def test_waveform_of_demo_axis_matches_physics_and_figures():
    report = demo_report()
    result = next(r for r in report.files if r.file.endswith("sample-lift.axis.yaml"))
    spec, fs = result.spec, result.figures
    wave = curves.current_waveform(spec, fs)
    assert wave is not None
    worst = max(fs.point_names(), key=lambda p: fs.value("ripple_pp", p))
    assert wave.point == worst
    # The waveform's peak-to-peak equals the exact ripple of the figure computation;
    # the samples (241 per period) reach it to within the sampling step.
    assert wave.peak_to_peak == pytest.approx(fs.value("ripple_pp", worst), rel=1e-12)
    sampled = float(wave.current.max() - wave.current.min())
    assert sampled <= wave.peak_to_peak * (1 + 1e-12)
    assert sampled == pytest.approx(wave.peak_to_peak, rel=1e-3)
    # Mean against docs/physics.md §1.4 with the §1.2 table for the phase-shifted scheme:
    # V1 = V, V2 = 0, D = |m|  ->  I_avg = (D V - E) / R.
    # the ripple (and its plot) is at the top of the supply range: that voltage and the
    # modulation there
    volts, r_loop = fs.value("supply_voltage_high"), fs.value("loop_resistance_hot")
    m = fs.value("ripple_modulation", worst)
    expected = (abs(m) * volts + (1.0 - abs(m)) * 0.0 - wave.back_emf) / r_loop
    assert _trapezoid_mean(wave.time, wave.current) == pytest.approx(expected, rel=1e-4)
    assert expected == pytest.approx(fs.value("operating_current", worst), rel=1e-9)
    assert wave.rated_current == pytest.approx(1.9)  # the spec's local override


def _axis_spec(scheme: str, volts: float, rated: float, inductance: float, resistance: float, f_leg: float):
    """A real brushed-DC spec whose ripple loop is exactly (inductance, resistance): the
    catalogue inductance measured at the sweep's top ripple frequency (no estimate), no thermal
    data (the resistance is used as written), no switch, cable or choke resistance,
    no dead time. Returns (spec, its figures)."""
    from specguard.figures import compute
    from specguard.model import build
    from specguard.source import load_bytes

    data = {
        "format": 1,
        "axis": {"name": "worked-example"},
        "motor": {
            "type": "brushed-dc",
            "winding": "iron-core",
            "terminal_resistance": {"value": f"{resistance!r} ohm", "at": "25 degC"},
            "terminal_inductance": {"value": f"{inductance!r} H", "measured_at": f"{8 * f_leg!r} Hz"},
            "torque_constant": {"value": "0.05 N*m/A", "current": "dc"},
            "back_emf_constant": {"value": "0.05 V/(rad/s)", "voltage": "terminal"},
            "rated_current": f"{rated!r} A",
        },
        "stage": {
            "supply": {"voltage": f"{volts!r} V"},
            "pwm": {"frequency": f"{f_leg!r} Hz", "frequency_is": "leg", "scheme": scheme, "max_duty": 0.95},
        },
        "operating_points": [{"name": "p", "speed": "0 rad/s", "torque": "0 N*m", "ambient": "25 degC"}],
    }
    import json

    doc = load_bytes(json.dumps(data).encode(), "worked-example.axis.yaml")
    spec, problems = build(doc.data, lambda path: (None, ()))
    assert spec is not None, problems
    return spec, compute(spec)


@pytest.mark.parametrize(
    "scheme,expected",
    [
        # docs/physics.md, worked example E4: V = 24 V, f_pwm = 20 kHz, L = 0.20 mH, worst cases
        # bipolar 3.000 A, unipolar single 1.500 A, phase-shifted 0.750 A (linear, R -> 0).
        ("bipolar", 3.000),
        ("unipolar-single", 1.500),
        ("unipolar-phase-shifted", 0.750),
    ],
)
def test_frequency_sweep_at_setting_matches_e4_worst_case(scheme, expected):
    # R = 1 uohm stands for R -> 0: tanh(x)/x differs from 1 by x^2/3 ~ 1e-15 here
    spec, fs = _axis_spec(scheme, 24.0, 2.0, 0.2e-3, 1e-6, 20e3)
    sweep = curves.ripple_vs_frequency(spec, fs)
    assert sweep.ripple_at_setting == pytest.approx(expected, rel=1e-9)
    assert sweep.limit == pytest.approx(0.4)  # 20 % of rated current
    k = int(np.argmin(np.abs(sweep.x - 20e3)))
    assert sweep.x[k] == pytest.approx(20e3)
    assert sweep.ripple[k] == pytest.approx(expected, rel=1e-9)
    # Linear worst case scales as 1/f (docs/physics.md §1.3): four times the frequency, a quarter
    # (the inductance was measured at the top ripple frequency, so it holds over the sweep).
    assert sweep.ripple[-1] == pytest.approx(expected / 4.0, rel=1e-9)


def test_frequency_sweep_at_setting_equals_ripple_pp_worst_and_tanh_form():
    report = demo_report()
    for result in report.files:
        if result.figures is None:
            continue
        fs, spec = result.figures, result.spec
        sweep = curves.ripple_vs_frequency(spec, fs)
        assert sweep.ripple_at_setting == pytest.approx(fs.value("ripple_pp_worst"), rel=1e-6), result.file
        k = int(np.argmin(np.abs(sweep.x - fs.value("pwm_frequency_leg"))))
        # the sweep's point at the setting is the check's own figure (same figure code)
        assert sweep.ripple[k] == pytest.approx(fs.value("ripple_pp_worst"), rel=1e-9), result.file
        if spec.stage.pwm.scheme == "unipolar-phase-shifted":
            # docs/physics.md §1.4: dI_max = (V1 - V2)/R tanh(R / (4 f_r L)), f_r = 2 f_pwm, V1 - V2 = V.
            # at the top of the supply range, where the worst case is judged
            v, r, ind = fs.value("supply_voltage_high"), fs.value("loop_resistance_hot"), fs.value("loop_inductance")
            f_r = 2.0 * fs.value("pwm_frequency_leg")
            assert sweep.ripple_at_setting == pytest.approx(v / r * math.tanh(r / (4.0 * f_r * ind)), rel=1e-9)


def test_inductance_remedy_matches_textbook_e2():
    # docs/physics.md, worked example E2 (Rashid ch. 5): R = 0.25 ohm, V = 550 V, f = 250 Hz, worst ripple
    # <= 20 A -> exact L = 27.499 mH. A single-leg chopper; 20 A = 20 % of 100 A.
    present = 1e-6
    spec, fs = _axis_spec("unipolar-single", 550.0, 100.0, present, 0.25, 250.0)
    sweep = curves.ripple_vs_added_inductance(spec, fs)
    total = present + 2.0 * sweep.x_at_limit  # "per lead": two leads in the DC loop
    assert total == pytest.approx(27.499e-3, abs=1e-6)
    assert float(
        hbridge.ripple_peak_to_peak_worst(550.0, total, 0.25, 250.0, hbridge.UNIPOLAR_SINGLE)
    ) == pytest.approx(20.0, rel=1e-9)
    assert sweep.ripple[0] == pytest.approx(sweep.ripple_at_setting)
    assert np.all(np.diff(sweep.ripple) < 0)  # more inductance, less ripple
    assert sweep.x[-1] >= sweep.x_at_limit
    # the sweep is what a check says with the chokes the fix would write (their
    # resistance included): at the remedy's amount the ripple is below the limit
    k = int(np.searchsorted(sweep.x, sweep.x_at_limit))
    assert sweep.ripple[k] <= 20.0


def test_frequency_remedy_brings_ripple_to_limit():
    # docs/physics.md, worked example E4 axis, linear: f = V / (4 L dI) for unipolar single at dI = 0.4 A -> 75 kHz.
    spec, fs = _axis_spec("unipolar-single", 24.0, 2.0, 0.2e-3, 1e-6, 20e3)
    sweep = curves.ripple_vs_frequency(spec, fs)
    assert sweep.x_at_limit == pytest.approx(24.0 / (4.0 * 0.2e-3 * 0.4), rel=1e-6)


def test_bars_follow_the_figures():
    report = demo_report()
    result = next(r for r in report.files if r.file.endswith("carousel.axis.yaml"))
    fs, spec = result.figures, result.spec
    duty = curves.duty_per_point(spec, fs)
    assert duty.points == fs.point_names()
    assert list(duty.values) == [fs.value("duty", p) for p in fs.point_names()]
    assert duty.reference == pytest.approx(0.97)
    head = curves.voltage_headroom_per_point(spec, fs)
    assert list(head.values) == pytest.approx([1.0 - fs.value("modulation_ratio", p) for p in fs.point_names()])
    margin = curves.thermal_margin_per_point(spec, fs)
    assert list(margin.values) == [fs.value("winding_margin", p) for p in fs.point_names()]
    assert curves.current_waveform(spec, fs) is None  # sinusoidal: no single-period waveform
    assert "waveform" in curves.unavailable(spec, fs)


def test_profile_trace_agrees_with_cyclic_solution():
    from specguard.physics import thermal

    report = demo_report()
    result = next(r for r in report.files if r.file.endswith("sample-lift.axis.yaml"))
    trace = curves.profile_temperature(result.spec, result.figures)
    assert trace is not None and not trace.runaway
    # Periodic steady state: the cycle ends where it starts.
    assert trace.temperature[-1] == trace.temperature[0]
    # Every sample is a cycle-start temperature of the rotated profile, so it can't
    # exceed the peak of the cycle solution (docs/physics.md §6.5) and the largest sample is close to it.
    assert float(trace.temperature.max()) <= trace.peak + 1e-9
    assert float(trace.temperature.max()) >= trace.peak - 1.0
    assert _trapezoid_mean(trace.time, trace.temperature) == pytest.approx(trace.mean, abs=0.3)
    assert trace.limit == pytest.approx(125.0 + thermal.CELSIUS_OFFSET)
    figure_peak = result.figures.value("profile_peak_temperature")
    if figure_peak is not None:  # figures.compute: the same segments, the same cycle solution
        assert trace.peak == pytest.approx(figure_peak, rel=1e-12)
        assert trace.mean == pytest.approx(result.figures.value("profile_mean_temperature"), rel=1e-12)
    assert trace.time[-1] == pytest.approx(0.12 + 0.4 + 1.5)
    # The one-pass walk from the periodic state is the definition it replaced: the cycle
    # solved again from each sample's start (rotated), every 8th sample checked.
    segments, r20 = curves._profile_segments(result.spec, result.figures)
    th = result.spec.motor.thermal
    c_w, c_h = thermal.capacitances_from_time_constants(
        th.winding_time_constant, th.motor_time_constant, th.winding_to_housing, th.housing_to_ambient
    )
    args = (r20, c_w, c_h, th.winding_to_housing, th.housing_to_ambient, float(result.spec.profile.ambient))
    pieces = []
    for seg in segments:
        n = max(1, round(max(curves.PROFILE_SAMPLES, len(segments)) * seg.duration / trace.time[-1]))
        pieces.extend(seg._replace(duration=seg.duration / n) for _ in range(n))
    assert len(pieces) == len(trace.time) - 1
    for k in range(0, len(pieces), 8):
        rotated = thermal.winding_temperature_cyclic(pieces[k:] + pieces[:k], *args, samples_per_segment=1)
        assert trace.temperature[k] == pytest.approx(rotated.start_winding_temperature, abs=1e-9)
