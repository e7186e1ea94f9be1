"""Braking into real supplies (docs/physics.md §7.6): a battery with charge limits, a
supply that cannot sink current, a back-voltage limit, and the brake resistor as the
fix.  Hand-derived worked values (arithmetic in the comments; derived here, energy
balance), energy conservation (hypothesis) and scipy.integrate.quad as the outside
reference for the linearly falling power."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize

from specguard import physics as p

SETTINGS = settings(derandomize=True, deadline=None, database=None, max_examples=200)

# The worked axis: J = 2e-5 kg m^2 braked from 6000 rpm to standstill in 0.1 s, on a
# 48 V bus with 470 uF and a 60 V trip.
J = 2e-5
W1 = 6000.0 * 2.0 * math.pi / 60.0  # 628.3185 rad/s
T_DEC = 0.1
C = 470e-6
V_N = 48.0
V_TRIP = 60.0


def test_worked_axis_energy_torque_power():
    # E = J w^2 / 2 = 0.5 * 2e-5 * 628.3185^2 = 1e-5 * 394784.18 = 3.9478 J
    energy = p.regenerative_energy(J, W1)
    assert energy == pytest.approx(3.947842, rel=1e-6)
    # T = J w / t = 2e-5 * 628.3185 / 0.1 = 0.125664 N m; P_peak = T w = 78.9568 W
    torque = p.braking_torque(J, W1, T_DEC)
    assert torque == pytest.approx(0.1256637, rel=1e-6)
    peak = p.braking_peak_power(torque, W1)
    assert peak == pytest.approx(78.95684, rel=1e-6)
    # constant-torque stop: P falls linearly to 0, E = P_peak t / 2 = 3.9478 J (same energy)
    assert p.braking_interval_energy(peak, T_DEC, 0.0) == pytest.approx(energy, rel=1e-12)
    assert p.braking_interval_energy(50.0, 0.1) == pytest.approx(5.0)  # constant: 50 W * 0.1 s
    # friction helps: 0.2 N m of friction leaves nothing for the motor to brake
    assert p.braking_torque(J, W1, T_DEC, friction_torque=0.2) == 0.0
    # 470 uF from 48 V to 60 V: 0.5 * 470e-6 * (3600 - 2304) = 235e-6 * 1296 = 0.30456 J
    assert p.capacitor_absorbable_energy(C, V_N, V_TRIP) == pytest.approx(0.30456, rel=1e-12)
    # no sink: V = sqrt(2304 + 2 * 3.94784 / 470e-6) = sqrt(2304 + 16799.3) = 138.21 V > 60 V trip
    assert p.bus_voltage_after_braking(C, V_N, energy) == pytest.approx(138.2148, rel=1e-6)


def test_supply_that_cannot_sink_current():
    # absorbs nothing: every joule goes into the capacitors (derived here, energy balance)
    peak = p.braking_peak_power(p.braking_torque(J, W1, T_DEC), W1)
    split = p.braking_energy_split(peak, T_DEC, C, V_N, 0.0)
    assert split.supply == 0.0 and split.resistor == 0.0
    assert split.capacitor == pytest.approx(3.947842, rel=1e-6)
    assert split.bus_voltage == pytest.approx(p.bus_voltage_after_braking(C, V_N, split.capacitor), rel=1e-12)


def test_back_voltage_limit_lowers_the_capacitor_budget():
    # a supply that tolerates 55 V at its output: limit = min(60, 55) = 55 V;
    # budget 0.5 * 470e-6 * (3025 - 2304) = 235e-6 * 721 = 0.169435 J (instead of 0.30456 J)
    assert p.bus_voltage_limit(V_TRIP) == V_TRIP
    assert p.bus_voltage_limit(V_TRIP, 55.0) == 55.0
    assert p.bus_voltage_limit(V_TRIP, 70.0) == V_TRIP
    assert p.capacitor_absorbable_energy(C, V_N, p.bus_voltage_limit(V_TRIP, 55.0)) == pytest.approx(0.169435)


def test_battery_charge_power():
    # P = I_chg V below V_full: 1 A at 48 V = 48 W; nothing at or above 58.8 V; nothing when blocked
    assert p.battery_charge_power_max(48.0, 58.8, 1.0) == 48.0
    assert p.battery_charge_power_max(58.8, 58.8, 1.0) == 0.0
    assert p.battery_charge_power_max(48.0, 58.8, 1.0, charging_blocked=True) == 0.0
    got = p.battery_charge_power_max(np.array([40.0, 58.8, 60.0]), 58.8, 2.0)
    assert got.tolist() == [80.0, 0.0, 0.0]


def test_battery_constant_power_without_cutoff():
    # 50 W for 0.1 s (E = 5 J) into a battery taking 48 W (1 A at 48 V), full at 58.8 V:
    # excess 2 W * 0.1 s = 0.2 J < E_cut = 0.5 * 470e-6 * (58.8^2 - 48^2) = 235e-6 * 1153.44
    # = 0.271058 J, so the battery takes 48 W * 0.1 s = 4.8 J and the capacitors 0.2 J;
    # V = sqrt(2304 + 0.4 / 470e-6) = sqrt(3155.06) = 56.170 V
    split = p.braking_energy_split(50.0, 0.1, C, V_N, None, 48.0, 58.8)
    assert split.supply == pytest.approx(4.8, rel=1e-12)
    assert split.capacitor == pytest.approx(0.2, rel=1e-9)
    assert split.resistor == 0.0
    assert split.bus_voltage == pytest.approx(56.16995, rel=1e-6)


def test_battery_linear_power_with_cutoff():
    # the worked axis (P0 = 78.9568 W falling to 0 in 0.1 s) into the same battery (48 W, 58.8 V):
    # b = P0 - P_s = 30.9568 W; largest excess b^2 T / (2 P0) = 958.32 * 0.1 / 157.91 = 0.6069 J
    # > E_cut = 0.271058 J, so the battery stops at
    # t_c = 2 E_cut / (b + sqrt(b^2 - 2 P0 E_cut / T)) = 0.542117 / (30.9568 + sqrt(958.32 - 428.04))
    #     = 0.542117 / (30.9568 + 23.0278) = 0.0100420 s, having taken 48 W * t_c = 0.482017 J
    peak = p.braking_peak_power(p.braking_torque(J, W1, T_DEC), W1)
    taken = p.battery_absorbed_energy(peak, T_DEC, C, V_N, 58.8, 1.0, 0.0)
    assert taken == pytest.approx(0.482017, rel=1e-5)
    split = p.braking_energy_split(peak, T_DEC, C, V_N, 0.0, 48.0, 58.8)
    assert split.supply == taken
    # the rest, 3.947842 - 0.482017 = 3.465825 J, into the capacitors:
    # V = sqrt(2304 + 2 * 3.465825 / 470e-6) = sqrt(2304 + 14748.19) = 130.58 V, above the trip
    assert split.capacitor == pytest.approx(3.465825, rel=1e-6)
    assert split.bus_voltage == pytest.approx(130.584, rel=1e-5)
    assert split.bus_voltage > V_TRIP


def test_blocked_or_full_battery_absorbs_nothing():
    peak = p.braking_peak_power(p.braking_torque(J, W1, T_DEC), W1)
    assert p.battery_absorbed_energy(peak, T_DEC, C, V_N, 58.8, 1.0, 0.0, charging_blocked=True) == 0.0
    assert p.battery_absorbed_energy(peak, T_DEC, C, 58.8, 58.8, 1.0, 0.0) == 0.0  # already full
    # a battery far from full with a large charge limit takes it all (P <= P_s throughout)
    assert p.battery_absorbed_energy(peak, T_DEC, C, V_N, 58.8, 10.0, 0.0) == pytest.approx(3.947842, rel=1e-6)


def test_brake_resistor_sizing():
    # turn-on rule (common practice, no published source): window [V_top (1 + m), V_lim (1 - m)],
    # middle of it.  48 V supply +5 % -> top 50.4 V; trip 60 V; m = 0.05:
    # [52.92, 57.0] -> V_on = 54.96 V
    v_on = p.brake_turn_on_voltage(50.4, V_TRIP)
    assert v_on == pytest.approx(54.96, rel=1e-12)
    assert math.isnan(p.brake_turn_on_voltage(58.0, V_TRIP))  # 60.9 > 57: no room
    # R_max = V_on^2 / P_peak = 3020.60 / 78.9568 = 38.256 Ohm
    peak = p.braking_peak_power(p.braking_torque(J, W1, T_DEC), W1)
    assert p.shunt_resistance_max(v_on, peak) == pytest.approx(38.2564, rel=1e-5)
    # pulse energy: 3.947842 - 0.5 * 470e-6 * (54.96^2 - 48^2) = 3.947842 - 235e-6 * 716.6016
    # = 3.947842 - 0.168401 = 3.779440 J; average over a 2 s cycle 1.889720 W
    pulse = p.brake_resistor_pulse_energy(p.regenerative_energy(J, W1), C, V_N, v_on)
    assert pulse == pytest.approx(3.779440, rel=1e-6)
    assert p.braking_average_power(pulse, 2.0) == pytest.approx(1.889720, rel=1e-6)
    split = p.braking_energy_split(peak, T_DEC, C, V_N, 0.0, turn_on_voltage=v_on)
    assert split.resistor == pytest.approx(pulse, rel=1e-12)
    assert split.capacitor == pytest.approx(0.168401, rel=1e-5)
    assert split.bus_voltage == pytest.approx(v_on, rel=1e-12)
    # with the back-voltage limit of 55 V the window is [52.92, 52.25]: empty
    assert math.isnan(p.brake_turn_on_voltage(50.4, p.bus_voltage_limit(V_TRIP, 55.0)))
    # a chopper below the battery's full voltage keeps it charging: no cutoff
    low_on = p.braking_energy_split(peak, T_DEC, C, V_N, 0.0, 48.0, 58.8, turn_on_voltage=54.0)
    assert low_on.supply == pytest.approx(48.0 * (1 - 48.0 / peak) * T_DEC + 0.5 * 48.0 * 48.0 / peak * T_DEC)


def test_rising_power_is_refused():
    with pytest.raises(ValueError):
        p.braking_energy_split(10.0, 0.1, C, V_N, 20.0)
    with pytest.raises(ValueError):
        p.braking_energy_split(np.array([10.0, 10.0]), 0.1, C, V_N, np.array([5.0, 20.0]))


# ---------------------------------------------------------------- scipy.integrate.quad reference


def quad_split(p0, p1, duration, capacitance, v_n, p_s, v_cut, v_on):
    """Outside reference: the same energy balance integrated with scipy.integrate.quad,
    the supply's cutoff time found with scipy.optimize.brentq on the integrated excess."""

    def power(t):
        return p0 + (p1 - p0) * t / duration

    energy = integrate.quad(power, 0.0, duration)[0]
    knot = duration * (p0 - p_s) / (p0 - p1) if p0 > p1 else None
    points = [knot] if knot is not None and 0.0 < knot < duration else None

    def excess(t):
        if t <= 0.0:
            return 0.0
        inner = [x for x in (points or []) if x < t] or None
        return integrate.quad(lambda s: max(power(s) - p_s, 0.0), 0.0, t, points=inner, epsabs=1e-14)[0]

    stops = v_cut < v_on
    e_cut = 0.5 * capacitance * max(v_cut**2 - v_n**2, 0.0) if stops else math.inf
    if stops and e_cut == 0.0:
        t_c = 0.0
    elif excess(duration) >= e_cut:
        t_c = optimize.brentq(lambda t: excess(t) - e_cut, 0.0, duration, xtol=1e-15 * duration, rtol=1e-13)
    else:
        t_c = duration
    inner = [x for x in (points or []) if x < t_c] or None
    supply = integrate.quad(lambda s: min(power(s), p_s), 0.0, t_c, points=inner, epsabs=1e-14)[0] if t_c > 0 else 0.0
    rest = energy - supply
    e_on = 0.5 * capacitance * max(v_on**2 - v_n**2, 0.0) if math.isfinite(v_on) else math.inf
    capacitor = min(rest, e_on)
    return supply, capacitor, rest - capacitor, energy


