"""Plausibility figures: whether the spec's values fit each other and the usual ranges
of small drives, so that a unit slip (mH for uH, rpm for rad/s, peak for RMS) shows
up as a finding. Floats only where no lever moves them."""

from __future__ import annotations

import math

from .. import physics as P
from ..model import conventions as C
from ..model.spec import Spec
from ._vec import (
    any_of,
    is_vector,
    masked,
    real,
)
from .axis import _highest_supply, _loop_emf_constant, _torque_constant_model
from .operating import _pulse_windows
from .registry import Fig


def _constant_mismatch(spec: Spec) -> float:
    """Declared torque constant against the one the back-EMF constant implies, both read
    under their conventions (the same reading every figure uses)."""
    motor = spec.motor
    kt, kt_conv = motor.torque_constant.value, motor.torque_constant.current
    if motor.type == "brushed-dc":
        return float(P.consistency.torque_constant_mismatch(kt, motor.back_emf_constant.value, "dc"))
    ke_ll_peak = C.line_peak_constant(spec)
    if C.is_six_step(spec):
        # per A of block current: ideal 120-degree blocks give T = k_e,ll,flat I
        return float(P.consistency.torque_constant_mismatch(C.torque_constant_model(spec), ke_ll_peak, "six_step_flat"))
    if kt_conv == "phase-peak":
        return float(P.consistency.torque_constant_mismatch(kt, ke_ll_peak, "line_peak_per_phase_peak"))
    return float(P.consistency.torque_constant_mismatch(kt, ke_ll_peak, "line_peak_per_phase_rms"))


COPPER_RESISTIVITY_20 = 1.724e-8  # ohm*m, annealed copper at 20 degC (IEC 60028)


KELVIN_25C = 298.15


