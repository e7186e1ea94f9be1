"""The closed-form remedies: for a finding, the amount of a lever that brings its figure
to a threshold (the verified fixes start from these, specguard.engine.fixes).

One function per entry of the remedy table (specguard.figures.registry.Rem),
registered under it with ``@_solves``; tests/test_figure_table.py checks that every
entry has its function."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from .. import physics as P
from ..model.spec import Spec
from . import FigureSet, Remedy
from .axis import SQRT3, FigureSettings, _Axis, _axis, _fmt, _highest_supply, _lowest_supply, _motor_inductance
from .energy import brake_turn_on
from .registry import Fig, Rem


@dataclass(frozen=True)
class _Case:
    """What every remedy starts from: the finding's figure and threshold, the axis."""

    name: str
    spec: Spec
    figures: FigureSet
    point: str | None
    limit: float
    settings: FigureSettings
    ax: _Axis
    V_nom: float  # the nominal supply
    V: float  # the top of the supply range: ripple remedies are judged there
    V_low: float  # the bottom: modulation and headroom are judged there
    rated: float
    modulation: float | None  # the point's modulation, scaled to the top of the range
    three: bool  # sinusoidal commutation


_SOLVERS: dict[str, Callable[[_Case], Remedy | None]] = {}


def _solves(name: str) -> Callable[[Callable[[_Case], Remedy | None]], Callable[[_Case], Remedy | None]]:
    def register(fn: Callable[[_Case], Remedy | None]) -> Callable[[_Case], Remedy | None]:
        _SOLVERS[name] = fn
        return fn

    return register


def solver_names() -> frozenset[str]:
    """The remedies that have a function (every entry of the table, by test)."""
    return frozenset(_SOLVERS)


def remedy(
    name: str,
    spec: Spec,
    figures: FigureSet,
    *,
    point: str | None,
    limit: float,
    settings: FigureSettings | None = None,
) -> Remedy | None:
    settings = settings or FigureSettings()
    ax = _axis(spec, settings)
    # ripple remedies at the top of the supply range, where the ripple is judged; the
    # modulation figure is taken at the bottom, and scales as 1/V to the top
    V_nom, V, V_low = spec.stage.supply.voltage, _highest_supply(spec), _lowest_supply(spec)
    rated = spec.motor.rated_current
    modulation = figures.value(Fig.modulation, point) if point is not None else None
    if modulation is not None:
        modulation = float(modulation) * V_low / V
    three = ax.topology == "sinusoidal"
    solve = _SOLVERS.get(name)
    if solve is None:
        return None
    return solve(_Case(name, spec, figures, point, limit, settings, ax, V_nom, V, V_low, rated, modulation, three))


@_solves(Rem.added_inductance)
def _added_inductance(c: _Case) -> Remedy | None:
    if c.three:
        M = c.modulation if c.modulation is not None else P.threephase.modulation_index_limit(c.ax.scheme)
        value = P.remedies.added_phase_inductance_min(
            c.V,
            c.ax.inductance,
            c.ax.f_leg,
            min(M, P.threephase.modulation_index_limit(c.ax.scheme)),
            c.ax.scheme,
            c.rated,
            c.limit,
        )
        where = "per phase (one choke in each phase)"
    else:
        m = None if c.modulation is None else min(max(c.modulation, 0.0), 1.0)
        value = P.remedies.added_inductance_min(
            c.V, c.ax.inductance, c.ax.resistance_hot, c.ax.f_leg, c.ax.scheme, c.rated, c.limit, modulation=m
        )
        where = (
            "in total, split over both motor leads"
            if c.ax.topology == "dc"
            else "in the two conducting phases together"
        )
        if value is not None and c.ax.topology == "dc" and value > 0:
            return Remedy(c.name, f"add at least {_fmt(value / 2.0, 'inductance')} per lead", float(value) / 2.0, "H")
    if value is None:
        return Remedy(c.name, "no added inductance below 1 H reaches the limit", None, "H")
    if value <= 0:
        return None
    return Remedy(c.name, f"add at least {_fmt(value, 'inductance')} {where}", float(value), "H")


