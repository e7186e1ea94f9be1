"""Audible band of the ripple fundamental.

docs/physics.md §7.1.  The electromagnetic force goes with i^2, so with a DC or fundamental
current the dominant acoustic line is at the ripple fundamental ``f_r`` (for the
phase-shifted unipolar scheme ``2 f_pwm``; its common-mode voltage still carries
``f_pwm``).
"""

from __future__ import annotations

from specguard.physics._num import is_scalar, np

__all__ = [
    "AUDIBLE",
    "AUDIBLE_TO_YOUNG",
    "INAUDIBLE",
    "DEFAULT_AUDIBLE_LIMIT",
    "DEFAULT_HEARING_LIMIT",
    "audible_band",
]

AUDIBLE = "audible"
AUDIBLE_TO_YOUNG = "audible_to_young_listeners"
INAUDIBLE = "above_hearing"
# Common practice (no published threshold): most adults hear below about 16 kHz, the
# nominal human range ends at about 20 kHz (hearing data: ISO 226:2003 and ISO 389-7;
# docs/physics.md §7.1).  Both are parameters.
DEFAULT_AUDIBLE_LIMIT = 16e3  # [Hz]
DEFAULT_HEARING_LIMIT = 20e3  # [Hz]


def audible_band(ripple_frequency, audible_limit=DEFAULT_AUDIBLE_LIMIT, hearing_limit=DEFAULT_HEARING_LIMIT):
    """Classify the ripple fundamental against the hearing band.

    Parameters: ripple_frequency [Hz] the fundamental the motor actually sees
    (hbridge.ripple_frequency; three-phase SPWM/SVPWM: f_pwm); audible_limit [Hz]
    default 16 kHz; hearing_limit [Hz] default 20 kHz.
    Returns ``"audible"`` below audible_limit, ``"audible_to_young_listeners"`` up to
    hearing_limit, ``"above_hearing"`` otherwise (str, or array of str for arrays).
    Source: common practice, no published source; ISO 226:2003 and ISO 389-7 (hearing data)
    (docs/physics.md §7.1).
    """
    if is_scalar(ripple_frequency):
        if ripple_frequency < audible_limit:
            return AUDIBLE
        if ripple_frequency < hearing_limit:
            return AUDIBLE_TO_YOUNG
        return INAUDIBLE
    f = np.asarray(ripple_frequency, dtype=float)
    return np.where(f < audible_limit, AUDIBLE, np.where(f < hearing_limit, AUDIBLE_TO_YOUNG, INAUDIBLE))
