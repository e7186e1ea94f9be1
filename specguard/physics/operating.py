"""Operating point: required voltage, modulation, headroom and the supply window.

docs/physics.md §4.  Motoring convention: speed, current and voltages positive.
Bridge drops are written as a series resistance (switches, shunt, cable, choke DCR)
carrying the load current all the time, plus the dead-time loss of about
``V t_dead f_pwm`` per switching leg (Murai et al., IEEE Trans. Ind. Appl. 23(5), 1987; §1.6), so the
average load voltage available is ``m V - I R_series - n_legs V t_dead f_pwm``.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from specguard.physics import hbridge
from specguard.physics._num import memo_scalars, namespace
from specguard.physics._solve import illinois

__all__ = [
    "back_emf",
    "current_for_torque",
    "terminal_voltage_dc",
    "terminal_voltage_six_step",
    "torque_dq",
    "q_current_for_torque",
    "phase_voltage_peak_dq",
    "phase_voltage_dq",
    "modulation_index",
    "supply_voltage_min_sinusoidal",
    "phase_voltage_peak_max",
    "dead_time_voltage",
    "modulation_required",
    "modulation_max",
    "modulation_headroom",
    "supply_voltage_min",
    "supply_voltage_max_duty",
    "supply_voltage_max_ripple_linear",
    "supply_voltage_max_ripple",
    "SupplyWindow",
    "supply_voltage_window",
]

_SQRT3 = math.sqrt(3.0)


def back_emf(back_emf_constant, angular_speed):
    """Back-EMF ``E = k_e omega`` [V].

    Parameters: back_emf_constant [V s/rad] in the convention of the drive (DC: k_e;
    six-step: flat-top line-to-line); angular_speed [rad/s] mechanical.
    Source: Hughes and Drury, Electric Motors and Drives, 4th ed., 2013, ch. 3
    (docs/physics.md §4.1).
    """
    return back_emf_constant * angular_speed


def current_for_torque(torque, torque_constant, no_load_current=0.0):
    """Current for a load torque ``I = T / k_t + I_0`` [A].

    Parameters: torque [N m]; torque_constant [N m/A]; no_load_current [A] friction.
    Source: Hughes and Drury, Electric Motors and Drives, 4th ed., 2013, ch. 3
    (docs/physics.md §4.1).
    """
    return torque / torque_constant + no_load_current


def terminal_voltage_dc(back_emf_constant, angular_speed, current, resistance, brush_drop=0.0):
    """Required DC-motor terminal voltage ``k_e omega + R(T_w) I + V_brush`` [V].

    Parameters: back_emf_constant [V s/rad]; angular_speed [rad/s]; current [A];
    resistance [Ohm] HOT winding resistance (thermal.resistance_at_temperature);
    brush_drop [V].  Steady state (the ``L dI/dt`` term of profiles omitted).
    Source: Hughes and Drury, Electric Motors and Drives, 4th ed., 2013, ch. 3; derived
    here (docs/physics.md §4.1).
    """
    return back_emf_constant * angular_speed + resistance * current + brush_drop


def terminal_voltage_six_step(
    line_back_emf_constant, angular_speed, current, terminal_resistance, switch_resistance=0.0
):
    """Required DC-side voltage for six-step drive ``E_ll + (R_tt + 2 R_on) I`` [V].

    Parameters: line_back_emf_constant [V s/rad] flat-top line-to-line ``k_e,ll``;
    angular_speed [rad/s]; current [A] block current; terminal_resistance [Ohm] hot
    ``R_tt`` (+ chokes, cable); switch_resistance [Ohm] per conducting switch.
    Source: derived here; Krishnan, Permanent Magnet Synchronous and Brushless DC Motor
    Drives, 2010 (docs/physics.md §4.2).
    """
    return line_back_emf_constant * angular_speed + (terminal_resistance + 2.0 * switch_resistance) * current


def torque_dq(pole_pairs, flux_linkage, q_current, d_current=0.0, d_inductance=0.0, q_inductance=0.0):
    """Electromagnetic torque of a PMSM, peak-amplitude dq model [N m].

    Parameters: pole_pairs [-]; flux_linkage [Wb] peak phase ``psi_pm``; q_current,
    d_current [A] peak; d_inductance, q_inductance [H].
    ``T = 1.5 p (psi i_q + (L_d - L_q) i_d i_q)``.  Source: Krishnan, Permanent Magnet
    Synchronous and Brushless DC Motor Drives, 2010 (docs/physics.md §4.3).
    """
    return 1.5 * pole_pairs * (flux_linkage * q_current + (d_inductance - q_inductance) * d_current * q_current)


def q_current_for_torque(torque, pole_pairs, flux_linkage):
    """Peak q-axis current for a torque with ``i_d = 0`` ``T / (1.5 p psi)`` [A].

    Source: Krishnan, Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010
    (docs/physics.md §4.3).
    """
    return torque / (1.5 * pole_pairs * flux_linkage)


def phase_voltage_dq(
    mechanical_speed,
    pole_pairs,
    flux_linkage,
    phase_resistance,
    q_inductance,
    q_current,
    d_current=0.0,
    d_inductance=None,
):
    """The d and q components of the steady-state phase voltage of a PMSM ``(v_d, v_q)`` [V].

    Parameters as :func:`phase_voltage_peak_dq`.
    ``v_d = R i_d - omega_e L_q i_q``, ``v_q = R i_q + omega_e (L_d i_d + psi)``,
    ``omega_e = p omega_m``; their magnitude is :func:`phase_voltage_peak_dq`.
    Source: Krishnan, Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010;
    derived here (docs/physics.md §4.3).
    """
    omega_e = pole_pairs * mechanical_speed
    l_d = q_inductance if d_inductance is None else d_inductance
    v_d = phase_resistance * d_current - omega_e * q_inductance * q_current
    v_q = phase_resistance * q_current + omega_e * (l_d * d_current + flux_linkage)
    return v_d, v_q


def phase_voltage_peak_dq(
    mechanical_speed,
    pole_pairs,
    flux_linkage,
    phase_resistance,
    q_inductance,
    q_current,
    d_current=0.0,
    d_inductance=None,
):
    """Peak fundamental phase voltage of a PMSM in steady state [V].

    Parameters: mechanical_speed [rad/s]; pole_pairs [-]; flux_linkage [Wb] peak
    phase; phase_resistance [Ohm] hot star-equivalent plus switch, choke and cable
    resistance per phase; q_inductance [H]; q_current [A] peak; d_current [A] peak
    (0 for the usual control; negative = field weakening, outside the simple model);
    d_inductance [H] (defaults to q_inductance).

    ``omega_e = p omega_m``, ``v_d = R i_d - omega_e L_q i_q``,
    ``v_q = R i_q + omega_e (L_d i_d + psi)``, ``V_ph = sqrt(v_d^2 + v_q^2)``.
    Source: Krishnan, Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010;
    derived here (docs/physics.md §4.3).
    """
    xp = namespace(
        mechanical_speed,
        pole_pairs,
        flux_linkage,
        phase_resistance,
        q_inductance,
        q_current,
        d_current,
    )
    if d_inductance is None:
        d_inductance = q_inductance
    omega_e = pole_pairs * mechanical_speed
    v_d = phase_resistance * d_current - omega_e * q_inductance * q_current
    v_q = phase_resistance * q_current + omega_e * (d_inductance * d_current + flux_linkage)
    return xp.sqrt(v_d * v_d + v_q * v_q)


def modulation_index(phase_voltage_peak, supply_voltage):
    """Three-phase modulation index ``M = 2 V_ph1,pk / V`` [-].

    Source: derived here (docs/physics.md §0.2 and §4.3).
    """
    return 2.0 * phase_voltage_peak / supply_voltage


def _strategy_factor(strategy):
    if strategy == "svpwm":
        return _SQRT3
    if strategy == "spwm":
        return 2.0
    raise ValueError(f"unknown modulation strategy {strategy!r}")


def dead_time_voltage(supply_voltage, dead_time, pwm_frequency, switching_legs=1):
    """Average voltage lost to dead time ``n V t_dead f_pwm`` [V].

    Parameters: supply_voltage [V]; dead_time [s]; pwm_frequency [Hz];
    switching_legs [-] legs switching in the current path (H-bridge: see
    hbridge.switching_leg_count).  500 ns at 20 kHz -> 1 % of V per leg.
    Source: Murai, Watanabe, Iwasaki, IEEE Trans. Ind. Appl. 23(5), 1987 (docs/physics.md §1.6).
    """
    return switching_legs * supply_voltage * dead_time * pwm_frequency


def supply_voltage_min_sinusoidal(phase_voltage_peak, strategy, max_duty=1.0, dead_time=0.0, pwm_frequency=0.0):
    """Minimum bus voltage for a peak phase voltage in linear modulation [V].

    Parameters: phase_voltage_peak [V]; strategy ``"spwm"``/``"svpwm"``; max_duty [-]
    leg-duty limit (range ``[1 - D_max, D_max]``); dead_time [s]; pwm_frequency [Hz].

    SVPWM ``V >= sqrt3 V_ph / (2 D_max - 1 - k)``, SPWM ``V >= 2 V_ph / (2 D_max - 1 - k)``
    with the dead-time term ``k = (4/pi) sqrt3 (or 2) t_dead f_pwm`` / ... see
    :func:`phase_voltage_peak_max`, of which this is the inverse. +inf when the
    duty range minus the dead-time loss leaves no fundamental voltage at all.
    Source: derived here (docs/physics.md §4.3); dead-time fundamental derived here from the
    per-leg loss of §1.6 (square wave of amplitude ``V t_d f`` -> fundamental x 4/pi).
    """
    xp = namespace(phase_voltage_peak, max_duty, dead_time, pwm_frequency)
    factor = _strategy_factor(strategy)
    per_volt = (2.0 * max_duty - 1.0) / factor - (4.0 / math.pi) * dead_time * pwm_frequency
    safe = xp.where(per_volt > 0.0, per_volt, 1.0)
    return xp.where(per_volt > 0.0, phase_voltage_peak / safe, xp.inf)


def phase_voltage_peak_max(supply_voltage, strategy, max_duty=1.0, dead_time=0.0, pwm_frequency=0.0):
    """Largest peak fundamental phase voltage in linear modulation [V].

    ``(2 D_max - 1) V / sqrt3`` (SVPWM) or ``(2 D_max - 1) V / 2`` (SPWM), minus the
    fundamental of the dead-time error, ``(4/pi) V t_dead f_pwm`` (the per-leg loss of
    §1.6 is a square wave following the current sign).
    Source: derived here (docs/physics.md §4.3), including the dead-time term (per-leg error of
    Murai et al., IEEE Trans. Ind. Appl. 23(5), 1987).
    """
    factor = _strategy_factor(strategy)
    return supply_voltage * ((2.0 * max_duty - 1.0) / factor - (4.0 / math.pi) * dead_time * pwm_frequency)


def modulation_required(
    terminal_voltage,
    supply_voltage,
    current=0.0,
    series_resistance=0.0,
    dead_time=0.0,
    pwm_frequency=0.0,
    scheme=hbridge.UNIPOLAR_SINGLE,
):
    """Modulation ``m_op`` needed at the operating point (H-bridge, six-step) [-].

    Parameters: terminal_voltage [V] motor terminal (or six-step DC-side) voltage;
    supply_voltage [V]; current [A]; series_resistance [Ohm] switches in the path,
    shunt, cable, choke DCR; dead_time [s]; pwm_frequency [Hz]; scheme (number of
    switching legs for the dead-time loss).

    ``m_op = (V_term + I R_series) / V + n_legs t_dead f_pwm``; the leg duty follows
    from hbridge.leg_duty.  Deviation: docs/physics.md §4.1 writes
    ``V_term / (V - I R - V_dead)``; the form here is the exact inverse of its own
    ``V_avail = m V - I R - V_dead`` (the drops do not scale with m); both agree to
    first order in the drops.  Source: derived here (docs/physics.md §4.1).
    """
    legs = hbridge.switching_leg_count(scheme)
    return (terminal_voltage + current * series_resistance) / supply_voltage + legs * dead_time * pwm_frequency


def modulation_max(max_duty, scheme):
    """Largest modulation from the controller's leg-duty limit ``D_max`` [-].

    unipolar_single ``m_max = D_max``; bipolar and phase-shifted ``2 D_max - 1``.
    ``D_max`` (bootstrap refresh, minimum off time, sampling window) is typically
    0.95-0.99 (common practice, no published source): take it from the spec.
    Source: derived here; typical values: common practice, no published source
    (docs/physics.md §4.1).
    """
    return hbridge.modulation_from_leg_duty(max_duty, scheme)


def modulation_headroom(required_modulation, maximum_modulation):
    """Relative headroom to the duty limit ``1 - m_op / m_max`` [-] (< 0: unreachable).

    Source: derived here (docs/physics.md §4.1 and §7.9) (warn below 10 %: common practice).
    """
    return 1.0 - required_modulation / maximum_modulation


def supply_voltage_min(
    terminal_voltage,
    maximum_modulation,
    current=0.0,
    series_resistance=0.0,
    headroom_voltage=0.0,
    reserve_fraction=0.0,
    dead_time=0.0,
    pwm_frequency=0.0,
    switching_legs=1,
):
    """Minimum supply voltage for the speed and torque with control headroom [V].

    Parameters: terminal_voltage [V] required at the worst point (top speed, hot
    winding, peak torque); maximum_modulation [-] ``m_max``; current [A];
    series_resistance [Ohm] bridge drops; headroom_voltage [V] control headroom,
    e.g. control.current_step_headroom_voltage (``omega_c L dI_step``);
    reserve_fraction [-] practice reserve on ``V_req`` (10-20 %: common practice, no
    published source); dead_time [s]; pwm_frequency [Hz]; switching_legs [-].

    ``V_min = (V_req (1 + reserve) + V_headroom + I R) / (m_max - n t_dead f)``;
    +inf where the denominator is not positive (no voltage works).
    Source: derived here; reserve: common practice, no published source (docs/physics.md §4.5).
    """
    xp = namespace(
        terminal_voltage, maximum_modulation, current, series_resistance, headroom_voltage, dead_time, pwm_frequency
    )
    usable = maximum_modulation - switching_legs * dead_time * pwm_frequency
    safe = xp.where(usable > 0.0, usable, 1.0)
    value = (terminal_voltage * (1.0 + reserve_fraction) + headroom_voltage + current * series_resistance) / safe
    return xp.where(usable > 0.0, value, xp.inf)


def supply_voltage_max_duty(
    terminal_voltage,
    modulation_floor=0.2,
    current=0.0,
    series_resistance=0.0,
    dead_time=0.0,
    pwm_frequency=0.0,
    switching_legs=1,
):
    """Largest supply voltage that keeps ``m_op`` above a floor (supply oversized) [V].

    Parameters: terminal_voltage [V] at the main operating point; modulation_floor
    [-] lowest acceptable modulation (warn below 0.2, info below 0.4: common
    practice, no published source); other parameters as :func:`supply_voltage_min`.
    ``V_duty = (V_term + I R) / (m_low - n t_dead f)``; +inf if the dead-time share
    alone reaches the floor.  Source: derived here; floor: common practice, no published
    source (docs/physics.md §4.6).
    """
    xp = namespace(terminal_voltage, modulation_floor, current, series_resistance, dead_time, pwm_frequency)
    usable = modulation_floor - switching_legs * dead_time * pwm_frequency
    safe = xp.where(usable > 0.0, usable, 1.0)
    return xp.where(usable > 0.0, (terminal_voltage + current * series_resistance) / safe, xp.inf)


def supply_voltage_max_ripple_linear(required_voltage, inductance, pwm_frequency, ripple_limit, scheme):
    """Largest supply voltage meeting a ripple limit, LINEAR formula (reference) [V].

    Parameters: required_voltage [V] ``V_req`` (load average voltage incl. drops);
    inductance [H]; pwm_frequency [Hz] leg frequency; ripple_limit [A] allowed
    peak-to-peak; scheme.
    bipolar ``L f dI + sqrt((L f dI)^2 + V_req^2)`` (standstill ``2 L f dI``);
    unipolar_single ``V_req / (1 - L f dI / V_req)``, no bound (+inf) if
    ``L f dI >= V_req``; phase-shifted: as unipolar_single with ``f -> 2 f``.
    The rules use the exact :func:`supply_voltage_max_ripple`.
    Source: derived here (docs/physics.md §4.6).
    """
    xp = namespace(required_voltage, inductance, pwm_frequency, ripple_limit)
    if scheme == hbridge.BIPOLAR:
        a = inductance * pwm_frequency * ripple_limit
        return a + xp.sqrt(a * a + required_voltage * required_voltage)
    a = inductance * hbridge.ripple_frequency(pwm_frequency, scheme) * ripple_limit
    ratio = a / xp.where(required_voltage > 0.0, required_voltage, 1.0)
    bounded = xp.logical_and(required_voltage > 0.0, ratio < 1.0)
    safe = xp.where(bounded, 1.0 - ratio, 1.0)
    return xp.where(bounded, required_voltage / safe, xp.inf)


@memo_scalars(512)
def supply_voltage_max_ripple(
    terminal_voltage,
    inductance,
    resistance,
    pwm_frequency,
    ripple_limit,
    scheme,
    current=0.0,
    series_resistance=0.0,
    dead_time=0.0,
    voltage_ceiling_factor=1e3,
    rtol=1e-10,
):
    """Largest supply voltage whose EXACT ripple at the operating point meets a limit [V].

    Parameters: terminal_voltage [V] at the operating point; inductance [H] loop at
    f_r; resistance [Ohm] hot loop resistance (ripple shape); pwm_frequency [Hz];
    ripple_limit [A] peak-to-peak; scheme; current, series_resistance, dead_time as
    :func:`modulation_required`; voltage_ceiling_factor [-] search bound above the
    voltage at which ``m_op = 1``; rtol [-] relative tolerance.

    With the operating point fixed, ``m_op(V)`` falls as V rises and the exact ripple
    ``dI(V, m_op(V))`` rises monotonically; at ``m_op = 1`` it is zero.  Bisection (log
    scale) on the exact §1.4 ripple; +inf when the ripple stays below the limit up to
    the ceiling (unipolar schemes saturate: no bound), as in the linear §4.6 forms.
    Source: derived here (docs/physics.md §4.6), solved on the exact §1.4 formula here.
    """
    xp = namespace(
        terminal_voltage,
        inductance,
        resistance,
        pwm_frequency,
        ripple_limit,
        current,
        series_resistance,
    )
    legs = hbridge.switching_leg_count(scheme)
    drop = terminal_voltage + current * series_resistance
    dead = legs * dead_time * pwm_frequency
    if not xp.vector and drop <= 0.0:
        # No voltage needed (standstill without torque): m_op = dead for every V, and
        # the exact ripple at a fixed duty is proportional to V (its K = (V1 - V2)/R),
        # so the bound follows from the ripple at 1 V; none when that ripple is zero.
        per_volt = hbridge.ripple_peak_to_peak(1.0, inductance, resistance, pwm_frequency, dead, scheme)
        return ripple_limit / per_volt if per_volt > 0.0 else xp.inf
    # arrays: the elements without a drop take the bound above, the others are solved
    # with the drop lifted to a positive value so that every branch stays finite
    idle = None
    if xp.vector:
        idle = drop <= 0.0
        per_volt = hbridge.ripple_peak_to_peak(1.0, inductance, resistance, pwm_frequency, dead, scheme)
        idle_bound = xp.where(per_volt > 0.0, ripple_limit / xp.where(per_volt > 0.0, per_volt, 1.0), xp.inf)
        drop = xp.where(idle, 1.0, drop)
    v_floor = drop / (1.0 - dead)  # m_op = 1 there: zero ripple

    def ripple(volts):
        m = drop / volts + dead
        return hbridge.ripple_peak_to_peak(volts, inductance, resistance, pwm_frequency, m, scheme)

    v_ceiling = v_floor * voltage_ceiling_factor
    unbounded = ripple(v_ceiling) <= ripple_limit
    # Tight bracket first: the exact ripple never exceeds the linear one, so the linear
    # bound (when finite and valid) is already on the feasible side; 4x above it is
    # nearly always infeasible.  Otherwise fall back to the whole [floor, ceiling].
    linear = supply_voltage_max_ripple_linear(drop, inductance, pwm_frequency, ripple_limit, scheme)
    linear_ok = xp.logical_and(xp.logical_and(xp.isfinite(linear), linear > v_floor), dead_time == 0.0)
    lo = xp.where(linear_ok, xp.where(linear_ok, linear, 1.0), v_floor)
    hi = xp.minimum(lo * 4.0, v_ceiling)
    hi_feasible = ripple(hi) <= ripple_limit
    lo = xp.where(hi_feasible, hi, lo)
    hi = xp.where(hi_feasible, v_ceiling, hi)
    # Unbounded elements get a dummy bracket; their result is replaced by +inf.
    hi = xp.where(unbounded, lo * 2.0, hi)
    value = illinois(
        lambda v: xp.where(unbounded, xp.where(v > lo * 1.5, ripple_limit * 2.0, 0.0), ripple(v)),
        ripple_limit,
        lo,
        hi,
        xp,
        rtol=rtol,
    )
    value = xp.where(unbounded, xp.inf, value)
    return value if idle is None else xp.where(idle, idle_bound, value)


class SupplyWindow(NamedTuple):
    """Supply-voltage window [V] and whether it is empty."""

    minimum: object
    maximum: object
    maximum_from_duty: object
    maximum_from_ripple: object
    empty: object


def supply_voltage_window(
    terminal_voltage_worst,
    terminal_voltage_main,
    current_worst,
    current_main,
    max_duty,
    scheme,
    inductance,
    resistance,
    pwm_frequency,
    ripple_limit,
    series_resistance=0.0,
    headroom_voltage=0.0,
    reserve_fraction=0.0,
    modulation_floor=0.2,
    dead_time=0.0,
    controller_voltage_max=math.inf,
):
    """Recommended supply window ``[V_min, V_max]`` of an H-bridge / six-step axis [V].

    Parameters: terminal_voltage_worst [V] and current_worst [A] at the most demanding
    point (speed and torque); terminal_voltage_main [V] and current_main [A] at the
    main operating point (duty floor, ripple); max_duty [-]; scheme; inductance [H];
    resistance [Ohm] hot loop; pwm_frequency [Hz]; ripple_limit [A]; series_resistance
    [Ohm]; headroom_voltage [V]; reserve_fraction [-]; modulation_floor [-];
    dead_time [s]; controller_voltage_max [V] (minus any regeneration margin, §7.6).

    ``V_min`` from :func:`supply_voltage_min`; ``V_max = min(V_controller, V_duty,
    V_ripple)`` with the exact ripple bound.  ``empty`` where ``V_min > V_max``
    (error: add inductance, raise f_pwm or change scheme).
    Source: derived here (docs/physics.md §4.5-4.6).
    """
    xp = namespace(
        terminal_voltage_worst,
        terminal_voltage_main,
        current_worst,
        current_main,
        inductance,
        resistance,
        pwm_frequency,
        ripple_limit,
        series_resistance,
        headroom_voltage,
        dead_time,
    )
    legs = hbridge.switching_leg_count(scheme)
    v_min = supply_voltage_min(
        terminal_voltage_worst,
        modulation_max(max_duty, scheme),
        current_worst,
        series_resistance,
        headroom_voltage,
        reserve_fraction,
        dead_time,
        pwm_frequency,
        legs,
    )
    v_duty = supply_voltage_max_duty(
        terminal_voltage_main,
        modulation_floor,
        current_main,
        series_resistance,
        dead_time,
        pwm_frequency,
        legs,
    )
    v_ripple = supply_voltage_max_ripple(
        terminal_voltage_main,
        inductance,
        resistance,
        pwm_frequency,
        ripple_limit,
        scheme,
        current_main,
        series_resistance,
        dead_time,
    )
    v_max = xp.minimum(xp.minimum(v_duty, v_ripple), controller_voltage_max)
    return SupplyWindow(v_min, v_max, v_duty, v_ripple, v_min > v_max)