@_solves(Rem.pwm_frequency)
def _pwm_frequency(c: _Case) -> Remedy | None:
    def frequency_for(inductance: float):
        if c.three:
            M = c.modulation if c.modulation is not None else P.threephase.modulation_index_limit(c.ax.scheme)
            return P.remedies.pwm_frequency_min_three_phase(
                c.V, inductance, min(M, P.threephase.modulation_index_limit(c.ax.scheme)), c.ax.scheme, c.rated, c.limit
            )
        m = None if c.modulation is None else min(max(c.modulation, 0.0), 1.0)
        return P.remedies.pwm_frequency_min(
            c.V, inductance, c.ax.resistance_hot, c.ax.scheme, c.rated, c.limit, modulation=m
        )

    value = frequency_for(c.ax.inductance)
    # the motor's inductance falls with frequency (a measured table or the estimate
    # curve): solve again with the loop inductance at the new frequency, a few
    # fixed-point steps (the verification judges the result on the full model)
    for _ in range(3):
        if value is None or not (value > c.ax.f_leg):
            break
        f_ripple = value * c.ax.f_ripple / c.ax.f_leg
        l_motor, _l_cat = _motor_inductance(c.spec, f_ripple, c.settings, {}, {})
        share = c.ax.motor_inductance * l_motor / c.ax.terminal_inductance
        again = frequency_for(c.ax.inductance - c.ax.motor_inductance + share)
        if again is None or abs(again - value) <= 1e-4 * value:
            value = again if again is not None else value
            break
        value = again
    if value is None:
        return Remedy(c.name, "no PWM frequency below 1 MHz reaches the limit", None, "Hz")
    if value <= 0 or value <= c.ax.f_leg:
        return None
    note = " (re-check the inductance there)" if c.spec.motor.inductance_vs_frequency else ""
    text = f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg{note}"
    return Remedy(c.name, text, float(value), "Hz")


@_solves(Rem.supply_voltage_for_ripple)
def _supply_voltage_for_ripple(c: _Case) -> Remedy | None:
    if c.three and c.point is not None:
        point_values = next(values for n, values in c.figures.points if n == c.point)
        phase_peak = float(point_values[Fig.terminal_voltage]) / SQRT3  # peak line-to-line / sqrt3
        value = P.threephase.supply_voltage_max_for_phase_ripple(
            phase_peak, c.ax.inductance, c.ax.f_leg, c.ax.scheme, c.limit * c.rated
        )
        if value == 0.0:
            return Remedy(
                c.name,
                "lowering the supply does not help: the ripple at this point exceeds the limit at every "
                "supply voltage; add inductance or raise the PWM frequency",
                None,
                "V",
            )
    elif c.three:
        worst = c.figures.value(Fig.ripple_pp_worst)
        if not worst:
            return None
        # the worst case sits at the highest reachable M, which the duty limits fix
        # independently of the supply: the closed-form ripple is linear in V there
        value = c.V * c.limit * c.rated / float(worst)
    elif c.point is not None:
        point_values = next(values for n, values in c.figures.points if n == c.point)
        value = P.remedies.supply_voltage_max_for_ripple(
            c.ax.inductance,
            c.ax.resistance_hot,
            c.ax.f_leg,
            c.ax.scheme,
            c.rated,
            c.limit,
            terminal_voltage=float(point_values[Fig.terminal_voltage]),
            current=float(point_values[Fig.operating_current]),
            series_resistance=c.ax.series_resistance,
            dead_time=c.ax.dead_time,
        )
    else:
        value = P.remedies.supply_voltage_max_for_ripple(
            c.ax.inductance, c.ax.resistance_hot, c.ax.f_leg, c.ax.scheme, c.rated, c.limit
        )
    # ``value`` bounds the top of the range; a supply of the same tolerance scales
    # its whole range, so the nominal voltage moves by the same factor
    if value is None or not math.isfinite(value) or value >= c.V:
        return None
    needed = c.figures.value(Fig.supply_min)  # bounds the bottom of the range
    if needed is not None and value / c.V < float(needed) / c.V_low:
        if c.V == c.V_low:
            why = (
                f"the ripple limit needs at most {_fmt(value, 'voltage')} but the operating points need "
                f"at least {_fmt(float(needed), 'voltage')}"
            )
        else:
            why = (
                f"the ripple limit needs the top of the supply range at most {_fmt(value, 'voltage')} "
                f"(now {_fmt(c.V, 'voltage')}), which takes its bottom to {_fmt(c.V_low * value / c.V, 'voltage')}, "
                f"below the {_fmt(float(needed), 'voltage')} the operating points need"
            )
        return Remedy(c.name, f"lowering the supply does not help: {why}", None, "V")
    nominal = c.V_nom * value / c.V
    return Remedy(c.name, f"lower the supply to at most {_fmt(nominal, 'voltage')}", float(nominal), "V")


@_solves(Rem.supply_voltage_for_duty)
def _supply_voltage_for_duty(c: _Case) -> Remedy | None:
    needed = c.figures.value(Fig.modulation_max)  # at the bottom of the range
    if not needed:
        return None
    scale = float(needed) / c.limit  # m scales as 1/V for fixed terminal voltage
    if scale >= 1.0:
        return None
    value = c.V_nom * scale
    text = (
        f"lower the supply to at most {_fmt(value, 'voltage')} "
        f"(modulation then {c.limit:.0%} at the most demanding point)"
    )
    return Remedy(c.name, text, value, "V")


