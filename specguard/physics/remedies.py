"""Remedies: inverse problems solved on the EXACT ripple formulas.

docs/physics.md §7.4 gives the linear inverses (``L_min = V/(2 r I f)`` ...); here the same
questions are answered on the exact §1.4 forms, in closed form where the exact
relation inverts (worst case: ``tanh``) and by bracketed Illinois iteration otherwise.
Every function is bounded and returns ``None`` ("not reachable") when no value within
its bound meets the target, and 0.0 when the target is already met (for additions).
Scalars only (a remedy is computed for a finding, not for a sweep).
"""

from __future__ import annotations

import math

from specguard.physics import hbridge, operating, threephase
from specguard.physics._num import SCALAR
from specguard.physics._solve import illinois

__all__ = [
    "inductance_min_worst",
    "added_inductance_min",
    "pwm_frequency_min",
    "supply_voltage_max_for_ripple",
    "supply_voltage_min_for_operating_point",
    "added_phase_inductance_min",
    "pwm_frequency_min_three_phase",
]


def _y_over_atanh_y(y):
    """y / atanh(y) for 0 <= y < 1, -> 1 as y -> 0 (series below 1e-4)."""
    if y < 1e-4:
        return 1.0 - y * y / 3.0
    return y / math.atanh(y)


def _step_and_period(supply_voltage, pwm_frequency, scheme):
    step, _, period = hbridge._wave(supply_voltage, 0.5, pwm_frequency, scheme, SCALAR)
    return step, period


def inductance_min_worst(supply_voltage, resistance, pwm_frequency, scheme, ripple_limit):
    """Smallest loop inductance for which the exact WORST-CASE ripple meets a limit [H].

    Parameters: supply_voltage [V]; resistance [Ohm] hot loop; pwm_frequency [Hz];
    scheme; ripple_limit [A] peak-to-peak (e.g. 0.2 x rated current).
    Exact inverse of ``(V1-V2)/R tanh(R T_r/(4 L)) = dI``:
    ``L = (V1-V2) T_r / (4 dI) * y / atanh(y)``, ``y = dI R / (V1-V2)``; ``y >= 1`` means
    the ripple can never reach the limit (returns 0.0).  ``R -> 0`` gives the linear
    §7.4 values (bipolar ``V/(2 r I f)`` ...).  Source: derived here (docs/physics.md §1.4,
    §7.4);
    docs/physics.md, worked example E2 (inputs of the kind in Rashid, 3rd ed., ch. 5).
    """
    step, period = _step_and_period(float(supply_voltage), float(pwm_frequency), scheme)
    y = ripple_limit * resistance / step
    if y >= 1.0:
        return 0.0
    return step * period / (4.0 * ripple_limit) * _y_over_atanh_y(y)


def added_inductance_min(
    supply_voltage,
    inductance,
    resistance,
    pwm_frequency,
    scheme,
    rated_current,
    ripple_fraction,
    modulation=None,
    added_inductance_bound=1.0,
):
    """Smallest inductance to ADD to the loop so the exact ripple meets ``r I_rated`` [H].

    Parameters: supply_voltage [V]; inductance [H] present loop inductance at f_r;
    resistance [Ohm] hot loop; pwm_frequency [Hz]; scheme; rated_current [A];
    ripple_fraction [-] target ``r`` (common practice 0.1-0.2, no standard);
    modulation [-] operating ``m`` or None for the worst case; added_inductance_bound
    [H] largest addition considered.  Returns 0.0 if already met, None if not
    reachable within the bound.  The added choke's DCR is not included (recompute).
    Source: derived here on the exact form of docs/physics.md §1.4; the target r is common
    practice, no published source (docs/physics.md §7.4).
    """
    limit = ripple_fraction * rated_current
    if modulation is None:
        required = inductance_min_worst(supply_voltage, resistance, pwm_frequency, scheme, limit)
    else:

        def ripple(total):
            return hbridge.ripple_peak_to_peak(supply_voltage, total, resistance, pwm_frequency, modulation, scheme)

        if ripple(inductance) <= limit:
            return 0.0
        high = inductance + added_inductance_bound
        if ripple(high) > limit:
            return None
        # The ripple rises with u = 1/L; illinois returns the feasible (small-u) end.
        u = illinois(lambda v: ripple(1.0 / v), limit, 1.0 / high, 1.0 / inductance, SCALAR)
        required = max(1.0 / u, inductance)
    added = max(required - inductance, 0.0)
    if added > added_inductance_bound:
        return None
    return added


def pwm_frequency_min(
    supply_voltage,
    inductance,
    resistance,
    scheme,
    rated_current,
    ripple_fraction,
    modulation=None,
    frequency_bound=1e6,
):
    """Lowest leg PWM frequency for which the exact ripple meets ``r I_rated`` [Hz].

    Parameters: supply_voltage [V]; inductance [H] loop inductance (taken as constant;
    re-evaluate L(f_r) at the result if a table exists); resistance [Ohm];
    scheme; rated_current [A]; ripple_fraction [-]; modulation [-] or None (worst
    case, closed form ``T_r = 4 L dI/(V1-V2) * atanh(y)/y``); frequency_bound [Hz]
    highest frequency considered.  Returns 0.0 if any frequency works (the ripple
    can never reach the limit), None if not reachable below the bound.
    Source: derived here (docs/physics.md §1.4, §7.4).
    """
    limit = ripple_fraction * rated_current
    if modulation is None:
        step, period_per_hz = _step_and_period(float(supply_voltage), 1.0, scheme)
        y = limit * resistance / step
        if y >= 1.0:
            return 0.0
        ripple_period = 4.0 * inductance * limit / step / _y_over_atanh_y(y)
        frequency = period_per_hz / ripple_period  # T_r = period_per_hz / f_pwm
    else:

        def ripple(freq):
            return hbridge.ripple_peak_to_peak(supply_voltage, inductance, resistance, freq, modulation, scheme)

        if ripple(frequency_bound) > limit:
            return None
        low = frequency_bound * 1e-9
        if ripple(low) <= limit:
            return 0.0
        # The ripple rises with the period 1/f; illinois returns the feasible end.
        period = illinois(lambda t: ripple(1.0 / t), limit, 1.0 / frequency_bound, 1.0 / low, SCALAR)
        frequency = 1.0 / period
    if frequency > frequency_bound:
        return None
    return frequency


