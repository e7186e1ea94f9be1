"""Regression specs per class of verdict problem (tests/regression/*.axis.yaml).

Each class has a working drive that must stay quiet at the warning level in the rules
of its class (no warning, no error from them) and a failing drive that must fire the
named rule at the severity its hand calculation gives. The specs are invented drives
(a lab rover, a media feeder, a tube gripper, a sample shaker, a carousel, a
microscope, a syringe pump, a plate labeller, a robot wrist), written from first
principles; each file carries, in its comments, the hand calculation that makes it
pass or fail (docs/physics.md sections cited there). The check values below repeat the
figures of those hand calculations.

A spec whose verdict an engineer would dispute is kept with its first-principles
expectation and marked ``xfail(strict=True)`` with the reason; it turns into a failure
the day the verdict changes, so the mark must be removed then.
"""

from __future__ import annotations

import cmath
import json
import math
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest
from scipy.optimize import brentq

from specguard.engine.evaluate import load_pack
from specguard.pipeline import check_paths

ROOT = Path(__file__).resolve().parents[1]
REG = ROOT / "tests" / "regression"
LOUD = ("warning", "error")
HAND = "hand calculation in the file"

# the rules of each class (ids from `specguard rules`)
CLASS_RULES = {
    1: (
        "ripple-over-rated-current",
        "worst-ripple-over-rated-current",
        "operating-point-unreachable",
        "supply-range-below-needed",
        "supply-window-empty",
    ),
    2: (
        "worst-ripple-over-rated-current",
        "ripple-over-rated-current",
        "inductance-table-rising",
        "inductance-estimated",
        "inductance-extrapolated",
        "supply-window-empty",
    ),
    3: ("peak-current-over-stage-limit", "peak-current-over-motor-limit", "choke-saturation"),
    4: (
        "motor-constants-inconsistent",
        "operating-point-unreachable",
        "supply-window-empty",
        "stage-current-over-continuous",
    ),
    5: ("braking-overshoots-supply", "braking-energy-unabsorbed"),
    6: ("current-loop-phase-margin", "current-loop-bandwidth-high", "current-loop-tuned-for-other-inductance"),
    7: ("pulse-shorter-than-minimum", "current-sense-window-short"),
    8: (
        "worst-ripple-over-rated-current",
        "ripple-over-rated-current",
        "supply-window-empty",
        "low-inductance-winding-without-choke",
    ),
    10: (
        "rms-current-near-continuous-limit",
        "winding-temperature-margin",
        "thermal-runaway",
        "stage-current-over-continuous",
    ),
}


@dataclass(frozen=True)
class Case:
    file: str
    cls: int
    # (rule, operating point or None for an axis finding, severity) that must fire
    fires: tuple[tuple[str, str | None, str], ...] = ()
    # (figure, operating point or None, value by the hand calculation in the file)
    checks: tuple[tuple[str, str | None, float], ...] = ()
    # why the verdict is wrong (the quiet test is then an expected failure)
    wrong: str | None = None