CASES = [
    # P0 [W], P1 [W], T [s], C [F], V_n [V], P_s [W], V_cut [V], V_on [V]
    (78.95684, 0.0, 0.1, 470e-6, 48.0, 48.0, 58.8, math.inf),
    (78.95684, 0.0, 0.1, 470e-6, 48.0, 48.0, 58.8, 62.0),
    (78.95684, 20.0, 0.1, 470e-6, 48.0, 30.0, 58.8, 62.0),
    (78.95684, 60.0, 0.1, 470e-6, 48.0, 30.0, 50.0, math.inf),
    (500.0, 0.0, 0.5, 2e-3, 300.0, 100.0, 320.0, 350.0),
    (500.0, 0.0, 0.5, 2e-3, 300.0, 100.0, 400.0, 350.0),
    (500.0, 500.0, 0.05, 2e-3, 300.0, 100.0, 310.0, 350.0),
    (10.0, 0.0, 1.0, 1e-4, 24.0, 0.0, math.inf, 30.0),
]


@pytest.mark.parametrize("case", CASES)
def test_split_against_scipy_quad(case):
    supply, capacitor, resistor, energy = quad_split(*case)
    split = p.braking_energy_split(case[0], case[2], case[3], case[4], case[1], case[5], case[6], case[7])
    scale = energy
    assert split.supply == pytest.approx(supply, rel=1e-7, abs=1e-9 * scale)
    assert split.capacitor == pytest.approx(capacitor, rel=1e-7, abs=1e-9 * scale)
    assert split.resistor == pytest.approx(resistor, rel=1e-7, abs=1e-9 * scale)


