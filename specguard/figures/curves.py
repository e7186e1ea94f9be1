"""Plot data for the review report: pure functions from a Spec and its FigureSet to arrays.

This module belongs to ``figures``, the one adapter between the model and the
physics: every number here comes from a :mod:`specguard.physics` function, fed
with the spec's settings and with the loop quantities the figure computation
already derived (``loop_inductance``, ``loop_resistance_hot``, ``modulation``,
``current``, ...).  No formula is written here, and no plotting library is
imported; the HTML reporter draws what these functions return.

Each function returns ``None`` when the spec or the figures lack what the curve
needs (the report then says which curve is not available and why, through
:func:`unavailable`), never a guessed value.

Adapter assumptions (to be kept in step with ``figures.compute``):

* ``loop_inductance`` and ``loop_resistance_hot`` are the inductance and the hot
  resistance of the loop the ripple flows in: the lead-to-lead loop for brushed DC
  motors and six-step commutation, the per-phase (star-equivalent) loop for
  sinusoidal and space-vector PWM (docs/physics.md §1.1, §2.1-2.3).
* External inductance "per lead" adds twice to a lead-to-lead loop and once to a
  per-phase loop.
* The waveform's source voltage is the effective back-EMF ``E = m V - I R`` that
  makes the period average equal the operating current at the figure
  ``modulation`` (so the drops and the dead-time loss folded into ``m`` by the
  figure computation stay consistent with the plotted average).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from specguard.physics import hbridge, operating, remedies, thermal, threephase

from .registry import Fig

# Spec scheme -> (family, physics scheme or strategy name).
_SCHEMES: dict[str, tuple[str, str]] = {
    "bipolar": ("hbridge", hbridge.BIPOLAR),
    "unipolar-single": ("hbridge", hbridge.UNIPOLAR_SINGLE),
    "unipolar-phase-shifted": ("hbridge", hbridge.UNIPOLAR_PHASE_SHIFTED),
    "six-step-chop-one": ("six_step", threephase.SIX_STEP_CHOP_ONE),
    "six-step-chop-both": ("six_step", threephase.SIX_STEP_CHOP_BOTH),
    "sinusoidal": ("sinusoidal", threephase.SPWM),
    "space-vector": ("sinusoidal", threephase.SVPWM),
}

# Ripple limit used when the report does not know the rule's threshold:
# 20 % of rated current (docs/physics.md §7.4, common practice).
DEFAULT_RIPPLE_FRACTION = 0.2

# Points of the sweeps; fixed so that the output is deterministic.
SWEEP_POINTS = 97
WAVEFORM_POINTS = 241
# Upper bound of the profile's temperature samples (cost: one cycle solve each).
PROFILE_SAMPLES = 64


class Waveform(NamedTuple):
    """Current over one ripple period at one operating point."""

    point: str
    time: np.ndarray  # [s], starts at 0
    current: np.ndarray  # [A]
    average: float  # [A] average of the periodic current (physics.current_average)
    peak_to_peak: float  # [A] exact ripple (physics.ripple_peak_to_peak)
    rated_current: float  # [A]
    modulation: float  # [-]
    back_emf: float  # [V] effective source voltage used
    duty: float  # [-] load-wave duty D (physics.load_wave_duty)


class Sweep(NamedTuple):
    """Worst-case peak-to-peak ripple against one design variable."""

    variable: str  # "frequency" (leg PWM frequency, Hz) or "added_inductance" (H per lead)
    x: np.ndarray  # [Hz] or [H]
    ripple: np.ndarray  # [A] worst case over the reachable modulation
    setting: float  # present value of x
    ripple_at_setting: float  # [A]
    limit: float  # [A] peak-to-peak limit
    x_at_limit: float | None  # value of x that brings the ripple to the limit (physics.remedies)


class PointBars(NamedTuple):
    """One value per operating point, in spec order."""

    points: tuple[str, ...]
    values: np.ndarray  # NaN where the figure is absent
    reference: float | None  # a line to draw (max duty, zero margin)


class ProfileTrace(NamedTuple):
    """Winding temperature over one cycle of the motion profile (periodic steady state)."""

    time: np.ndarray  # [s] within the cycle
    temperature: np.ndarray  # [K]
    segment_starts: np.ndarray  # [s]
    peak: float  # [K] physics.winding_temperature_cyclic
    mean: float  # [K]
    limit: float | None  # [K] permitted winding temperature
    runaway: bool


def family(spec) -> tuple[str, str] | None:
    """(family, physics scheme) of the spec's PWM scheme, or None when unknown."""
    try:
        return _SCHEMES.get(spec.stage.pwm.scheme)
    except AttributeError:
        return None


