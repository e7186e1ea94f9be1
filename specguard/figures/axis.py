"""The axis of a spec as the figures see it: topology, PWM scheme and frequencies, the
loop's inductance at the ripple frequency and its resistances, the temperature limit,
the supply's ends and the motor constants under their conventions (one place that
picks them, for every figure). Values a lever moves (PWM frequency, chokes, supply)
may be arrays of variants (specguard.figures.batch)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from .. import physics as P
from ..model import conventions as C
from ..model.spec import Spec
from ..model.units import format_si
from ._vec import (
    all_of,
    is_vector,
    real,
)
from .registry import Fig

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
    # The policy's cost weights of the levers, (name, weight) pairs over the defaults
    # (specguard.figures.levers.COST_WEIGHT); empty: the defaults.
    fix_costs: tuple[tuple[str, float], ...] = ()


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
    flags[Fig.inductance_extrapolated] = False
    flags[Fig.inductance_table_rising] = False
    if table:
        freqs = [row.frequency for row in table]
        values = [row.inductance for row in table]
        flags[Fig.inductance_estimated] = False
        flags[Fig.inductance_table_rising] = bool(P.inductance.table_non_monotonic(freqs, values))
        catalogue = motor.terminal_inductance.value if motor.terminal_inductance else values[0]
        if is_vector(f_ripple):  # a batch of variants: the table at each distinct frequency
            import numpy as np

            unique, where = np.unique(f_ripple, return_inverse=True)
            found = [P.inductance.inductance_from_table(f, freqs, values) for f in unique.tolist()]
            flags[Fig.inductance_extrapolated] = np.array([r.extrapolated for r in found], dtype=bool)[where]
            ax_notes[Fig.loop_inductance] = "motor inductance interpolated (log-log) in the measured table"
            return np.array([r.value for r in found], dtype=float)[where].reshape(np.shape(f_ripple)), float(catalogue)
        result = P.inductance.inductance_from_table(f_ripple, freqs, values)
        flags[Fig.inductance_extrapolated] = bool(result.extrapolated)
        ax_notes[Fig.loop_inductance] = "motor inductance interpolated (log-log) in the measured table" + (
            "; beyond its last point its last falling segment continues (at least half the last value)"
            if result.extrapolated and f_ripple > max(freqs)
            else ""
        )
        return float(result.value), float(catalogue)  # type: ignore[arg-type]  # a float for float input
    assert motor.terminal_inductance is not None  # the model guarantees one of the two
    catalogue = motor.terminal_inductance.value
    measured_at = motor.terminal_inductance.measured_at
    near = measured_at >= P.inductance.MEASURED_AT_BAND * f_ripple
    if all_of(near):
        flags[Fig.inductance_estimated] = False
        ax_notes[Fig.loop_inductance] = "catalogue inductance measured at (or near) the ripple frequency"
        return catalogue, catalogue
    exponent, floor = dict(settings.inductance_curves)[motor.winding]
    estimate = real(P.inductance.inductance_estimated(catalogue, measured_at, f_ripple, exponent, floor))
    if is_vector(near):  # some variants near the measuring frequency, some estimated
        import numpy as np

        flags[Fig.inductance_estimated] = ~near
        ax_notes[Fig.loop_inductance] = "catalogue value near its measuring frequency, else an estimate"
        return np.where(near, catalogue, estimate), catalogue
    flags[Fig.inductance_estimated] = True
    ax_notes[Fig.loop_inductance] = (
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
            notes[Fig.ripple_frequency] = (
                "stage.pwm.frequency_is not given: the value is taken as the ripple "
                "frequency (the lower, conservative reading)"
            )
        f_ripple = real(P.hbridge.ripple_frequency(f_leg, scheme))
    else:
        f_leg = pwm.frequency
        f_ripple = pwm.frequency  # two-level schemes and three-phase: ripple at the carrier
    flags[Fig.pwm_frequency_ambiguous] = ambiguous

    limit, why = _temperature_limit(spec)
    if why:
        missing[Fig.winding_temperature_limit] = why
    tr = motor.terminal_resistance
    r_motor_hot = _hot(tr.value, tr.at, limit)
    if limit is None:
        notes[Fig.loop_resistance_hot] = "winding resistance at its reference temperature (no temperature limit known)"
    r20_terminal = float(P.thermal.resistance_at_temperature(tr.value, tr.at, KELVIN_20C))

    l_motor, l_catalogue = _motor_inductance(spec, f_ripple, settings, notes, flags)
    chokes = spec.chokes
    l_choke = chokes.inductance if chokes else 0.0
    r_choke = (chokes.resistance if chokes.resistance is not None else 0.0) if chokes else 0.0
    n_choke = chokes.count if chokes else 0
    r_cable = spec.cable.resistance if spec.cable else 0.0
    r_switch = stage.switch_resistance or 0.0
    l_out = stage.output_inductance or 0.0

    if topology in ("dc", "six-step"):
        if topology == "six-step" and chokes and n_choke < 3:
            notes[Fig.loop_inductance] = notes.get(Fig.loop_inductance, "") + _CHOKES_NOT_IN_EVERY_PHASE
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
            notes[Fig.loop_inductance] = notes.get(Fig.loop_inductance, "") + "; salient motor: min(Ld, Lq) per phase"
        else:
            l_phase = real(P.threephase.star_equivalent_inductance(l_motor))
            l_phase_cat = real(P.threephase.star_equivalent_inductance(l_catalogue))
        per_phase_choke = l_choke if n_choke == 3 else 0.0
        if chokes and n_choke < 3:
            notes[Fig.loop_inductance] = notes.get(Fig.loop_inductance, "") + _CHOKES_NOT_IN_EVERY_PHASE
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


def _fmt(value: float, dimension: str) -> str:
    return format_si(value, dimension)


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
