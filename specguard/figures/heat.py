"""Winding and housing temperatures: the steady two-node model per operating point with
R(T) and the calibrated PWM loss, and the periodic steady state of the motion profile
(docs/physics.md §6)."""

from __future__ import annotations

import math

from .. import physics as P
from ..model.spec import Spec
from ._vec import (
    is_vector,
    maximum,
)
from .axis import KELVIN_20C, FigureSettings, _Axis, _axis
from .operating import _electrical
from .pwmloss import _pwm_loss, _PwmLoss
from .registry import Fig


def _thermal(spec, ax, elec, rows, axis, missing, notes, pwm: _PwmLoss | None = None):
    thermal = spec.motor.thermal
    names = (
        Fig.rms_current_ratio,
        Fig.continuous_current_max,
        Fig.winding_temperature,
        Fig.winding_margin,
        Fig.runaway_number,
        Fig.profile_peak_temperature,
        Fig.profile_mean_temperature,
        Fig.profile_margin,
        Fig.profile_start_temperature,
        Fig.copper_loss,
        Fig.housing_temperature,
        Fig.runaway_current,
        Fig.profile_pwm_loss_temperature_rise,
    )
    if thermal is None:
        for name in names:
            missing[name] = "the spec has no motor.thermal data"
        return
    r_wh, r_ha = thermal.winding_to_housing, thermal.housing_to_ambient
    r20 = ax.loss_resistance_20
    limit = ax.temperature_limit
    runaway = False
    extra = pwm.in_budget if pwm is not None else tuple(0.0 for _ in rows)
    node = pwm.node_resistance if pwm is not None else 0.0
    batch = is_vector(*(e[Fig.rms_current] for e in elec), *extra)
    if batch:
        _thermal_points_batch(rows, elec, extra, node, r20, r_wh, r_ha, limit)
        runaway = Fig.winding_temperature not in rows[0]
    for row, e, p_extra in zip(rows, elec, extra, strict=True) if not batch else ():
        i_rms = e[Fig.rms_current]
        row[Fig.runaway_number] = P.thermal.runaway_number(i_rms, r20, r_wh, r_ha)
        # a calibrated PWM loss heats its node: exactly an ambient higher by P R_node
        # in the two-node steady state (docs/pwm-losses.md)
        ambient = row[Fig.point_ambient] + p_extra * node
        t_w = P.thermal.winding_temperature_steady(i_rms, r20, r_wh, r_ha, ambient)
        if not math.isfinite(t_w):
            runaway = True
        else:
            row[Fig.winding_temperature] = t_w
            copper = i_rms * i_rms * float(P.thermal.resistance_at_temperature(r20, KELVIN_20C, t_w))
            row[Fig.copper_loss] = copper
            row[Fig.housing_temperature] = row[Fig.point_ambient] + (copper + p_extra) * r_ha
            if limit is not None:
                row[Fig.winding_margin] = limit - t_w
        if limit is not None:
            i_max = P.thermal.current_continuous_max(limit, ambient, r20, r_wh, r_ha)
            row[Fig.continuous_current_max] = i_max
            row[Fig.rms_current_ratio] = i_rms / maximum(i_max, 1e-300)
    if runaway:
        # a figure is present at every point or absent with its reason
        for row in rows:
            for name in (Fig.winding_temperature, Fig.winding_margin, Fig.copper_loss, Fig.housing_temperature):
                row.pop(name, None)
        missing[Fig.copper_loss] = "thermal runaway at some operating point: no steady state"
        missing[Fig.housing_temperature] = missing[Fig.copper_loss]
        missing[Fig.winding_temperature] = "thermal runaway at some operating point: no steady state"
        missing[Fig.winding_margin] = missing[Fig.winding_temperature]
    axis[Fig.runaway_current] = float(P.thermal.runaway_current(r20, r_wh, r_ha))
    if limit is None:
        for name in (Fig.winding_margin, Fig.continuous_current_max, Fig.rms_current_ratio, Fig.profile_margin):
            missing[name] = ax.missing.get(Fig.winding_temperature_limit, "no temperature limit")
    else:
        axis[Fig.winding_temperature_limit] = limit
    profile = spec.profile
    profile_names = (
        Fig.profile_peak_temperature,
        Fig.profile_mean_temperature,
        Fig.profile_margin,
        Fig.profile_start_temperature,
        Fig.profile_pwm_loss_temperature_rise,
    )
    if profile is None:
        for name in profile_names:
            missing[name] = "the spec has no motion profile"
        return
    if thermal.winding_time_constant is None or thermal.motor_time_constant is None:
        for name in profile_names:
            missing[name] = "motor.thermal lacks winding_time_constant or motor_time_constant"
        return
    c_w, c_h = P.thermal.capacitances_from_time_constants(
        thermal.winding_time_constant, thermal.motor_time_constant, r_wh, r_ha
    )
    segments = _profile_segments(spec, ax, pwm)
    if is_vector(*(x for seg in segments for x in seg)):
        _profile_batch(segments, r20, c_w, c_h, r_wh, r_ha, profile.ambient, limit, pwm, axis, missing, notes)
        return
    cycle = P.thermal.winding_temperature_cyclic(segments, r20, c_w, c_h, r_wh, r_ha, profile.ambient)
    if cycle.runaway or not math.isfinite(cycle.peak_winding_temperature):
        for name in profile_names:
            missing[name] = "thermal runaway over the profile: no periodic steady state"
        return
    axis[Fig.profile_peak_temperature] = float(cycle.peak_winding_temperature)
    axis[Fig.profile_start_temperature] = float(cycle.start_winding_temperature)
    axis[Fig.profile_mean_temperature] = float(cycle.mean_winding_temperature)
    if limit is not None:
        axis[Fig.profile_margin] = limit - float(cycle.peak_winding_temperature)
    notes[Fig.profile_peak_temperature] = "two-node model, periodic steady state of the repeated profile"
    if pwm is not None and pwm.law is not None:
        # the calibrated PWM loss is in the cycle; its share of the peak, shown apart
        copper_only = [seg._replace(housing_loss=0.0, winding_loss=0.0) for seg in segments]
        bare = P.thermal.winding_temperature_cyclic(copper_only, r20, c_w, c_h, r_wh, r_ha, profile.ambient)
        if not bare.runaway and math.isfinite(bare.peak_winding_temperature):
            axis[Fig.profile_pwm_loss_temperature_rise] = float(
                cycle.peak_winding_temperature - bare.peak_winding_temperature
            )
        else:
            missing[Fig.profile_pwm_loss_temperature_rise] = "thermal runaway over the profile without the PWM loss"
        notes[Fig.profile_peak_temperature] += "; the calibrated PWM eddy loss of each segment included"
    else:
        missing[Fig.profile_pwm_loss_temperature_rise] = "the PWM loss is not calibrated (motor.pwm_loss)"