def _num(figures, name: str, point: str | None = None) -> float | None:
    if figures is None:
        return None
    value = figures.value(name, point)
    if value is None or isinstance(value, bool):
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _loop(spec, figures):
    """(V, L, R, f_leg, family, scheme) or None when a piece is missing."""
    fam = family(spec)
    # the ripple is judged at the top of the supply range: the plots draw it there too
    voltage = _num(figures, Fig.supply_voltage_high) or _num(figures, Fig.supply_voltage)
    if voltage is None:
        voltage = float(spec.stage.supply.voltage)
    inductance = _num(figures, Fig.loop_inductance)
    resistance = _num(figures, Fig.loop_resistance_hot)
    frequency = _num(figures, Fig.pwm_frequency_leg)
    if frequency is None and spec.stage.pwm.frequency_is in (None, "leg") and fam and fam[0] != "hbridge":
        frequency = float(spec.stage.pwm.frequency)
    if fam is None or inductance is None or resistance is None or frequency is None:
        return None
    return voltage, inductance, resistance, frequency, fam[0], fam[1]


def ripple_limit(spec, figures, fraction: float = DEFAULT_RIPPLE_FRACTION) -> float | None:
    """The peak-to-peak ripple limit [A]: ``fraction`` x rated current."""
    rated = _num(figures, Fig.motor_rated_current)
    if rated is None:
        rated = float(spec.motor.rated_current)
    return fraction * rated


def _lead_factor(fam: str) -> float:
    return 1.0 if fam == "sinusoidal" else 2.0


def worst_point(spec, figures) -> str | None:
    """The operating point with the largest peak-to-peak ripple (figure ``ripple_pp``).

    Ties keep the first point in spec order; None when no point has the figure.
    """
    best, best_value = None, -math.inf
    for name in figures.point_names() if figures is not None else ():
        value = _num(figures, Fig.ripple_pp, name)
        if value is not None and value > best_value:
            best, best_value = name, value
    return best


def current_waveform(spec, figures, point: str | None = None) -> Waveform | None:
    """Exact current over one ripple period at ``point`` (default: the worst point).

    H-bridge and six-step schemes only (a two-level wave per period); for
    sinusoidal PWM the ripple changes over the electrical revolution and
    :func:`ripple_vs_frequency` carries the worst case instead.
    Physics: hbridge.current_waveform, ripple_peak_to_peak, current_average,
    load_wave_duty (docs/physics.md §1.2, §1.4).
    """
    loop = _loop(spec, figures)
    if loop is None or loop[4] == "sinusoidal":
        return None
    voltage, inductance, resistance, frequency, fam, scheme = loop
    if fam == "six_step":
        scheme = threephase.six_step_equivalent_scheme(scheme)
    point = point or worst_point(spec, figures)
    if point is None:
        return None
    modulation = _num(figures, Fig.ripple_modulation, point)
    if modulation is None:
        modulation = _num(figures, Fig.modulation, point)
    current = _num(figures, Fig.operating_current, point)
    if modulation is None or current is None or resistance <= 0.0:
        return None
    modulation = min(max(modulation, -1.0), 1.0)
    # Effective source voltage E = m V - I R, so that the period average
    # (m V - E) / R equals the operating current (see the module docstring).
    back_emf = modulation * voltage - current * resistance
    time, amps = hbridge.current_waveform(
        voltage, inductance, resistance, frequency, modulation, scheme, back_emf, sample_count=WAVEFORM_POINTS
    )
    rated = _num(figures, Fig.motor_rated_current) or float(spec.motor.rated_current)
    return Waveform(
        point=point,
        time=time,
        current=amps,
        average=float(hbridge.current_average(voltage, modulation, back_emf, resistance)),
        peak_to_peak=float(hbridge.ripple_peak_to_peak(voltage, inductance, resistance, frequency, modulation, scheme)),
        rated_current=rated,
        modulation=modulation,
        back_emf=back_emf,
        duty=float(hbridge.load_wave_duty(modulation, scheme)),
    )