def _plausibility(spec, ax, elec, rows, axis, missing):
    motor, stage, pwm = spec.motor, spec.stage, spec.stage.pwm
    thermal = motor.thermal
    rated = motor.rated_current

    def lack(names, why):
        for name in names:
            missing[name] = why

    # motor winding: L/R of the catalogue terminal values
    r_terminal = motor.terminal_resistance.value
    table = motor.inductance_vs_frequency or ()
    l_cat = motor.terminal_inductance.value if motor.terminal_inductance else table[0].inductance
    axis[Fig.winding_electrical_time_constant] = l_cat / r_terminal
    axis[Fig.resistance_reference_temperature] = motor.terminal_resistance.at
    freqs = [row.frequency for row in table]
    if motor.terminal_inductance is not None:
        freqs.append(motor.terminal_inductance.measured_at)
    axis[Fig.inductance_frequency_lowest] = min(freqs)
    axis[Fig.inductance_frequency_highest] = max(freqs)
    series = [(row.frequency, row.series_resistance) for row in table if row.series_resistance is not None]
    if series:
        ratios = [r / r_terminal for _f, r in series]
        axis[Fig.table_resistance_ratio_min] = min(ratios)
        axis[Fig.table_resistance_ratio_max] = max(ratios)
        axis[Fig.table_resistance_falling] = any(b < a for a, b in zip(ratios, ratios[1:], strict=False))
    else:
        lack(
            (Fig.table_resistance_ratio_min, Fig.table_resistance_ratio_max, Fig.table_resistance_falling),
            "the inductance table gives no series_resistance",
        )

    # currents and torque
    kt = _torque_constant_model(spec)
    rated_torque = kt * rated
    for row in rows:
        row[Fig.torque_ratio] = row[Fig.point_torque] / rated_torque
    if spec.profile is not None:
        axis[Fig.profile_torque_ratio_min] = min(s.torque for s in spec.profile.segments) / rated_torque
        axis[Fig.profile_ambient] = spec.profile.ambient
    else:
        lack((Fig.profile_torque_ratio_min, Fig.profile_ambient), "the spec has no motion profile")
    if motor.peak_current is not None:
        axis[Fig.motor_peak_ratio] = motor.peak_current / rated
    else:
        missing[Fig.motor_peak_ratio] = "the spec does not give motor.peak_current"

    # thermal data against each other and against the rated current
    limit = ax.temperature_limit
    if thermal is None:
        lack(
            (
                Fig.rated_current_thermal_ratio,
                Fig.thermal_time_constant_ratio,
                Fig.thermal_resistance_ratio,
                Fig.winding_limit_over_class,
            ),
            "the spec has no motor.thermal data",
        )
    else:
        axis[Fig.thermal_resistance_ratio] = thermal.winding_to_housing / thermal.housing_to_ambient
        if thermal.winding_time_constant is not None and thermal.motor_time_constant is not None:
            axis[Fig.thermal_time_constant_ratio] = thermal.winding_time_constant / thermal.motor_time_constant
        else:
            missing[Fig.thermal_time_constant_ratio] = (
                "motor.thermal lacks winding_time_constant or motor_time_constant"
            )
        if limit is not None and limit > KELVIN_25C:
            i_max = P.thermal.current_continuous_max(
                limit, KELVIN_25C, ax.loss_resistance_20, thermal.winding_to_housing, thermal.housing_to_ambient
            )
            axis[Fig.rated_current_thermal_ratio] = rated / max(float(i_max), 1e-300)
        else:
            missing[Fig.rated_current_thermal_ratio] = ax.missing.get(
                Fig.winding_temperature_limit, "the temperature limit is not above 25 degC"
            )
        if thermal.max_winding_temperature is not None and thermal.insulation_class is not None:
            axis[Fig.winding_limit_over_class] = thermal.max_winding_temperature - float(
                P.thermal.insulation_class_temperature(thermal.insulation_class)
            )
        else:
            missing[Fig.winding_limit_over_class] = (
                "motor.thermal does not give both max_winding_temperature and insulation_class"
            )

    # mechanics: mechanical time constant, inertia ratio, speeds
    if motor.rotor_inertia is not None:
        # tau_m = R J / (k_t k_e) with k_e = k_t in SI for the current the figures use
        axis[Fig.mechanical_time_constant_computed] = float(
            P.control.mechanical_time_constant(ax.loss_resistance_20, motor.rotor_inertia, kt, kt)
        )
        if motor.mechanical_time_constant is not None:
            tau = axis[Fig.mechanical_time_constant_computed]
            axis[Fig.mechanical_time_constant_mismatch] = abs(motor.mechanical_time_constant - tau) / max(tau, 1e-300)
        else:
            missing[Fig.mechanical_time_constant_mismatch] = "the spec does not give motor.mechanical_time_constant"
        if spec.load is not None:
            axis[Fig.inertia_ratio] = spec.load.inertia / motor.rotor_inertia
        else:
            missing[Fig.inertia_ratio] = "the spec gives no load.inertia"
        # the loaded axis' mechanical corner: a current loop slower than it is slower than
        # the speed it drives (docs/physics.md §7.2)
        inertia = motor.rotor_inertia + (spec.load.inertia if spec.load is not None else 0.0)
        tau_loaded = float(P.control.mechanical_time_constant(ax.loss_resistance_20, inertia, kt, kt))
        axis[Fig.mechanical_corner_frequency] = 1.0 / (2.0 * math.pi * tau_loaded)
        if stage.current_loop is not None:
            axis[Fig.loop_bandwidth_over_mechanical] = (
                stage.current_loop.bandwidth / axis[Fig.mechanical_corner_frequency]
            )
        else:
            missing[Fig.loop_bandwidth_over_mechanical] = "the spec has no stage.current_loop"
    else:
        lack(
            (
                Fig.mechanical_time_constant_computed,
                Fig.mechanical_time_constant_mismatch,
                Fig.inertia_ratio,
                Fig.mechanical_corner_frequency,
                Fig.loop_bandwidth_over_mechanical,
            ),
            "the spec does not give motor.rotor_inertia",
        )
    v_high = _highest_supply(spec)
    if ax.topology in ("dc", "six-step"):
        no_load = v_high / _loop_emf_constant(spec)
    else:
        peak = P.operating.phase_voltage_peak_max(v_high, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg)
        no_load = real(peak) / _loop_emf_constant(spec)
    speeds = [p.speed for p in spec.operating_points]
    profile_speeds = [s.speed for s in spec.profile.segments] if spec.profile is not None else []
    if motor.max_speed is not None:
        for row in rows:
            row[Fig.speed_ratio] = row[Fig.point_speed] / motor.max_speed
        if is_vector(no_load):
            import numpy as np

            if any_of(no_load > 0):
                ratio = motor.max_speed / np.where(no_load > 0, no_load, 1.0)
                axis[Fig.max_speed_over_no_load] = masked(ratio, no_load > 0)
            else:
                missing[Fig.max_speed_over_no_load] = (
                    "the dead time leaves no voltage for the motor at the highest supply"
                )
        elif no_load > 0:
            axis[Fig.max_speed_over_no_load] = motor.max_speed / no_load
        else:
            missing[Fig.max_speed_over_no_load] = "the dead time leaves no voltage for the motor at the highest supply"
        if profile_speeds:
            axis[Fig.profile_speed_ratio] = max(profile_speeds) / motor.max_speed
        else:
            missing[Fig.profile_speed_ratio] = "the spec has no motion profile"
    else:
        lack(
            (Fig.speed_ratio, Fig.max_speed_over_no_load, Fig.profile_speed_ratio),
            "the spec does not give motor.max_speed",
        )
    if motor.type == "three-phase" and motor.pole_pairs is not None:
        top = motor.max_speed if motor.max_speed is not None else max(speeds + profile_speeds)
        f_el = motor.pole_pairs * top / (2.0 * math.pi)
        axis[Fig.pwm_periods_per_electrical_period] = ax.f_leg / f_el if f_el > 0 else math.inf
    else:
        missing[Fig.pwm_periods_per_electrical_period] = "brushed DC motor (no electrical period)"

    # profile: time to change speed at the peak torque against the segment duration
    inertia = (spec.load.inertia if spec.load else 0.0) + (motor.rotor_inertia or 0.0)
    peaks = [c for c in (motor.peak_current, stage.current_limit.peak if stage.current_limit else None) if c]
    if spec.profile is not None and inertia > 0:
        torque_max = kt * (min(peaks) if peaks else rated)
        segments = spec.profile.segments
        worst = 0.0
        for i, seg in enumerate(segments):
            before = segments[i - 1].speed  # the profile repeats: segment 0 follows the last one
            worst = max(worst, inertia * abs(seg.speed - before) / torque_max / seg.duration)
        axis[Fig.profile_acceleration_ratio] = worst
    else:
        missing[Fig.profile_acceleration_ratio] = "the spec has no motion profile or no inertia"

    # supply range against the stage's ratings and the operating points
    supply = stage.supply
    if supply.range is not None:
        low, high = supply.range
        axis[Fig.supply_range_high_ratio] = high / supply.voltage
        if Fig.supply_min in axis:
            axis[Fig.supply_range_low_margin] = low - axis[Fig.supply_min]
        else:
            missing[Fig.supply_range_low_margin] = "supply_min could not be computed"
    else:
        lack((Fig.supply_range_high_ratio, Fig.supply_range_low_margin), "the spec does not give stage.supply.range")
    if stage.overvoltage_trip is not None:
        axis[Fig.trip_margin] = stage.overvoltage_trip - v_high
    else:
        missing[Fig.trip_margin] = "the spec does not give stage.overvoltage_trip"
    if stage.max_supply_voltage is not None:
        axis[Fig.rating_margin] = stage.max_supply_voltage - v_high
        axis[Fig.stage_rating_over_supply] = stage.max_supply_voltage / supply.voltage
        if stage.overvoltage_trip is not None:
            axis[Fig.trip_over_rating] = stage.overvoltage_trip / stage.max_supply_voltage
        else:
            missing[Fig.trip_over_rating] = "the spec does not give stage.overvoltage_trip"
    else:
        lack(
            (Fig.rating_margin, Fig.stage_rating_over_supply, Fig.trip_over_rating),
            "the spec does not give stage.max_supply_voltage",
        )

    # PWM timing
    period = 1.0 / ax.f_leg
    if pwm.dead_time is not None:
        axis[Fig.pwm_dead_time] = pwm.dead_time
        axis[Fig.dead_time_fraction] = 2.0 * pwm.dead_time / period
    else:
        lack((Fig.pwm_dead_time, Fig.dead_time_fraction), "the spec does not give stage.pwm.dead_time")
    if pwm.min_pulse is not None:
        axis[Fig.min_pulse_fraction] = pwm.min_pulse / period
        if pwm.dead_time:
            axis[Fig.min_pulse_over_dead_time] = pwm.min_pulse / pwm.dead_time
        else:
            missing[Fig.min_pulse_over_dead_time] = "the spec gives no (or a zero) stage.pwm.dead_time"
    else:
        lack((Fig.min_pulse_fraction, Fig.min_pulse_over_dead_time), "the spec does not give stage.pwm.min_pulse")
    _pulse_windows(ax, pwm, rows, missing)
    if pwm.timer_clock is not None:
        axis[Fig.pwm_timer_clock] = pwm.timer_clock
        counts = pwm.timer_clock / ax.f_leg / (2.0 if pwm.alignment == "center" else 1.0)
        axis[Fig.pwm_count_step] = 1.0 / counts
    else:
        lack((Fig.pwm_timer_clock, Fig.pwm_count_step), "the spec does not give stage.pwm.timer_clock")

    # stage currents against the motor and the operating points
    limits = stage.current_limit
    if limits is not None:
        for row, e, point in zip(rows, elec, spec.operating_points, strict=True):
            # the continuous rating is an RMS phase current (docs/format.md); a six-step
            # phase carries the block current two thirds of the period while turning,
            # all of it when the axis holds at standstill (one commutation state)
            turning = ax.topology == "six-step" and point.speed > 0.0
            row[Fig.stage_current_rms] = (
                real(P.rms.six_step_phase_current_rms(e[Fig.rms_current])) if turning else e[Fig.rms_current]
            )
            row[Fig.stage_current_ratio] = row[Fig.stage_current_rms] / limits.continuous
        axis[Fig.stage_to_motor_current] = limits.continuous / rated
        if limits.peak is not None:
            axis[Fig.stage_peak_over_continuous] = limits.peak / limits.continuous
        else:
            missing[Fig.stage_peak_over_continuous] = "the spec does not give stage.current_limit.peak"
    else:
        for row in rows:
            row.pop(Fig.stage_current_ratio, None)
        lack(
            (
                Fig.stage_current_rms,
                Fig.stage_current_ratio,
                Fig.stage_to_motor_current,
                Fig.stage_peak_over_continuous,
            ),
            "the spec has no stage.current_limit",
        )
    if stage.current_loop is not None:
        axis[Fig.current_loop_bandwidth] = stage.current_loop.bandwidth
    else:
        missing[Fig.current_loop_bandwidth] = "the spec has no stage.current_loop"
    if stage.switch_resistance is not None:
        axis[Fig.stage_switch_resistance] = stage.switch_resistance
    else:
        missing[Fig.stage_switch_resistance] = "the spec does not give stage.switch_resistance"

    # chokes and cable
    chokes = spec.chokes
    if chokes is not None:
        axis[Fig.choke_to_motor_inductance] = chokes.inductance / l_cat
        if is_vector(chokes.resistance):
            import numpy as np

            r = chokes.resistance
            axis[Fig.choke_time_constant] = masked(chokes.inductance / np.where(r > 0, r, 1.0), r > 0)
        elif chokes.resistance:
            axis[Fig.choke_time_constant] = chokes.inductance / chokes.resistance
        else:
            missing[Fig.choke_time_constant] = "the spec gives no (or a zero) chokes.resistance"
        if chokes.saturation_current is not None and chokes.rated_current is not None:
            axis[Fig.choke_saturation_over_rated] = chokes.saturation_current / chokes.rated_current
        else:
            missing[Fig.choke_saturation_over_rated] = (
                "the spec lacks chokes.saturation_current or chokes.rated_current"
            )
    else:
        lack(
            (Fig.choke_to_motor_inductance, Fig.choke_time_constant, Fig.choke_saturation_over_rated),
            "the spec has no chokes",
        )
    cable = spec.cable
    if cable is not None and cable.length is not None and cable.resistance > 0:
        # resistance of one conductor against a 1 mm^2 copper conductor of the same length
        axis[Fig.cable_resistance_ratio] = cable.resistance / (COPPER_RESISTIVITY_20 * cable.length / 1e-6)
    else:
        missing[Fig.cable_resistance_ratio] = "the spec gives no cable length, or a zero cable resistance"
