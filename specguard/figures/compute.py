"""Compute the named figures of a spec from the model (SI) by calling the physics.

The figure layer is the one adapter between :mod:`specguard.model` and
:mod:`specguard.physics`: it picks the right inductance, resistance, frequency and
convention for the spec's topology, then calls physics functions. It contains no
formula of its own beyond sums of series elements and the conversions between
conventions the spec declares. This module puts the figures together in order; the
domains live beside it:

- ``axis.py``: topology, frequencies, loop inductance and resistance, the supply's ends;
- ``operating.py``: each operating point's electrical state and exact ripple, the
  worst-case ripple, pulse windows, the current loop as built;
- ``window.py``: the supply window;
- ``pwmloss.py``: the PWM eddy loss; ``heat.py``: steady and profile temperatures;
- ``energy.py``: chokes and braking; ``plausibility.py``: values against each other;
- ``remedies.py``: the closed-form remedies the verified fixes start from.

Every figure a lever moves (PWM frequency, chokes, supply) is written with the
float-or-array helpers of ``_vec.py``, so the batch evaluator (``batch.py``) runs the
same code on arrays of variants.

Topologies:
- ``dc``: brushed DC motor on an H-bridge (bipolar, unipolar single-leg,
  unipolar phase-shifted). Loop: motor terminal values + chokes in the leads
  (+ the stage's output inductance in both leads); resistance: hot winding + two
  conducting switches + chokes + both cable conductors.
- ``six-step``: two phases in series (terminal values), chopped like an H-bridge
  (chop one switch = unipolar single-leg, chop both = bipolar).
- ``sinusoidal``: SPWM or SVPWM on a star-equivalent phase (L_tt/2, R_tt/2), dq
  steady state with i_d = 0.
"""

from __future__ import annotations

from .. import physics as P
from ..model.spec import Spec
from . import FigureSet
from ._vec import (
    is_vector,
    largest,
    maximum,
    real,
)
from .axis import SQRT2, FigureSettings, _axis, _highest_supply, _lowest_supply
from .energy import _braking, _chokes, brake_turn_on
from .heat import _thermal, profile_segments
from .operating import _current_loop, _electrical, _worst_ripple
from .plausibility import _constant_mismatch, _plausibility
from .pwmloss import MixedRegimes, _pwm_loss, _pwm_loss_effect
from .registry import Fig
from .remedies import remedy
from .window import _supply_window

# the figures' public names (specguard.figures, the engine, the report, the batch)
__all__ = ["POINT_INPUTS", "FigureSettings", "MixedRegimes", "brake_turn_on", "compute", "profile_segments", "remedy"]


POINT_INPUTS = (Fig.point_speed, Fig.point_torque, Fig.point_ambient)


