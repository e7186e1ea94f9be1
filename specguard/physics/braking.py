"""Regenerative braking energy and DC-bus pumping (basic energy balance).

docs/physics.md §7.6.  Upper bounds: losses are ignored unless given.
"""

from __future__ import annotations

from specguard.physics._num import namespace

__all__ = [
    "regenerative_energy",
    "capacitor_absorbable_energy",
    "bus_voltage_after_braking",
    "braking_peak_power",
    "braking_average_power",
    "shunt_resistance_max",
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
