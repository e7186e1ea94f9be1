"""Worked example at the figure level: the exact periodic-steady-state maximum and
minimum of the current of a DC chopper (H-bridge) driving an R-L load with a back-EMF,
at duties far from 50 % (docs/physics.md §1.2 and §1.4).

The specs below are invented (the pinch-valve and tube-pump motors of an invented
peristaltic dosing pump, brushed coreless motors); every value is physically plausible.
`specguard figures --format json` prints their figures; the test checks `current_max`,
`current_min` and `ripple_pp` (and `ripple_rms`, `current`, `duty`) against two
independent references:

1. the power-electronics textbook closed form for a chopper with RL-EMF load, derived
   here.  Over one period `T` the load sees `V1` for `D T` and `V2` for `(1 - D) T`;
   `L di/dt = v - R i - E`.  In each state the current relaxes towards
   `I1 = (V1 - E)/R` or `I2 = (V2 - E)/R` with `tau = L/R`.  Requiring the current to
   repeat after a period, with `a = exp(-D T/tau)` and `b = exp(-(1 - D) T/tau)`:

       I_max = (I1 (1 - a) + I2 a (1 - b)) / (1 - a b)     (end of the high state)
       I_min = (I2 (1 - b) + I1 b (1 - a)) / (1 - a b)     (end of the low state)

   With `V1 = V`, `V2 = 0` this is the textbook buck-chopper result

       I_max = (V/R) (1 - e^(-D T/tau)) / (1 - e^(-T/tau)) - E/R
       I_min = (V/R) (e^(D T/tau) - 1) / (e^(T/tau) - 1) - E/R

   A two-level (bipolar) H-bridge swings between `+V` and `-V`: that wave is a `0/2V`
   wave shifted by `-V`, so the same form holds with `V -> V1 - V2 = 2V` and
   `E -> E - V2 = E + V`.  The scheme table (docs/physics.md §1.2): unipolar single
   leg `V/0` at `D = m`, period `1/f`; bipolar `+V/-V` at `D = (1 + m)/2`, period
   `1/f`; phase-shifted unipolar `V/0` at `D = m`, period `1/(2 f)` (the ripple runs at
   twice the leg frequency).  `m` is the average load voltage over the supply, set by
   the operating point: `m V = E + I R` (the average of `L di/dt` over a period is zero).
2. an independent numerical solution: scipy.integrate.solve_ivp of the same ODE state by
   state over many periods from the average current, then the extremes and the RMS of
   the last period sampled densely (no assumption about where the extremes lie).

The inputs the figure layer takes by its documented modelling choices, not by the
waveform: the loop resistance is the winding at its permitted temperature (IEC 60028
copper, docs/physics.md §6.1) plus two conducting switches, both cable conductors and
the chokes in the loop (docs/figures.md, `loop_resistance_hot`); the ripple is judged
at the top of a declared supply range (docs/physics.md §4.6); the motor inductance is
used as given because it was measured at the ripple frequency (docs/physics.md §5.3).

Tolerance 0.5 % (the brief of this test); the two references agree with each other to
about 1e-9.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import simpson, solve_ivp

SOURCE = "power-electronics textbook closed form for a chopper with RL–EMF load, derived in the test"
NUMERIC = "scipy.integrate.solve_ivp of L di/dt = v(t) - R i - E over many periods"
TOL = 5e-3  # 0.5 %

ALPHA20 = 0.00393  # 1/K, copper, IEC 60028 (docs/physics.md §6.1)
RPM = 2.0 * math.pi / 60.0


@dataclass(frozen=True)
class Point:
    name: str
    rpm: float
    torque: float  # N*m


@dataclass(frozen=True)
class Case:
    name: str
    description: str
    scheme: str
    supply: float  # V, nominal
    supply_range: tuple[float, float] | None
    f_leg: float  # Hz
    r25: float  # ohm, terminal resistance at 25 degC
    inductance: float  # H, measured at the ripple frequency
    t_max: float | None  # degC, permitted winding temperature (None: no thermal data)
    r_switch: float  # ohm
    r_cable: float  # ohm, one conductor
    choke: tuple[float, float] | None  # (H, ohm) of each of two chokes, one per lead
    ke_mv_per_rpm: float
    points: tuple[Point, ...]

    @property
    def kt(self) -> float:  # N*m/A = V*s/rad for a brushed motor (docs/physics.md §4.4)
        return self.ke_mv_per_rpm * 1e-3 / RPM

    @property
    def f_ripple(self) -> float:
        return 2.0 * self.f_leg if self.scheme == "unipolar-phase-shifted" else self.f_leg


CASES = (
    # Pinch valve: unipolar single-leg PWM at 20 kHz; T/tau about 1.8 (exponential
    # regime); a creeping point at a duty near 20 % and a fast one near 85 %.
    Case(
        name="pinch-valve",
        description="Pinch valve of an invented peristaltic dosing pump",
        scheme="unipolar-single",
        supply=24.0,
        supply_range=None,
        f_leg=20e3,
        r25=3.2,
        inductance=120e-6,
        t_max=100.0,
        r_switch=0.04,
        r_cable=0.06,
        choke=None,
        ke_mv_per_rpm=1.8,
        points=(Point("creep", 1470.0, 8.6e-3), Point("open", 8450.0, 20.6e-3)),
    ),
    # Tube pump on a slow bipolar bridge: 8 kHz against tau of about 29 us, T/tau
    # about 4.4, leg duties near 85 % and 93 %: a strongly asymmetric (exponential)
    # waveform whose current reverses within each period (synchronous freewheeling).
    # No engineer would keep this ripple; the case exists for the long period.
    Case(
        name="tube-pump-bipolar",
        description="Tube pump of an invented dosing pump on a bipolar bridge",
        scheme="bipolar",
        supply=24.0,
        supply_range=None,
        f_leg=8e3,
        r25=3.3,
        inductance=100e-6,
        t_max=None,
        r_switch=0.05,
        r_cable=0.05,
        choke=None,
        ke_mv_per_rpm=1.5,
        points=(Point("prime", 8430.0, 17.0e-3), Point("flush", 10180.0, 22.0e-3)),
    ),
    # Tube pump on phase-shifted unipolar PWM with a choke in each lead and a supply
    # range: the ripple at 2 x 8 kHz, judged at the top of the range (30 V).
    Case(
        name="tube-pump-phase-shifted",
        description="Tube pump of an invented dosing pump, phase-shifted bridge with chokes",
        scheme="unipolar-phase-shifted",
        supply=24.0,
        supply_range=(20.0, 30.0),
        f_leg=8e3,
        r25=2.4,
        inductance=70e-6,
        t_max=120.0,
        r_switch=0.03,
        r_cable=0.04,
        choke=(22e-6, 0.05),
        ke_mv_per_rpm=1.5,
        points=(Point("dribble", 1500.0, 12.0e-3), Point("purge", 13500.0, 30.0e-3)),
    ),
)


def _n(x: float) -> str:
    return f"{x:.10g}"


def _spec_text(case: Case) -> str:
    """A complete spec for the case (format v1, docs/format.md)."""
    lines = [
        f"# {case.description} (invented; check values in tests/test_chopper_current_extremes.py)",
        "format: 1",
        "axis:",
        f"  name: {case.name}",
        "motor:",
        "  type: brushed-dc",
        "  winding: coreless",
        f"  terminal_resistance: {{ value: {_n(case.r25)} ohm, at: 25 degC }}",
        f"  terminal_inductance: {{ value: {_n(case.inductance * 1e6)} uH,"
        f" measured_at: {_n(case.f_ripple / 1e3)} kHz }}",
        f"  torque_constant: {{ value: {_n(case.kt * 1e3)} mN*m/A, current: dc }}",
        f"  back_emf_constant: {{ value: {_n(case.ke_mv_per_rpm)} mV/rpm, voltage: terminal }}",
        "  rated_current: 1.5 A",
        "  peak_current: 6 A",
        "  max_speed: 15000 rpm",
    ]
    if case.t_max is not None:
        lines += [
            "  thermal:",
            "    winding_to_housing: 4 K/W",
            "    housing_to_ambient: 14 K/W",
            f"    max_winding_temperature: {_n(case.t_max)} degC",
        ]
    supply = f"  supply: {{ voltage: {_n(case.supply)} V"
    if case.supply_range:
        supply += f", range: [{_n(case.supply_range[0])} V, {_n(case.supply_range[1])} V]"
    lines += [
        "stage:",
        supply + " }",
        "  pwm:",
        f"    frequency: {_n(case.f_leg / 1e3)} kHz",
        "    frequency_is: leg",
        f"    scheme: {case.scheme}",
        "    freewheeling: synchronous",
        "    max_duty: 0.98",
        f"  switch_resistance: {_n(case.r_switch * 1e3)} mohm",
    ]
    if case.choke:
        lines += [
            "chokes:",
            f"  inductance: {_n(case.choke[0] * 1e6)} uH",
            "  placement: per-lead",
            "  count: 2",
            f"  resistance: {_n(case.choke[1] * 1e3)} mohm",
        ]
    lines += [f"cable: {{ length: 1.2 m, resistance: {_n(case.r_cable * 1e3)} mohm }}", "operating_points:"]
    for p in case.points:
        lines.append(
            f"  - {{ name: {p.name}, speed: {_n(p.rpm)} rpm, torque: {_n(p.torque * 1e3)} mN*m, ambient: 25 degC }}"
        )
    return "\n".join(lines) + "\n"


# --- the hand side -----------------------------------------------------------------


@dataclass(frozen=True)
class Wave:
    v1: float
    v2: float
    duty: float  # share of the period at v1
    period: float
    resistance: float
    inductance: float
    emf: float
    current: float  # the operating point's average current
    leg_duty: float


def _loop(case: Case) -> tuple[float, float]:
    """(R, L) of the ripple loop, by hand."""
    if case.t_max is None:
        r_motor = case.r25  # no temperature limit known: the stated value
    else:  # IEC 60028 copper, referred to 20 degC (docs/physics.md §6.1)
        r_motor = case.r25 * (1.0 + ALPHA20 * (case.t_max - 20.0)) / (1.0 + ALPHA20 * (25.0 - 20.0))
    n_chokes = 2 if case.choke else 0
    r = r_motor + 2.0 * case.r_switch + 2.0 * case.r_cable + n_chokes * (case.choke[1] if case.choke else 0.0)
    l_loop = case.inductance + n_chokes * (case.choke[0] if case.choke else 0.0)
    return r, l_loop


def _wave(case: Case, point: Point) -> Wave:
    r, l_loop = _loop(case)
    emf = case.kt * point.rpm * RPM
    current = point.torque / case.kt
    v_top = case.supply_range[1] if case.supply_range else case.supply
    m = (emf + current * r) / v_top  # average load voltage over the supply
    if case.scheme == "bipolar":
        return Wave(v_top, -v_top, 0.5 * (1.0 + m), 1.0 / case.f_leg, r, l_loop, emf, current, 0.5 * (1.0 + m))
    if case.scheme == "unipolar-single":
        return Wave(v_top, 0.0, m, 1.0 / case.f_leg, r, l_loop, emf, current, m)
    return Wave(v_top, 0.0, m, 0.5 / case.f_leg, r, l_loop, emf, current, 0.5 * (1.0 + m))


def _textbook(w: Wave) -> tuple[float, float]:
    """(I_max, I_min) by the textbook closed form with V -> V1 - V2, E -> E - V2."""
    v, e, tau = w.v1 - w.v2, w.emf - w.v2, w.inductance / w.resistance
    x, d = w.period / tau, w.duty
    i_max = v / w.resistance * (1.0 - math.exp(-d * x)) / (1.0 - math.exp(-x)) - e / w.resistance
    i_min = v / w.resistance * math.expm1(d * x) / math.expm1(x) - e / w.resistance
    return i_max, i_min


def _general(w: Wave) -> tuple[float, float]:
    """(I_max, I_min) from the two relaxations of the periodic solution (docstring)."""
    tau = w.inductance / w.resistance
    a, b = math.exp(-w.duty * w.period / tau), math.exp(-(1.0 - w.duty) * w.period / tau)
    i1, i2 = (w.v1 - w.emf) / w.resistance, (w.v2 - w.emf) / w.resistance
    return (i1 * (1 - a) + i2 * a * (1 - b)) / (1 - a * b), (i2 * (1 - b) + i1 * b * (1 - a)) / (1 - a * b)


def _numeric(w: Wave) -> dict[str, float]:
    """Extremes, mean and ripple RMS of the last of many periods, solved with solve_ivp."""
    tau = w.inductance / w.resistance
    periods = int(math.ceil(40.0 * tau / w.period)) + 5
    t_high = w.duty * w.period

    def rhs(level):
        return lambda _t, i: [(level - w.resistance * i[0] - w.emf) / w.inductance]

    i0 = w.current
    samples = []
    for k in range(periods):
        last = k == periods - 1
        for level, span in ((w.v1, t_high), (w.v2, w.period - t_high)):
            sol = solve_ivp(rhs(level), (0.0, span), [i0], method="DOP853", rtol=1e-11, atol=1e-13, dense_output=last)
            i0 = float(sol.y[0, -1])
            if last:
                t = np.linspace(0.0, span, 4001)
                samples.append((t, sol.sol(t)[0]))
    (t1, c1), (t2, c2) = samples
    mean = (simpson(c1, x=t1) + simpson(c2, x=t2)) / w.period
    ms = (simpson((c1 - mean) ** 2, x=t1) + simpson((c2 - mean) ** 2, x=t2)) / w.period
    both = np.concatenate([c1, c2])
    return {"max": float(both.max()), "min": float(both.min()), "mean": float(mean), "ripple_rms": math.sqrt(ms)}


# --- the figures -------------------------------------------------------------------


@pytest.fixture(scope="module")
def figures(tmp_path_factory):
    """{case: {point: {figure: value}}} (and the axis figures under None), from
    `specguard figures --format json` over the three specs."""
    folder = tmp_path_factory.mktemp("chopper")
    names = []
    for case in CASES:
        (folder / f"{case.name}.axis.yaml").write_text(_spec_text(case), encoding="utf-8")
        names.append(f"{case.name}.axis.yaml")
    out = subprocess.run(
        [sys.executable, "-m", "specguard", "figures", "--format", "json", "--root", str(folder), *names],
        cwd=folder,
        capture_output=True,
        text=True,
        check=False,
    )
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    result = {}
    for entry in doc["files"]:
        figs = entry["figures"]
        assert figs is not None, entry
        table = {None: {f["name"]: f["value"] for f in figs["axis"]}}
        for p in figs["points"]:
            table[p["name"]] = {f["name"]: f["value"] for f in p["figures"]}
        result[Path(entry["file"]).name.removesuffix(".axis.yaml")] = table
    return result


PAIRS = [(case, point) for case in CASES for point in case.points]
IDS = [f"{case.name}-{point.name}" for case, point in PAIRS]


@pytest.mark.parametrize(("case", "point"), PAIRS, ids=IDS)
def test_closed_form_agrees_with_the_ode_solution(case, point):
    """The two references agree with each other first (so neither can be wrong alone)."""
    w = _wave(case, point)
    i_max, i_min = _textbook(w)
    assert _general(w) == pytest.approx((i_max, i_min), rel=1e-12)
    num = _numeric(w)
    assert num["max"] == pytest.approx(i_max, rel=1e-8), NUMERIC
    assert num["min"] == pytest.approx(i_min, rel=1e-8, abs=1e-9), NUMERIC
    assert num["mean"] == pytest.approx(w.current, rel=1e-8), "the average current is exact (m V = E + I R)"


@pytest.mark.parametrize(("case", "point"), PAIRS, ids=IDS)
def test_current_extremes_of_the_figures(figures, case, point):
    w = _wave(case, point)
    fig = figures[case.name][point.name]
    i_max, i_min = _textbook(w)  # source: SOURCE
    num = _numeric(w)  # source: NUMERIC
    # the operating point far from 50 %: the leg duty (check value: the scheme table of
    # docs/physics.md §1.2 with m = (E + I R)/V, hand calculation in the file)
    assert abs(w.leg_duty - 0.5) > 0.15 or abs(w.duty - 0.5) > 0.3
    if case.supply_range is None:  # the duty figure is judged at the bottom of a range
        assert fig["duty"] == pytest.approx(w.leg_duty, rel=TOL)
    assert fig["operating_current"] == pytest.approx(w.current, rel=TOL)  # T / k_t, hand calculation
    assert fig["current_max"] == pytest.approx(i_max, rel=TOL), SOURCE
    assert fig["current_min"] == pytest.approx(i_min, rel=TOL), SOURCE
    assert fig["ripple_pp"] == pytest.approx(i_max - i_min, rel=TOL), SOURCE
    assert fig["current_max"] == pytest.approx(num["max"], rel=TOL), NUMERIC
    assert fig["current_min"] == pytest.approx(num["min"], rel=TOL), NUMERIC
    assert fig["ripple_pp"] == pytest.approx(num["max"] - num["min"], rel=TOL), NUMERIC
    assert fig["ripple_rms"] == pytest.approx(num["ripple_rms"], rel=TOL), NUMERIC


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_loop_values_behind_the_waveform(figures, case):
    """R and L of the loop, and T_r/tau, by hand (docs/physics.md §1.5, §1.6, §6.1)."""
    axis = figures[case.name][None]
    r, l_loop = _loop(case)
    assert axis["loop_resistance_hot"] == pytest.approx(r, rel=TOL)  # hand calculation in the file
    assert axis["loop_inductance"] == pytest.approx(l_loop, rel=TOL)  # hand calculation in the file
    period = 1.0 / case.f_ripple
    assert axis["ripple_period_over_tau"] == pytest.approx(period * r / l_loop, rel=TOL)


def test_the_long_period_case_is_strongly_asymmetric(figures):
    """With T/tau about 4 the waveform is far from a triangle: the maximum lies much
    further above the average than the minimum below it, and the small-ripple formula
    (V1 - V2) D (1 - D) T / L overstates the ripple (docs/physics.md §1.5)."""
    case = CASES[1]
    point = case.points[0]
    w = _wave(case, point)
    fig = figures[case.name][point.name]
    assert w.period * w.resistance / w.inductance > 4.0
    up, down = fig["current_max"] - w.current, w.current - fig["current_min"]
    # hand calculation in the file: the two offsets differ by more than a factor 1.5
    assert max(up, down) / min(up, down) > 1.5
    linear = (w.v1 - w.v2) * w.duty * (1.0 - w.duty) * w.period / w.inductance
    assert fig["ripple_pp_linear"] == pytest.approx(linear, rel=TOL)  # published small-ripple form, §1.3
    assert fig["ripple_pp"] < 0.9 * linear