def _thermal_points_batch(rows, elec, extra, node, r20, r_wh, r_ha, limit) -> None:
    """The steady thermal figures of :func:`_thermal` for a batch of variants: a variant
    whose winding runs away at some point has no steady figures at any point (NaN)."""
    import numpy as np

    shape = next(np.shape(v) for e in elec for v in (e[Fig.rms_current],) if is_vector(v))
    runaway = np.zeros(shape, dtype=bool)
    for row, e, p_extra in zip(rows, elec, extra, strict=True):
        i_rms = np.broadcast_to(e[Fig.rms_current], shape)
        row[Fig.runaway_number] = P.thermal.runaway_number(i_rms, r20, r_wh, r_ha)
        ambient = row[Fig.point_ambient] + p_extra * node
        t_w = P.thermal.winding_temperature_steady(i_rms, r20, r_wh, r_ha, ambient)
        finite = np.isfinite(t_w)
        runaway |= ~finite
        t_safe = np.where(finite, t_w, KELVIN_20C)
        row[Fig.winding_temperature] = np.where(finite, t_w, np.nan)
        copper = i_rms * i_rms * P.thermal.resistance_at_temperature(r20, KELVIN_20C, t_safe)
        row[Fig.copper_loss] = np.where(finite, copper, np.nan)
        row[Fig.housing_temperature] = np.where(finite, row[Fig.point_ambient] + (copper + p_extra) * r_ha, np.nan)
        if limit is not None:
            row[Fig.winding_margin] = np.where(finite, limit - t_safe, np.nan)
            i_max = P.thermal.current_continuous_max(limit, ambient, r20, r_wh, r_ha)
            row[Fig.continuous_current_max] = i_max
            row[Fig.rms_current_ratio] = i_rms / np.maximum(i_max, 1e-300)
    if runaway.all():
        for row in rows:
            for name in (Fig.winding_temperature, Fig.winding_margin, Fig.copper_loss, Fig.housing_temperature):
                row.pop(name, None)
        return
    for row in rows:
        for name in (Fig.winding_temperature, Fig.winding_margin, Fig.copper_loss, Fig.housing_temperature):
            if name in row:
                row[name] = np.where(runaway, np.nan, row[name])