CASES = (
    # (1) worst case over the supply range
    Case(
        "class1-supply-range-pass.axis.yaml",
        1,
        checks=(
            ("modulation_ratio", "climb", 0.7236),
            ("supply_min", None, 19.99),
            ("ripple_ratio_worst", None, 0.1750),
            ("ripple_ratio", "climb", 0.1735),
        ),
    ),
    Case(
        "class1-supply-range-fail-ripple-top.axis.yaml",
        1,
        fires=(
            ("worst-ripple-over-rated-current", None, "warning"),
            ("ripple-over-rated-current", "climb", "warning"),
            ("ripple-over-rated-current", "cruise", "warning"),
        ),
        checks=(
            ("loop_inductance", None, 282.1e-6),
            ("ripple_ratio_worst", None, 0.2170),
            ("ripple_ratio", "climb", 0.2152),
            ("ripple_ratio", "cruise", 0.2037),
        ),
    ),
    Case(
        "class1-supply-range-fail-headroom-bottom.axis.yaml",
        1,
        fires=(
            ("operating-point-unreachable", "climb", "error"),
            ("supply-range-below-needed", None, "warning"),
        ),
        checks=(("modulation_ratio", "climb", 1.020), ("supply_min", None, 26.95)),
    ),
    Case(
        "class1-supply-window-headroom-pass.axis.yaml",
        1,
        # the step headroom 2 pi x 800 Hz x 1 mH x 4 A = 20.106 V is judged apart: a warning
        # that transients slow, not an error that no supply works
        checks=(
            ("modulation_ratio", "index", 0.7116),
            ("modulation_ratio", "start", 0.4648),
            ("control_headroom_voltage", None, 2.0 * 3.141592653589793 * 800.0 * 1e-3 * 4.0),
            ("supply_min_static", None, 18.7),
        ),
    ),
    # (2) inductance against frequency
    Case(
        "class2-inductance-table-pass.axis.yaml",
        2,
        checks=(
            ("loop_inductance", None, 560e-6),
            ("ripple_ratio_worst", None, 0.1339),
            ("ripple_ratio", "fill", 0.1255),
        ),
    ),
    Case(
        "class2-inductance-table-fail.axis.yaml",
        2,
        fires=(
            ("worst-ripple-over-rated-current", None, "error"),
            ("ripple-over-rated-current", "fill", "warning"),
            ("ripple-over-rated-current", "prime", "warning"),
        ),
        checks=(
            ("loop_inductance", None, 140e-6),
            ("ripple_ratio_worst", None, 0.5311),
            ("ripple_ratio", "fill", 0.4984),
            ("ripple_ratio", "prime", 0.4646),
        ),
    ),
    Case(
        "class2-inductance-table-level-pass.axis.yaml",
        2,
        # the table's one rise, 585 -> 587 uH: 587 / 585 - 1 = 0.342 %, inside the 2 % band
        checks=(("ripple_ratio_worst", None, 0.1339), ("inductance_table_rise", None, 587.0 / 585.0 - 1.0)),
    ),
    # (3) exact peak current against the stage and motor limits
    Case(
        "class3-peak-current-pass.axis.yaml",
        3,
        checks=(
            ("current_max", "grip", 1.601),
            ("peak_current_ratio_stage", None, 0.4574),
            ("peak_current_ratio_motor", None, 0.4447),
            ("choke_saturation_ratio", None, 0.6087),
        ),
    ),
    Case(
        "class3-peak-current-fail.axis.yaml",
        3,
        fires=(
            ("peak-current-over-stage-limit", None, "error"),
            ("peak-current-over-motor-limit", None, "error"),
        ),
        checks=(
            ("current_max", "grip", 3.851),
            ("current_min", "grip", 0.1956),
            ("peak_current_ratio_stage", None, 1.100),
            ("peak_current_ratio_motor", None, 1.070),
        ),
    ),
    # (4) trapezoidal (six-step) motors and their line-to-line constants
    Case(
        "class4-six-step-pass.axis.yaml",
        4,
        checks=(
            ("terminal_voltage", "spin", 19.38),
            ("modulation_ratio", "spin", 0.8491),
            ("ripple_ratio_worst", None, 0.07272),
        ),
    ),
    Case(
        "class4-six-step-fail-constants.axis.yaml",
        4,
        fires=(("motor-constants-inconsistent", None, "error"),),
        checks=(("constant_mismatch", None, 0.5000),),
    ),
    Case(
        "class4-six-step-block-current-pass.axis.yaml",
        4,
        # RMS phase current of 120-degree blocks: 2.356 A x sqrt(2/3) = 1.924 A, 87.4 % of 2.2 A
        checks=(
            ("operating_current", "spin", 2.356),
            ("stage_current_ratio", "spin", 2.356 * (2.0 / 3.0) ** 0.5 / 2.2),
        ),
    ),
    # (5) braking into a battery or a supply that cannot sink
    Case(
        "class5-braking-battery-pass.axis.yaml",
        5,
        checks=(
            ("braking_energy", None, 7.413),
            ("braking_power_peak", None, 59.31),
            ("braking_supply_energy", None, 7.413),
            ("braking_energy_ratio", None, 0.0),
        ),
    ),
    Case(
        "class5-braking-lab-supply-fail.axis.yaml",
        5,
        fires=(("braking-overshoots-supply", None, "error"),),
        checks=(
            ("bus_absorbable_energy", None, 0.162),
            ("braking_energy_ratio", None, 45.76),
            ("bus_voltage_after_braking", None, 124.1),
        ),
    ),
    Case(
        "class5-braking-full-battery-fail.axis.yaml",
        5,
        fires=(("braking-overshoots-supply", None, "error"),),
        checks=(
            ("braking_supply_energy", None, 0.0),
            ("bus_absorbable_energy", None, 0.1458),
            ("braking_energy_ratio", None, 50.84),
            ("bus_voltage_after_braking", None, 125.3),
        ),
    ),
    # (6) the current loop as built
    Case(
        "class6-current-loop-pass.axis.yaml",
        6,
        checks=(("loop_phase_margin", None, math.radians(57.45)), ("loop_bandwidth_ratio", None, 0.05)),
    ),
    Case(
        "class6-current-loop-fail.axis.yaml",
        6,
        fires=(("current-loop-phase-margin", None, "warning"),),
        checks=(("loop_phase_margin", None, math.radians(25.64)), ("loop_bandwidth_ratio", None, 0.05)),
    ),
    # (7) pulse and current-sense windows at the operating points' duty
    Case(
        "class7-pulse-windows-pass.axis.yaml",
        7,
        checks=(
            ("duty", "dispense", 0.8188),
            ("sense_window_ratio", "dispense", 1.294),
            ("pulse_window_ratio", "aspirate", 16.32),
        ),
    ),
    Case(
        "class7-pulse-windows-fail.axis.yaml",
        7,
        fires=(
            ("pulse-shorter-than-minimum", "creep", "warning"),
            ("current-sense-window-short", "purge", "warning"),
        ),
        checks=(
            ("duty", "creep", 0.01674),
            ("pulse_window_ratio", "creep", 0.8370),
            ("duty", "purge", 0.8888),
            ("sense_window_ratio", "purge", 0.7945),
        ),
    ),
    # (8) one problem reported once (the grouping is checked on the JSON output below)
    Case(
        "class8-one-cause-pass.axis.yaml",
        8,
        checks=(("ripple_ratio_worst", None, 0.1766), ("choke_saturation_ratio", None, 0.7345)),
    ),
    Case(
        "class8-one-cause-fail.axis.yaml",
        8,
        fires=(
            ("worst-ripple-over-rated-current", None, "error"),
            ("ripple-over-rated-current", "hold", "error"),
            ("ripple-over-rated-current", "traverse", "error"),
            ("supply-window-empty", None, "error"),
            ("low-inductance-winding-without-choke", None, "warning"),
        ),
        checks=(
            ("ripple_ratio_worst", None, 2.679),
            ("ripple_pp", "hold", 1.131),
            ("ripple_pp", "traverse", 1.773),
        ),
    ),
    # (10) RMS current against the continuous limit; standstill hold
    Case(
        "class10-thermal-hold-pass.axis.yaml",
        10,
        checks=(
            ("continuous_current_max", "hold", 2.812),
            ("rms_current", "hold", 2.121),
            ("rms_current_ratio", "hold", 0.7543),
            ("rms_current_ratio", "reach", 0.7410),
        ),
    ),
    Case(
        "class10-standstill-hold-fail.axis.yaml",
        10,
        fires=(("rms-current-near-continuous-limit", "hold", "error"),),
        checks=(("rms_current", "hold", 3.182), ("rms_current_ratio", "hold", 1.131)),
    ),
    Case(
        "class10-rms-far-past-fail.axis.yaml",
        10,
        fires=(("rms-current-near-continuous-limit", "press", "error"),),
        checks=(
            ("rms_current_ratio", "press", 1.422),
            ("runaway_number", "press", 0.5551),
            ("winding_temperature", "press", 273.15 + 360.0),
        ),
    ),
)

