"""Consistency of motor constants under declared conventions.

docs/physics.md §4.4.  In SI, energy conservation ties the torque constant to the back-EMF
constant; the factor depends on what current and voltage the constants refer to.
"""

from __future__ import annotations

import math

from specguard.physics._num import namespace

__all__ = [
    "CONVENTIONS",
    "RADIANS_PER_SECOND_PER_KRPM",
    "back_emf_constant_from_volts_per_krpm",
    "flux_linkage_from_line_back_emf_peak",
    "torque_constant_expected",
    "relative_mismatch",
    "torque_constant_mismatch",
    "back_emf_constant_at_temperature",
]

RADIANS_PER_SECOND_PER_KRPM = 1000.0 * 2.0 * math.pi / 60.0  # 104.72 rad/s per krpm

# convention -> (what k_e is, what k_t is, factor k_t / k_e)
CONVENTIONS = {
    # brushed DC: k_t [N m/A] = k_e [V s/rad]
    "dc": 1.0,
    # sinusoidal, k_e line-to-line peak, k_t per A rms phase current: sqrt(3/2)
    "line_peak_per_phase_rms": math.sqrt(1.5),
    # sinusoidal, k_e line-to-line rms, k_t per A rms phase current: sqrt(3)
    "line_rms_per_phase_rms": math.sqrt(3.0),
    # sinusoidal, k_e line-to-line peak, k_t per A peak phase current: sqrt(3)/2
    "line_peak_per_phase_peak": math.sqrt(3.0) / 2.0,
    # six-step, k_e flat-top line-to-line, k_t per A block current: 1
    "six_step_flat": 1.0,
}


def back_emf_constant_from_volts_per_krpm(volts_per_krpm):
    """Convert a back-EMF constant in V/krpm to V s/rad (divide by 104.72) [V s/rad].

    Source: derived here (docs/physics.md §4.4).
    """
    return volts_per_krpm / RADIANS_PER_SECOND_PER_KRPM


def flux_linkage_from_line_back_emf_peak(line_back_emf_constant_peak, pole_pairs):
    """Peak phase flux linkage ``psi_pm = k_e,ll,pk / (sqrt3 p)`` [Wb].

    Parameters: line_back_emf_constant_peak [V s/rad mechanical]; pole_pairs [-].
    Source: derived here (docs/physics.md §4.4).
    """
    return line_back_emf_constant_peak / (math.sqrt(3.0) * pole_pairs)


def torque_constant_expected(back_emf_constant, convention: str):
    """Torque constant implied by a back-EMF constant under a convention [N m/A].

    Parameters: back_emf_constant [V s/rad]; convention one of :data:`CONVENTIONS`:
    ``dc`` (k_t = k_e), ``line_peak_per_phase_rms`` (sqrt(3/2) k_e,ll,pk),
    ``line_rms_per_phase_rms`` (sqrt3 k_e,ll,rms), ``line_peak_per_phase_peak``
    ((sqrt3/2) k_e,ll,pk = 1.5 p psi), ``six_step_flat`` (k_e,ll,flat).
    Source: derived here (docs/physics.md §4.4).
    """
    try:
        factor = CONVENTIONS[convention]
    except KeyError:
        raise ValueError(f"unknown constant convention {convention!r}") from None
    return factor * back_emf_constant


def relative_mismatch(value, reference):
    """Relative difference ``|value - reference| / |reference|`` [-].

    Source: common practice, no published source.
    """
    xp = namespace(value, reference)
    return xp.abs(value - reference) / xp.abs(reference)


def torque_constant_mismatch(torque_constant, back_emf_constant, convention: str):
    """Relative mismatch of a declared k_t against the one implied by k_e [-].

    Beyond about 5 % it indicates a unit or convention error (severity error; the 5 %
    is common practice, no published source).  Source: derived here; common practice, no
    published source (docs/physics.md §4.4).
    """
    return relative_mismatch(torque_constant, torque_constant_expected(back_emf_constant, convention))


def back_emf_constant_at_temperature(back_emf_constant_20, magnet_temperature, reversible_coefficient):
    """Back-EMF constant at a magnet temperature [V s/rad].

    Parameters: back_emf_constant_20 [V s/rad] at 20 degC; magnet_temperature [K];
    reversible_coefficient [1/K] of remanence (NdFeB about -0.0009 ... -0.0012,
    ferrite about -0.002, SmCo -0.0003 ... -0.00045; typical magnet data, common practice).
    ``k_e(T) = k_e,20 (1 + alpha_Br (T - 20 degC))``.  Source: common practice (typical
    magnet data) (docs/physics.md §4.4).
    """
    return back_emf_constant_20 * (1.0 + reversible_coefficient * (magnet_temperature - 293.15))