def _swept_worst_ripple(spec, lever, amounts) -> np.ndarray | None:
    """The worst-case ripple [A] (figure ``ripple_pp_worst``) of the spec with ``lever``
    at each of ``amounts``: the batch evaluator on the figure code of a check, so a
    sweep shows what ``check`` says of each variant (the L(f) table or estimate at each
    ripple frequency, the dead time, the chokes' resistance)."""
    from .batch import compute_batch, with_values
    from .compute import FigureSettings

    base = lever.reshaped(spec) if lever.reshapes(spec) else spec
    values, _valid = lever.fields(spec, amounts)
    try:
        found = compute_batch(with_values(base, values), FigureSettings())
    except ValueError:
        return None
    worst = found.axis.get(Fig.ripple_pp_worst)
    if worst is None:
        return None
    return np.broadcast_to(np.asarray(worst, dtype=float), np.shape(amounts)).copy()


def ripple_vs_frequency(spec, figures, fraction: float = DEFAULT_RIPPLE_FRACTION) -> Sweep | None:
    """Worst-case ripple against the leg PWM frequency, from a quarter to four times the setting.

    Each frequency is a variant of the spec judged by the figure code of a check (the
    batch evaluator): the inductance follows its L(f) table or estimate, the dead time
    its share of the period. Closed-form marker: remedies.pwm_frequency_min.
    """
    from .levers import PwmFrequency

    loop = _loop(spec, figures)
    limit = ripple_limit(spec, figures, fraction)
    if loop is None or limit is None:
        return None
    voltage, inductance, resistance, frequency, fam, scheme = loop
    pwm = spec.stage.pwm
    per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
    x = np.geomspace(frequency / 4.0, frequency * 4.0, SWEEP_POINTS)
    ripple = _swept_worst_ripple(spec, PwmFrequency(per_leg, maximum=math.inf), x)
    at_setting = _num(figures, Fig.ripple_pp_worst)
    if ripple is None or at_setting is None:
        return None
    needed = None
    if fam in ("hbridge", "six_step"):
        bridge = scheme if fam == "hbridge" else threephase.six_step_equivalent_scheme(scheme)
        rated = limit / fraction
        value = remedies.pwm_frequency_min(voltage, inductance, resistance, bridge, rated, fraction)
        needed = _finite(value)
    return Sweep("frequency", x, ripple, frequency, at_setting, limit, needed)


def ripple_vs_added_inductance(spec, figures, fraction: float = DEFAULT_RIPPLE_FRACTION) -> Sweep | None:
    """Worst-case ripple against external inductance added per lead (or phase), at the present PWM frequency.

    The range runs from 0 (the spec as it is, fitted chokes included) to twice
    what the limit needs, or to four times the present loop inductance. Each amount
    is a variant judged by the figure code of a check (the batch evaluator), with the
    added chokes' resistance as the fix would write it. Closed-form marker:
    remedies.added_inductance_min.
    """
    from .levers import AddedInductance, topology

    loop = _loop(spec, figures)
    limit = ripple_limit(spec, figures, fraction)
    if loop is None or limit is None:
        return None
    voltage, inductance, resistance, frequency, fam, scheme = loop
    factor = _lead_factor(fam)
    needed = None
    if fam in ("hbridge", "six_step"):
        bridge = scheme if fam == "hbridge" else threephase.six_step_equivalent_scheme(scheme)
        value = _finite(
            remedies.added_inductance_min(
                voltage, inductance, resistance, frequency, bridge, limit / fraction, fraction
            )
        )
        needed = None if value is None else value / factor
    span = max(2.0 * needed if needed else 0.0, 4.0 * inductance / factor)
    x = np.linspace(0.0, span, SWEEP_POINTS)
    lever = AddedInductance(topology(spec))
    # the lever's amount: per lead or phase, or both conducting phases of six-step
    ripple = _swept_worst_ripple(spec, lever, x * (2.0 if lever.topology == "six-step" else 1.0))
    at_setting = _num(figures, Fig.ripple_pp_worst)
    if ripple is None or at_setting is None:
        return None
    return Sweep("added_inductance", x, ripple, 0.0, at_setting, limit, needed)