powers = st.floats(1.0, 5000.0)
fractions = st.floats(0.0, 1.0)
durations = st.floats(1e-3, 2.0)
capacitances = st.floats(1e-5, 1e-2)
voltages = st.floats(12.0, 600.0)
rises = st.floats(0.0, 0.5)


@settings(derandomize=True, deadline=None, database=None, max_examples=60)
@given(powers, fractions, durations, capacitances, voltages, fractions, rises, rises)
def test_split_against_scipy_quad_random(p0, frac1, duration, capacitance, v_n, frac_s, cut_rise, on_rise):
    case = (p0, frac1 * p0, duration, capacitance, v_n, frac_s * p0 * 1.2, v_n * (1 + cut_rise), v_n * (1 + on_rise))
    assume(abs(case[0] - case[1]) > 1e-6 * p0 or case[0] == case[1])
    supply, capacitor, resistor, energy = quad_split(*case)
    split = p.braking_energy_split(case[0], case[2], case[3], case[4], case[1], case[5], case[6], case[7])
    assert split.supply == pytest.approx(supply, rel=1e-6, abs=1e-8 * energy)
    assert split.capacitor == pytest.approx(capacitor, rel=1e-6, abs=1e-8 * energy)
    assert split.resistor == pytest.approx(resistor, rel=1e-6, abs=1e-8 * energy)


