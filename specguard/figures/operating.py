"""The electrical state at an operating point (current, terminal voltage, modulation,
duty, exact ripple and its extremes), the worst-case ripple over the supply range,
the pulse and sense windows, and the current loop as built."""

from __future__ import annotations

import math

from .. import physics as P
from ..model.spec import Spec
from ._vec import (
    clip,
    hypot,
    is_vector,
    largest,
    maximum,
    minimum,
    real,
)
from .axis import (
    SQRT2,
    SQRT3,
    FigureSettings,
    _Axis,
    _constants,
    _highest_supply,
    _loop_emf_constant,
    _lowest_supply,
    _torque_constant_model,
)
from .registry import Fig


def _electrical(spec: Spec, ax: _Axis, speed: float, torque: float) -> dict[str, float]:
    """Electrical quantities at one operating point (floats; the physics' math path)."""
    motor = spec.motor
    # the weakest case of the declared supply range for each figure: the headroom
    # (modulation, duty, reach) at its lowest voltage, the ripple at its highest
    # (docs/physics.md §4.6); one voltage when no range is declared
    V = _lowest_supply(spec)
    V_top = _highest_supply(spec)
    no_load = motor.no_load_current or 0.0
    kt, ke = _constants(spec)
    if ax.topology in ("dc", "six-step"):
        emf_constant = _loop_emf_constant(spec)
        current = P.operating.current_for_torque(torque, _torque_constant_model(spec), no_load)
        emf = P.operating.back_emf(emf_constant, speed)
        v_term = P.operating.terminal_voltage_dc(emf_constant, speed, current, ax.motor_resistance_hot)
        m = P.operating.modulation_required(v_term, V, current, ax.series_resistance, ax.dead_time, ax.f_leg, ax.scheme)
        m_max = P.operating.modulation_max(ax.max_duty, ax.scheme)
        m_clip = clip(m, 0.0, 1.0)
        # the ripple at the modulation the motor sees (the dead time's share is lost
        # before the load): the exact periodic current then averages to the operating
        # current, so its maximum and minimum are the exact extremes (docs/physics.md §1.4)
        m_top = clip((v_term + current * ax.series_resistance) / V_top, 0.0, 1.0)
        ripple = P.hbridge.ripple_exact(V_top, ax.inductance, ax.resistance_hot, ax.f_leg, m_top, ax.scheme, emf)
        ripple_cat = P.hbridge.ripple_peak_to_peak(
            V_top, ax.inductance_catalogue, ax.resistance_hot, ax.f_leg, m_top, ax.scheme
        )
        return {
            "current": current,
            Fig.terminal_voltage: v_term,
            Fig.modulation: m,
            Fig.duty: P.hbridge.leg_duty(m_clip, ax.scheme),
            Fig.modulation_ratio: m / m_max,
            Fig.ripple_modulation: m_top,
            Fig.ripple_pp: ripple.peak_to_peak,
            Fig.ripple_rms: ripple.ripple_rms,
            Fig.ripple_pp_catalogue: ripple_cat,
            Fig.rms_current: hypot(current, ripple.ripple_rms),
            "peak": real(ripple.maximum),
            Fig.current_min: real(ripple.minimum),
            Fig.ripple_pp_linear: real(ripple.linear_peak_to_peak),
        }
    # sinusoidal (dq, i_d = 0)
    p = motor.pole_pairs or 1
    flux = ke / p  # peak phase flux linkage [Wb] from the peak-phase EMF constant per mech. rad/s
    i_rms = P.operating.current_for_torque(torque, kt, no_load)
    i_q = i_rms * SQRT2
    # the fundamental sees the low-frequency (catalogue) inductance
    l_q_fundamental = motor.q_axis_inductance or ax.inductance_catalogue
    v_ph = P.operating.phase_voltage_peak_dq(speed, p, flux, ax.resistance_hot, l_q_fundamental, i_q)
    v_d, v_q = P.operating.phase_voltage_dq(speed, p, flux, ax.resistance_hot, l_q_fundamental, i_q)
    v_ph_max = P.operating.phase_voltage_peak_max(V, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg)
    # need against what the duty range gives, the dead-time loss counted on the need's
    # side as the H-bridge's m_op does: finite and above 1 even when the dead times
    # leave no voltage at all (the ratio v_ph / v_ph_max would turn negative there)
    v_ph_duty = P.operating.phase_voltage_peak_max(V, ax.scheme, ax.max_duty)
    dead_loss = v_ph_duty - v_ph_max
    M = P.operating.modulation_index(v_ph, V)
    M_clip = clip(M, 0.0, P.threephase.modulation_index_limit(ax.scheme))
    M_top = clip(P.operating.modulation_index(v_ph, V_top), 0.0, P.threephase.modulation_index_limit(ax.scheme))
    ripple_pp = P.threephase.phase_ripple_peak_to_peak_max(V_top, ax.inductance, ax.f_leg, M_top, ax.scheme)
    ripple_rms = P.threephase.phase_ripple_rms(V_top, ax.inductance, ax.f_leg, M_top, ax.scheme)
    ripple_cat = P.threephase.phase_ripple_peak_to_peak_max(V_top, ax.inductance_catalogue, ax.f_leg, M_top, ax.scheme)
    # peak leg duty: SPWM 1/2 (1 + M); SVPWM with min-max injection 1/2 (1 + M sqrt3/2)
    duty = 0.5 * (1.0 + M_clip * (SQRT3 / 2.0 if ax.scheme == P.threephase.SVPWM else 1.0))
    # holding torque at standstill: the current vector stands still, so one phase can
    # carry the amplitude continuously; the heating and the stage see that phase
    held = speed == 0.0 and i_rms > 0.0
    i_heat = i_q if held else i_rms
    return {
        "current": i_rms,
        Fig.standstill_hold: held,
        Fig.terminal_voltage: v_ph * SQRT3,  # peak line-to-line
        Fig.modulation: M,
        Fig.duty: duty,
        Fig.modulation_ratio: (v_ph + dead_loss) / v_ph_duty,
        Fig.ripple_modulation: M_top,
        Fig.electrical_speed: p * speed,
        Fig.voltage_d: real(v_d),
        Fig.voltage_q: real(v_q),
        Fig.ripple_pp: ripple_pp,
        Fig.ripple_rms: ripple_rms,
        Fig.ripple_pp_catalogue: ripple_cat,
        Fig.rms_current: hypot(i_heat, ripple_rms),
        "peak": i_q + ripple_pp / 2.0,
        "phase_voltage_peak": v_ph,
    }