def _profile_batch(segments, r20, c_w, c_h, r_wh, r_ha, ambient, limit, pwm, axis, missing, notes) -> None:
    """The profile figures of :func:`_thermal` for a batch: the cyclic two-node model
    solved for every variant at once (NaN where a variant's winding runs away)."""
    import numpy as np

    cycle = P.thermal.winding_temperature_cyclic(segments, r20, c_w, c_h, r_wh, r_ha, ambient)
    ok = ~np.asarray(cycle.runaway) & np.isfinite(cycle.peak_winding_temperature)
    names = (Fig.profile_peak_temperature, Fig.profile_start_temperature, Fig.profile_mean_temperature)
    if not ok.any():
        for name in (*names, Fig.profile_margin, Fig.profile_pwm_loss_temperature_rise):
            missing[name] = "thermal runaway over the profile: no periodic steady state"
        return
    values = (cycle.peak_winding_temperature, cycle.start_winding_temperature, cycle.mean_winding_temperature)
    for name, value in zip(names, values, strict=True):
        axis[name] = np.where(ok, value, np.nan)
    if limit is not None:
        axis[Fig.profile_margin] = np.where(ok, limit - cycle.peak_winding_temperature, np.nan)
    notes[Fig.profile_peak_temperature] = "two-node model, periodic steady state of the repeated profile"
    if pwm is not None and pwm.law is not None:
        bare = P.thermal.winding_temperature_cyclic(
            [seg._replace(housing_loss=0.0, winding_loss=0.0) for seg in segments], r20, c_w, c_h, r_wh, r_ha, ambient
        )
        both = ok & ~np.asarray(bare.runaway) & np.isfinite(bare.peak_winding_temperature)
        with np.errstate(invalid="ignore"):
            rise = cycle.peak_winding_temperature - bare.peak_winding_temperature
        axis[Fig.profile_pwm_loss_temperature_rise] = np.where(both, rise, np.nan)
        notes[Fig.profile_peak_temperature] += "; the calibrated PWM eddy loss of each segment included"
    else:
        missing[Fig.profile_pwm_loss_temperature_rise] = "the PWM loss is not calibrated (motor.pwm_loss)"


def _profile_segments(spec: Spec, ax: _Axis, pwm: _PwmLoss | None = None) -> list:
    """Thermal segments of the motion profile: duration, RMS current with ripple and,
    when calibrated, the PWM eddy loss of the segment's ripple in the node it heats."""
    profile = spec.profile
    assert profile is not None  # called for specs with a profile only
    out = []
    for s in profile.segments:
        e = _electrical(spec, ax, s.speed, s.torque)
        extra = pwm.law(e) if pwm is not None and pwm.law is not None else 0.0
        if pwm is not None and pwm.winding_node:
            out.append(P.thermal.Segment(s.duration, e[Fig.rms_current], 0.0, extra))
        else:
            out.append(P.thermal.Segment(s.duration, e[Fig.rms_current], extra, 0.0))
    return out


def profile_segments(spec: Spec, settings: FigureSettings | None = None):
    """(thermal segments, loss resistance at 20 degC [ohm]) of the spec's profile, or None.

    The same segments the figure ``profile_peak_temperature`` is computed from (the
    calibrated PWM loss included), for plots of the temperature over the cycle.
    """
    if spec.profile is None:
        return None
    ax = _axis(spec, settings or FigureSettings())
    pwm = _pwm_loss(spec, ax, [], [], {}, {}, {}) if spec.motor.thermal is not None else None
    return _profile_segments(spec, ax, pwm), ax.loss_resistance_20