PASSING = [c for c in CASES if not c.fires]
FAILING = [c for c in CASES if c.fires]


def _mark(case: Case):
    marks = [pytest.mark.xfail(strict=True, reason=case.wrong)] if case.wrong else []
    return pytest.param(case, id=case.file.removesuffix(".axis.yaml"), marks=marks)


@pytest.fixture(scope="module")
def results():
    """{file name: FileResult} of one check of the whole folder."""
    report = check_paths([str(REG)], root=ROOT)
    out = {Path(r.file).name: r for r in report.files}
    for r in out.values():
        assert r.input_error is None, (r.file, r.input_error)
        assert not [f for f in r.findings if f.rule == "internal-error"], r.file
    return out


def _value(result, name, point):
    figures = result.figures
    assert figures is not None, result.file
    return figures.value(name, point) if point else figures.value(name)


def test_every_case_file_exists_and_every_file_is_a_case():
    assert sorted(p.name for p in REG.glob("*.axis.yaml")) == sorted(c.file for c in CASES)


def test_the_class_rules_are_rules_of_the_pack():
    pack = load_pack()
    for rules in CLASS_RULES.values():
        for rule in rules:
            assert pack.get(rule) is not None, rule
    for case in FAILING:
        for rule, _point, _severity in case.fires:
            assert rule in CLASS_RULES[case.cls], (case.file, rule)


