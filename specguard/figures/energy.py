"""Energy stores of the axis: the chokes' peak and RMS current against their ratings,
and braking to standstill into the supply, the bus capacitors and a brake resistor
(docs/physics.md §7.5-7.6)."""

from __future__ import annotations

import math

from .. import physics as P
from ..model.spec import Spec
from ._vec import (
    any_of,
    is_vector,
    largest,
    masked,
    maximum,
    per_variant,
    real,
)
from .axis import SQRT2, _fmt, _highest_supply
from .registry import Fig


def _chokes(spec, ax, elec, axis, missing, notes):
    chokes = spec.chokes
    names = (Fig.choke_peak_current, Fig.choke_saturation_ratio, Fig.choke_rms_ratio)
    if chokes is None:
        for name in names:
            missing[name] = "the spec has no chokes"
        return
    # the choke carries what the controller can drive: its peak limit, else the
    # motor's peak current, else the largest operating current (docs/physics.md §7.5)
    limits = spec.stage.current_limit
    worst_ripple = real(axis[Fig.ripple_pp_worst])
    if limits is not None and limits.peak is not None:
        base, source = limits.peak, "the stage's peak current limit"
    elif spec.motor.peak_current is not None:
        base, source = spec.motor.peak_current, "the motor's peak current"
    else:
        # an RMS phase current on a sinusoidal axis: its amplitude is what saturates
        amplitude = SQRT2 if ax.topology == "sinusoidal" else 1.0
        base, source = max(e["current"] for e in elec) * amplitude, "the largest operating current"
    i_pk = real(P.choke.choke_peak_current(base, worst_ripple))
    axis[Fig.choke_peak_current] = i_pk
    notes[Fig.choke_peak_current] = f"{source} plus half the worst-case ripple"
    if chokes.saturation_current is not None:
        axis[Fig.choke_saturation_ratio] = i_pk / chokes.saturation_current
    else:
        missing[Fig.choke_saturation_ratio] = "chokes.saturation_current is not given"
    if chokes.rated_current is not None:
        axis[Fig.choke_rms_ratio] = largest(e[Fig.rms_current] for e in elec) / chokes.rated_current
    else:
        missing[Fig.choke_rms_ratio] = "chokes.rated_current is not given"


