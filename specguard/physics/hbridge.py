"""Current ripple of an R-L-EMF load on an H-bridge (brushed DC motor).

docs/physics.md §1.  The loop is ``v(t) = R i + L di/dt + E`` with ``v`` a two-level
rectangular wave: level ``V1`` for ``D T_r`` and ``V2`` for ``(1 - D) T_r``.  The
three PWM schemes only decide the voltage step ``V1 - V2``, the duty ``D`` of the
two-level load wave and the ripple period ``T_r`` (§1.2):

=========================  ==============  ==================  =============
scheme                     step V1 - V2    load-wave duty D    ripple period
=========================  ==============  ==================  =============
``bipolar``                2 V             (1 + m) / 2         1 / f_pwm
``unipolar_single``        V               |m| (0/-V if m<0)   1 / f_pwm
``unipolar_phase_shifted`` V               |m|                 1 / (2 f_pwm)
=========================  ==============  ==================  =============

``m`` is the normalised average load voltage ``V_load,avg / V`` (-1 ... 1) and
``f_pwm`` the switching frequency of each leg.  Common assumptions of this module
(state them with any result): ideal switches, zero dead time, stiff bus, ``E`` and
``L`` constant within a period, continuous conduction, ``L`` the effective
inductance of the whole loop at the ripple frequency (§5), ``R`` the hot loop
resistance.

Numerical form.  The exact periodic steady state (§1.4) is written in the
dimensionless period ``x = T_r R / L = T_r / tau_e`` through the function
``phi(u) = u / (1 - exp(-u))`` and ``chi(u) = (phi(u) - 1 - u/2) / u``.  Then

    dI      = (V1 - V2) T_r / L * D (1 - D) phi(x) / (phi(D x) phi((1 - D) x))

which has no 0/0 as ``R -> 0`` (``phi(0) = 1`` gives the linear formula exactly) and
no cancellation at small ``x``: ``phi`` and ``chi`` switch to their Taylor series
below ``u = 0.1`` where ``u / (1 - exp(-u))`` would lose digits.  The average current
is the only quantity that needs ``R > 0``.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from specguard.physics._num import namespace, np

__all__ = [
    "SCHEMES",
    "BIPOLAR",
    "UNIPOLAR_SINGLE",
    "UNIPOLAR_PHASE_SHIFTED",
    "ripple_frequency",
    "load_wave_duty",
    "leg_duty",
    "modulation_from_leg_duty",
    "switching_leg_count",
    "ripple_period_to_time_constant",
    "ripple_peak_to_peak_two_level",
    "ripple_peak_to_peak_linear",
    "ripple_peak_to_peak_linear_worst",
    "ripple_peak_to_peak",
    "ripple_peak_to_peak_worst",
    "ripple_peak_offset",
    "ripple_trough_offset",
    "ripple_rms",
    "current_average",
    "current_peak",
    "current_minimum",
    "current_rms",
    "current_waveform",
    "conduction_discontinuous",
    "RippleResult",
    "ripple_exact",
]

BIPOLAR = "bipolar"
UNIPOLAR_SINGLE = "unipolar_single"
UNIPOLAR_PHASE_SHIFTED = "unipolar_phase_shifted"
SCHEMES = (BIPOLAR, UNIPOLAR_SINGLE, UNIPOLAR_PHASE_SHIFTED)

# Below this value of w = u/2 the closed forms of phi and chi are replaced by their
# Taylor series (next omitted term relative to the kept ones < 1e-11; the closed form
# at the switch point loses about eps/w**2 ~ 1e-13).
_SERIES_LIMIT = 0.05
# Same idea for J_A(p) = integral of (1 - e^-u)^2 over [0, p] divided by p^3.
_JA_SERIES_LIMIT = 0.1
# Coefficients of J_A(p) = sum_n c_n p^(n-2), c_n = ((-2)^n - 2(-1)^n) / (n! (n+1)).
_JA_COEFFS = tuple(((-2.0) ** n - 2.0 * (-1.0) ** n) / (math.factorial(n) * (n + 1)) for n in range(2, 11))


def _check_scheme(scheme: str) -> str:
    if scheme not in SCHEMES:
        raise ValueError(f"unknown H-bridge scheme {scheme!r}; expected one of {SCHEMES}")
    return scheme


def _phi(u, xp):
    """u / (1 - exp(-u)) for u >= 0, = 1 + w + w coth(w) - 1 with w = u/2."""
    w = 0.5 * u
    w_closed = xp.maximum(w, _SERIES_LIMIT)  # keeps the unused branch finite
    closed = w_closed * (1.0 + 1.0 / xp.tanh(w_closed))
    w2 = w * w
    series = 1.0 + w + w2 * (1.0 / 3.0 - w2 * (1.0 / 45.0 - w2 * (2.0 / 945.0)))
    return xp.where(w < _SERIES_LIMIT, series, closed)


def _chi(u, xp):
    """(phi(u) - 1 - u/2) / u = (w coth w - 1) / (2 w), w = u/2; chi(0) = 0."""
    w = 0.5 * u
    w_closed = xp.maximum(w, _SERIES_LIMIT)
    closed = (w_closed / xp.tanh(w_closed) - 1.0) / (2.0 * w_closed)
    w2 = w * w
    series = w * (1.0 / 6.0 - w2 * (1.0 / 90.0 - w2 * (1.0 / 945.0)))
    return xp.where(w < _SERIES_LIMIT, series, closed)


def _ja(p, xp):
    """J_A(p) = (p - 2(1 - e^-p) + (1 - e^-2p)/2) / p^3, J_A(0) = 1/3."""
    p_closed = xp.maximum(p, _JA_SERIES_LIMIT)
    closed = (p_closed + 2.0 * xp.expm1(-p_closed) - 0.5 * xp.expm1(-2.0 * p_closed)) / (p_closed * p_closed * p_closed)
    series = 0.0
    for coefficient in reversed(_JA_COEFFS):
        series = series * p + coefficient
    return xp.where(p < _JA_SERIES_LIMIT, series, closed)


def _g(duty, x, xp):
    """Normalised exact ripple dI / ((V1-V2) T_r / L); -> D(1-D) as x -> 0."""
    return duty * (1.0 - duty) * _phi(x, xp) / (_phi(duty * x, xp) * _phi((1.0 - duty) * x, xp))


def _h(duty, x, xp):
    """Normalised (I_max - I_avg) / ((V1-V2) T_r / L); -> D(1-D)/2 as x -> 0."""
    return duty * (0.5 * (1.0 - duty) + _chi(x, xp) - duty * _chi(duty * x, xp)) / _phi(duty * x, xp)


def _offsets(duty, x, xp):
    """(peak offset, trough offset, peak-to-peak), all normalised by (V1-V2) T_r / L.

    The offset of the SHORTER state is computed directly; the other as ``g`` minus it.
    Computing ``h(1 - D)`` directly for a tiny ``D`` would cancel catastrophically
    (``1 - D`` rounds to 1 below D ~ 1e-16 and the trough would vanish).
    """
    g = _g(duty, x, xp)
    small = xp.minimum(duty, 1.0 - duty)
    h_small = _h(small, x, xp)
    low_duty = duty <= 0.5
    peak = xp.where(low_duty, h_small, g - h_small)
    trough = xp.where(low_duty, g - h_small, h_small)
    return xp.maximum(peak, 0.0), xp.maximum(trough, 0.0), g


def _wave(supply_voltage, modulation, pwm_frequency, scheme, xp):
    """(voltage step V1 - V2, load-wave duty D of the high level, ripple period)."""
    _check_scheme(scheme)
    if scheme == BIPOLAR:
        return 2.0 * supply_voltage, 0.5 * (1.0 + modulation), 1.0 / pwm_frequency
    # Unipolar: levels +V/0 for m >= 0 (high level share m), 0/-V for m < 0 (the
    # high level 0 then lasts 1 - |m| = 1 + m of the period).
    duty = xp.where(modulation >= 0.0, modulation, 1.0 + modulation)
    if scheme == UNIPOLAR_SINGLE:
        return supply_voltage, duty, 1.0 / pwm_frequency
    return supply_voltage, duty, 0.5 / pwm_frequency


def ripple_frequency(pwm_frequency, scheme: str):
    """Fundamental frequency of the current ripple seen by the load [Hz].

    Parameters: pwm_frequency [Hz] switching frequency of each leg; scheme.

    ``f_r = f_pwm`` for ``bipolar`` and ``unipolar_single``; ``f_r = 2 f_pwm`` for
    ``unipolar_phase_shifted`` (centre-aligned mirrored references: the odd harmonics
    of ``f_pwm`` cancel in the load voltage, they remain in the common-mode voltage).

    Source: derived here (docs/physics.md §1.2); Mohan, Undeland, Robbins, Power Electronics,
    3rd ed., §7-6; Sachs, "Lost Secrets of the H-Bridge", parts I/III.
    """
    _check_scheme(scheme)
    return 2.0 * pwm_frequency if scheme == UNIPOLAR_PHASE_SHIFTED else 1.0 * pwm_frequency


def switching_leg_count(scheme: str) -> int:
    """Number of bridge legs that switch at ``f_pwm`` in the scheme (1 or 2).

    Used for the dead-time voltage loss (about ``V t_dead f_pwm`` per switching leg,
    docs/physics.md §1.6; Murai, Watanabe, Iwasaki, IEEE Trans. Ind. Appl. 23(5), 1987).
    """
    _check_scheme(scheme)
    return 1 if scheme == UNIPOLAR_SINGLE else 2


def load_wave_duty(modulation, scheme: str):
    """Duty ``D`` of the two-level load voltage (share of ``T_r`` at the high level) [-].

    Parameters: modulation [-] ``m = V_load,avg / V`` in [-1, 1]; scheme.

    bipolar ``D = (1 + m)/2``; unipolar (both) ``D = m`` for ``m >= 0`` (levels +V/0)
    and ``D = 1 + m`` for ``m < 0`` (levels 0/-V).  Source: derived here (docs/physics.md §1.2).
    """
    xp = namespace(modulation)
    modulation = xp.asarray(modulation)
    return _wave(1.0, modulation, 1.0, scheme, xp)[1]


def leg_duty(modulation, scheme: str):
    """High-side duty of the (first) switching leg, the value a controller limits [-].

    Parameters: modulation [-] ``m`` in [-1, 1]; scheme.

    bipolar and unipolar_phase_shifted ``D_a = (1 + m)/2`` (the second leg runs
    ``(1 - m)/2``); unipolar_single ``D = |m|`` (the other leg is held).
    Source: derived here (docs/physics.md §1.2).
    """
    _check_scheme(scheme)
    xp = namespace(modulation)
    modulation = xp.asarray(modulation)
    if scheme == UNIPOLAR_SINGLE:
        return xp.abs(modulation)
    return 0.5 * (1.0 + modulation)


def modulation_from_leg_duty(duty, scheme: str):
    """Inverse of :func:`leg_duty` for positive modulation: ``m`` [-] from a leg duty [-].

    bipolar and phase-shifted ``m = 2 D - 1``; unipolar_single ``m = D``.  This is
    also ``m_max`` for a controller duty limit ``D_max`` (docs/physics.md §4.1).
    """
    _check_scheme(scheme)
    if scheme == UNIPOLAR_SINGLE:
        return 1.0 * duty
    return 2.0 * duty - 1.0


def ripple_period_to_time_constant(resistance, inductance, ripple_frequency_hz):
    """Ripple period over electrical time constant ``T_r / tau_e = R / (L f_r)`` [-].

    Parameters: resistance [Ohm] loop resistance; inductance [H] loop inductance at the
    ripple frequency; ripple_frequency_hz [Hz].

    Above 1 the ripple is in the exponential regime and the linear formula
    over-estimates by more than 2 % (docs/physics.md §1.5, derived here: relative error about
    ``(T_r/tau_e)^2 / 48`` at D = 0.5).
    """
    return resistance / (inductance * ripple_frequency_hz)


def ripple_peak_to_peak_two_level(voltage_step, duty, period, inductance, resistance):
    """Exact peak-to-peak ripple of an R-L-EMF load fed by a two-level wave [A].

    Parameters: voltage_step [V] ``V1 - V2`` (> 0); duty [-] share of the period at
    ``V1``; period [s] ``T_r``; inductance [H] ``L > 0``; resistance [Ohm] ``R >= 0``.

    ``dI = (V1 - V2)/R (1 - a)(1 - b)/(1 - a b)``, ``a = exp(-D T_r/tau_e)``,
    ``b = exp(-(1 - D) T_r/tau_e)``, ``tau_e = L/R``; evaluated in the form given in
    the module docstring, which tends to the linear ``(V1 - V2) D (1 - D) T_r / L``
    as ``R -> 0`` without dividing by zero.  The back-EMF does not enter.
    Assumptions: periodic steady state, continuous conduction, constant L, R, E.

    Source: derived here (docs/physics.md §1.4); NPTEL course 108103009, module 4, lecture 9;
    Rashid, Power Electronics: Circuits, Devices and Applications, 3rd ed., ch. 5.
    """
    xp = namespace(voltage_step, duty, period, inductance, resistance)
    voltage_step, duty, period, inductance, resistance = map(
        xp.asarray, (voltage_step, duty, period, inductance, resistance)
    )
    x = resistance * period / inductance
    return voltage_step * period / inductance * _g(duty, x, xp)


def ripple_peak_to_peak_linear(supply_voltage, inductance, pwm_frequency, modulation, scheme):
    """Small-ripple (linear) peak-to-peak ripple at a modulation [A].

    Parameters: supply_voltage [V]; inductance [H] loop inductance at f_r;
    pwm_frequency [Hz] leg frequency; modulation [-] ``m``; scheme.

    ``dI = (V1 - V2) D (1 - D) T_r / L``; per scheme bipolar ``V (1 - m^2)/(2 L f)``,
    unipolar_single ``V |m| (1 - |m|)/(L f)``, phase-shifted ``V |m|(1 - |m|)/(2 L f)``.
    Valid for ``T_r << tau_e``; it always over-estimates the exact value (§1.5).

    Source: derived here (docs/physics.md §1.3); NPTEL 108103009 lecture 9; Rashid, 3rd
    ed., ch. 5.
    """
    xp = namespace(supply_voltage, inductance, pwm_frequency, modulation)
    supply_voltage, inductance, pwm_frequency, modulation = map(
        xp.asarray, (supply_voltage, inductance, pwm_frequency, modulation)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    return step * duty * (1.0 - duty) * period / inductance


def ripple_peak_to_peak_linear_worst(supply_voltage, inductance, pwm_frequency, scheme):
    """Worst case over the modulation of the linear ripple [A].

    bipolar ``V/(2 L f)`` at ``m = 0``; unipolar_single ``V/(4 L f)`` at ``|m| = 0.5``;
    phase-shifted ``V/(8 L f)`` at ``|m| = 0.5``.  Parameters as
    :func:`ripple_peak_to_peak_linear`.  Source: derived here (docs/physics.md §1.3).
    """
    xp = namespace(supply_voltage, inductance, pwm_frequency)
    supply_voltage, inductance, pwm_frequency = map(xp.asarray, (supply_voltage, inductance, pwm_frequency))
    step, _, period = _wave(supply_voltage, 0.5, pwm_frequency, scheme, xp)
    return 0.25 * step * period / inductance


def ripple_peak_to_peak(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme):
    """Exact peak-to-peak ripple at an operating modulation [A] (the value rules use).

    Parameters: supply_voltage [V]; inductance [H] loop inductance at the ripple
    frequency (motor + chokes); resistance [Ohm] hot loop resistance (motor, switches,
    choke DCR, cable); pwm_frequency [Hz] leg frequency; modulation [-] ``m`` in
    [-1, 1]; scheme.

    §1.4 closed form with the scheme mapping of §1.2.  Symmetric in ``m`` and, for the
    unipolar schemes, in ``|m| <-> 1 - |m|``; never above the linear value.
    Source: derived here (docs/physics.md §1.2-1.4); NPTEL 108103009 lecture 9; Rashid, 3rd
    ed., ch. 5.
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation)
    supply_voltage, inductance, resistance, pwm_frequency, modulation = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency, modulation)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    x = resistance * period / inductance
    return step * period / inductance * _g(duty, x, xp)