# ---------------------------------------------------------------- energy conservation (hypothesis)


@SETTINGS
@given(powers, fractions, durations, capacitances, voltages, fractions, st.floats(0.0, 1.0), rises, st.booleans())
def test_energy_is_conserved(p0, frac1, duration, capacitance, v_n, frac_s, cut_rise, on_rise, chopper):
    # battery + capacitors + resistor = returned energy (derived here, energy balance)
    p1 = frac1 * p0
    v_on = v_n * (1 + on_rise) if chopper else math.inf
    split = p.braking_energy_split(p0, duration, capacitance, v_n, p1, frac_s * p0 * 1.2, v_n * (1 + cut_rise), v_on)
    energy = p.braking_interval_energy(p0, duration, p1)
    assert split.supply + split.capacitor + split.resistor == pytest.approx(energy, rel=1e-9)
    assert split.supply >= 0.0 and split.capacitor >= 0.0 and split.resistor >= 0.0
    assert split.supply <= energy * (1 + 1e-12)
    assert split.bus_voltage >= v_n
    assert split.bus_voltage == pytest.approx(p.bus_voltage_after_braking(capacitance, v_n, split.capacitor))
    if chopper:
        assert split.bus_voltage <= v_on * (1 + 1e-12)
        assert split.resistor == pytest.approx(
            p.brake_resistor_pulse_energy(energy, capacitance, v_n, v_on, split.supply),
            rel=1e-9,
            abs=1e-12 * energy,
        )