def _worst_ripple(spec: Spec, ax: _Axis, inductance: float) -> float:
    V = _highest_supply(spec)  # a full battery: the worst case of the declared range
    if ax.topology in ("dc", "six-step"):
        return real(P.hbridge.ripple_peak_to_peak_worst(V, inductance, ax.resistance_hot, ax.f_leg, ax.scheme))
    v_ph_max = P.operating.phase_voltage_peak_max(V, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg)
    M_reach = minimum(P.operating.modulation_index(v_ph_max, V), P.threephase.modulation_index_limit(ax.scheme))
    # the maximum peak-to-peak grows with M over the linear range (docs/physics.md §2.3
    # table); a coarse grid guards the claim at little cost
    grid = [M_reach * k / 16 for k in range(17)]
    return largest(P.threephase.phase_ripple_peak_to_peak_max(V, inductance, ax.f_leg, M, ax.scheme) for M in grid)


def _current_loop(stage, ax: _Axis, settings: FigureSettings, axis, missing) -> None:
    """The current loop as built: bandwidth against sampling, the largest bandwidth for
    the policy's phase margin, the margin it has, and a detuned crossover."""
    loop = stage.current_loop
    loop_names = (
        Fig.loop_bandwidth_ratio,
        Fig.loop_bandwidth_max,
        Fig.loop_phase_margin,
        Fig.loop_crossover_shift,
        Fig.loop_tuned_inductance,
    )
    if loop is None:
        for name in loop_names:
            missing[name] = "the spec has no stage.current_loop"
    else:
        # the loop as built (docs/physics.md §7.3): its own sampling rate (else the PWM
        # updates), a hold of half a sample plus the computation delay, the feedback
        # filter, and gains tuned for another inductance moving the crossover
        double = loop.sampling == "double-update"
        sampling_frequency = loop.sampling_frequency or ax.f_leg * (2.0 if double else 1.0)
        delay = real(P.control.loop_total_delay(sampling_frequency, loop.computation_delay))
        ratio = (loop.tuned_for_inductance / ax.inductance) if loop.tuned_for_inductance is not None else 1.0
        axis[Fig.loop_bandwidth_ratio] = loop.bandwidth / sampling_frequency
        margin = math.radians(settings.phase_margin_deg)
        axis[Fig.loop_bandwidth_max] = real(
            P.control.loop_bandwidth_max_for_margin(delay, margin, loop.feedback_filter, ratio)
        )
        axis[Fig.loop_phase_margin] = real(
            P.control.loop_phase_margin(loop.bandwidth, delay, loop.feedback_filter, ratio)
        )
        if loop.tuned_for_inductance is not None:
            axis[Fig.loop_crossover_shift] = maximum(ratio, 1.0 / ratio)
            axis[Fig.loop_tuned_inductance] = loop.tuned_for_inductance
        else:
            for name in (Fig.loop_crossover_shift, Fig.loop_tuned_inductance):
                missing[name] = "stage.current_loop does not say which inductance the gains were tuned for"