def ripple_peak_to_peak_worst(supply_voltage, inductance, resistance, pwm_frequency, scheme):
    """Exact worst case over the modulation of the peak-to-peak ripple [A].

    ``dI_max = (V1 - V2)/R tanh(R T_r / (4 L))`` at ``D = 0.5`` (bipolar ``m = 0``,
    unipolar ``|m| = 0.5``).  Written as ``(V1 - V2) T_r / L * tanh(x/4)/x`` with
    ``x = R T_r / L`` clamped at 1e-300 so that ``R = 0`` gives the linear worst case.
    Parameters as :func:`ripple_peak_to_peak` without the modulation.

    Source: derived here (docs/physics.md §1.4); the tanh form is published in NPTEL
    108103009 lecture 9 and Rashid, 3rd ed., ch. 5.
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency)
    supply_voltage, inductance, resistance, pwm_frequency = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency)
    )
    step, _, period = _wave(supply_voltage, 0.5, pwm_frequency, scheme, xp)
    x = xp.maximum(resistance * period / inductance, 1e-300)
    return step * period / inductance * xp.tanh(0.25 * x) / x


def ripple_peak_offset(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme):
    """Exact ``I_max - I_avg`` in periodic steady state [A] (>= 0, needs no R > 0).

    Parameters as :func:`ripple_peak_to_peak`.  ``I_max = I2inf + K (1 - a)/(1 - a b)``
    and ``I_avg = I2inf + K D`` of §1.4 give
    ``I_max - I_avg = (V1 - V2) T_r / L * D [(1 - D)/2 + chi(x) - D chi(D x)] / phi(D x)``,
    which tends to ``dI_lin / 2`` as ``R -> 0`` and to ``(V1 - V2)(1 - D)/R`` for
    ``T_r >> tau_e``.  Use it for peak currents (choke saturation, current limit):
    ``I_peak = I_avg + offset``.  Source: derived here (docs/physics.md §1.4), rearranged here.
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation)
    supply_voltage, inductance, resistance, pwm_frequency, modulation = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency, modulation)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    x = resistance * period / inductance
    return step * period / inductance * _offsets(duty, x, xp)[0]


