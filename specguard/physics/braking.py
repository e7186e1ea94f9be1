"""Regenerative braking energy and DC-bus pumping (basic energy balance).

docs/physics.md §7.6.  Upper bounds: losses are ignored unless given.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from specguard.physics._num import namespace, np

__all__ = [
    "regenerative_energy",
    "capacitor_absorbable_energy",
    "bus_voltage_after_braking",
    "braking_peak_power",
    "braking_average_power",
    "shunt_resistance_max",
    "braking_torque",
    "braking_interval_energy",
    "battery_charge_power_max",
    "bus_voltage_limit",
    "BrakingSplit",
    "braking_energy_split",
    "battery_absorbed_energy",
    "brake_resistor_pulse_energy",
    "brake_turn_on_voltage",
]


def regenerative_energy(
    inertia,
    speed_start,
    speed_end=0.0,
    mass=0.0,
    linear_speed_start=0.0,
    linear_speed_end=0.0,
    potential_energy=0.0,
    loss_energy=0.0,
):
    """Energy returned to the bus by a deceleration [J] (upper bound).

    Parameters: inertia [kg m^2] total reflected; speed_start, speed_end [rad/s];
    mass [kg] and linear speeds [m/s] of a linear load; potential_energy [J]
    released (vertical axes); loss_energy [J] copper loss and friction during the
    event (``int I^2 R dt``), subtracted.  ``E = J (w1^2 - w2^2)/2 + m (v1^2 - v2^2)/2
    + E_pot - E_loss``, not below 0.  Source: derived here (docs/physics.md §7.6).
    """
    xp = namespace(
        inertia,
        speed_start,
        speed_end,
        mass,
        linear_speed_start,
        linear_speed_end,
        potential_energy,
        loss_energy,
    )
    energy = (
        0.5 * inertia * (speed_start * speed_start - speed_end * speed_end)
        + 0.5 * mass * (linear_speed_start * linear_speed_start - linear_speed_end * linear_speed_end)
        + potential_energy
        - loss_energy
    )
    return xp.maximum(energy, 0.0)


def capacitor_absorbable_energy(capacitance, nominal_voltage, trip_voltage):
    """Energy the bus capacitance absorbs up to the over-voltage trip [J].

    Parameters: capacitance [F]; nominal_voltage [V]; trip_voltage [V].
    ``E_cap = C (V_trip^2 - V_n^2) / 2``.  Source: derived here (docs/physics.md §7.6).
    """
    return 0.5 * capacitance * (trip_voltage * trip_voltage - nominal_voltage * nominal_voltage)


def bus_voltage_after_braking(capacitance, nominal_voltage, energy):
    """Bus voltage after absorbing an energy without shunt or sink [V].

    ``V_end = sqrt(V_n^2 + 2 E / C)``.  Compare with the trip voltage; if exceeded and
    the supply cannot sink current (most lab supplies and diode rectifiers), a shunt
    or regenerative supply is required.  Source: derived here (docs/physics.md §7.6).
    """
    xp = namespace(capacitance, nominal_voltage, energy)
    return xp.sqrt(nominal_voltage * nominal_voltage + 2.0 * energy / capacitance)


def braking_peak_power(braking_torque, speed_start):
    """Peak braking power ``T_brake w1`` [W].  Source: derived here (docs/physics.md §7.6)."""
    return braking_torque * speed_start


def braking_average_power(energy, cycle_time):
    """Average shunt power ``E_reg / T_cycle`` [W].  Source: derived here (docs/physics.md
    §7.6)."""
    return energy / cycle_time


def shunt_resistance_max(turn_on_voltage, peak_power):
    """Largest shunt resistance able to take the peak power ``V_on^2 / P_peak`` [Ohm].

    Parameters: turn_on_voltage [V] of the brake chopper; peak_power [W].
    Source: derived here (docs/physics.md §7.6).
    """
    return turn_on_voltage * turn_on_voltage / peak_power


def braking_torque(inertia, speed_start, deceleration_time, speed_end=0.0, friction_torque=0.0):
    """Motor braking torque for a linear speed ramp [N m].

    Parameters: inertia [kg m^2] total reflected; speed_start, speed_end [rad/s];
    deceleration_time [s]; friction_torque [N m] load and friction torque that opposes
    the motion and so helps the braking.
    ``T_brake = J (w1 - w2) / t_dec - T_f``, not below 0 (friction alone stops the axis).
    With a constant torque the braking power ``T_brake w(t)`` falls linearly from
    ``braking_peak_power(T_brake, w1)`` to ``braking_peak_power(T_brake, w2)``.
    Source: derived here (Newton's second law for rotation; docs/physics.md §7.6).
    """
    xp = namespace(inertia, speed_start, deceleration_time, speed_end, friction_torque)
    return xp.maximum(inertia * (speed_start - speed_end) / deceleration_time - friction_torque, 0.0)


def braking_interval_energy(initial_power, duration, final_power=None):
    """Energy returned over a braking interval with constant or linear power [J].

    Parameters: initial_power [W] ``P0``; duration [s] ``T``; final_power [W] ``P1``
    (None: constant ``P0``; 0: a constant-torque stop).
    ``E = (P0 + P1) T / 2`` (trapezoid, exact for a linear power).  A constant-torque
    ramp from ``w1`` to ``w2`` gives ``J (w1^2 - w2^2)/2``, the kinetic term of
    ``regenerative_energy``.  Source: derived here (energy balance; docs/physics.md §7.6).
    """
    final = initial_power if final_power is None else final_power
    return 0.5 * (initial_power + final) * duration


def battery_charge_power_max(bus_voltage, full_charge_voltage, charge_current_max, charging_blocked=False):
    """Charging power a battery on the bus accepts at a bus voltage [W].

    Parameters: bus_voltage [V]; full_charge_voltage [V] at which its management stops
    charging; charge_current_max [A] permitted charge current; charging_blocked [bool]
    a protection circuit (diode, open charge switch) that lets no charge in.
    ``P = I_chg,max V`` for ``V < V_full``; 0 at or above ``V_full``; 0 when blocked.
    Limits: the charge acceptance is taken as a current limit only (no temperature or
    state-of-charge derating); the management is assumed to stop charging exactly at
    ``V_full`` (no overshoot allowance).
    Source: derived here (docs/physics.md §7.6); the constant-current / full-voltage
    charge limits are the usual battery charge ratings, common practice, no published
    source for the bus behaviour.
    """
    xp = namespace(bus_voltage, full_charge_voltage, charge_current_max)
    accepts = xp.logical_and(bus_voltage < full_charge_voltage, not charging_blocked)
    return xp.where(accepts, charge_current_max * bus_voltage, 0.0 * bus_voltage)


def bus_voltage_limit(trip_voltage, back_voltage_max=None):
    """Highest bus voltage braking may reach [V]: ``min(V_trip, V_back,max)``.

    Parameters: trip_voltage [V] over-voltage trip of the drive; back_voltage_max [V]
    the back-voltage a supply that cannot sink current tolerates at its output (None:
    no stated limit, or the supply is disconnected by a diode).  Such a supply absorbs
    no braking energy; its tolerance only lowers the ceiling of the bus capacitors:
    ``E_cap = C (min(V_trip, V_back)^2 - V_n^2) / 2`` (``capacitor_absorbable_energy``).
    Source: derived here (docs/physics.md §7.6).
    """
    if back_voltage_max is None:
        return trip_voltage
    xp = namespace(trip_voltage, back_voltage_max)
    return xp.minimum(trip_voltage, back_voltage_max)


class BrakingSplit(NamedTuple):
    """Where the energy of one braking interval goes [J], and the highest bus voltage [V]."""

    supply: object
    capacitor: object
    resistor: object
    bus_voltage: object


def braking_energy_split(
    initial_power,
    duration,
    capacitance,
    nominal_voltage,
    final_power=None,
    supply_power_max=0.0,
    supply_cutoff_voltage=math.inf,
    turn_on_voltage=math.inf,
):
    """Energy of a braking interval shared by the supply, the bus capacitors and a brake resistor.

    Parameters: initial_power [W] ``P0`` and final_power [W] ``P1`` of the returned power,
    linear in time, ``0 <= P1 <= P0`` (None: constant ``P0``); duration [s] ``T``;
    capacitance [F] ``C`` and nominal_voltage [V] ``V_n`` of the bus at the start;
    supply_power_max [W] ``P_s`` the supply sinks (``battery_charge_power_max`` at
    ``V_n``; 0 for a supply that cannot sink current or a blocked battery);
    supply_cutoff_voltage [V] ``V_cut`` from which the supply takes nothing (the
    battery's full-charge voltage; inf: none); turn_on_voltage [V] ``V_on`` of a brake
    chopper (inf: none).

    Energy balance, in this order of priority: the supply takes
    ``min(P(t), P_s)``; the excess ``max(P(t) - P_s, 0)`` charges the capacitors; at
    ``V_cut`` (energy ``E_cut = C (V_cut^2 - V_n^2)/2`` in the capacitors) the supply stops
    and all the power charges the capacitors; at ``V_on`` the chopper clamps the bus and
    the resistor takes the rest (resistor sized by ``shunt_resistance_max``, so the clamp
    holds).  With ``V_on <= V_cut`` the clamp keeps the bus below ``V_cut`` and the supply
    never stops.  For a falling power the excess energy is
    ``E_x(t) = (P0 - P_s) t - (P0 - P1) t^2 / (2T)`` up to ``t1 = T (P0 - P_s)/(P0 - P1)``;
    the supply stops at the smaller root ``t_c`` of ``E_x(t) = E_cut``,
    ``t_c = 2 E_cut / (b + sqrt(b^2 - 2 (P0 - P1) E_cut / T))``, ``b = P0 - P_s``, having
    taken ``P_s t_c``; without a stop it takes
    ``P_s t1 + (T - t1)(P_s + P1)/2`` (``P_s T`` if the power never falls to ``P_s``,
    the whole ``E`` if it starts below).  Then
    ``E_C = min(E - E_s, C (V_on^2 - V_n^2)/2)``, ``E_R = E - E_s - E_C`` and
    ``V_peak = sqrt(V_n^2 + 2 E_C / C)``.  ``E_s + E_C + E_R = (P0 + P1) T / 2``.

    Limits: ``P_s`` is evaluated at ``V_n``, the lowest bus voltage of the event
    (``I_chg V`` grows as the bus rises, so this under-states what the battery takes:
    conservative for an over-voltage verdict); losses in the motor and the bridge are
    ignored (they only lower the energy); a supply at or above its cutoff takes nothing.
    Source: derived here (energy balance; docs/physics.md §7.6).
    """
    final = initial_power if final_power is None else final_power
    xp = namespace(
        initial_power,
        duration,
        capacitance,
        nominal_voltage,
        final,
        supply_power_max,
        supply_cutoff_voltage,
        turn_on_voltage,
    )
    if xp.vector:
        bad = bool(np.any(np.asarray(final) > np.asarray(initial_power)) or np.any(np.asarray(final) < 0.0))
    else:
        bad = final > initial_power or final < 0.0
    if bad:
        raise ValueError("braking power must fall or stay constant and stay non-negative (0 <= P1 <= P0)")
    p0 = initial_power
    p1 = final
    ps = xp.maximum(supply_power_max, 0.0)
    energy = 0.5 * (p0 + p1) * duration
    drop = p0 - p1  # >= 0
    excess0 = p0 - ps  # excess at the start
    # capacitor energy up to the supply's cutoff and up to the chopper
    v_n2 = nominal_voltage * nominal_voltage
    on2 = xp.where(xp.isfinite(turn_on_voltage), turn_on_voltage * turn_on_voltage, math.inf)
    cut2 = xp.where(xp.isfinite(supply_cutoff_voltage), supply_cutoff_voltage * supply_cutoff_voltage, math.inf)
    stops = cut2 < on2  # the clamp does not hold the bus below the cutoff
    e_cut = xp.where(stops, 0.5 * capacitance * xp.maximum(cut2 - v_n2, 0.0), math.inf)
    e_on = 0.5 * capacitance * xp.maximum(on2 - v_n2, 0.0)
    # t1: where the falling power meets P_s (T if it never does, 0 if it starts below);
    # the head [0, t1] and the tail [t1, T] are computed apart so that P_s = 0 gives 0 exactly
    safe_drop = xp.where(drop > 0.0, drop, 1.0)
    tail_share = xp.where(
        drop > 0.0,
        xp.minimum(xp.maximum((ps - p1) / safe_drop, 0.0), 1.0),
        xp.where(excess0 > 0.0, 0.0, 1.0),
    )
    head_share = xp.where(drop > 0.0, xp.minimum(xp.maximum(excess0 / safe_drop, 0.0), 1.0), 1.0 - tail_share)
    t1 = duration * head_share
    p_t1 = xp.minimum(xp.maximum(ps, p1), p0)  # the power at t1
    # supply energy with no cutoff: P_s up to t1, then the falling power itself
    no_cut = ps * t1 + 0.5 * (duration * tail_share) * (p_t1 + p1)
    # largest excess energy, reached at t1
    excess_max = xp.maximum(excess0 * t1 - 0.5 * drop * t1 * t1 / duration, 0.0)
    cut = excess_max >= e_cut
    b = xp.maximum(excess0, 0.0)
    e_cut_safe = xp.where(xp.isfinite(e_cut), e_cut, 0.0)
    disc = xp.maximum(b * b - 2.0 * drop * e_cut_safe / duration, 0.0)
    denominator = b + xp.sqrt(disc)
    t_c = xp.where(denominator > 0.0, 2.0 * e_cut_safe / xp.where(denominator > 0.0, denominator, 1.0), 0.0)
    supply = xp.where(cut, ps * xp.minimum(t_c, t1), no_cut)
    rest = xp.maximum(energy - supply, 0.0)
    capacitor = xp.minimum(rest, e_on)
    resistor = rest - capacitor
    bus = xp.sqrt(v_n2 + 2.0 * capacitor / capacitance)
    return BrakingSplit(supply, capacitor, resistor, bus)


def battery_absorbed_energy(
    initial_power,
    duration,
    capacitance,
    nominal_voltage,
    full_charge_voltage,
    charge_current_max,
    final_power=None,
    charging_blocked=False,
    turn_on_voltage=math.inf,
):
    """Energy a battery on the bus takes from one braking interval [J].

    Parameters as ``braking_energy_split`` and ``battery_charge_power_max``; the battery
    starts at ``V_n`` (the bus voltage before braking), accepts
    ``P_s = I_chg,max V_n`` and stops at ``V_full``; the rest goes into the capacitors
    (and a brake resistor above ``turn_on_voltage``).  A full battery (``V_n >= V_full``)
    or a blocked one takes nothing.
    Source: derived here (energy balance; docs/physics.md §7.6).
    """
    accepted = battery_charge_power_max(nominal_voltage, full_charge_voltage, charge_current_max, charging_blocked)
    return braking_energy_split(
        initial_power,
        duration,
        capacitance,
        nominal_voltage,
        final_power,
        accepted,
        full_charge_voltage,
        turn_on_voltage,
    ).supply


def brake_resistor_pulse_energy(returned_energy, capacitance, nominal_voltage, turn_on_voltage, supply_energy=0.0):
    """Energy one braking event puts into the brake resistor [J] (its pulse rating).

    Parameters: returned_energy [J] ``E`` (``regenerative_energy``); capacitance [F];
    nominal_voltage [V]; turn_on_voltage [V] ``V_on``; supply_energy [J] ``E_s`` taken
    by the supply (``battery_absorbed_energy``; 0 when it cannot sink current).
    ``E_R = max(E - E_s - C (V_on^2 - V_n^2)/2, 0)``: the capacitors fill up to the
    turn-on voltage first.  The resistor's average rating is ``braking_average_power``
    of ``E_R`` over the cycle time (``E_R / T_cycle``), its resistance at most
    ``shunt_resistance_max(V_on, P_peak)``.  Upper bound: copper and switching losses ignored.
    Source: derived here (energy balance; docs/physics.md §7.6).
    """
    xp = namespace(returned_energy, capacitance, nominal_voltage, turn_on_voltage, supply_energy)
    buffer = xp.maximum(capacitor_absorbable_energy(capacitance, nominal_voltage, turn_on_voltage), 0.0)
    return xp.maximum(returned_energy - supply_energy - buffer, 0.0)


def brake_turn_on_voltage(supply_voltage_max, voltage_limit, margin=0.05):
    """Brake-chopper turn-on voltage between the supply's top and the bus limit [V].

    Parameters: supply_voltage_max [V] ``V_top`` the highest voltage the supply itself
    puts on the bus (top of its tolerance band; a battery's full-charge voltage);
    voltage_limit [V] ``V_lim`` (``bus_voltage_limit``: the trip, or a lower
    back-voltage limit); margin [-] ``m`` kept at each side.
    Rule: the admissible window is ``[V_top (1 + m), V_lim (1 - m)]`` (the chopper must
    not burn supply energy, and must clamp before the trip despite its hysteresis and
    the bus overshoot); the turn-on voltage is the middle of the window,
    ``V_on = (V_top (1 + m) + V_lim (1 - m)) / 2``.  NaN when the window is empty (the
    supply's top is too close to the limit for any chopper setting).
    Source: common practice, no published source (the 5 % margin is a parameter);
    docs/physics.md §7.6.
    """
    xp = namespace(supply_voltage_max, voltage_limit, margin)
    low = supply_voltage_max * (1.0 + margin)
    high = voltage_limit * (1.0 - margin)
    return xp.where(low <= high, 0.5 * (low + high), math.nan)
