"""Compute the named figures of a spec from the model (SI) by calling the physics.

This module is the one adapter between :mod:`specguard.model` and
:mod:`specguard.physics`: it picks the right inductance, resistance, frequency and
convention for the spec's topology, then calls physics functions vectorised over
the operating points. It contains no formula of its own beyond sums of series
elements and the conversions between conventions the spec declares.

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

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from .. import physics as P
from ..model import conventions as C
from ..model.spec import Spec
from ..model.units import format_si
from . import FigureSet, Remedy

SQRT2 = math.sqrt(2.0)
SQRT3 = math.sqrt(3.0)
KELVIN_20C = 293.15
_CHOKES_NOT_IN_EVERY_PHASE = "; chokes not fitted in every phase are not counted"


@dataclass(frozen=True)
class FigureSettings:
    """Modelling choices that are common practice rather than physics (configurable)."""

    # The estimate of the inductance at the ripple frequency from a catalogue value,
    # per winding construction: (exponent, floor) of the curve of
    # physics.inductance.inductance_estimated (common practice, no published source,
    # docs/physics.md §5.3); the result is labelled an estimate.
    inductance_curves: tuple[tuple[str, tuple[float, float]], ...] = tuple(P.inductance.ESTIMATE_CURVES.items())
    # Ripple limit used for the supply window (docs/physics.md §7.4; 10-20 %: common practice).
    ripple_limit_ratio: float = 0.2
    # Lowest acceptable modulation, for the supply window (docs/physics.md §4.6; common practice).
    modulation_floor: float = 0.2
    # Practice reserve on the minimum supply (docs/physics.md §4.5; 10-20 %: common practice).
    reserve_fraction: float = 0.1
    # Phase margin for the delay-limited loop bandwidth (docs/physics.md §7.3).
    phase_margin_deg: float = 45.0
    # A finding whose verdict rests on the inductance estimate drops one band (policy).
    estimate_softens_verdicts: bool = True
    # The highest PWM (leg) frequency a fix may propose [Hz] (policy; common practice).
    pwm_frequency_max: float = 250e3


_DC_SCHEMES = {
    "bipolar": P.hbridge.BIPOLAR,
    "unipolar-single": P.hbridge.UNIPOLAR_SINGLE,
    "unipolar-phase-shifted": P.hbridge.UNIPOLAR_PHASE_SHIFTED,
    # six-step chopping behaves like the H-bridge scheme with the same load levels
    "six-step-chop-one": P.hbridge.UNIPOLAR_SINGLE,
    "six-step-chop-both": P.hbridge.BIPOLAR,
}
_STRATEGIES = {"sinusoidal": P.threephase.SPWM, "space-vector": P.threephase.SVPWM}


@dataclass
class _Axis:
    """Axis-level quantities chosen once per spec."""

    topology: str
    scheme: str  # physics scheme name (H-bridge) or strategy (three-phase)
    f_leg: float
    f_ripple: float
    ambiguous: bool
    inductance: float  # loop (dc, six-step) or phase (sinusoidal), at f_r, possibly derated
    inductance_catalogue: float
    motor_inductance: float  # the motor's share of ``inductance`` (loop, or phase for sinusoidal)
    terminal_inductance: float  # the motor's terminal inductance at the ripple frequency
    resistance_hot: float  # loop (dc, six-step) or phase (sinusoidal) incl. series elements
    motor_resistance_hot: float  # motor part only (terminal or phase)
    series_resistance: float  # everything but the motor in the current path
    loss_resistance_20: float  # copper loss = I^2 * this at 20 degC (I: dc/block/phase rms)
    temperature_limit: float | None
    dead_time: float
    max_duty: float
    notes: dict[str, str] = field(default_factory=dict)
    missing: dict[str, str] = field(default_factory=dict)
    flags: dict[str, bool] = field(default_factory=dict)


def _hot(resistance: float, at: float, limit: float | None) -> float:
    """Winding resistance at the temperature limit (conservative for voltage)."""
    if limit is None:
        return resistance
    return float(P.thermal.resistance_at_temperature(resistance, at, limit))


def _temperature_limit(spec: Spec) -> tuple[float | None, str | None]:
    thermal = spec.motor.thermal
    if thermal is None:
        return None, "the spec has no motor.thermal data"
    if thermal.max_winding_temperature is not None:
        return thermal.max_winding_temperature, None
    if thermal.insulation_class is not None:
        return P.thermal.winding_temperature_limit(thermal.insulation_class), None
    return None, "motor.thermal gives neither max_winding_temperature nor insulation_class"


def _motor_inductance(spec: Spec, f_ripple: float, settings: FigureSettings, ax_notes, flags):
    """Terminal inductance at the ripple frequency and its catalogue value."""
    motor = spec.motor
    table = motor.inductance_vs_frequency
    flags["inductance_extrapolated"] = False
    flags["inductance_table_rising"] = False
    if table:
        freqs = [row.frequency for row in table]
        values = [row.inductance for row in table]
        result = P.inductance.inductance_from_table(f_ripple, freqs, values)
        flags["inductance_estimated"] = False
        flags["inductance_extrapolated"] = bool(result.extrapolated)
        flags["inductance_table_rising"] = bool(P.inductance.table_non_monotonic(freqs, values))
        ax_notes["loop_inductance"] = "motor inductance interpolated (log-log) in the measured table" + (
            "; beyond its last point its last falling segment continues (at least half the last value)"
            if result.extrapolated and f_ripple > max(freqs)
            else ""
        )
        catalogue = motor.terminal_inductance.value if motor.terminal_inductance else values[0]
        return float(result.value), float(catalogue)  # type: ignore[arg-type]  # a float for float input
    assert motor.terminal_inductance is not None  # the model guarantees one of the two
    catalogue = motor.terminal_inductance.value
    measured_at = motor.terminal_inductance.measured_at
    if measured_at >= P.inductance.MEASURED_AT_BAND * f_ripple:
        flags["inductance_estimated"] = False
        ax_notes["loop_inductance"] = "catalogue inductance measured at (or near) the ripple frequency"
        return catalogue, catalogue
    exponent, floor = dict(settings.inductance_curves)[motor.winding]
    estimate = float(P.inductance.inductance_estimated(catalogue, measured_at, f_ripple, exponent, floor))
    flags["inductance_estimated"] = True
    ax_notes["loop_inductance"] = (
        f"estimate for a {motor.winding} winding: catalogue value x {estimate / catalogue:.3g} at the ripple "
        f"frequency (curve (f/f_cat)^-{exponent:g}, at least {floor:g}; no measured inductance table; common "
        "practice, no published source)"
    )
    return estimate, catalogue


def _axis(spec: Spec, settings: FigureSettings) -> _Axis:
    motor, stage, pwm = spec.motor, spec.stage, spec.stage.pwm
    notes: dict[str, str] = {}
    missing: dict[str, str] = {}
    flags: dict[str, bool] = {}
    if motor.type == "brushed-dc":
        topology = "dc"
    elif pwm.scheme.startswith("six-step"):
        topology = "six-step"
    else:
        topology = "sinusoidal"
    scheme = _DC_SCHEMES.get(pwm.scheme) or _STRATEGIES[pwm.scheme]

    # Which frequency the spec declares. A phase-shifted scheme without the
    # declaration is ambiguous; the conservative reading (the lower ripple
    # frequency) treats the value as the ripple frequency.
    ambiguous = False
    if pwm.scheme == "unipolar-phase-shifted":
        if pwm.frequency_is == "leg":
            f_leg = pwm.frequency
        elif pwm.frequency_is == "ripple":
            f_leg = pwm.frequency / 2.0
        else:
            ambiguous = True
            f_leg = pwm.frequency / 2.0
            notes["ripple_frequency"] = (
                "stage.pwm.frequency_is not given: the value is taken as the ripple "
                "frequency (the lower, conservative reading)"
            )
        f_ripple = float(P.hbridge.ripple_frequency(f_leg, scheme))
    else:
        f_leg = pwm.frequency
        f_ripple = pwm.frequency  # two-level schemes and three-phase: ripple at the carrier
    flags["pwm_frequency_ambiguous"] = ambiguous

    limit, why = _temperature_limit(spec)
    if why:
        missing["winding_temperature_limit"] = why
    tr = motor.terminal_resistance
    r_motor_hot = _hot(tr.value, tr.at, limit)
    if limit is None:
        notes["loop_resistance_hot"] = "winding resistance at its reference temperature (no temperature limit known)"
    r20_terminal = float(P.thermal.resistance_at_temperature(tr.value, tr.at, KELVIN_20C))

    l_motor, l_catalogue = _motor_inductance(spec, f_ripple, settings, notes, flags)
    chokes = spec.chokes
    l_choke = chokes.inductance if chokes else 0.0
    r_choke = (chokes.resistance or 0.0) if chokes else 0.0
    n_choke = chokes.count if chokes else 0
    r_cable = spec.cable.resistance if spec.cable else 0.0
    r_switch = stage.switch_resistance or 0.0
    l_out = stage.output_inductance or 0.0

    if topology in ("dc", "six-step"):
        if topology == "six-step" and chokes and n_choke < 3:
            notes["loop_inductance"] = notes.get("loop_inductance", "") + _CHOKES_NOT_IN_EVERY_PHASE
            n_choke = 0
        n_in_loop = n_choke if topology == "dc" else (2 if n_choke == 3 else 0)
        added = n_in_loop * l_choke + 2.0 * l_out
        inductance = l_motor + added
        motor_share = l_motor
        inductance_cat = l_catalogue + added
        series = 2.0 * r_switch + n_in_loop * r_choke + 2.0 * r_cable
        motor_r = r_motor_hot
        loss_r20 = r20_terminal  # dc: I^2 R; six-step: two phases in series, R_tt I^2
    else:
        if motor.d_axis_inductance is not None and motor.q_axis_inductance is not None:
            low = float(P.threephase.phase_inductance_conservative(motor.d_axis_inductance, motor.q_axis_inductance))
            scale = l_motor / l_catalogue if l_catalogue else 1.0
            l_phase, l_phase_cat = low * scale, low
            notes["loop_inductance"] = notes.get("loop_inductance", "") + "; salient motor: min(Ld, Lq) per phase"
        else:
            l_phase = float(P.threephase.star_equivalent_inductance(l_motor))
            l_phase_cat = float(P.threephase.star_equivalent_inductance(l_catalogue))
        per_phase_choke = l_choke if n_choke == 3 else 0.0
        if chokes and n_choke < 3:
            notes["loop_inductance"] = notes.get("loop_inductance", "") + _CHOKES_NOT_IN_EVERY_PHASE
        inductance = l_phase + per_phase_choke + l_out
        motor_share = l_phase
        inductance_cat = l_phase_cat + per_phase_choke + l_out
        series = r_switch + (r_choke if n_choke == 3 else 0.0) + r_cable
        motor_r = float(P.threephase.star_equivalent_resistance(r_motor_hot))
        # P_cu = 1.5 R_tt I_ph,rms^2 (docs/physics.md §3.1)
        loss_r20 = 1.5 * r20_terminal
    return _Axis(
        topology=topology,
        scheme=scheme,
        f_leg=f_leg,
        f_ripple=f_ripple,
        ambiguous=ambiguous,
        inductance=inductance,
        inductance_catalogue=inductance_cat,
        motor_inductance=motor_share,
        terminal_inductance=l_motor,
        resistance_hot=motor_r + series,
        motor_resistance_hot=motor_r,
        series_resistance=series,
        loss_resistance_20=loss_r20,
        temperature_limit=limit,
        dead_time=pwm.dead_time or 0.0,
        max_duty=pwm.max_duty,
        notes=notes,
        missing=missing,
        flags=flags,
    )


def _constants(spec: Spec) -> tuple[float, float]:
    """(torque constant per the current the model uses, back-EMF constant of the loop)
    in SI, under the declared conventions (specguard.model.conventions)."""
    return C.torque_constant_model(spec), C.loop_emf_constant(spec)


def _clip(value: float, low: float, high: float) -> float:
    return low if value < low else high if value > high else value


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
        m_clip = _clip(m, 0.0, 1.0)
        # the ripple at the modulation the motor sees (the dead time's share is lost
        # before the load): the exact periodic current then averages to the operating
        # current, so its maximum and minimum are the exact extremes (docs/physics.md §1.4)
        m_top = _clip((v_term + current * ax.series_resistance) / V_top, 0.0, 1.0)
        ripple = P.hbridge.ripple_exact(V_top, ax.inductance, ax.resistance_hot, ax.f_leg, m_top, ax.scheme, emf)
        ripple_cat = P.hbridge.ripple_peak_to_peak(
            V_top, ax.inductance_catalogue, ax.resistance_hot, ax.f_leg, m_top, ax.scheme
        )
        return {
            "current": current,
            "terminal_voltage": v_term,
            "modulation": m,
            "duty": P.hbridge.leg_duty(m_clip, ax.scheme),
            "modulation_ratio": m / m_max,
            "ripple_modulation": m_top,
            "ripple_pp": ripple.peak_to_peak,
            "ripple_rms": ripple.ripple_rms,
            "ripple_pp_catalogue": ripple_cat,
            "rms_current": math.hypot(current, ripple.ripple_rms),
            "peak": float(ripple.maximum),
            "current_min": float(ripple.minimum),
            "ripple_pp_linear": float(ripple.linear_peak_to_peak),
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
    M_clip = _clip(M, 0.0, P.threephase.modulation_index_limit(ax.scheme))
    M_top = _clip(P.operating.modulation_index(v_ph, V_top), 0.0, P.threephase.modulation_index_limit(ax.scheme))
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
        "standstill_hold": held,
        "terminal_voltage": v_ph * SQRT3,  # peak line-to-line
        "modulation": M,
        "duty": duty,
        "modulation_ratio": (v_ph + dead_loss) / v_ph_duty,
        "ripple_modulation": M_top,
        "electrical_speed": p * speed,
        "voltage_d": float(v_d),
        "voltage_q": float(v_q),
        "ripple_pp": ripple_pp,
        "ripple_rms": ripple_rms,
        "ripple_pp_catalogue": ripple_cat,
        "rms_current": math.hypot(i_heat, ripple_rms),
        "peak": i_q + ripple_pp / 2.0,
        "phase_voltage_peak": v_ph,
    }


def _worst_ripple(spec: Spec, ax: _Axis, inductance: float) -> float:
    V = _highest_supply(spec)  # a full battery: the worst case of the declared range
    if ax.topology in ("dc", "six-step"):
        return float(P.hbridge.ripple_peak_to_peak_worst(V, inductance, ax.resistance_hot, ax.f_leg, ax.scheme))
    v_ph_max = P.operating.phase_voltage_peak_max(V, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg)
    M_reach = min(P.operating.modulation_index(v_ph_max, V), P.threephase.modulation_index_limit(ax.scheme))
    # the maximum peak-to-peak grows with M over the linear range (docs/physics.md §2.3
    # table); a coarse grid guards the claim at little cost
    grid = [M_reach * k / 16 for k in range(17)]
    return max(P.threephase.phase_ripple_peak_to_peak_max(V, inductance, ax.f_leg, M, ax.scheme) for M in grid)


POINT_INPUTS = ("point_speed", "point_torque", "point_ambient")


def compute(spec: Spec, settings: FigureSettings | None = None) -> FigureSet:
    settings = settings or FigureSettings()
    ax = _axis(spec, settings)
    motor, stage = spec.motor, spec.stage
    rated = motor.rated_current
    V = stage.supply.voltage
    axis: dict[str, float | bool] = {
        "motor_rated_current": rated,
        "supply_voltage": V,
        "supply_voltage_high": _highest_supply(spec),
        "supply_voltage_low": _lowest_supply(spec),
        "ripple_frequency": ax.f_ripple,
        "pwm_frequency_leg": ax.f_leg,
        "loop_inductance": ax.inductance,
        "loop_inductance_catalogue": ax.inductance_catalogue,
        "motor_inductance_ripple": ax.terminal_inductance,
        "motor_inductance_catalogue": (
            motor.terminal_inductance.value
            if motor.terminal_inductance is not None
            else motor.inductance_vs_frequency[0].inductance  # type: ignore[index]  # the model gives one of the two
        ),
        "loop_resistance_hot": ax.resistance_hot,
        "electrical_time_constant": ax.inductance / ax.resistance_hot,
        "ripple_period_over_tau": float(
            P.hbridge.ripple_period_to_time_constant(ax.resistance_hot, ax.inductance, ax.f_ripple)
        ),
    }
    axis.update(ax.flags)
    missing = dict(ax.missing)
    table = spec.motor.inductance_vs_frequency
    if table:
        axis["inductance_table_rise"] = float(
            P.inductance.table_largest_rise([r.frequency for r in table], [r.inductance for r in table])
        )
    else:
        missing["inductance_table_rise"] = "the spec has no motor.inductance_vs_frequency table"
    notes = dict(ax.notes)

    rows: list[dict[str, float]] = []
    elec: list[dict[str, float]] = []
    for point in spec.operating_points:
        e = _electrical(spec, ax, point.speed, point.torque)
        elec.append(e)
        rows.append(
            {
                "point_speed": point.speed,
                "point_torque": point.torque,
                "point_ambient": point.ambient,
                "operating_current": e["current"],
                "terminal_voltage": e["terminal_voltage"],
                "modulation": e["modulation"],
                "duty": e["duty"],
                "modulation_ratio": e["modulation_ratio"],
                "ripple_modulation": e["ripple_modulation"],
                "current_max": e["peak"],
                "ripple_pp": e["ripple_pp"],
                "ripple_pp_catalogue": e["ripple_pp_catalogue"],
                "ripple_ratio": e["ripple_pp"] / rated,
                "ripple_rms": e["ripple_rms"],
                "rms_current": e["rms_current"],
            }
        )
        if ax.topology == "sinusoidal":
            rows[-1]["standstill_hold"] = bool(e.get("standstill_hold"))
            for name in ("electrical_speed", "voltage_d", "voltage_q"):
                rows[-1][name] = e[name]
        if e.get("standstill_hold"):
            notes["rms_current"] = (
                "at standstill with torque one phase carries the current's amplitude continuously: the RMS "
                "current of the thermal and stage checks is that amplitude (with the ripple)"
            )
        if "current_min" in e:  # H-bridge and six-step: the exact waveform's extremes
            rows[-1]["current_min"] = e["current_min"]
            rows[-1]["ripple_pp_linear"] = e["ripple_pp_linear"]
    if ax.topology != "sinusoidal":
        missing["standstill_hold"] = "only a three-phase axis with sinusoidal commutation holds a standing vector"
        for name in ("electrical_speed", "voltage_d", "voltage_q"):
            missing[name] = "a d/q view belongs to sinusoidal commutation"
    if ax.topology == "sinusoidal":
        for name in ("current_min", "ripple_pp_linear"):
            missing[name] = "sinusoidal PWM: the ripple changes over the electrical period (see ripple_pp)"
    worst = _worst_ripple(spec, ax, ax.inductance)
    axis["ripple_pp_worst"] = worst
    axis["ripple_ratio_worst"] = worst / rated
    # the worst case with the catalogue inductance in the loop instead (what an estimate,
    # or a measured table, does to it)
    axis["ripple_ratio_worst_catalogue"] = _worst_ripple(spec, ax, ax.inductance_catalogue) / rated
    axis["modulation_max"] = max(e["modulation"] for e in elec)

    # discontinuous conduction: only with diode freewheeling (docs/physics.md §1.6)
    freewheel = stage.pwm.freewheeling
    if ax.topology == "sinusoidal":
        missing["conduction_margin"] = "not modelled for sinusoidal commutation"
    elif freewheel is None:
        missing["conduction_margin"] = "the spec does not say how the off-time current flows (stage.pwm.freewheeling)"
    elif freewheel == "synchronous":
        missing["conduction_margin"] = "synchronous freewheeling: the current reverses, conduction stays continuous"
    else:
        for row, e in zip(rows, elec, strict=True):
            row["conduction_margin"] = abs(e["current"]) / max(e["ripple_pp"] / 2.0, 1e-300)

    _supply_window(spec, ax, elec, settings, axis, missing)

    loop = stage.current_loop
    loop_names = (
        "loop_bandwidth_ratio",
        "loop_bandwidth_max",
        "loop_phase_margin",
        "loop_crossover_shift",
        "loop_tuned_inductance",
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
        delay = float(P.control.loop_total_delay(sampling_frequency, loop.computation_delay))
        ratio = (loop.tuned_for_inductance / ax.inductance) if loop.tuned_for_inductance is not None else 1.0
        axis["loop_bandwidth_ratio"] = loop.bandwidth / sampling_frequency
        margin = math.radians(settings.phase_margin_deg)
        axis["loop_bandwidth_max"] = float(
            P.control.loop_bandwidth_max_for_margin(delay, margin, loop.feedback_filter, ratio)
        )
        axis["loop_phase_margin"] = float(
            P.control.loop_phase_margin(loop.bandwidth, delay, loop.feedback_filter, ratio)
        )
        if loop.tuned_for_inductance is not None:
            axis["loop_crossover_shift"] = max(ratio, 1.0 / ratio)
            axis["loop_tuned_inductance"] = loop.tuned_for_inductance
        else:
            for name in ("loop_crossover_shift", "loop_tuned_inductance"):
                missing[name] = "stage.current_loop does not say which inductance the gains were tuned for"

    axis["constant_mismatch"] = _constant_mismatch(spec)
    pwm = _pwm_loss(spec, ax, elec, rows, axis, missing, notes)
    _thermal(spec, ax, elec, rows, axis, missing, notes, pwm)
    _pwm_loss_effect(spec, ax, rows, pwm, missing)

    peak = max(e["peak"] for e in elec)
    axis["peak_current_reached"] = peak
    # peak ratings are instantaneous values; a continuous rating standing in for a
    # missing one is an RMS phase current on a sinusoidal axis, so its amplitude counts
    amplitude = SQRT2 if ax.topology == "sinusoidal" else 1.0
    limits = stage.current_limit
    if limits is not None:
        axis["peak_current_ratio_stage"] = peak / (limits.peak or limits.continuous * amplitude)
    else:
        missing["peak_current_ratio_stage"] = "the spec has no stage.current_limit"
    axis["peak_current_ratio_motor"] = peak / (motor.peak_current or motor.rated_current * amplitude)
    _chokes(spec, ax, elec, axis, missing, notes)
    _braking(spec, axis, missing)
    _plausibility(spec, ax, elec, rows, axis, missing)

    point_rows = tuple(
        (point.name, {key: _scalar(value) for key, value in row.items()})
        for point, row in zip(spec.operating_points, rows, strict=True)
    )
    return FigureSet(axis={k: _scalar(v) for k, v in axis.items()}, points=point_rows, missing=missing, notes=notes)


def _scalar(value) -> float | bool:
    if isinstance(value, bool) or type(value).__name__ == "bool_":
        return bool(value)
    return float(value)


def _no_window(missing):
    why = "the dead times leave no usable duty at this PWM frequency: no supply voltage reaches the load"
    for name in _WINDOW_NAMES:
        missing[name] = why


_WINDOW_NAMES = ("supply_min", "supply_max", "supply_window_width", "supply_min_static", "supply_window_width_static")


def _supply_window(spec, ax, elec, settings, axis, missing):
    """The supply window twice: with the control headroom for a step of the rated current
    at the loop bandwidth (a dynamic reserve, docs/physics.md §4.5), and without it (what
    the operating points need to be reached at all). Only the second can make the axis
    impossible; the first shortens transients."""
    stage = spec.stage
    rated = spec.motor.rated_current
    loop = stage.current_loop
    # control headroom for a step of the rated current at the loop bandwidth
    # (docs/physics.md §4.5: V_headroom >= omega_c L dI_step)
    headroom = 0.0
    if loop is not None:
        headroom = float(P.control.current_step_headroom_voltage(loop.bandwidth, ax.inductance_catalogue, rated))
        axis["control_headroom_voltage"] = headroom
    else:
        missing["control_headroom_voltage"] = "the spec has no stage.current_loop"
    ceiling = stage.max_supply_voltage if stage.max_supply_voltage is not None else math.inf
    worst = max(elec, key=lambda e: e["terminal_voltage"])
    limit = settings.ripple_limit_ratio * rated
    if ax.topology in ("dc", "six-step"):
        legs = P.hbridge.switching_leg_count(ax.scheme)
        usable = float(P.operating.modulation_max(ax.max_duty, ax.scheme)) - legs * ax.dead_time * ax.f_leg
        if usable <= 0.0:  # the dead times eat the whole duty range (dead-time-large says so)
            _no_window(missing)
            return

        def window(headroom_voltage: float) -> tuple[float, float]:
            found = P.operating.supply_voltage_window(
                worst["terminal_voltage"],
                worst["terminal_voltage"],
                worst["current"],
                worst["current"],
                ax.max_duty,
                ax.scheme,
                ax.inductance,
                ax.resistance_hot,
                ax.f_leg,
                limit,
                series_resistance=ax.series_resistance,
                headroom_voltage=headroom_voltage,
                reserve_fraction=settings.reserve_fraction,
                modulation_floor=settings.modulation_floor,
                dead_time=ax.dead_time,
                controller_voltage_max=ceiling,
            )
            return float(found.minimum), float(found.maximum)

        v_min, v_max = window(headroom)
        v_min_static = window(0.0)[0] if headroom > 0.0 else v_min
        # the ripple bound holds at every point, not only the most demanding one: the
        # bipolar bound is tightest at low terminal voltage (2 L f dI_max at
        # standstill, docs/physics.md §4.6), the unipolar one is not monotonic in V_req
        for e in elec:
            if e is worst:
                continue
            v_max = min(
                v_max,
                float(
                    P.operating.supply_voltage_max_ripple(
                        e["terminal_voltage"],
                        ax.inductance,
                        ax.resistance_hot,
                        ax.f_leg,
                        limit,
                        ax.scheme,
                        e["current"],
                        ax.series_resistance,
                        ax.dead_time,
                    )
                ),
            )
    else:
        v_ph = worst["phase_voltage_peak"]
        v_min = float(P.operating.supply_voltage_min_sinusoidal(v_ph, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg))
        if not math.isfinite(v_min):  # the dead times eat the whole duty range
            _no_window(missing)
            return
        v_min *= 1.0 + settings.reserve_fraction
        v_min_static = v_min  # the sinusoidal minimum carries no step headroom
        # duty floor: M = 2 V_ph / V >= floor at the most demanding point
        v_max = min(ceiling, 2.0 * v_ph / settings.modulation_floor) if v_ph > 0 else ceiling
        # ripple: the maximum peak-to-peak phase ripple rises with the supply at a
        # fixed operating point (docs/physics.md §2.3); every point must stay within it
        for e in elec:
            v_max = min(
                v_max,
                P.threephase.supply_voltage_max_for_phase_ripple(
                    e["phase_voltage_peak"], ax.inductance, ax.f_leg, ax.scheme, limit
                ),
            )
    axis["supply_min"] = v_min
    axis["supply_min_static"] = v_min_static
    if math.isfinite(v_max):
        axis["supply_max"] = v_max
        axis["supply_window_width"] = v_max - v_min
        axis["supply_window_width_static"] = v_max - v_min_static
    else:
        missing["supply_max"] = "no upper bound applies (no duty floor, ripple or controller limit reached)"
        missing["supply_window_width"] = missing["supply_max"]
        missing["supply_window_width_static"] = missing["supply_max"]


def _pulse_windows(ax, pwm, rows, missing) -> None:
    """At each operating point's leg duty: the shorter of the on- and off-time against
    the stage's shortest pulse, and the low side's conduction time against the current
    sense window (docs/physics.md §7.8). A leg that does not switch (duty 0 or 1) is not
    judged."""
    period = 1.0 / ax.f_leg
    for name, window, why in (
        ("pulse_window_ratio", pwm.min_pulse, "the spec does not give stage.pwm.min_pulse"),
        ("sense_window_ratio", pwm.current_sense_window, "the spec does not give stage.pwm.current_sense_window"),
    ):
        if window is None:
            missing[name] = why
            continue
        for row in rows:
            duty = float(row["duty"])
            on = float(P.control.pulse_on_time(duty, ax.f_leg)) if duty > 0 else period
            off = float(P.control.pulse_off_time(duty, ax.f_leg)) if duty < 1 else period
            if name == "pulse_window_ratio":
                switching = [t for t in (on, off) if 0.0 < t < period]
                row[name] = (min(switching) / window) if switching else math.inf
            else:
                row[name] = (off / window) if duty < 1 else 0.0


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


# Default conduction regime of the PWM eddy loss by winding construction when the
# calibration does not say: laminations at PWM frequencies are thicker than the skin
# depth (iron-core, slotless back iron); a coreless winding's loss sits in thin strands
# and far magnets (common practice, no published source; docs/pwm-losses.md).
_PWM_REGIME = {"iron-core": "skin-limited", "slotless": "skin-limited", "coreless": "resistance-limited"}


@dataclass(frozen=True)
class _PwmLoss:
    """The PWM eddy loss per operating point: watts in the thermal budget (calibrated
    only), the (low, high) estimate range otherwise, and the node it heats."""

    in_budget: tuple[float, ...]  # W per point, 0 when only estimated
    high: tuple[float, ...]
    low: tuple[float, ...]
    estimated: bool
    node_resistance: float  # K/W from the heated node to ambient
    law: Callable[[Mapping[str, float]], float] | None = None  # W in the budget for one electrical state
    winding_node: bool = False  # the loss heats the winding (coreless), else the housing


class _LossLaw:
    """The calibrated PWM loss of one electrical state (a point or a profile segment)."""

    def __init__(self, cal, regime: str, ax: _Axis) -> None:
        self.cal, self.regime, self.ax = cal, regime, ax

    def __call__(self, e: Mapping[str, float]) -> float:
        pp, duty = _ripple_load(self.ax, e)
        if self.regime == P.eddy.TRANSITION:
            # neither law holds between the edges: the larger of the two (docs/pwm-losses.md)
            return max(float(P.eddy.ripple_loss(c, pp, self.ax.f_ripple, duty)) for c in self.cal)
        return float(P.eddy.ripple_loss(self.cal, pp, self.ax.f_ripple, duty))


def _ripple_load(ax: _Axis, e: Mapping[str, float]) -> tuple[float, float]:
    """(peak-to-peak ripple, duty of the ripple wave) of one electrical state."""
    if ax.topology == "sinusoidal":
        duty = 0.5  # a sinusoidal axis' ripple duty sweeps the period; its mean is taken
    else:
        duty = float(P.hbridge.load_wave_duty(_clip(e["ripple_modulation"], 0.0, 1.0), ax.scheme))
    return float(e["ripple_pp"]), _clip(duty, 1e-6, 1.0 - 1e-6)


def _pwm_regime(motor, ax: _Axis, axis, notes) -> str:
    """The conduction regime of the PWM eddy loss: the calibration's, else the declared
    eddy path's half-thickness against its skin depth at the ripple frequency, else the
    default of the winding construction."""
    calibration = motor.pwm_loss
    if calibration is not None and calibration.regime is not None:
        return calibration.regime
    part = motor.eddy_path
    if part is None:
        return _PWM_REGIME[motor.winding]
    rho_default, mu_default = P.eddy.EDDY_MATERIALS[part.material]
    rho = part.resistivity if part.resistivity is not None else rho_default
    mu = part.relative_permeability if part.relative_permeability is not None else mu_default
    depth = float(P.eddy.skin_depth(ax.f_ripple, rho, mu))
    axis["eddy_path_thickness_ratio"] = 0.5 * part.thickness / depth
    regime = str(P.eddy.plate_regime(ax.f_ripple, part.thickness, rho, mu))
    notes["eddy_path_thickness_ratio"] = (
        f"{part.material}, {regime} at the ripple frequency (skin depth {depth * 1e3:.3g} mm)"
    )
    return regime


def _pwm_loss(spec, ax, elec, rows, axis, missing, notes) -> _PwmLoss | None:
    """PWM eddy loss per point from the ripple (docs/physics.md §5.6, docs/pwm-losses.md)."""
    motor = spec.motor
    thermal = motor.thermal
    names = (
        "pwm_eddy_loss",
        "pwm_loss_low",
        "pwm_loss_to_copper",
        "pwm_loss_temperature_rise",
        "pwm_loss_margin_share",
    )
    if motor.eddy_path is None:
        missing["eddy_path_thickness_ratio"] = "the spec has no motor.eddy_path"
    if thermal is None:
        for name in names:
            missing[name] = "the spec has no motor.thermal data"
        return None
    # the loss heats the stator iron and the housing (iron-core, slotless) or the winding
    # itself (coreless): the node's thermal resistance to ambient
    winding_node = motor.winding == "coreless"
    node = thermal.housing_to_ambient + (thermal.winding_to_housing if winding_node else 0.0)
    calibration = motor.pwm_loss
    regime = _pwm_regime(motor, ax, axis, notes)
    three = ax.topology == "sinusoidal"
    phases = 3 if three else 1
    # the DC resistance of the path one ripple flows in: the loop (dc, six-step), one phase
    r_dc = ax.loss_resistance_20 / (1.5 if three else 1.0)
    r_dc = r_dc / 2.0 if three else r_dc
    loads = [_ripple_load(ax, e) for e in elec]
    laws = (P.eddy.RESISTANCE_LIMITED, P.eddy.SKIN_LIMITED) if regime == P.eddy.TRANSITION else (regime,)
    if calibration is not None:
        reference = calibration.extra_loss
        if reference is None:
            reference = calibration.extra_temperature_rise / node
        cals = tuple(
            P.eddy.calibrate_ripple_loss(
                reference, calibration.at_ripple, calibration.at_frequency, calibration.at_duty, law
            )
            for law in laws
        )
        law_fn = _LossLaw(cals if len(cals) > 1 else cals[0], regime, ax)
        values = tuple(law_fn(e) for e in elec)
        notes["pwm_eddy_loss"] = f"calibrated from motor.pwm_loss ({regime}); in the thermal budget"
        return _PwmLoss(values, values, values, False, node, law_fn, winding_node)
    lows, highs = [], []
    for law in laws:
        k_low, k_high = P.eddy.ripple_loss_coefficient_default(motor.winding, r_dc, law)
        lows.append(
            [phases * float(P.eddy.ripple_loss_from_coefficient(k_low, pp, ax.f_ripple, d, law)) for pp, d in loads]
        )
        highs.append(
            [phases * float(P.eddy.ripple_loss_from_coefficient(k_high, pp, ax.f_ripple, d, law)) for pp, d in loads]
        )
    low = tuple(min(v) for v in zip(*lows, strict=True))
    high = tuple(max(v) for v in zip(*highs, strict=True))
    notes["pwm_eddy_loss"] = (
        f"estimate for a {motor.winding} winding ({regime}; common practice, no published source): not in the "
        "thermal budget; give motor.pwm_loss from one bench measurement"
    )
    notes["pwm_loss_low"] = notes["pwm_eddy_loss"]
    axis["pwm_loss_estimated"] = True
    return _PwmLoss(tuple(0.0 for _ in loads), high, low, True, node, None, winding_node)


def _pwm_loss_effect(spec, ax, rows, pwm: _PwmLoss | None, missing) -> None:
    """The PWM loss against the copper loss and the thermal margin, per point."""
    if pwm is None:
        return
    if not pwm.estimated:
        missing["pwm_loss_low"] = "the PWM loss is calibrated (motor.pwm_loss): one value"
    for row, high, low in zip(rows, pwm.high, pwm.low, strict=True):
        row["pwm_eddy_loss"] = high
        if pwm.estimated:
            row["pwm_loss_low"] = low
        rise = high * pwm.node_resistance
        row["pwm_loss_temperature_rise"] = rise
        t_w = row.get("winding_temperature")
        if t_w is not None:
            r_hot = float(P.thermal.resistance_at_temperature(ax.loss_resistance_20, KELVIN_20C, t_w))
            copper = float(row["rms_current"]) ** 2 * r_hot
            if copper > 0:
                row["pwm_loss_to_copper"] = high / copper
        margin = row.get("winding_margin")
        if margin is not None:
            # the share of the margin the loss takes: of the margin it would have without it
            before = margin + (0.0 if pwm.estimated else rise)
            if before > 0:
                row["pwm_loss_margin_share"] = rise / before
    for name in ("pwm_loss_to_copper", "pwm_loss_margin_share"):
        if not all(name in row for row in rows):
            for row in rows:
                row.pop(name, None)
            missing[name] = "no steady winding temperature or margin at some operating point"


def _thermal(spec, ax, elec, rows, axis, missing, notes, pwm: _PwmLoss | None = None):
    thermal = spec.motor.thermal
    names = (
        "rms_current_ratio",
        "continuous_current_max",
        "winding_temperature",
        "winding_margin",
        "runaway_number",
        "profile_peak_temperature",
        "profile_mean_temperature",
        "profile_margin",
        "profile_start_temperature",
        "copper_loss",
        "housing_temperature",
        "runaway_current",
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
    for row, e, p_extra in zip(rows, elec, extra, strict=True):
        i_rms = e["rms_current"]
        row["runaway_number"] = P.thermal.runaway_number(i_rms, r20, r_wh, r_ha)
        # a calibrated PWM loss heats its node: exactly an ambient higher by P R_node
        # in the two-node steady state (docs/pwm-losses.md)
        ambient = row["point_ambient"] + p_extra * node
        t_w = P.thermal.winding_temperature_steady(i_rms, r20, r_wh, r_ha, ambient)
        if not math.isfinite(t_w):
            runaway = True
        else:
            row["winding_temperature"] = t_w
            copper = i_rms * i_rms * float(P.thermal.resistance_at_temperature(r20, KELVIN_20C, t_w))
            row["copper_loss"] = copper
            row["housing_temperature"] = row["point_ambient"] + (copper + p_extra) * r_ha
            if limit is not None:
                row["winding_margin"] = limit - t_w
        if limit is not None:
            i_max = P.thermal.current_continuous_max(limit, ambient, r20, r_wh, r_ha)
            row["continuous_current_max"] = i_max
            row["rms_current_ratio"] = i_rms / max(i_max, 1e-300)
    if runaway:
        # a figure is present at every point or absent with its reason
        for row in rows:
            for name in ("winding_temperature", "winding_margin", "copper_loss", "housing_temperature"):
                row.pop(name, None)
        missing["copper_loss"] = "thermal runaway at some operating point: no steady state"
        missing["housing_temperature"] = missing["copper_loss"]
        missing["winding_temperature"] = "thermal runaway at some operating point: no steady state"
        missing["winding_margin"] = missing["winding_temperature"]
    axis["runaway_current"] = float(P.thermal.runaway_current(r20, r_wh, r_ha))
    if limit is None:
        for name in ("winding_margin", "continuous_current_max", "rms_current_ratio", "profile_margin"):
            missing[name] = ax.missing.get("winding_temperature_limit", "no temperature limit")
    else:
        axis["winding_temperature_limit"] = limit
    profile = spec.profile
    profile_names = (
        "profile_peak_temperature",
        "profile_mean_temperature",
        "profile_margin",
        "profile_start_temperature",
        "profile_pwm_loss_temperature_rise",
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
    cycle = P.thermal.winding_temperature_cyclic(segments, r20, c_w, c_h, r_wh, r_ha, profile.ambient)
    if cycle.runaway or not math.isfinite(cycle.peak_winding_temperature):
        for name in profile_names:
            missing[name] = "thermal runaway over the profile: no periodic steady state"
        return
    axis["profile_peak_temperature"] = float(cycle.peak_winding_temperature)
    axis["profile_start_temperature"] = float(cycle.start_winding_temperature)
    axis["profile_mean_temperature"] = float(cycle.mean_winding_temperature)
    if limit is not None:
        axis["profile_margin"] = limit - float(cycle.peak_winding_temperature)
    notes["profile_peak_temperature"] = "two-node model, periodic steady state of the repeated profile"
    if pwm is not None and pwm.law is not None:
        # the calibrated PWM loss is in the cycle; its share of the peak, shown apart
        copper_only = [seg._replace(housing_loss=0.0, winding_loss=0.0) for seg in segments]
        bare = P.thermal.winding_temperature_cyclic(copper_only, r20, c_w, c_h, r_wh, r_ha, profile.ambient)
        if not bare.runaway and math.isfinite(bare.peak_winding_temperature):
            axis["profile_pwm_loss_temperature_rise"] = float(
                cycle.peak_winding_temperature - bare.peak_winding_temperature
            )
        notes["profile_peak_temperature"] += "; the calibrated PWM eddy loss of each segment included"
    else:
        missing["profile_pwm_loss_temperature_rise"] = "the PWM loss is not calibrated (motor.pwm_loss)"


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
            out.append(P.thermal.Segment(s.duration, e["rms_current"], 0.0, extra))
        else:
            out.append(P.thermal.Segment(s.duration, e["rms_current"], extra, 0.0))
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


def _chokes(spec, ax, elec, axis, missing, notes):
    chokes = spec.chokes
    names = ("choke_peak_current", "choke_saturation_ratio", "choke_rms_ratio")
    if chokes is None:
        for name in names:
            missing[name] = "the spec has no chokes"
        return
    # the choke carries what the controller can drive: its peak limit, else the
    # motor's peak current, else the largest operating current (docs/physics.md §7.5)
    limits = spec.stage.current_limit
    worst_ripple = float(axis["ripple_pp_worst"])
    if limits is not None and limits.peak is not None:
        base, source = limits.peak, "the stage's peak current limit"
    elif spec.motor.peak_current is not None:
        base, source = spec.motor.peak_current, "the motor's peak current"
    else:
        # an RMS phase current on a sinusoidal axis: its amplitude is what saturates
        amplitude = SQRT2 if ax.topology == "sinusoidal" else 1.0
        base, source = max(e["current"] for e in elec) * amplitude, "the largest operating current"
    i_pk = float(P.choke.choke_peak_current(base, worst_ripple))
    axis["choke_peak_current"] = i_pk
    notes["choke_peak_current"] = f"{source} plus half the worst-case ripple"
    if chokes.saturation_current is not None:
        axis["choke_saturation_ratio"] = i_pk / chokes.saturation_current
    else:
        missing["choke_saturation_ratio"] = "chokes.saturation_current is not given"
    if chokes.rated_current is not None:
        axis["choke_rms_ratio"] = max(e["rms_current"] for e in elec) / chokes.rated_current
    else:
        missing["choke_rms_ratio"] = "chokes.rated_current is not given"


def _braking(spec, axis, missing):
    """Braking to standstill from the fastest speed: the energy it returns, where it goes
    (the supply, the bus capacitors, a brake resistor) and the bus voltage it leaves
    (docs/physics.md §7.6, "Braking into real supplies")."""
    stage = spec.stage
    inertia = (spec.load.inertia if spec.load else 0.0) + (spec.motor.rotor_inertia or 0.0)
    speeds = [p.speed for p in spec.operating_points]
    if spec.profile is not None:
        speeds += [s.speed for s in spec.profile.segments]
    names = (
        "braking_energy",
        "bus_absorbable_energy",
        "braking_energy_ratio",
        "bus_voltage_after_braking",
        "braking_supply_energy",
        "braking_resistor_energy",
    )
    if spec.load is None and spec.motor.rotor_inertia is None:
        for name in names + ("braking_torque", "braking_power_peak"):
            missing[name] = "the spec gives no load.inertia or motor.rotor_inertia"
        return
    w1 = max(speeds)
    energy = float(P.braking.regenerative_energy(inertia, w1))
    axis["braking_energy"] = energy
    stop = spec.load.stop_time if spec.load is not None else None
    peak_power = None
    if stop is not None:
        torque = float(P.braking.braking_torque(inertia, w1, stop))
        peak_power = float(P.braking.braking_peak_power(torque, w1))
        axis["braking_torque"] = torque
        axis["braking_power_peak"] = peak_power
    else:
        for name in ("braking_torque", "braking_power_peak"):
            missing[name] = "the spec gives no load.stop_time (the time to brake to standstill)"
    if stage.bus_capacitance is None or stage.overvoltage_trip is None:
        for name in names[1:]:
            missing[name] = "the spec lacks stage.bus_capacitance or stage.overvoltage_trip"
        return
    C = stage.bus_capacitance
    # braking from a full supply (the top of its range) leaves the least room below the trip
    V = _highest_supply(spec)
    supply = stage.supply
    returned = supply.returned_energy
    limit_v = stage.overvoltage_trip
    if returned is not None and returned.back_voltage_max is not None:
        limit_v = float(P.braking.bus_voltage_limit(limit_v, returned.back_voltage_max))
    capacity = float(P.braking.capacitor_absorbable_energy(C, V, limit_v))
    axis["bus_absorbable_energy"] = capacity
    resistor = stage.brake_resistor
    turn_on = resistor.turn_on_voltage if resistor is not None else math.inf
    taken = 0.0
    if returned is None and supply.absorbs_braking_energy:
        taken = energy  # a regenerative supply takes it back (no details declared)
    elif returned is not None and returned.takes == "battery" and not returned.charging_blocked:
        assert returned.full_charge_voltage is not None and returned.charge_current_max is not None
        if stop is not None and peak_power is not None:
            split = P.braking.braking_energy_split(
                peak_power,
                stop,
                C,
                V,
                final_power=0.0,
                supply_power_max=float(
                    P.braking.battery_charge_power_max(V, returned.full_charge_voltage, returned.charge_current_max)
                ),
                supply_cutoff_voltage=returned.full_charge_voltage,
                turn_on_voltage=turn_on,
            )
            taken = float(split.supply)
        else:
            missing["braking_supply_energy"] = (
                "the battery's share needs the braking power: give load.stop_time (counted as none)"
            )
    if "braking_supply_energy" not in missing:
        axis["braking_supply_energy"] = taken
    rest = max(energy - taken, 0.0)
    to_resistor = 0.0
    if resistor is not None:
        room = max(float(P.braking.capacitor_absorbable_energy(C, V, min(turn_on, limit_v))), 0.0)
        excess = max(rest - room, 0.0)
        share = 1.0
        if peak_power is not None and peak_power > 0:
            # a resistor too large for the peak power takes only its share of it
            share = min(1.0, (turn_on * turn_on / resistor.resistance) / peak_power)
        to_resistor = excess * share
        axis["braking_resistor_energy"] = to_resistor
    else:
        missing["braking_resistor_energy"] = "the stage has no brake_resistor"
    to_caps = rest - to_resistor
    if capacity <= 0:
        # the supply's top already reaches the bus limit (supply-range-above-trip says so)
        missing["braking_energy_ratio"] = (
            f"the top of the supply range ({_fmt(V, 'voltage')}) is at or above the bus limit "
            f"({_fmt(limit_v, 'voltage')}): the bus capacitors take no braking energy"
        )
    else:
        axis["braking_energy_ratio"] = to_caps / capacity
    axis["bus_voltage_after_braking"] = float(P.braking.bus_voltage_after_braking(C, V, to_caps))


def brake_turn_on(spec: Spec) -> tuple[float, float, float] | None:
    """(turn-on voltage, the supply's top, the bus limit) of a brake chopper for this
    stage, or None without an over-voltage trip (docs/physics.md §7.6)."""
    stage = spec.stage
    if stage.overvoltage_trip is None:
        return None
    returned = stage.supply.returned_energy
    limit_v = stage.overvoltage_trip
    if returned is not None and returned.back_voltage_max is not None:
        limit_v = min(limit_v, returned.back_voltage_max)
    top = _highest_supply(spec)
    if returned is not None and returned.full_charge_voltage is not None:
        top = max(top, returned.full_charge_voltage)
    return float(P.braking.brake_turn_on_voltage(top, limit_v)), top, limit_v


# ------------------------------------------------------------------- remedies
def _fmt(value: float, dimension: str) -> str:
    return format_si(value, dimension)


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
    modulation = figures.value("modulation", point) if point is not None else None
    if modulation is not None:
        modulation = float(modulation) * V_low / V
    three = ax.topology == "sinusoidal"
    if name == "added_inductance":
        if three:
            M = modulation if modulation is not None else P.threephase.modulation_index_limit(ax.scheme)
            value = P.remedies.added_phase_inductance_min(
                V,
                ax.inductance,
                ax.f_leg,
                min(M, P.threephase.modulation_index_limit(ax.scheme)),
                ax.scheme,
                rated,
                limit,
            )
            where = "per phase (one choke in each phase)"
        else:
            m = None if modulation is None else min(max(modulation, 0.0), 1.0)
            value = P.remedies.added_inductance_min(
                V, ax.inductance, ax.resistance_hot, ax.f_leg, ax.scheme, rated, limit, modulation=m
            )
            where = (
                "in total, split over both motor leads"
                if ax.topology == "dc"
                else "in the two conducting phases together"
            )
            if value is not None and ax.topology == "dc" and value > 0:
                return Remedy(name, f"add at least {_fmt(value / 2.0, 'inductance')} per lead", float(value) / 2.0, "H")
        if value is None:
            return Remedy(name, "no added inductance below 1 H reaches the limit", None, "H")
        if value <= 0:
            return None
        return Remedy(name, f"add at least {_fmt(value, 'inductance')} {where}", float(value), "H")
    if name == "pwm_frequency":

        def frequency_for(inductance: float):
            if three:
                M = modulation if modulation is not None else P.threephase.modulation_index_limit(ax.scheme)
                return P.remedies.pwm_frequency_min_three_phase(
                    V, inductance, min(M, P.threephase.modulation_index_limit(ax.scheme)), ax.scheme, rated, limit
                )
            m = None if modulation is None else min(max(modulation, 0.0), 1.0)
            return P.remedies.pwm_frequency_min(V, inductance, ax.resistance_hot, ax.scheme, rated, limit, modulation=m)

        value = frequency_for(ax.inductance)
        # the motor's inductance falls with frequency (a measured table or the estimate
        # curve): solve again with the loop inductance at the new frequency, a few
        # fixed-point steps (the verification judges the result on the full model)
        for _ in range(3):
            if value is None or not (value > ax.f_leg):
                break
            f_ripple = value * ax.f_ripple / ax.f_leg
            l_motor, _l_cat = _motor_inductance(spec, f_ripple, settings, {}, {})
            share = ax.motor_inductance * l_motor / ax.terminal_inductance
            again = frequency_for(ax.inductance - ax.motor_inductance + share)
            if again is None or abs(again - value) <= 1e-4 * value:
                value = again if again is not None else value
                break
            value = again
        if value is None:
            return Remedy(name, "no PWM frequency below 1 MHz reaches the limit", None, "Hz")
        if value <= 0 or value <= ax.f_leg:
            return None
        note = " (re-check the inductance there)" if spec.motor.inductance_vs_frequency else ""
        text = f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg{note}"
        return Remedy(name, text, float(value), "Hz")
    if name == "supply_voltage_for_ripple":
        if three and point is not None:
            point_values = next(values for n, values in figures.points if n == point)
            phase_peak = float(point_values["terminal_voltage"]) / SQRT3  # peak line-to-line / sqrt3
            value = P.threephase.supply_voltage_max_for_phase_ripple(
                phase_peak, ax.inductance, ax.f_leg, ax.scheme, limit * rated
            )
            if value == 0.0:
                return Remedy(
                    name,
                    "lowering the supply does not help: the ripple at this point exceeds the limit at every "
                    "supply voltage; add inductance or raise the PWM frequency",
                    None,
                    "V",
                )
        elif three:
            worst = figures.value("ripple_pp_worst")
            if not worst:
                return None
            # the worst case sits at the highest reachable M, which the duty limits fix
            # independently of the supply: the closed-form ripple is linear in V there
            value = V * limit * rated / float(worst)
        elif point is not None:
            point_values = next(values for n, values in figures.points if n == point)
            value = P.remedies.supply_voltage_max_for_ripple(
                ax.inductance,
                ax.resistance_hot,
                ax.f_leg,
                ax.scheme,
                rated,
                limit,
                terminal_voltage=float(point_values["terminal_voltage"]),
                current=float(point_values["operating_current"]),
                series_resistance=ax.series_resistance,
                dead_time=ax.dead_time,
            )
        else:
            value = P.remedies.supply_voltage_max_for_ripple(
                ax.inductance, ax.resistance_hot, ax.f_leg, ax.scheme, rated, limit
            )
        # ``value`` bounds the top of the range; a supply of the same tolerance scales
        # its whole range, so the nominal voltage moves by the same factor
        if value is None or not math.isfinite(value) or value >= V:
            return None
        needed = figures.value("supply_min")  # bounds the bottom of the range
        if needed is not None and value / V < float(needed) / V_low:
            if V == V_low:
                why = (
                    f"the ripple limit needs at most {_fmt(value, 'voltage')} but the operating points need "
                    f"at least {_fmt(float(needed), 'voltage')}"
                )
            else:
                why = (
                    f"the ripple limit needs the top of the supply range at most {_fmt(value, 'voltage')} "
                    f"(now {_fmt(V, 'voltage')}), which takes its bottom to {_fmt(V_low * value / V, 'voltage')}, "
                    f"below the {_fmt(float(needed), 'voltage')} the operating points need"
                )
            return Remedy(name, f"lowering the supply does not help: {why}", None, "V")
        nominal = V_nom * value / V
        return Remedy(name, f"lower the supply to at most {_fmt(nominal, 'voltage')}", float(nominal), "V")
    if name == "supply_voltage_for_duty":
        needed = figures.value("modulation_max")  # at the bottom of the range
        if not needed:
            return None
        scale = float(needed) / limit  # m scales as 1/V for fixed terminal voltage
        if scale >= 1.0:
            return None
        value = V_nom * scale
        text = (
            f"lower the supply to at most {_fmt(value, 'voltage')} "
            f"(modulation then {limit:.0%} at the most demanding point)"
        )
        return Remedy(name, text, value, "V")
    if name == "supply_voltage_min":
        value = figures.value("supply_min")  # the bottom of the range must reach it
        if value is None:
            return None
        nominal = V_nom * float(value) / V_low
        return Remedy(name, f"raise the supply to at least {_fmt(nominal, 'voltage')}", nominal, "V")
    if name == "pwm_frequency_inaudible":
        ratio = ax.f_ripple / ax.f_leg
        value = limit / ratio
        text = (
            f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg "
            f"(ripple then at {_fmt(limit, 'frequency')})"
        )
        return Remedy(name, text, value, "Hz")
    if name == "choke_saturation_current":
        i_pk = figures.value("choke_peak_current")
        if i_pk is None or limit <= 0:
            return None
        value = float(i_pk) / limit
        return Remedy(name, f"use chokes rated for at least {_fmt(value, 'current')} saturation current", value, "A")
    if name == "pwm_scheme":
        if spec.motor.type != "brushed-dc" or spec.stage.pwm.scheme != "bipolar":
            return None
        return Remedy(name, "switch to three-level PWM", 1.0, "")
    if name == "brake_resistor":
        window = brake_turn_on(spec)
        if window is None:
            return None
        v_on, top, limit_v = window
        if not math.isfinite(v_on):
            return Remedy(
                name,
                f"a brake resistor does not help: the supply's top {_fmt(top, 'voltage')} leaves no room for a "
                f"turn-on voltage below the bus limit {_fmt(limit_v, 'voltage')}",
                None,
                "ohm",
            )
        peak = figures.value("braking_power_peak")
        if peak is None or not float(peak) > 0:
            return Remedy(
                name,
                f"fit a brake chopper switching in at {_fmt(v_on, 'voltage')} (give load.stop_time to size its "
                "resistor)",
                None,
                "ohm",
            )
        r_max = float(P.braking.shunt_resistance_max(v_on, float(peak)))
        return Remedy(name, f"fit a brake resistor of at most {_fmt(r_max, 'resistance')}", r_max, "ohm")
    if name == "loop_bandwidth_for_margin":
        loop = spec.stage.current_loop
        if loop is None:
            return None
        double = loop.sampling == "double-update"
        sampling = loop.sampling_frequency or ax.f_leg * (2.0 if double else 1.0)
        delay = float(P.control.loop_total_delay(sampling, loop.computation_delay))
        ratio = (loop.tuned_for_inductance / ax.inductance) if loop.tuned_for_inductance is not None else 1.0
        value = float(P.control.loop_bandwidth_max_for_margin(delay, limit, loop.feedback_filter, ratio))
        if not value > 0 or value >= loop.bandwidth:
            return None
        text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}"
        return Remedy(name, text, value, "Hz")
    if name == "loop_bandwidth":
        loop = spec.stage.current_loop
        if loop is None:
            return None
        sampling = ax.f_leg * (2.0 if loop.sampling == "double-update" else 1.0)
        value = limit * sampling
        text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}, or raise the PWM frequency"
        return Remedy(name, text, value, "Hz")
    return None


# ---------------------------------------------------------------- plausibility
# Figures that judge whether the spec's values fit each other and the usual
# ranges of small drives, so that a unit slip (mH for uH, rpm for rad/s, peak
# for RMS) shows up as a finding. Floats only (the physics' math path).

COPPER_RESISTIVITY_20 = 1.724e-8  # ohm*m, annealed copper at 20 degC (IEC 60028)
KELVIN_25C = 298.15


def _loop_emf_constant(spec: Spec) -> float:
    """Back-EMF constant of the current loop [V*s/rad] (specguard.model.conventions)."""
    return C.loop_emf_constant(spec)


def _torque_constant_model(spec: Spec) -> float:
    """Torque per ampere of the current the figures call ``current`` (dc, block or phase rms)."""
    return C.torque_constant_model(spec)


def _highest_supply(spec: Spec) -> float:
    """The top of the declared supply range (a full battery), else the nominal voltage:
    where ripple, braking and over-voltage are worst."""
    supply = spec.stage.supply
    return supply.range[1] if supply.range is not None else supply.voltage


def _lowest_supply(spec: Spec) -> float:
    """The bottom of the declared supply range (a flat battery), else the nominal
    voltage: where the duty headroom, the reachable speed and torque are worst."""
    supply = spec.stage.supply
    return supply.range[0] if supply.range is not None else supply.voltage


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
    axis["winding_electrical_time_constant"] = l_cat / r_terminal
    axis["resistance_reference_temperature"] = motor.terminal_resistance.at
    freqs = [row.frequency for row in table]
    if motor.terminal_inductance is not None:
        freqs.append(motor.terminal_inductance.measured_at)
    axis["inductance_frequency_lowest"] = min(freqs)
    axis["inductance_frequency_highest"] = max(freqs)
    series = [(row.frequency, row.series_resistance) for row in table if row.series_resistance is not None]
    if series:
        ratios = [r / r_terminal for _f, r in series]
        axis["table_resistance_ratio_min"] = min(ratios)
        axis["table_resistance_ratio_max"] = max(ratios)
        axis["table_resistance_falling"] = any(b < a for a, b in zip(ratios, ratios[1:], strict=False))
    else:
        lack(
            ("table_resistance_ratio_min", "table_resistance_ratio_max", "table_resistance_falling"),
            "the inductance table gives no series_resistance",
        )

    # currents and torque
    kt = _torque_constant_model(spec)
    rated_torque = kt * rated
    for row in rows:
        row["torque_ratio"] = row["point_torque"] / rated_torque
    if spec.profile is not None:
        axis["profile_torque_ratio_min"] = min(s.torque for s in spec.profile.segments) / rated_torque
        axis["profile_ambient"] = spec.profile.ambient
    else:
        lack(("profile_torque_ratio_min", "profile_ambient"), "the spec has no motion profile")
    if motor.peak_current is not None:
        axis["motor_peak_ratio"] = motor.peak_current / rated
    else:
        missing["motor_peak_ratio"] = "the spec does not give motor.peak_current"

    # thermal data against each other and against the rated current
    limit = ax.temperature_limit
    if thermal is None:
        lack(
            (
                "rated_current_thermal_ratio",
                "thermal_time_constant_ratio",
                "thermal_resistance_ratio",
                "winding_limit_over_class",
            ),
            "the spec has no motor.thermal data",
        )
    else:
        axis["thermal_resistance_ratio"] = thermal.winding_to_housing / thermal.housing_to_ambient
        if thermal.winding_time_constant is not None and thermal.motor_time_constant is not None:
            axis["thermal_time_constant_ratio"] = thermal.winding_time_constant / thermal.motor_time_constant
        else:
            missing["thermal_time_constant_ratio"] = "motor.thermal lacks winding_time_constant or motor_time_constant"
        if limit is not None and limit > KELVIN_25C:
            i_max = P.thermal.current_continuous_max(
                limit, KELVIN_25C, ax.loss_resistance_20, thermal.winding_to_housing, thermal.housing_to_ambient
            )
            axis["rated_current_thermal_ratio"] = rated / max(float(i_max), 1e-300)
        else:
            missing["rated_current_thermal_ratio"] = ax.missing.get(
                "winding_temperature_limit", "the temperature limit is not above 25 degC"
            )
        if thermal.max_winding_temperature is not None and thermal.insulation_class is not None:
            axis["winding_limit_over_class"] = thermal.max_winding_temperature - float(
                P.thermal.insulation_class_temperature(thermal.insulation_class)
            )
        else:
            missing["winding_limit_over_class"] = (
                "motor.thermal does not give both max_winding_temperature and insulation_class"
            )

    # mechanics: mechanical time constant, inertia ratio, speeds
    if motor.rotor_inertia is not None:
        # tau_m = R J / (k_t k_e) with k_e = k_t in SI for the current the figures use
        axis["mechanical_time_constant_computed"] = float(
            P.control.mechanical_time_constant(ax.loss_resistance_20, motor.rotor_inertia, kt, kt)
        )
        if motor.mechanical_time_constant is not None:
            tau = axis["mechanical_time_constant_computed"]
            axis["mechanical_time_constant_mismatch"] = abs(motor.mechanical_time_constant - tau) / max(tau, 1e-300)
        else:
            missing["mechanical_time_constant_mismatch"] = "the spec does not give motor.mechanical_time_constant"
        if spec.load is not None:
            axis["inertia_ratio"] = spec.load.inertia / motor.rotor_inertia
        else:
            missing["inertia_ratio"] = "the spec gives no load.inertia"
        # the loaded axis' mechanical corner: a current loop slower than it is slower than
        # the speed it drives (docs/physics.md §7.2)
        inertia = motor.rotor_inertia + (spec.load.inertia if spec.load is not None else 0.0)
        tau_loaded = float(P.control.mechanical_time_constant(ax.loss_resistance_20, inertia, kt, kt))
        axis["mechanical_corner_frequency"] = 1.0 / (2.0 * math.pi * tau_loaded)
        if stage.current_loop is not None:
            axis["loop_bandwidth_over_mechanical"] = stage.current_loop.bandwidth / axis["mechanical_corner_frequency"]
        else:
            missing["loop_bandwidth_over_mechanical"] = "the spec has no stage.current_loop"
    else:
        lack(
            (
                "mechanical_time_constant_computed",
                "mechanical_time_constant_mismatch",
                "inertia_ratio",
                "mechanical_corner_frequency",
                "loop_bandwidth_over_mechanical",
            ),
            "the spec does not give motor.rotor_inertia",
        )
    v_high = _highest_supply(spec)
    if ax.topology in ("dc", "six-step"):
        no_load = v_high / _loop_emf_constant(spec)
    else:
        peak = P.operating.phase_voltage_peak_max(v_high, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg)
        no_load = float(peak) / _loop_emf_constant(spec)
    speeds = [p.speed for p in spec.operating_points]
    profile_speeds = [s.speed for s in spec.profile.segments] if spec.profile is not None else []
    if motor.max_speed is not None:
        for row in rows:
            row["speed_ratio"] = row["point_speed"] / motor.max_speed
        if no_load > 0:
            axis["max_speed_over_no_load"] = motor.max_speed / no_load
        else:
            missing["max_speed_over_no_load"] = "the dead time leaves no voltage for the motor at the highest supply"
        if profile_speeds:
            axis["profile_speed_ratio"] = max(profile_speeds) / motor.max_speed
        else:
            missing["profile_speed_ratio"] = "the spec has no motion profile"
    else:
        lack(("speed_ratio", "max_speed_over_no_load", "profile_speed_ratio"), "the spec does not give motor.max_speed")
    if motor.type == "three-phase" and motor.pole_pairs is not None:
        top = motor.max_speed if motor.max_speed is not None else max(speeds + profile_speeds)
        f_el = motor.pole_pairs * top / (2.0 * math.pi)
        axis["pwm_periods_per_electrical_period"] = ax.f_leg / f_el if f_el > 0 else math.inf
    else:
        missing["pwm_periods_per_electrical_period"] = "brushed DC motor (no electrical period)"

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
        axis["profile_acceleration_ratio"] = worst
    else:
        missing["profile_acceleration_ratio"] = "the spec has no motion profile or no inertia"

    # supply range against the stage's ratings and the operating points
    supply = stage.supply
    if supply.range is not None:
        low, high = supply.range
        axis["supply_range_high_ratio"] = high / supply.voltage
        if "supply_min" in axis:
            axis["supply_range_low_margin"] = low - axis["supply_min"]
        else:
            missing["supply_range_low_margin"] = "supply_min could not be computed"
    else:
        lack(("supply_range_high_ratio", "supply_range_low_margin"), "the spec does not give stage.supply.range")
    if stage.overvoltage_trip is not None:
        axis["trip_margin"] = stage.overvoltage_trip - v_high
    else:
        missing["trip_margin"] = "the spec does not give stage.overvoltage_trip"
    if stage.max_supply_voltage is not None:
        axis["rating_margin"] = stage.max_supply_voltage - v_high
        axis["stage_rating_over_supply"] = stage.max_supply_voltage / supply.voltage
        if stage.overvoltage_trip is not None:
            axis["trip_over_rating"] = stage.overvoltage_trip / stage.max_supply_voltage
        else:
            missing["trip_over_rating"] = "the spec does not give stage.overvoltage_trip"
    else:
        lack(
            ("rating_margin", "stage_rating_over_supply", "trip_over_rating"),
            "the spec does not give stage.max_supply_voltage",
        )

    # PWM timing
    period = 1.0 / ax.f_leg
    if pwm.dead_time is not None:
        axis["pwm_dead_time"] = pwm.dead_time
        axis["dead_time_fraction"] = 2.0 * pwm.dead_time / period
    else:
        lack(("pwm_dead_time", "dead_time_fraction"), "the spec does not give stage.pwm.dead_time")
    if pwm.min_pulse is not None:
        axis["min_pulse_fraction"] = pwm.min_pulse / period
        if pwm.dead_time:
            axis["min_pulse_over_dead_time"] = pwm.min_pulse / pwm.dead_time
        else:
            missing["min_pulse_over_dead_time"] = "the spec gives no (or a zero) stage.pwm.dead_time"
    else:
        lack(("min_pulse_fraction", "min_pulse_over_dead_time"), "the spec does not give stage.pwm.min_pulse")
    _pulse_windows(ax, pwm, rows, missing)
    if pwm.timer_clock is not None:
        axis["pwm_timer_clock"] = pwm.timer_clock
        counts = pwm.timer_clock / ax.f_leg / (2.0 if pwm.alignment == "center" else 1.0)
        axis["pwm_count_step"] = 1.0 / counts
    else:
        lack(("pwm_timer_clock", "pwm_count_step"), "the spec does not give stage.pwm.timer_clock")

    # stage currents against the motor and the operating points
    limits = stage.current_limit
    if limits is not None:
        for row, e, point in zip(rows, elec, spec.operating_points, strict=True):
            # the continuous rating is an RMS phase current (docs/format.md); a six-step
            # phase carries the block current two thirds of the period while turning,
            # all of it when the axis holds at standstill (one commutation state)
            turning = ax.topology == "six-step" and point.speed > 0.0
            row["stage_current_rms"] = (
                float(P.rms.six_step_phase_current_rms(e["rms_current"])) if turning else e["rms_current"]
            )
            row["stage_current_ratio"] = row["stage_current_rms"] / limits.continuous
        axis["stage_to_motor_current"] = limits.continuous / rated
        if limits.peak is not None:
            axis["stage_peak_over_continuous"] = limits.peak / limits.continuous
        else:
            missing["stage_peak_over_continuous"] = "the spec does not give stage.current_limit.peak"
    else:
        for row in rows:
            row.pop("stage_current_ratio", None)
        lack(
            ("stage_current_rms", "stage_current_ratio", "stage_to_motor_current", "stage_peak_over_continuous"),
            "the spec has no stage.current_limit",
        )
    if stage.current_loop is not None:
        axis["current_loop_bandwidth"] = stage.current_loop.bandwidth
    else:
        missing["current_loop_bandwidth"] = "the spec has no stage.current_loop"
    if stage.switch_resistance is not None:
        axis["stage_switch_resistance"] = stage.switch_resistance
    else:
        missing["stage_switch_resistance"] = "the spec does not give stage.switch_resistance"

    # chokes and cable
    chokes = spec.chokes
    if chokes is not None:
        axis["choke_to_motor_inductance"] = chokes.inductance / l_cat
        if chokes.resistance:
            axis["choke_time_constant"] = chokes.inductance / chokes.resistance
        else:
            missing["choke_time_constant"] = "the spec gives no (or a zero) chokes.resistance"
        if chokes.saturation_current is not None and chokes.rated_current is not None:
            axis["choke_saturation_over_rated"] = chokes.saturation_current / chokes.rated_current
        else:
            missing["choke_saturation_over_rated"] = "the spec lacks chokes.saturation_current or chokes.rated_current"
    else:
        lack(
            ("choke_to_motor_inductance", "choke_time_constant", "choke_saturation_over_rated"),
            "the spec has no chokes",
        )
    cable = spec.cable
    if cable is not None and cable.length is not None and cable.resistance > 0:
        # resistance of one conductor against a 1 mm^2 copper conductor of the same length
        axis["cable_resistance_ratio"] = cable.resistance / (COPPER_RESISTIVITY_20 * cable.length / 1e-6)
    else:
        missing["cable_resistance_ratio"] = "the spec gives no cable length, or a zero cable resistance"
