"""Three-phase inverter ripple: star equivalents, six-step chopping, SPWM and SVPWM.

docs/physics.md §2.  Model of §2.3: two-level bridge, centre-aligned carrier, balanced
star load with isolated neutral (or its star equivalent), per-phase inductance
``L_ph``, resistance negligible over one PWM period, carrier ratio large (>~ 20),
continuous PWM; SVPWM is min-max zero-sequence injection.  Discontinuous PWM and
overmodulation are not covered: the closed forms return NaN outside
``0 <= M <= 1`` (SPWM) or ``0 <= M <= 2/sqrt(3)`` (SVPWM).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, NamedTuple

from specguard.physics import hbridge
from specguard.physics._num import namespace, np

if TYPE_CHECKING:
    import numpy

__all__ = [
    "SPWM",
    "SVPWM",
    "STRATEGIES",
    "SIX_STEP_CHOP_ONE",
    "SIX_STEP_CHOP_BOTH",
    "modulation_index_limit",
    "star_equivalent_inductance",
    "star_equivalent_resistance",
    "terminal_inductance_salient",
    "phase_inductance_conservative",
    "six_step_equivalent_scheme",
    "six_step_ripple_peak_to_peak",
    "six_step_ripple_peak_to_peak_worst",
    "six_step_copper_loss",
    "ripple_base_current",
    "ripple_rms_polynomial",
    "ripple_peak_to_peak_max_normalised",
    "phase_ripple_rms",
    "phase_ripple_peak_to_peak_max",
    "supply_voltage_max_for_phase_ripple",
    "NumericRipple",
    "phase_ripple_numeric",
]

SPWM = "spwm"
SVPWM = "svpwm"
STRATEGIES = (SPWM, SVPWM)
SIX_STEP_CHOP_ONE = "six_step_chop_one"
SIX_STEP_CHOP_BOTH = "six_step_chop_both"

_SQRT3 = math.sqrt(3.0)
_SVPWM_M4 = 27.0 / 16.0 - 81.0 * _SQRT3 / (64.0 * math.pi)
_SPWM_M4 = 9.0 / 8.0
_M3 = 4.0 * _SQRT3 / math.pi


def _check_strategy(strategy: str) -> str:
    if strategy not in STRATEGIES:
        raise ValueError(f"unknown modulation strategy {strategy!r}; expected {STRATEGIES}")
    return strategy


def modulation_index_limit(strategy: str) -> float:
    """Upper end of linear modulation ``M = 2 V_ph1,pk / V`` [-]: SPWM 1, SVPWM 2/sqrt 3.

    Source: derived here (docs/physics.md §0.2 and §4.3); Holmes & Lipo, Pulse Width Modulation
    for Power Converters, 2003.
    """
    _check_strategy(strategy)
    return 1.0 if strategy == SPWM else 2.0 / _SQRT3


def star_equivalent_inductance(terminal_inductance):
    """Star-equivalent per-phase inductance ``L_ph = L_tt / 2`` [H].

    Parameters: terminal_inductance [H] measured between two terminals, third open.
    Holds for star (``L_tt = 2 (L_self - M) = 2 L_s``) and, as the star equivalent,
    for delta windings; balanced, non-salient machine.
    Source: derived here (docs/physics.md §2.1); Krishnan 2010; Hughes & Drury, 4th ed., 2013.
    """
    return 0.5 * terminal_inductance


def star_equivalent_resistance(terminal_resistance):
    """Star-equivalent per-phase resistance ``R_ph = R_tt / 2`` [Ohm].

    Parameters: terminal_resistance [Ohm] line-to-line.  Source: derived here
    (docs/physics.md §2.1).
    """
    return 0.5 * terminal_resistance


def terminal_inductance_salient(d_inductance, q_inductance, angle):
    """Terminal inductance of a salient machine at a rotor angle [H].

    Parameters: d_inductance [H] ``L_d``; q_inductance [H] ``L_q``; angle [rad]
    between the d axis and the excitation axis of the two terminals.
    ``L_tt = 2 (L_d cos^2 phi + L_q sin^2 phi)``.  Source: derived here (docs/physics.md §2.1).
    """
    xp = namespace(d_inductance, q_inductance, angle)
    c = xp.cos(angle)
    s = xp.sin(angle)
    return 2.0 * (d_inductance * c * c + q_inductance * s * s)


def phase_inductance_conservative(d_inductance, q_inductance):
    """Per-phase inductance for a conservative (largest) ripple: ``min(L_d, L_q)`` [H].

    Parameters: d_inductance [H]; q_inductance [H].  ``L_tt/2`` lies between the two
    depending on rotor position, so the smaller one bounds the ripple from above.
    Source: derived here (docs/physics.md §2.1).
    """
    xp = namespace(d_inductance, q_inductance)
    return xp.minimum(d_inductance, q_inductance)


def six_step_equivalent_scheme(variant: str) -> str:
    """H-bridge scheme equivalent to a six-step chopping variant.

    ``six_step_chop_one`` (one transistor PWM'd, slow-decay freewheel: +V/0) ->
    ``unipolar_single``; ``six_step_chop_both`` (+V/-V) -> ``bipolar``.
    Source: derived here (docs/physics.md §2.2); Krishnan, Permanent Magnet Synchronous and
    Brushless DC Motor Drives, 2010.
    """
    if variant == SIX_STEP_CHOP_ONE:
        return hbridge.UNIPOLAR_SINGLE
    if variant == SIX_STEP_CHOP_BOTH:
        return hbridge.BIPOLAR
    raise ValueError(f"unknown six-step variant {variant!r}")


def six_step_ripple_peak_to_peak(
    supply_voltage, terminal_inductance, terminal_resistance, pwm_frequency, modulation, variant
):
    """Exact peak-to-peak ripple of six-step (block) commutation with PWM [A].

    Parameters: supply_voltage [V]; terminal_inductance [H] ``L_tt`` (+ 2 chokes);
    terminal_resistance [Ohm] ``R_tt`` (+ switches, chokes); pwm_frequency [Hz];
    modulation [-] ``m`` (chop_one ``m = D``; chop_both ``m = 2D - 1``); variant.

    Two phases conduct in series, so the loop is the H-bridge loop of §1 with
    ``L = L_tt``, ``R = R_tt`` and the flat-top line-to-line EMF.  Commutation
    transients and floating-phase diode conduction are not modelled.
    Source: derived here (docs/physics.md §2.2 and §1.4).
    """
    return hbridge.ripple_peak_to_peak(
        supply_voltage,
        terminal_inductance,
        terminal_resistance,
        pwm_frequency,
        modulation,
        six_step_equivalent_scheme(variant),
    )


def six_step_ripple_peak_to_peak_worst(
    supply_voltage, terminal_inductance, terminal_resistance, pwm_frequency, variant
):
    """Exact worst case over the modulation for six-step chopping [A].

    chop_one ``-> V/(4 L_tt f)``, chop_both ``-> V/(2 L_tt f)`` as ``R -> 0``.
    Source: derived here (docs/physics.md §2.2 and §1.4).
    """
    return hbridge.ripple_peak_to_peak_worst(
        supply_voltage,
        terminal_inductance,
        terminal_resistance,
        pwm_frequency,
        six_step_equivalent_scheme(variant),
    )


def six_step_copper_loss(terminal_resistance, current_rms):
    """Copper loss with ideal 120-degree current blocks ``P = R_tt I^2`` [W].

    Parameters: terminal_resistance [Ohm] hot ``R_tt``; current_rms [A] block current
    including ripple (two phases always in series).  Source: derived here (docs/physics.md
    §2.2).
    """
    return terminal_resistance * current_rms * current_rms


def ripple_base_current(supply_voltage, phase_inductance, pwm_frequency):
    """Normalisation current ``I_base = V / (L_ph f_pwm)`` [A] of §2.3.

    Parameters: supply_voltage [V]; phase_inductance [H] star-equivalent ``L_ph`` at
    ``f_pwm``; pwm_frequency [Hz].  Source: derived here (docs/physics.md §2.3).
    """
    return supply_voltage / (phase_inductance * pwm_frequency)


def _in_range(modulation_index, strategy, xp):
    limit = modulation_index_limit(strategy) * (1.0 + 1e-12)
    return xp.logical_and(modulation_index >= 0.0, modulation_index <= limit)


def ripple_rms_polynomial(modulation_index, strategy: str):
    """Harmonic-distortion polynomial ``F(M)`` [-] of the phase ripple.

    ``F_SPWM = 3/2 M^2 - 4 sqrt3/pi M^3 + 9/8 M^4`` (0 <= M <= 1),
    ``F_SVPWM = 3/2 M^2 - 4 sqrt3/pi M^3 + (27/16 - 81 sqrt3/(64 pi)) M^4``
    (0 <= M <= 2/sqrt3); NaN outside.  ``I_r,rms = I_base sqrt(F) / 24``.
    Source: derived here (docs/physics.md §2.3); polynomial shapes published in Hava, Kerkman,
    Lipo, IEEE Trans. PE 14(1) 1999 and Holmes & Lipo, Pulse Width Modulation for Power
    Converters, 2003.
    """
    _check_strategy(strategy)
    xp = namespace(modulation_index)
    m = xp.asarray(modulation_index)
    m2 = m * m
    quartic = _SPWM_M4 if strategy == SPWM else _SVPWM_M4
    value = m2 * (1.5 - _M3 * m + quartic * m2)
    return xp.where(_in_range(m, strategy, xp), value, xp.nan)


def ripple_peak_to_peak_max_normalised(modulation_index, strategy: str):
    """Maximum over the fundamental period of the phase ripple, divided by ``I_base`` [-].

    SPWM ``max((M/4)(1 - M/2), M/(4 sqrt3))`` (crossover M = 2 - 2/sqrt3);
    SVPWM ``max(M/4 - 3 M^2/16, M/(4 sqrt3))`` (crossover M = 4/3 (1 - 1/sqrt3));
    NaN outside the linear range.
    Source: derived here (docs/physics.md §2.3: exact fit to a numerical sweep; consistent in
    kind with Grandi & Loncarski, not compared term by term).
    """
    _check_strategy(strategy)
    xp = namespace(modulation_index)
    m = xp.asarray(modulation_index)
    if strategy == SPWM:
        first = 0.25 * m * (1.0 - 0.5 * m)
    else:
        first = 0.25 * m - 0.1875 * m * m
    value = xp.maximum(first, m / (4.0 * _SQRT3))
    return xp.where(_in_range(m, strategy, xp), value, xp.nan)


def phase_ripple_rms(supply_voltage, phase_inductance, pwm_frequency, modulation_index, strategy):
    """RMS phase-current ripple over a fundamental period (closed form) [A].

    Parameters: supply_voltage [V]; phase_inductance [H] star-equivalent at ``f_pwm``
    (salient: :func:`phase_inductance_conservative`); pwm_frequency [Hz];
    modulation_index [-] ``M = 2 V_ph1,pk / V``; strategy ``"spwm"``/``"svpwm"``.

    ``I_r,rms = V/(L_ph f_pwm) sqrt(F(M)) / 24``.  The 1/24 prefactor was established
    by direct simulation (docs/physics.md §2.3, derived here); the test suite re-derives it.
    Source: derived here (docs/physics.md §2.3); Hava et al., IEEE Trans. PE 14(1) 1999;
    Holmes &
    Lipo 2003.
    """
    xp = namespace(supply_voltage, phase_inductance, pwm_frequency, modulation_index)
    return (
        supply_voltage
        / (phase_inductance * pwm_frequency)
        * xp.sqrt(ripple_rms_polynomial(modulation_index, strategy))
        / 24.0
    )


def phase_ripple_peak_to_peak_max(supply_voltage, phase_inductance, pwm_frequency, modulation_index, strategy):
    """Maximum peak-to-peak phase ripple over the fundamental period (closed form) [A].

    Parameters as :func:`phase_ripple_rms`.  Use it for peak current and choke
    saturation; the ripple is much smaller at other angles.
    Source: derived here (docs/physics.md §2.3).
    """
    return (
        supply_voltage
        / (phase_inductance * pwm_frequency)
        * ripple_peak_to_peak_max_normalised(modulation_index, strategy)
    )


def supply_voltage_max_for_phase_ripple(phase_voltage_peak, phase_inductance, pwm_frequency, strategy, ripple_limit):
    """Highest supply voltage at which the maximum peak-to-peak phase ripple of an
    operating point stays within ``ripple_limit`` [V] (scalars).

    Parameters: phase_voltage_peak [V] fundamental phase voltage ``V_ph1,pk`` the
    operating point needs (independent of the supply in the linear range);
    phase_inductance [H] star-equivalent at ``f_pwm``; pwm_frequency [Hz];
    strategy ``"spwm"``/``"svpwm"``; ripple_limit [A] peak to peak.

    At a fixed operating point ``M = 2 a / V`` (``a = V_ph1,pk``), so the maximum
    ripple of :func:`phase_ripple_peak_to_peak_max` is, times ``L_ph f_pwm``:
    SPWM ``a/2 - a^2/(2V)`` for ``M <= 2 - 2/sqrt3`` and SVPWM ``a/2 - 3a^2/(4V)`` for
    ``M <= 4/3 (1 - 1/sqrt3)``, and ``a/(2 sqrt3)`` (independent of V) above. The
    ripple never falls as V rises and tends to ``a/(2 L_ph f_pwm)``; inverting the
    low-M branch for ``X = ripple_limit L_ph f_pwm`` gives SPWM ``V = a^2/(a - 2X)``,
    SVPWM ``V = 3a^2/(2a - 4X)``. Returns +inf when no supply voltage exceeds the
    limit (``X >= a/2``, and at standstill) and 0.0 when every supply voltage that
    keeps the point in the linear range exceeds it (``X < a/(2 sqrt3)``): then only
    more inductance or a higher PWM frequency helps.
    Source: derived here (docs/physics.md §2.3), exact inverse of the closed form above.
    """
    _check_strategy(strategy)
    a = float(phase_voltage_peak)
    x = float(ripple_limit) * float(phase_inductance) * float(pwm_frequency)
    if a <= 0.0 or x >= 0.5 * a:
        return math.inf
    if x < a / (2.0 * _SQRT3):
        return 0.0
    if strategy == SPWM:
        return a * a / (a - 2.0 * x)
    return 3.0 * a * a / (2.0 * a - 4.0 * x)


class NumericRipple(NamedTuple):
    """Result of :func:`phase_ripple_numeric`."""

    rms: float  # [A] over the fundamental period
    peak_to_peak_max: float  # [A]
    angles: numpy.ndarray  # [rad] fundamental angles evaluated
    peak_to_peak: numpy.ndarray  # [A] per angle
    mean_square: numpy.ndarray  # [A^2] per angle


def phase_ripple_numeric(
    supply_voltage,
    phase_inductance,
    pwm_frequency,
    modulation_index,
    strategy,
    angle_count: int = 720,
):
    """Phase ripple evaluated switching period by switching period (reference path).

    Parameters: as :func:`phase_ripple_rms` (scalars); angle_count [-] number of
    fundamental angles, uniformly over one fundamental period.

    For each angle the leg duties are ``d_k = 1/2 + (M/2) cos(theta - 2 pi k/3)``
    (SVPWM: minus ``(max + min)/2`` of the three references, min-max injection); in
    a centre-aligned period leg k is high for ``|t - T/2| < d_k T/2``.  The phase
    voltage to the isolated neutral ``V (s_a - (s_a + s_b + s_c)/3)`` is piecewise
    constant on the 7 intervals between the switching instants, so the ripple
    ``(1/L) integral (v - <v>) dt`` is piecewise linear and its extrema and mean square
    are exact from the breakpoints.  Exact for the ideal model of §2.3 at any carrier
    ratio with regular (per-period) sampling; resistance neglected.
    Source: derived here (docs/physics.md §2.3, reference path).
    """
    _check_strategy(strategy)
    volts = float(supply_voltage)
    inductance = float(phase_inductance)
    period = 1.0 / float(pwm_frequency)
    m = float(modulation_index)
    theta = np.arange(angle_count) * (2.0 * np.pi / angle_count)
    refs = 0.5 * m * np.cos(theta[:, None] - np.array([0.0, 2.0, 4.0]) * (np.pi / 3.0))
    if strategy == SVPWM:
        refs = refs - 0.5 * (refs.max(axis=1, keepdims=True) + refs.min(axis=1, keepdims=True))
    duties = np.clip(0.5 + refs, 0.0, 1.0)
    half = 0.5 * period
    edges = np.concatenate(
        [
            np.zeros((angle_count, 1)),
            half - duties * half,
            half + duties * half,
            np.full((angle_count, 1), period),
        ],
        axis=1,
    )
    edges.sort(axis=1)
    dt = np.diff(edges, axis=1)
    mids = 0.5 * (edges[:, 1:] + edges[:, :-1])
    states = (np.abs(mids[:, :, None] - half) < duties[:, None, :] * half).astype(float)
    v_phase = volts * (states[:, :, 0] - states.mean(axis=2))
    v_average = volts * (duties[:, 0] - duties.mean(axis=1))
    increments = (v_phase - v_average[:, None]) * dt / inductance
    y = np.concatenate([np.zeros((angle_count, 1)), np.cumsum(increments, axis=1)], axis=1)
    y0 = y[:, :-1]
    y1 = y[:, 1:]
    mean = np.sum(dt * (y0 + y1), axis=1) / (2.0 * period)
    mean_square = np.sum(dt * (y0 * y0 + y0 * y1 + y1 * y1), axis=1) / (3.0 * period) - mean**2
    mean_square = np.maximum(mean_square, 0.0)
    peak_to_peak = y.max(axis=1) - y.min(axis=1)
    return NumericRipple(
        rms=float(np.sqrt(mean_square.mean())),
        peak_to_peak_max=float(peak_to_peak.max()),
        angles=theta,
        peak_to_peak=peak_to_peak,
        mean_square=mean_square,
    )