def ripple_trough_offset(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme):
    """Exact ``I_avg - I_min`` in periodic steady state [A] (>= 0).

    By the mirror symmetry of the two-level wave it is the peak offset with
    ``D -> 1 - D``; peak offset + trough offset = peak-to-peak ripple.
    Parameters as :func:`ripple_peak_to_peak`.  Source: derived here (docs/physics.md §1.4).
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation)
    supply_voltage, inductance, resistance, pwm_frequency, modulation = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency, modulation)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    x = resistance * period / inductance
    return step * period / inductance * _offsets(duty, x, xp)[1]


def _ripple_mean_square_normalised(duty, x, xp):
    """Mean square of (i - I_avg) over the period divided by ((V1-V2) T_r / L)^2.

    Integrates the exact exponential segments written as deviations from the
    average: high state ``y = (1-D) s E(t) + y_lo e^{-rt}``, low state
    ``y = -D s E(t) + y_hi e^{-rt}`` with ``E(t) = (1 - e^{-rt})/r``, ``r = R/L``,
    ``s = (V1-V2)/L``.  The three integrals are ``t^3 J_A(rt)``, ``t^2/(2 phi(rt)^2)``
    and ``t/phi(2rt)``, all finite as ``r -> 0`` (triangle: ``D(1-D))^2/12``).
    """
    d1 = duty
    d2 = 1.0 - duty
    p = d1 * x
    q = d2 * x
    h_hi, h_lo, _ = _offsets(duty, x, xp)  # (I_max - I_avg)/S, (I_avg - I_min)/S
    phi_p = _phi(p, xp)
    phi_q = _phi(q, xp)
    high = (
        d2 * d2 * d1 * d1 * d1 * _ja(p, xp)
        - d2 * d1 * d1 * h_lo / (phi_p * phi_p)
        + d1 * h_lo * h_lo / _phi(2.0 * p, xp)
    )
    low = (
        d1 * d1 * d2 * d2 * d2 * _ja(q, xp)
        - d1 * d2 * d2 * h_hi / (phi_q * phi_q)
        + d2 * h_hi * h_hi / _phi(2.0 * q, xp)
    )
    return xp.maximum(high + low, 0.0)


def ripple_rms(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme):
    """RMS of the ripple component alone of the exact waveform [A].

    Parameters as :func:`ripple_peak_to_peak`.  Exact integral of the two exponential
    segments of §1.4 (see the private helper for the form); tends to the triangle
    value ``dI / (2 sqrt 3)`` (§3.1) as ``T_r / tau_e -> 0``.
    Source: derived here (docs/physics.md §1.4 waveform), integrated here.
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation)
    supply_voltage, inductance, resistance, pwm_frequency, modulation = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency, modulation)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    x = resistance * period / inductance
    scale = step * period / inductance
    return scale * xp.sqrt(_ripple_mean_square_normalised(duty, x, xp))