def _finite(value) -> float | None:
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def point_values(figures, name: str) -> np.ndarray:
    """The figure ``name`` at every operating point, NaN where absent."""
    return np.array(
        [v if (v := _num(figures, name, p)) is not None else math.nan for p in figures.point_names()],
        dtype=float,
    )


def duty_per_point(spec, figures) -> PointBars | None:
    """Leg duty per operating point (figure ``duty``) against the stage's maximum duty."""
    values = point_values(figures, Fig.duty)
    if not np.isfinite(values).any():
        return None
    return PointBars(figures.point_names(), values, float(spec.stage.pwm.max_duty))


def voltage_headroom_per_point(spec, figures) -> PointBars | None:
    """Relative voltage headroom ``1 - m_op / m_max`` per point (physics.modulation_headroom).

    Computed from the figure ``modulation_ratio`` (= m_op / m_max); negative: the
    point cannot be reached.
    """
    ratio = point_values(figures, Fig.modulation_ratio)
    if not np.isfinite(ratio).any():
        return None
    return PointBars(figures.point_names(), operating.modulation_headroom(ratio, 1.0), 0.0)


def thermal_margin_per_point(spec, figures) -> PointBars | None:
    """Permitted minus steady-state winding temperature per point [K] (figure ``winding_margin``)."""
    values = point_values(figures, Fig.winding_margin)
    if not np.isfinite(values).any():
        return None
    return PointBars(figures.point_names(), values, 0.0)


def _profile_segments(spec, figures):
    """thermal.Segment per profile segment and the loss resistance at 20 degC, or None:
    exactly those the figure ``profile_peak_temperature`` is computed from."""
    from .compute import profile_segments

    return profile_segments(spec)


def profile_temperature(spec, figures=None) -> ProfileTrace | None:
    """Winding temperature over one cycle of the profile, in periodic steady state.

    The temperature at each sample is the cycle-start temperature of the same
    profile rotated to begin there, found in one pass from the periodic state
    (thermal.winding_temperature_trace, exact with R(T), docs/physics.md §6.5); the
    segments are split into equal pieces so that about
    :data:`PROFILE_SAMPLES` samples cover the cycle.  Needs the profile, the
    thermal resistances and both thermal time constants.
    """
    profile = spec.profile
    th = spec.motor.thermal
    if profile is None or th is None or th.winding_time_constant is None or th.motor_time_constant is None:
        return None
    built = _profile_segments(spec, figures)
    if not built or not built[0]:
        return None
    segments, r20 = built
    c_w, c_h = thermal.capacitances_from_time_constants(
        th.winding_time_constant, th.motor_time_constant, th.winding_to_housing, th.housing_to_ambient
    )
    ambient = float(profile.ambient)
    args = (r20, c_w, c_h, th.winding_to_housing, th.housing_to_ambient, ambient)
    whole = thermal.winding_temperature_cyclic(segments, *args)
    limit = _num(figures, Fig.winding_temperature_limit)
    if limit is None and th.max_winding_temperature is not None:
        limit = float(th.max_winding_temperature)
    if limit is None and th.insulation_class is not None:
        limit = float(thermal.winding_temperature_limit(th.insulation_class))
    total = sum(s.duration for s in segments)
    starts = np.cumsum([0.0] + [s.duration for s in segments[:-1]])
    if whole.runaway:
        return ProfileTrace(
            np.array([0.0, total]), np.array([math.inf, math.inf]), starts, math.inf, math.inf, limit, True
        )
    pieces: list[thermal.Segment] = []
    budget = max(PROFILE_SAMPLES, len(segments))
    for seg in segments:
        n = max(1, round(budget * seg.duration / total))
        pieces.extend(seg._replace(duration=seg.duration / n) for _ in range(n))
    # the periodic state mapped on through the pieces (one pass; the same as the cycle
    # solved from each piece's start, thermal.winding_temperature_trace)
    walked = thermal.winding_temperature_trace(pieces, *args) or [(0.0, math.inf)]
    times = [t for t, _ in walked[:-1]] + [total]
    temps = [v for _, v in walked[:-1]] + [walked[0][1]]  # periodic: the cycle ends where it starts
    return ProfileTrace(
        np.array(times),
        np.array(temps),
        starts,
        whole.peak_winding_temperature,
        whole.mean_winding_temperature,
        limit,
        False,
    )