@SETTINGS
@given(powers, fractions, durations, capacitances, voltages, st.floats(0.0, 50.0), rises)
def test_a_battery_only_helps(p0, frac1, duration, capacitance, v_n, current, cut_rise):
    # a battery never raises the bus above the no-sink value; blocked, it absorbs nothing
    p1 = frac1 * p0
    v_full = v_n * (1 + cut_rise)
    alone = p.braking_energy_split(p0, duration, capacitance, v_n, p1)
    taken = p.battery_absorbed_energy(p0, duration, capacitance, v_n, v_full, current, p1)
    blocked = p.battery_absorbed_energy(p0, duration, capacitance, v_n, v_full, current, p1, charging_blocked=True)
    assert blocked == 0.0
    assert 0.0 <= taken <= alone.capacitor * (1 + 1e-12)
    with_battery = p.braking_energy_split(
        p0, duration, capacitance, v_n, p1, p.battery_charge_power_max(v_n, v_full, current), v_full
    )
    assert with_battery.bus_voltage <= alone.bus_voltage * (1 + 1e-12)


@SETTINGS
@given(capacitances, voltages, st.floats(0.01, 0.5), st.floats(0.0, 1.0))
def test_a_back_voltage_limit_below_the_trip_lowers_the_budget(capacitance, v_n, trip_rise, where):
    trip = v_n * (1 + trip_rise)
    back = v_n + where * (trip - v_n) * 0.999  # between V_n and the trip
    assume(back < trip)
    full = p.capacitor_absorbable_energy(capacitance, v_n, p.bus_voltage_limit(trip))
    limited = p.capacitor_absorbable_energy(capacitance, v_n, p.bus_voltage_limit(trip, back))
    assert limited < full


def test_array_path_matches_scalar_path():
    p0 = np.array([78.95684, 500.0, 500.0, 10.0])
    p1 = np.array([0.0, 0.0, 500.0, 0.0])
    duration = np.array([0.1, 0.5, 0.05, 1.0])
    cap = np.array([470e-6, 2e-3, 2e-3, 1e-4])
    v_n = np.array([48.0, 300.0, 300.0, 24.0])
    p_s = np.array([48.0, 100.0, 100.0, 0.0])
    v_cut = np.array([58.8, 400.0, 310.0, np.inf])
    v_on = np.array([np.inf, 350.0, 350.0, 30.0])
    vec = p.braking_energy_split(p0, duration, cap, v_n, p1, p_s, v_cut, v_on)
    for i in range(len(p0)):
        one = p.braking_energy_split(
            float(p0[i]),
            float(duration[i]),
            float(cap[i]),
            float(v_n[i]),
            float(p1[i]),
            float(p_s[i]),
            float(v_cut[i]),
            float(v_on[i]),
        )
        for a, b in zip(vec, one, strict=True):
            assert a[i] == pytest.approx(b, rel=1e-12)
    torque = p.braking_torque(np.array([J, J]), W1, np.array([0.1, 1.0]), 0.0, np.array([0.0, 0.02]))
    assert torque[0] == pytest.approx(p.braking_torque(J, W1, 0.1))
    assert torque[1] == pytest.approx(p.braking_torque(J, W1, 1.0, 0.0, 0.02))
    on = p.brake_turn_on_voltage(np.array([50.4, 58.0]), V_TRIP)
    assert on[0] == pytest.approx(54.96) and math.isnan(on[1])