def current_average(supply_voltage, modulation, back_emf, resistance):
    """Average load current ``I_avg = (m V - E) / R`` [A] (exact, any scheme).

    Parameters: supply_voltage [V]; modulation [-] ``m``; back_emf [V] ``E``;
    resistance [Ohm] loop resistance, must be > 0.
    Exact because the inductor voltage averages to zero over a period.
    Source: derived here (docs/physics.md §1.4).
    """
    return (modulation * supply_voltage - back_emf) / resistance


def current_peak(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme, back_emf):
    """Exact maximum of the periodic current ``I_avg + (I_max - I_avg)`` [A].

    Parameters as :func:`ripple_peak_to_peak` plus back_emf [V]; needs ``R > 0``.
    Source: derived here (docs/physics.md §1.4).
    """
    return current_average(supply_voltage, modulation, back_emf, resistance) + ripple_peak_offset(
        supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme
    )


def current_minimum(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme, back_emf):
    """Exact minimum of the periodic current [A]; parameters as :func:`current_peak`.

    Source: derived here (docs/physics.md §1.4).
    """
    return current_average(supply_voltage, modulation, back_emf, resistance) - ripple_trough_offset(
        supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme
    )


def current_rms(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme, back_emf):
    """RMS of the exact periodic current ``sqrt(I_avg^2 + I_r,rms^2)`` [A].

    Parameters as :func:`current_peak`.  Source: derived here (docs/physics.md §1.4 and §3.1).
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation, back_emf)
    average = current_average(supply_voltage, modulation, back_emf, resistance)
    ripple = ripple_rms(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme)
    return xp.sqrt(average * average + ripple * ripple)


class RippleResult(NamedTuple):
    """Exact periodic steady state of one operating point (all in A, s)."""

    peak_to_peak: float
    average: float
    maximum: float
    minimum: float
    rms: float
    ripple_rms: float
    ripple_period: float
    linear_peak_to_peak: float


def ripple_exact(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme, back_emf):
    """All exact figures of §1.4 at once [A] (one pass; cheaper than five calls).

    Parameters as :func:`current_peak`.  Returns :class:`RippleResult` with
    peak-to-peak, average, maximum, minimum, total RMS, ripple RMS, the ripple period
    [s] and the linear peak-to-peak for reference.  Source: derived here (docs/physics.md
    §1.3-1.4).
    """
    xp = namespace(supply_voltage, inductance, resistance, pwm_frequency, modulation, back_emf)
    supply_voltage, inductance, resistance, pwm_frequency, modulation, back_emf = map(
        xp.asarray, (supply_voltage, inductance, resistance, pwm_frequency, modulation, back_emf)
    )
    step, duty, period = _wave(supply_voltage, modulation, pwm_frequency, scheme, xp)
    x = resistance * period / inductance
    scale = step * period / inductance
    h_hi, h_lo, _ = _offsets(duty, x, xp)
    peak_offset = scale * h_hi
    trough_offset = scale * h_lo
    average = (modulation * supply_voltage - back_emf) / resistance
    ripple = scale * xp.sqrt(_ripple_mean_square_normalised(duty, x, xp))
    return RippleResult(
        peak_to_peak=peak_offset + trough_offset,
        average=average,
        maximum=average + peak_offset,
        minimum=average - trough_offset,
        rms=xp.sqrt(average * average + ripple * ripple),
        ripple_rms=ripple,
        ripple_period=period,
        linear_peak_to_peak=scale * duty * (1.0 - duty),
    )


def current_waveform(
    supply_voltage,
    inductance,
    resistance,
    pwm_frequency,
    modulation,
    scheme,
    back_emf,
    sample_count: int = 201,
):
    """Samples of the exact periodic current over one ripple period (for plotting).

    Parameters: as :func:`current_peak` (scalars); sample_count [-] number of
    evenly spaced samples including both ends (the switching instant is added when
    it falls between them).  Returns ``(time [s], current [A])`` numpy arrays;
    the period starts with the high state at the current minimum.

    High state ``i = I_avg + (1 - D) s E(t) + (I_min - I_avg) e^{-t/tau}``, low state
    ``i = I_avg - D s E(t') + (I_max - I_avg) e^{-t'/tau}``, ``E(t) = tau (1 - e^{-t/tau})``,
    ``s = (V1 - V2)/L`` (§1.4 rewritten as deviations; finite as R -> 0 except I_avg).
    Source: derived here (docs/physics.md §1.4).
    """
    step, duty, period = _wave(float(supply_voltage), float(modulation), float(pwm_frequency), scheme, namespace(0.0))
    rate = float(resistance) / float(inductance)
    slope = step / float(inductance)
    peak_offset = ripple_peak_offset(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme)
    trough_offset = ripple_trough_offset(supply_voltage, inductance, resistance, pwm_frequency, modulation, scheme)
    average = current_average(supply_voltage, modulation, back_emf, resistance)
    t_high = duty * period
    # the switching instant is a sample of its own: the peak lies there, and a plot
    # that missed it would draw the ripple short by up to a sampling step's slope
    time = np.union1d(np.linspace(0.0, period, sample_count), [t_high])
    in_high = time <= t_high
    local = np.where(in_high, time, time - t_high)
    # E(t) = (1 - exp(-r t)) / r written with expm1 and the r -> 0 limit t.
    rt = rate * local
    e_fun = np.where(rt > 0.0, -np.expm1(-rt) / np.where(rt > 0.0, rate, 1.0), local)
    decay = np.exp(-rt)
    high = (1.0 - duty) * slope * e_fun - trough_offset * decay
    low = -duty * slope * e_fun + peak_offset * decay
    return time, average + np.where(in_high, high, low)


def conduction_discontinuous(average_current, peak_offset, trough_offset, freewheeling: str = "diode"):
    """True where the current would cross zero within the period [bool].

    Parameters: average_current [A]; peak_offset [A] ``I_max - I_avg``;
    trough_offset [A] ``I_avg - I_min``; freewheeling ``"diode"`` (non-synchronous:
    the current cannot reverse) or ``"synchronous"`` (complementary switching: the
    current reverses and the formulas stay valid, so always False).

    Condition (exact form of the ``|I_avg| < dI/2`` test of §1.6): ``I_min < 0`` for
    positive average current, ``I_max > 0`` for negative.  Where True, the current
    stays at zero for part of the period: the duty-voltage relation and every formula
    of this module fail (ripple smaller, average voltage higher); do not use them.
    Source: derived here (docs/physics.md §1.6); continuity condition: NPTEL 108103009
    lecture 9.
    """
    if freewheeling not in ("diode", "synchronous"):
        raise ValueError("freewheeling must be 'diode' or 'synchronous'")
    xp = namespace(average_current, peak_offset, trough_offset)
    average_current, peak_offset, trough_offset = map(xp.asarray, (average_current, peak_offset, trough_offset))
    if freewheeling == "synchronous":
        return xp.logical_and(average_current != average_current, False)  # all False
    positive = xp.logical_and(average_current >= 0.0, average_current < trough_offset)
    negative = xp.logical_and(average_current < 0.0, -average_current < peak_offset)
    return xp.logical_or(positive, negative)
