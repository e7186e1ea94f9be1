"""External series chokes: saturation, RMS rating and their share of the loop.

docs/physics.md §1.6, §2.1 and §7.5.
"""

from __future__ import annotations

from specguard.physics._num import namespace

__all__ = [
    "loop_inductance",
    "loop_resistance",
    "choke_peak_current",
    "saturation_current_required",
    "saturation_margin",
    "rms_current_utilisation",
]


def loop_inductance(motor_inductance, choke_inductance=0.0, choke_count=1):
    """Ripple-loop inductance ``L_motor(f_r) + n L_choke(I, f_r)`` [H].

    Parameters: motor_inductance [H] at the ripple frequency; choke_inductance [H]
    at the operating current and f_r; choke_count [-] chokes in the loop (H-bridge
    with one per lead: 2; three-phase per phase: 1 added to L_ph).
    Source: derived here (docs/physics.md §1.6 and §2.1).
    """
    return motor_inductance + choke_count * choke_inductance


def loop_resistance(
    motor_resistance,
    choke_resistance=0.0,
    choke_count=1,
    cable_resistance=0.0,
    switch_resistance=0.0,
    switch_count=2,
    shunt_resistance=0.0,
):
    """Ripple-loop / drop resistance [Ohm]: motor (hot) + chokes + cable + switches + shunt.

    Parameters: resistances [Ohm]; choke_count and switch_count [-] conducting in the
    path (H-bridge: two switches).  Source: derived here (docs/physics.md §1.6, §4.1 and §7.5).
    """
    return (
        motor_resistance
        + choke_count * choke_resistance
        + cable_resistance
        + switch_count * switch_resistance
        + shunt_resistance
    )


def choke_peak_current(largest_average_current, ripple_peak_to_peak):
    """Peak choke current ``|I_avg|_max + dI/2`` [A].

    Parameters: largest_average_current [A] the PEAK (current-limit / acceleration)
    average current, not the continuous one; ripple_peak_to_peak [A] computed with
    the choke inductance at that current.  (For the exact asymmetric waveform use
    hbridge.ripple_peak_offset instead of dI/2.)
    Source: derived here; McLyman, Transformer and Inductor Design Handbook, 4th ed., 2011
    (docs/physics.md §7.5).
    """
    xp = namespace(largest_average_current, ripple_peak_to_peak)
    return xp.abs(largest_average_current) + 0.5 * ripple_peak_to_peak


def saturation_current_required(peak_current, margin=0.25):
    """Saturation current the choke must have ``I_pk (1 + margin)`` [A].

    Parameters: peak_current [A]; margin [-] (20-30 %: common practice, no published
    source; ferrite saturation flux falls with temperature).  E14: 15.5 A, 25 % ->
    19.375 A.  Source: derived here; margin: common practice, no published source
    (docs/physics.md §7.5).
    """
    return peak_current * (1.0 + margin)


def saturation_margin(saturation_current, peak_current):
    """Relative saturation margin ``I_sat / I_pk - 1`` [-] (< 0: saturates).

    Source: derived here (docs/physics.md §7.5).
    """
    return saturation_current / peak_current - 1.0


def rms_current_utilisation(current_rms, rated_rms_current):
    """Choke thermal utilisation ``I_rms,total / I_rated,rms`` [-] (> 1: overloaded).

    Source: derived here (docs/physics.md §7.5).
    """
    return current_rms / rated_rms_current
