"""Control and timing: current-loop bandwidth, speed ripple, PWM resolution, pulses.

docs/physics.md §4.5, §7.2, §7.3 and §7.8.
"""

from __future__ import annotations

import math

__all__ = [
    "sampling_delay",
    "current_loop_bandwidth_max",
    "current_step_headroom_voltage",
    "speed_ripple_peak_to_peak",
    "mechanical_time_constant",
    "pwm_resolution_counts",
    "pwm_counts_used",
    "pulse_on_time",
    "pulse_off_time",
    "dead_time_fraction",
]


def sampling_delay(pwm_frequency, delay_periods=1.5, double_update=False):
    """Total loop delay ``T_d`` [s]: 1.5 PWM periods single update, half with double.

    Parameters: pwm_frequency [Hz]; delay_periods [-] (1.5 for PWM-synchronous
    sampling with one-period computation, Buso & Mattavelli, Digital Control in Power
    Electronics, 2006);
    double_update sampling twice per period (halves the delay).
    Source: Buso and Mattavelli, Digital Control in Power Electronics, 2006; derived here
    (docs/physics.md §7.3).
    """
    delay = delay_periods / pwm_frequency
    return 0.5 * delay if double_update else delay


def current_loop_bandwidth_max(pwm_frequency, phase_margin=math.pi / 4, delay_periods=1.5, double_update=False):
    """Delay-limited current-loop crossover frequency [Hz].

    Parameters: pwm_frequency [Hz]; phase_margin [rad] required (pi/4 = 45 deg);
    delay_periods [-]; double_update [bool].
    PI on an R-L plant (phase about -90 deg at crossover) with delay ``T_d``:
    ``PM = pi/2 - 2 pi f_c T_d`` so ``f_c = (pi/2 - PM) / (2 pi T_d)``; 1.5 periods ->
    ``f_pwm/12`` at 45 deg, ``f_pwm/18`` at 60 deg; double update doubles it.
    Source: derived here (docs/physics.md §7.3); Buso and Mattavelli, Digital Control in Power
    Electronics, 2006; sensemagic.nl control-loop-bandwidth article.
    """
    delay = sampling_delay(pwm_frequency, delay_periods, double_update)
    return (0.5 * math.pi - phase_margin) / (2.0 * math.pi * delay)


def current_step_headroom_voltage(bandwidth, inductance, current_step):
    """Voltage headroom for a current step at a loop bandwidth ``omega_c L dI`` [V].

    Parameters: bandwidth [Hz] crossover ``f_c``; inductance [H] loop;
    current_step [A].  First-order response without saturating.
    Source: derived here (docs/physics.md §4.5).
    """
    return 2.0 * math.pi * bandwidth * inductance * current_step


def speed_ripple_peak_to_peak(torque_constant, ripple_peak_to_peak, inertia, ripple_frequency):
    """Peak-to-peak speed ripple from a triangular torque ripple [rad/s].

    Parameters: torque_constant [N m/A]; ripple_peak_to_peak [A]; inertia [kg m^2]
    total; ripple_frequency [Hz].  ``dw_pp = k_t dI / (8 J f_r)`` (symmetric triangle).
    Source: derived here (docs/physics.md §7.2).
    """
    return torque_constant * ripple_peak_to_peak / (8.0 * inertia * ripple_frequency)


def mechanical_time_constant(resistance, inertia, torque_constant, back_emf_constant):
    """Mechanical time constant ``tau_m = R J / (k_t k_e)`` [s].

    Source: derived here; Hughes and Drury, Electric Motors and Drives, 4th ed., 2013, ch.
    3 (docs/physics.md §7.2).
    """
    return resistance * inertia / (torque_constant * back_emf_constant)


def pwm_resolution_counts(clock_frequency, pwm_frequency, centre_aligned=True):
    """Timer counts per PWM period ``f_clock / f_pwm`` (halved centre-aligned) [-].

    Source: derived here (docs/physics.md §4.6 and §7.8).
    """
    counts = clock_frequency / pwm_frequency
    return 0.5 * counts if centre_aligned else counts


def pwm_counts_used(counts, modulation):
    """Usable counts at the operating point ``|m| counts`` [-] (< ~100: info).

    Source: derived here; the 100 is common practice, no published source (docs/physics.md
    §7.8).
    """
    return abs(modulation) * counts if isinstance(modulation, (int, float)) else counts * abs(modulation)


def pulse_on_time(duty, pwm_frequency):
    """On-time of a leg ``D T_pwm`` [s] (compare with the minimum pulse / sampling window).

    Source: derived here (docs/physics.md §7.8).
    """
    return duty / pwm_frequency


def pulse_off_time(duty, pwm_frequency):
    """Off-time of a leg ``(1 - D) T_pwm`` [s] (bootstrap refresh, low-side shunt sampling).

    Source: derived here (docs/physics.md §7.8).
    """
    return (1.0 - duty) / pwm_frequency


def dead_time_fraction(dead_time, pwm_frequency):
    """Share of the supply voltage lost per switching leg ``t_dead f_pwm`` [-].

    500 ns at 20 kHz -> 1 %.  Source: Murai, Watanabe, Iwasaki, IEEE Trans. Ind. Appl.
    23(5), 1987 (docs/physics.md §1.6).
    """
    return dead_time * pwm_frequency