@pytest.mark.parametrize("case", [pytest.param(c, id=c.file.removesuffix(".axis.yaml")) for c in CASES])
def test_figures_against_the_hand_calculation(results, case):
    result = results[case.file]
    for name, point, expected in case.checks:
        got = _value(result, name, point)
        assert got == pytest.approx(expected, rel=5e-3, abs=1e-12), f"{name} at {point}: {HAND}"


@pytest.mark.parametrize("case", [_mark(c) for c in PASSING])
def test_working_drive_is_quiet_in_its_class(results, case):
    loud = [
        (f.rule, f.operating_point, f.severity, f.message)
        for f in results[case.file].findings
        if f.rule in CLASS_RULES[case.cls] and f.severity in LOUD and not f.suppressed
    ]
    assert loud == []


@pytest.mark.parametrize("case", [_mark(c) for c in FAILING])
def test_failing_drive_fires_the_named_rule(results, case):
    found = {(f.rule, f.operating_point): f.severity for f in results[case.file].findings}
    for rule, point, severity in case.fires:
        assert found.get((rule, point)) == severity, (rule, point, found)


# --- (1) the worst case lies at the ends of the range, not at nominal ----------------


@pytest.mark.parametrize(
    "name",
    ["class1-supply-range-fail-ripple-top.axis.yaml", "class1-supply-range-fail-headroom-bottom.axis.yaml"],
)
def test_without_its_range_the_failing_drive_is_quiet_at_nominal(tmp_path, name):
    """The same drives on a fixed 24 V supply: worst-case ripple 17.7 % (ripple-top) and
    a modulation ratio of 0.894 (headroom-bottom), hand calculations in the files: the
    verdicts come from the ends of the range."""
    text = (REG / name).read_text(encoding="utf-8")
    lines = [line for line in text.splitlines(keepends=True) if not line.lstrip().startswith("range:")]
    assert len(lines) == len(text.splitlines()) - 1
    (tmp_path / name).write_text("".join(lines), encoding="utf-8")
    result = check_paths([str(tmp_path / name)], root=tmp_path).files[0]
    loud = [(f.rule, f.operating_point) for f in result.findings if f.rule in CLASS_RULES[1] and f.severity in LOUD]
    assert loud == []
    if "ripple-top" in name:
        assert result.figures.value("ripple_ratio_worst") == pytest.approx(0.1771, rel=5e-3)  # HAND
    else:
        assert result.figures.value("modulation_ratio", "climb") == pytest.approx(0.8945, rel=5e-3)  # HAND