def _braking(spec, axis, missing):
    """Braking to standstill from the fastest speed: the energy it returns, where it goes
    (the supply, the bus capacitors, a brake resistor) and the bus voltage it leaves
    (docs/physics.md §7.6, "Braking into real supplies")."""
    stage = spec.stage
    inertia = (spec.load.inertia if spec.load else 0.0) + (spec.motor.rotor_inertia or 0.0)
    speeds = [p.speed for p in spec.operating_points]
    if spec.profile is not None:
        speeds += [s.speed for s in spec.profile.segments]
    names = (
        Fig.braking_energy,
        Fig.bus_absorbable_energy,
        Fig.braking_energy_ratio,
        Fig.bus_voltage_after_braking,
        Fig.braking_supply_energy,
        Fig.braking_resistor_energy,
    )
    if spec.load is None and spec.motor.rotor_inertia is None:
        for name in names + (Fig.braking_torque, Fig.braking_power_peak):
            missing[name] = "the spec gives no load.inertia or motor.rotor_inertia"
        return
    w1 = max(speeds)
    energy = float(P.braking.regenerative_energy(inertia, w1))
    axis[Fig.braking_energy] = energy
    stop = spec.load.stop_time if spec.load is not None else None
    peak_power = None
    if stop is not None:
        torque = float(P.braking.braking_torque(inertia, w1, stop))
        peak_power = float(P.braking.braking_peak_power(torque, w1))
        axis[Fig.braking_torque] = torque
        axis[Fig.braking_power_peak] = peak_power
    else:
        for name in (Fig.braking_torque, Fig.braking_power_peak):
            missing[name] = "the spec gives no load.stop_time (the time to brake to standstill)"
    if stage.bus_capacitance is None or stage.overvoltage_trip is None:
        for name in names[1:]:
            missing[name] = "the spec lacks stage.bus_capacitance or stage.overvoltage_trip"
        return
    C = stage.bus_capacitance
    # braking from a full supply (the top of its range) leaves the least room below the trip
    V = _highest_supply(spec)
    supply = stage.supply
    returned = supply.returned_energy
    limit_v = stage.overvoltage_trip
    if returned is not None and returned.back_voltage_max is not None:
        limit_v = float(P.braking.bus_voltage_limit(limit_v, returned.back_voltage_max))
    capacity = real(P.braking.capacitor_absorbable_energy(C, V, limit_v))
    axis[Fig.bus_absorbable_energy] = capacity
    resistor = stage.brake_resistor
    turn_on = resistor.turn_on_voltage if resistor is not None else math.inf
    taken = 0.0
    if returned is None and supply.absorbs_braking_energy:
        taken = energy  # a regenerative supply takes it back (no details declared)
    elif returned is not None and returned.takes == "battery" and not returned.charging_blocked:
        assert returned.full_charge_voltage is not None and returned.charge_current_max is not None
        if stop is not None and peak_power is not None:
            full, charge_max = returned.full_charge_voltage, returned.charge_current_max

            def supply_share(bus_voltage: float) -> float:
                split = P.braking.braking_energy_split(
                    peak_power,
                    stop,
                    C,
                    bus_voltage,
                    final_power=0.0,
                    supply_power_max=float(P.braking.battery_charge_power_max(bus_voltage, full, charge_max)),
                    supply_cutoff_voltage=full,
                    turn_on_voltage=turn_on,
                )
                return float(split.supply)

            taken = per_variant(supply_share, V)
        else:
            missing[Fig.braking_supply_energy] = (
                "the battery's share needs the braking power: give load.stop_time (counted as none)"
            )
    if Fig.braking_supply_energy not in missing:
        axis[Fig.braking_supply_energy] = taken
    rest = maximum(energy - taken, 0.0)
    to_resistor = 0.0
    if resistor is not None:
        room = maximum(real(P.braking.capacitor_absorbable_energy(C, V, min(turn_on, limit_v))), 0.0)
        excess = maximum(rest - room, 0.0)
        share = 1.0
        if peak_power is not None and peak_power > 0:
            # a resistor too large for the peak power takes only its share of it
            share = min(1.0, (turn_on * turn_on / resistor.resistance) / peak_power)
        to_resistor = excess * share
        axis[Fig.braking_resistor_energy] = to_resistor
    else:
        missing[Fig.braking_resistor_energy] = "the stage has no brake_resistor"
    to_caps = rest - to_resistor
    if is_vector(capacity):
        import numpy as np

        if any_of(capacity > 0):
            axis[Fig.braking_energy_ratio] = masked(to_caps / np.where(capacity > 0, capacity, 1.0), capacity > 0)
        else:
            missing[Fig.braking_energy_ratio] = "the top of the supply range is at or above the bus limit"
    elif capacity <= 0:
        # the supply's top already reaches the bus limit (supply-range-above-trip says so)
        missing[Fig.braking_energy_ratio] = (
            f"the top of the supply range ({_fmt(V, 'voltage')}) is at or above the bus limit "
            f"({_fmt(limit_v, 'voltage')}): the bus capacitors take no braking energy"
        )
    else:
        axis[Fig.braking_energy_ratio] = to_caps / capacity
    axis[Fig.bus_voltage_after_braking] = real(P.braking.bus_voltage_after_braking(C, V, to_caps))


def brake_turn_on(spec: Spec) -> tuple[float, float, float] | None:
    """(turn-on voltage, the supply's top, the bus limit) of a brake chopper for this
    stage, or None without an over-voltage trip (docs/physics.md §7.6)."""
    stage = spec.stage
    if stage.overvoltage_trip is None:
        return None
    returned = stage.supply.returned_energy
    limit_v = stage.overvoltage_trip
    if returned is not None and returned.back_voltage_max is not None:
        limit_v = min(limit_v, returned.back_voltage_max)
    top = _highest_supply(spec)
    if returned is not None and returned.full_charge_voltage is not None:
        top = max(top, returned.full_charge_voltage)
    return float(P.braking.brake_turn_on_voltage(top, limit_v)), top, limit_v