@_solves(Rem.supply_voltage_min)
def _supply_voltage_min(c: _Case) -> Remedy | None:
    value = c.figures.value(Fig.supply_min)  # the bottom of the range must reach it
    if value is None:
        return None
    nominal = c.V_nom * float(value) / c.V_low
    return Remedy(c.name, f"raise the supply to at least {_fmt(nominal, 'voltage')}", nominal, "V")


@_solves(Rem.supply_voltage_for_modulation)
def _supply_voltage_for_modulation(c: _Case) -> Remedy | None:
    # the modulation an operating point needs falls as 1/V with the bottom of the range
    ratio = c.figures.value(Fig.modulation_ratio, c.point) if c.point is not None else None
    if ratio is None or c.limit <= 0:
        return None
    nominal = c.V_nom * float(ratio) / c.limit
    return Remedy(c.name, f"raise the supply to at least {_fmt(nominal, 'voltage')}", nominal, "V")


@_solves(Rem.pwm_frequency_inaudible)
def _pwm_frequency_inaudible(c: _Case) -> Remedy | None:
    ratio = c.ax.f_ripple / c.ax.f_leg
    value = c.limit / ratio
    text = (
        f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg "
        f"(ripple then at {_fmt(c.limit, 'frequency')})"
    )
    return Remedy(c.name, text, value, "Hz")


def _rating(c: _Case, needed, words: str) -> Remedy | None:
    """A current rating that takes ``needed`` with the band's margin (``needed`` over
    the band's ratio); ``words`` holds ``{}`` for the rating."""
    if needed is None or c.limit <= 0:
        return None
    value = float(needed) / c.limit
    return Remedy(c.name, words.format(_fmt(value, "current")), value, "A")


@_solves(Rem.stage_continuous_current)
def _stage_continuous_current(c: _Case) -> Remedy | None:
    i_out = c.figures.value(Fig.stage_current_rms, c.point) if c.point is not None else None
    return _rating(c, i_out, "use a stage rated for at least {} continuous")


@_solves(Rem.stage_peak_current)
def _stage_peak_current(c: _Case) -> Remedy | None:
    return _rating(c, c.figures.value(Fig.peak_current_reached), "use a stage rated for at least {} peak")


@_solves(Rem.choke_saturation_current)
def _choke_saturation_current(c: _Case) -> Remedy | None:
    words = "use chokes rated for at least {} saturation current"
    return _rating(c, c.figures.value(Fig.choke_peak_current), words)


@_solves(Rem.pwm_scheme)
def _pwm_scheme(c: _Case) -> Remedy | None:
    if c.spec.motor.type != "brushed-dc" or c.spec.stage.pwm.scheme != "bipolar":
        return None
    return Remedy(c.name, "switch to three-level PWM", 1.0, "")


@_solves(Rem.brake_resistor)
def _brake_resistor(c: _Case) -> Remedy | None:
    window = brake_turn_on(c.spec)
    if window is None:
        return None
    v_on, top, limit_v = window
    if not math.isfinite(v_on):
        return Remedy(
            c.name,
            f"a brake resistor does not help: the supply's top {_fmt(top, 'voltage')} leaves no room for a "
            f"turn-on voltage below the bus limit {_fmt(limit_v, 'voltage')}",
            None,
            "ohm",
        )
    peak = c.figures.value(Fig.braking_power_peak)
    if peak is None or not float(peak) > 0:
        return Remedy(
            c.name,
            f"fit a brake chopper switching in at {_fmt(v_on, 'voltage')} (give load.stop_time to size its resistor)",
            None,
            "ohm",
        )
    r_max = float(P.braking.shunt_resistance_max(v_on, float(peak)))
    return Remedy(c.name, f"fit a brake resistor of at most {_fmt(r_max, 'resistance')}", r_max, "ohm")


@_solves(Rem.loop_bandwidth_for_margin)
def _loop_bandwidth_for_margin(c: _Case) -> Remedy | None:
    loop = c.spec.stage.current_loop
    if loop is None:
        return None
    double = loop.sampling == "double-update"
    sampling = loop.sampling_frequency or c.ax.f_leg * (2.0 if double else 1.0)
    delay = float(P.control.loop_total_delay(sampling, loop.computation_delay))
    ratio = (loop.tuned_for_inductance / c.ax.inductance) if loop.tuned_for_inductance is not None else 1.0
    value = float(P.control.loop_bandwidth_max_for_margin(delay, c.limit, loop.feedback_filter, ratio))
    if not value > 0 or value >= loop.bandwidth:
        return None
    text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}"
    return Remedy(c.name, text, value, "Hz")


@_solves(Rem.loop_bandwidth)
def _loop_bandwidth(c: _Case) -> Remedy | None:
    loop = c.spec.stage.current_loop
    if loop is None:
        return None
    sampling = c.ax.f_leg * (2.0 if loop.sampling == "double-update" else 1.0)
    value = c.limit * sampling
    text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}, or raise the PWM frequency"
    return Remedy(c.name, text, value, "Hz")