def unavailable(spec, figures) -> dict[str, str]:
    """Plot name -> why it is not drawn (what the spec or the figures lack)."""
    out: dict[str, str] = {}
    loop = _loop(spec, figures)
    fam = family(spec)
    if loop is None:
        need = [
            n for n in (Fig.loop_inductance, Fig.loop_resistance_hot, Fig.pwm_frequency_leg) if _num(figures, n) is None
        ]
        reason = "the figures lack " + ", ".join(need) if need else "the PWM scheme is not known"
        if figures is not None:
            for n in need:
                if n in figures.missing:
                    reason += f" ({n}: {figures.missing[n]})"
        out["waveform"] = out["ripple_frequency"] = out["ripple_inductance"] = reason
    elif fam and fam[0] == "sinusoidal":
        out["waveform"] = (
            "sinusoidal commutation: the ripple changes over the electrical revolution; "
            "the ripple plots show its worst case"
        )
    if spec.profile is None:
        out["profile"] = "the spec has no motion profile"
    elif (
        spec.motor.thermal is None
        or spec.motor.thermal.winding_time_constant is None
        or spec.motor.thermal.motor_time_constant is None
    ):
        out["profile"] = "the motor lacks thermal resistances or time constants"
    elif spec.motor.torque_constant.current not in ("dc", "phase-rms"):
        out["profile"] = "torque constant convention is not dc or phase-rms"
    return out


class RippleEnvelope(NamedTuple):
    """Peak-to-peak phase ripple over one electrical revolution (sinusoidal / space-vector PWM)."""

    point: str  # operating point the modulation is taken from
    angle: np.ndarray  # [rad] electrical angle
    ripple: np.ndarray  # [A] peak to peak per switching period at that angle
    modulation: float  # [-] modulation index M = 2 V_ph1,pk / V
    limit: float  # [A] peak-to-peak limit


ENVELOPE_ANGLES = 180


def ripple_envelope(spec, figures, fraction: float = DEFAULT_RIPPLE_FRACTION) -> RippleEnvelope | None:
    """Phase ripple against electrical angle at the operating point with the largest ripple.

    Sinusoidal and space-vector PWM only; the per-angle ripple of the ideal model
    (resistance neglected over one period), physics.threephase.phase_ripple_numeric
    (docs/physics.md §2.3), at the point's modulation index (figure ``ripple_modulation``
    or ``modulation``) and the loop inductance and leg frequency of the figures.
    """
    loop = _loop(spec, figures)
    limit = ripple_limit(spec, figures, fraction)
    if loop is None or loop[4] != "sinusoidal" or limit is None:
        return None
    voltage, inductance, _resistance, frequency, _fam, scheme = loop
    point = worst_point(spec, figures)
    if point is None:
        return None
    modulation = _num(figures, Fig.ripple_modulation, point)
    if modulation is None:
        modulation = _num(figures, Fig.modulation, point)
    if modulation is None or inductance <= 0.0:
        return None
    modulation = min(max(modulation, 0.0), threephase.modulation_index_limit(scheme))
    numeric = threephase.phase_ripple_numeric(
        voltage, inductance, frequency, modulation, scheme, angle_count=ENVELOPE_ANGLES
    )
    return RippleEnvelope(point, numeric.angles, numeric.peak_to_peak, modulation, limit)


class SupplyWindow(NamedTuple):
    """The supply voltages that satisfy every point (figures ``supply_min``, ``supply_max``)."""

    low: float | None  # [V] supply_min
    high: float | None  # [V] supply_max
    voltage: float  # [V] as specified
    empty: bool  # supply_min above supply_max


def supply_window(spec, figures) -> SupplyWindow | None:
    """The supply window of the figures, or None when neither bound is known: from the
    lowest supply that reaches the points (the step headroom of the current loop is
    judged apart, as the rules do) to the highest the ripple, duty and stage allow."""
    low, high = _num(figures, Fig.supply_min_static), _num(figures, Fig.supply_max)
    if low is None:
        low = _num(figures, Fig.supply_min)
    if low is None and high is None:
        return None
    voltage = _num(figures, Fig.supply_voltage) or float(spec.stage.supply.voltage)
    return SupplyWindow(low, high, voltage, low is not None and high is not None and low > high)