def _pulse_windows(ax, pwm, rows, missing) -> None:
    """At each operating point's leg duty: the shorter of the on- and off-time against
    the stage's shortest pulse, and the low side's conduction time against the current
    sense window (docs/physics.md §7.8). A leg that does not switch (duty 0 or 1) is not
    judged."""
    period = 1.0 / ax.f_leg
    for name, window, why in (
        (Fig.pulse_window_ratio, pwm.min_pulse, "the spec does not give stage.pwm.min_pulse"),
        (Fig.sense_window_ratio, pwm.current_sense_window, "the spec does not give stage.pwm.current_sense_window"),
    ):
        if window is None:
            missing[name] = why
            continue
        for row in rows:
            if is_vector(row[Fig.duty], period):
                row[name] = _pulse_window_batch(name, row[Fig.duty], ax.f_leg, period, window)
                continue
            duty = float(row[Fig.duty])
            on = float(P.control.pulse_on_time(duty, ax.f_leg)) if duty > 0 else period
            off = float(P.control.pulse_off_time(duty, ax.f_leg)) if duty < 1 else period
            if name == Fig.pulse_window_ratio:
                switching = [t for t in (on, off) if 0.0 < t < period]
                row[name] = (min(switching) / window) if switching else math.inf
            else:
                row[name] = (off / window) if duty < 1 else 0.0


def _pulse_window_batch(name: str, duty, f_leg, period, window):
    """:func:`_pulse_windows` for a batch of variants (the same cases, as masks)."""
    import numpy as np

    duty, period = np.broadcast_arrays(np.asarray(duty, dtype=float), np.asarray(period, dtype=float))
    on = np.where(duty > 0, P.control.pulse_on_time(np.clip(duty, 0.0, 1.0), f_leg), period)
    off = np.where(duty < 1, P.control.pulse_off_time(np.clip(duty, 0.0, 1.0), f_leg), period)
    if name == Fig.pulse_window_ratio:
        on_ok = (on > 0.0) & (on < period)
        off_ok = (off > 0.0) & (off < period)
        shortest = np.minimum(np.where(on_ok, on, np.inf), np.where(off_ok, off, np.inf))
        return np.where(on_ok | off_ok, shortest / window, np.inf)
    return np.where(duty < 1, off / window, 0.0)