def compute(spec: Spec, settings: FigureSettings | None = None) -> FigureSet:
    settings = settings or FigureSettings()
    ax = _axis(spec, settings)
    motor, stage = spec.motor, spec.stage
    rated = motor.rated_current
    V = stage.supply.voltage
    axis: dict[str, float | bool] = {
        Fig.motor_rated_current: rated,
        Fig.supply_voltage: V,
        Fig.supply_voltage_high: _highest_supply(spec),
        Fig.supply_voltage_low: _lowest_supply(spec),
        Fig.ripple_frequency: ax.f_ripple,
        Fig.pwm_frequency_leg: ax.f_leg,
        Fig.loop_inductance: ax.inductance,
        Fig.loop_inductance_catalogue: ax.inductance_catalogue,
        Fig.motor_inductance_ripple: ax.terminal_inductance,
        Fig.motor_inductance_catalogue: (
            motor.terminal_inductance.value
            if motor.terminal_inductance is not None
            else motor.inductance_vs_frequency[0].inductance  # type: ignore[index]  # the model gives one of the two
        ),
        Fig.loop_resistance_hot: ax.resistance_hot,
        Fig.electrical_time_constant: ax.inductance / ax.resistance_hot,
        Fig.ripple_period_over_tau: real(
            P.hbridge.ripple_period_to_time_constant(ax.resistance_hot, ax.inductance, ax.f_ripple)
        ),
    }
    axis.update(ax.flags)
    missing = dict(ax.missing)
    table = spec.motor.inductance_vs_frequency
    if table:
        axis[Fig.inductance_table_rise] = float(
            P.inductance.table_largest_rise([r.frequency for r in table], [r.inductance for r in table])
        )
    else:
        missing[Fig.inductance_table_rise] = "the spec has no motor.inductance_vs_frequency table"
    notes = dict(ax.notes)

    rows: list[dict[str, float]] = []
    elec: list[dict[str, float]] = []
    for point in spec.operating_points:
        e = _electrical(spec, ax, point.speed, point.torque)
        elec.append(e)
        rows.append(
            {
                Fig.point_speed: point.speed,
                Fig.point_torque: point.torque,
                Fig.point_ambient: point.ambient,
                Fig.operating_current: e["current"],
                Fig.terminal_voltage: e[Fig.terminal_voltage],
                Fig.modulation: e[Fig.modulation],
                Fig.duty: e[Fig.duty],
                Fig.modulation_ratio: e[Fig.modulation_ratio],
                Fig.ripple_modulation: e[Fig.ripple_modulation],
                Fig.current_max: e["peak"],
                Fig.ripple_pp: e[Fig.ripple_pp],
                Fig.ripple_pp_catalogue: e[Fig.ripple_pp_catalogue],
                Fig.ripple_ratio: e[Fig.ripple_pp] / rated,
                Fig.ripple_rms: e[Fig.ripple_rms],
                Fig.rms_current: e[Fig.rms_current],
            }
        )
        if ax.topology == "sinusoidal":
            rows[-1][Fig.standstill_hold] = bool(e.get(Fig.standstill_hold))
            for name in (Fig.electrical_speed, Fig.voltage_d, Fig.voltage_q):
                rows[-1][name] = e[name]
        if e.get(Fig.standstill_hold):
            notes[Fig.rms_current] = (
                "at standstill with torque one phase carries the current's amplitude continuously: the RMS "
                "current of the thermal and stage checks is that amplitude (with the ripple)"
            )
        if Fig.current_min in e:  # H-bridge and six-step: the exact waveform's extremes
            rows[-1][Fig.current_min] = e[Fig.current_min]
            rows[-1][Fig.ripple_pp_linear] = e[Fig.ripple_pp_linear]
    if ax.topology != "sinusoidal":
        missing[Fig.standstill_hold] = "only a three-phase axis with sinusoidal commutation holds a standing vector"
        for name in (Fig.electrical_speed, Fig.voltage_d, Fig.voltage_q):
            missing[name] = "a d/q view belongs to sinusoidal commutation"
    if ax.topology == "sinusoidal":
        for name in (Fig.current_min, Fig.ripple_pp_linear):
            missing[name] = "sinusoidal PWM: the ripple changes over the electrical period (see ripple_pp)"
    worst = _worst_ripple(spec, ax, ax.inductance)
    axis[Fig.ripple_pp_worst] = worst
    axis[Fig.ripple_ratio_worst] = worst / rated
    # the worst case with the catalogue inductance in the loop instead (what an estimate,
    # or a measured table, does to it)
    axis[Fig.ripple_ratio_worst_catalogue] = _worst_ripple(spec, ax, ax.inductance_catalogue) / rated
    axis[Fig.modulation_max] = largest(e[Fig.modulation] for e in elec)

    # discontinuous conduction: only with diode freewheeling (docs/physics.md §1.6)
    freewheel = stage.pwm.freewheeling
    if ax.topology == "sinusoidal":
        missing[Fig.conduction_margin] = "not modelled for sinusoidal commutation"
    elif freewheel is None:
        missing[Fig.conduction_margin] = "the spec does not say how the off-time current flows (stage.pwm.freewheeling)"
    elif freewheel == "synchronous":
        missing[Fig.conduction_margin] = "synchronous freewheeling: the current reverses, conduction stays continuous"
    else:
        for row, e in zip(rows, elec, strict=True):
            row[Fig.conduction_margin] = abs(e["current"]) / maximum(e[Fig.ripple_pp] / 2.0, 1e-300)

    _supply_window(spec, ax, elec, settings, axis, missing)

    _current_loop(stage, ax, settings, axis, missing)

    axis[Fig.constant_mismatch] = _constant_mismatch(spec)
    pwm = _pwm_loss(spec, ax, elec, rows, axis, missing, notes)
    _thermal(spec, ax, elec, rows, axis, missing, notes, pwm)
    _pwm_loss_effect(spec, ax, rows, pwm, missing)

    peak = largest(e["peak"] for e in elec)
    axis[Fig.peak_current_reached] = peak
    # peak ratings are instantaneous values; a continuous rating standing in for a
    # missing one is an RMS phase current on a sinusoidal axis, so its amplitude counts
    amplitude = SQRT2 if ax.topology == "sinusoidal" else 1.0
    limits = stage.current_limit
    if limits is not None:
        axis[Fig.peak_current_ratio_stage] = peak / (limits.peak or limits.continuous * amplitude)
    else:
        missing[Fig.peak_current_ratio_stage] = "the spec has no stage.current_limit"
    axis[Fig.peak_current_ratio_motor] = peak / (motor.peak_current or motor.rated_current * amplitude)
    _chokes(spec, ax, elec, axis, missing, notes)
    _braking(spec, axis, missing)
    _plausibility(spec, ax, elec, rows, axis, missing)

    point_rows = tuple(
        (point.name, {key: _scalar(value) for key, value in row.items()})
        for point, row in zip(spec.operating_points, rows, strict=True)
    )
    return FigureSet(axis={k: _scalar(v) for k, v in axis.items()}, points=point_rows, missing=missing, notes=notes)


def _scalar(value) -> float | bool:
    if is_vector(value):
        return value  # a batch of variants (specguard.figures.batch)
    if isinstance(value, bool) or type(value).__name__ == "bool_":
        return bool(value)
    return float(value)