# --- (6) the phase margin against an independent numerical crossover ------------------


def _phase_margin_numeric(f_c, delay, f_filter, ratio):
    """PM of L(s) = w_1/s exp(-s T_d)/(1 + s/w_f), crossover found by brentq on |L| = 1
    (the loop of docs/physics.md §7.3, "The loop as built", solved numerically)."""
    w1, wf = 2 * math.pi * f_c * ratio, 2 * math.pi * f_filter

    def loop(w):
        return w1 / (1j * w) * cmath.exp(-1j * w * delay) / (1 + 1j * w / wf)

    wx = brentq(lambda w: abs(loop(w)) - 1.0, 1.0, 1e7, xtol=1e-9)
    return math.pi + cmath.phase(loop(wx))


@pytest.mark.parametrize(
    ("name", "delay", "f_filter", "ratio"),
    [
        ("class6-current-loop-pass.axis.yaml", 1.5 / 20e3, 10e3, 1.0),
        ("class6-current-loop-fail.axis.yaml", 2.5 / 20e3, 3e3, 600.0 / 560.0),
    ],
)
def test_loop_phase_margin_against_a_numerical_crossover(results, name, delay, f_filter, ratio):
    expected = _phase_margin_numeric(1e3, delay, f_filter, ratio)
    assert results[name].figures.value("loop_phase_margin") == pytest.approx(expected, rel=5e-3)


# --- (8) one problem reported once, in the JSON output -------------------------------


def _json_findings(name):
    out = subprocess.run(
        [sys.executable, "-m", "specguard", "check", "--format", "json", f"tests/regression/{name}"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        check=False,
    )
    assert out.returncode in (0, 1), out.stderr
    doc = json.loads(out.stdout)
    (entry,) = doc["files"]
    return entry["findings"]


def test_one_cause_is_one_primary_finding_with_its_consequences():
    findings = [f for f in _json_findings("class8-one-cause-fail.axis.yaml") if f["severity"] in LOUD]
    group = [f for f in findings if f["rule"] in CLASS_RULES[8]]
    primary = [f for f in group if f["explained_by"] is None]
    assert [f["rule"] for f in primary] == ["worst-ripple-over-rated-current"]
    consequences = sorted((f["rule"], f["operating_point"]) for f in group if f["explained_by"] is not None)
    assert consequences == [
        ("low-inductance-winding-without-choke", None),
        ("ripple-over-rated-current", "hold"),
        ("ripple-over-rated-current", "traverse"),
        ("supply-window-empty", None),
    ]
    assert all(f["explained_by"] == "worst-ripple-over-rated-current" for f in group if f["explained_by"])
    # nothing else stands on its own: the small inductance is the only problem
    assert [f["rule"] for f in findings if f["explained_by"] is None] == ["worst-ripple-over-rated-current"]


def test_the_working_counterpart_has_nothing_to_group():
    loud = [f for f in _json_findings("class8-one-cause-pass.axis.yaml") if f["severity"] in LOUD]
    assert loud == []


def test_one_overheating_winding_is_one_primary_finding():
    thermal = ("rms-current-near-continuous-limit", "winding-temperature-margin")
    at_press = [
        f
        for f in _json_findings("class10-rms-far-past-fail.axis.yaml")
        if f["rule"] in thermal and f["operating_point"] == "press" and f["severity"] in LOUD
    ]
    assert sorted(f["rule"] for f in at_press) == sorted(thermal)
    assert len([f for f in at_press if f["explained_by"] is None]) == 1


def test_the_step_headroom_alone_is_a_warning_that_says_what_it_costs(results):
    found = [
        f
        for f in results["class1-supply-window-headroom-pass.axis.yaml"].findings
        if f.rule in ("supply-window-empty", "supply-window-without-control-headroom")
    ]
    assert [(f.rule, f.severity) for f in found] == [("supply-window-without-control-headroom", "warning")]
    assert "20.11 V" in found[0].message and "slower than the loop bandwidth" in found[0].message