def supply_voltage_max_for_ripple(
    inductance,
    resistance,
    pwm_frequency,
    scheme,
    rated_current,
    ripple_fraction,
    terminal_voltage=None,
    current=0.0,
    series_resistance=0.0,
    dead_time=0.0,
):
    """Highest supply voltage for which the exact ripple meets ``r I_rated`` [V].

    Parameters: inductance [H]; resistance [Ohm] hot loop; pwm_frequency [Hz];
    scheme; rated_current [A]; ripple_fraction [-]; terminal_voltage [V] operating
    point (None: worst case over m, closed form since the worst ripple is linear in
    V); current, series_resistance, dead_time as operating.modulation_required.
    Returns +inf if no voltage violates the limit at the operating point (unipolar
    saturation); None if the operating point cannot be reached at any voltage.
    Source: derived here (docs/physics.md §4.6), exact.
    """
    limit = ripple_fraction * rated_current
    if terminal_voltage is None:
        per_volt = hbridge.ripple_peak_to_peak_worst(1.0, inductance, resistance, pwm_frequency, scheme)
        return limit / per_volt
    legs = hbridge.switching_leg_count(scheme)
    if legs * dead_time * pwm_frequency >= 1.0:
        return None
    return operating.supply_voltage_max_ripple(
        terminal_voltage,
        inductance,
        resistance,
        pwm_frequency,
        limit,
        scheme,
        current,
        series_resistance,
        dead_time,
    )


def supply_voltage_min_for_operating_point(
    terminal_voltage,
    max_duty,
    scheme,
    current=0.0,
    series_resistance=0.0,
    headroom_voltage=0.0,
    reserve_fraction=0.0,
    dead_time=0.0,
    pwm_frequency=0.0,
    voltage_bound=math.inf,
):
    """Lowest supply voltage for the speed and torque (closed form, exact) [V].

    Parameters: as operating.supply_voltage_min with ``max_duty`` [-] and scheme;
    voltage_bound [V] highest voltage available (controller or supply rating).
    Returns None if the value exceeds the bound or no voltage works (dead time eats
    the duty range).  Source: derived here (docs/physics.md §4.5).
    """
    value = operating.supply_voltage_min(
        terminal_voltage,
        operating.modulation_max(max_duty, scheme),
        current,
        series_resistance,
        headroom_voltage,
        reserve_fraction,
        dead_time,
        pwm_frequency,
        hbridge.switching_leg_count(scheme),
    )
    if not math.isfinite(value) or value > voltage_bound:
        return None
    return value


def _three_phase_normalised(modulation_index, strategy, criterion):
    if criterion == "peak_to_peak":
        return threephase.ripple_peak_to_peak_max_normalised(modulation_index, strategy)
    if criterion == "rms":
        return math.sqrt(threephase.ripple_rms_polynomial(modulation_index, strategy)) / 24.0
    raise ValueError("criterion must be 'peak_to_peak' or 'rms'")


def added_phase_inductance_min(
    supply_voltage,
    phase_inductance,
    pwm_frequency,
    modulation_index,
    strategy,
    rated_current,
    ripple_fraction,
    criterion="peak_to_peak",
    added_inductance_bound=1.0,
):
    """Smallest per-phase inductance to add (one choke per phase) for SPWM/SVPWM [H].

    Parameters: supply_voltage [V]; phase_inductance [H] star-equivalent present;
    pwm_frequency [Hz]; modulation_index [-] (use the largest of the axis, or the
    limit of the strategy for the worst case); strategy; rated_current [A];
    ripple_fraction [-]; criterion ``"peak_to_peak"`` (maximum over the fundamental)
    or ``"rms"``; added_inductance_bound [H].
    Exact within the §2.3 model (R neglected): ``L = V k(M) / (f dI)``; SVPWM at full
    modulation, peak-to-peak: ``V / (6 r I f)`` (§7.4).  0.0 if met, None beyond bound.
    Source: derived here (docs/physics.md §2.3, §7.4).
    """
    k = _three_phase_normalised(modulation_index, strategy, criterion)
    if not math.isfinite(k):
        return None
    required = supply_voltage * k / (pwm_frequency * ripple_fraction * rated_current)
    added = max(required - phase_inductance, 0.0)
    return None if added > added_inductance_bound else added


def pwm_frequency_min_three_phase(
    supply_voltage,
    phase_inductance,
    modulation_index,
    strategy,
    rated_current,
    ripple_fraction,
    criterion="peak_to_peak",
    frequency_bound=1e6,
):
    """Lowest PWM frequency for which SPWM/SVPWM ripple meets ``r I_rated`` [Hz].

    ``f = V k(M) / (L_ph dI)`` (exact within §2.3); None above frequency_bound.
    Parameters as :func:`added_phase_inductance_min`.  Source: derived here
    (docs/physics.md §2.3).
    """
    k = _three_phase_normalised(modulation_index, strategy, criterion)
    if not math.isfinite(k):
        return None
    frequency = supply_voltage * k / (phase_inductance * ripple_fraction * rated_current)
    return None if frequency > frequency_bound else frequency
