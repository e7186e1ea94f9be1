"""Control and timing: current-loop bandwidth, speed ripple, PWM resolution, pulses.

docs/physics.md §4.5, §7.2, §7.3 and §7.8.
"""

from __future__ import annotations

import math

from specguard.physics._num import namespace, np
from specguard.physics._solve import illinois

__all__ = [
    "sampling_delay",
    "current_loop_bandwidth_max",
    "loop_total_delay",
    "loop_crossover_frequency",
    "loop_phase_margin",
    "loop_bandwidth_max_for_margin",
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
    ``f_pwm/12`` at 45 deg, ``f_pwm/18`` at 60 deg; double update doubles it.  The same
    relation as ``loop_bandwidth_max_for_margin`` without a feedback filter.
    Source: derived here (docs/physics.md §7.3); Buso and Mattavelli, Digital Control in Power
    Electronics, 2006; sensemagic.nl control-loop-bandwidth article.
    """
    delay = sampling_delay(pwm_frequency, delay_periods, double_update)
    return _delay_limited_crossover(delay, phase_margin)


def _delay_limited_crossover(delay, phase_margin):
    """``(pi/2 - PM) / (2 pi T_d)`` [Hz]: the crossover of ``omega_c/s exp(-s T_d)`` at margin PM."""
    return (0.5 * math.pi - phase_margin) / (2.0 * math.pi * delay)


def _atan(xp, value):
    return np.arctan(value) if xp.vector else math.atan(value)


def loop_total_delay(sampling_frequency, computation_delay_samples=1.0, pwm_transport_delay=0.0):
    """Total delay ``T_d`` of a sampled current loop [s].

    Parameters: sampling_frequency [Hz] ``f_s`` of the current controller (the PWM
    frequency for single update, twice it for double update); computation_delay_samples
    [-] ``n_c``, the samples between taking a measurement and applying the duty it gave
    (1 when the new duty is loaded at the next sampling instant, 0 when it is applied
    within the same period); pwm_transport_delay [s] ``T_x``, any further transport delay
    stated for the power stage (gate drive and dead-time propagation, a modulator that
    loads the duty later than the next sampling instant); 0 when none is stated.

    ``T_d = (1/2 + n_c) / f_s + T_x``.  The half sample is the zero-order hold formed
    by holding one duty over a sampling period (its phase lag is that of a delay of
    ``T_s/2`` below about ``f_s/4``); it and the computation samples are the parts
    counted.  Not counted here: the current-feedback filter (``filter_corner`` of
    ``loop_phase_margin``, kept apart because its lag is not a pure delay) and the
    converter's settling time.  ``n_c = 1`` gives the 1.5-sample convention of
    ``sampling_delay``.
    Source: derived here (docs/physics.md §7.3); the 1.5-sample delay of synchronous
    sampling with one sample of computation is in Buso and Mattavelli, Digital Control in
    Power Electronics, 2006.
    """
    return (0.5 + computation_delay_samples) / sampling_frequency + pwm_transport_delay


def loop_crossover_frequency(bandwidth, filter_corner=None, inductance_ratio=1.0):
    """Gain crossover of the current loop as built ``f_x`` [Hz].

    Parameters: bandwidth [Hz] ``f_c = omega_c / 2 pi`` the loop was tuned for;
    filter_corner [Hz] ``f_f`` of a first-order current-feedback filter (None or inf:
    no filter); inductance_ratio [-] ``L_tuned / L_actual``.

    Open loop of a PI tuned by pole-zero cancellation on the R-L plant:
    ``L(s) = (omega_c L_tuned / L_actual) / s * exp(-s T_d) / (1 + s/omega_f)``.  The
    proportional gain is ``omega_c L_tuned``; above the cancelled corner ``R/L`` the plant
    is ``1/(s L_actual)``, so a wrong inductance moves the crossover to
    ``omega_c L_tuned / L_actual`` (the uncancelled pole-zero pair at ``R/L_tuned`` and
    ``R/L_actual`` is neglected: valid when the crossover is well above both).  The filter
    lowers the crossover: ``|L(j w)| = 1`` gives
    ``w_x = w_1 sqrt(2 / (1 + sqrt(1 + 4 (w_1/w_f)^2)))`` with ``w_1 = omega_c L_tuned /
    L_actual`` (a quadratic in ``w^2``, written without cancellation).
    Source: derived here (docs/physics.md §7.3).
    """
    xp = namespace(bandwidth, inductance_ratio, 0.0 if filter_corner is None else filter_corner)
    crossover = bandwidth * inductance_ratio
    if filter_corner is None:
        return crossover
    q = crossover / filter_corner
    return crossover * xp.sqrt(2.0 / (1.0 + xp.sqrt(1.0 + 4.0 * q * q)))


def loop_phase_margin(bandwidth, total_delay, filter_corner=None, inductance_ratio=1.0):
    """Phase margin of the current loop as built [rad].

    Parameters: bandwidth [Hz] ``f_c`` the loop was tuned for; total_delay [s] ``T_d``
    (``loop_total_delay``); filter_corner [Hz] ``f_f`` of a first-order current-feedback
    filter (None or inf: none); inductance_ratio [-] ``L_tuned / L_actual`` (> 1 when the
    plant has less inductance than the gains assume, which raises the crossover).

    ``PM = pi/2 - omega_x T_d - atan(omega_x / omega_f)`` at the actual crossover
    ``omega_x = 2 pi loop_crossover_frequency(...)`` (``omega_c L_tuned/L_actual`` without a
    filter).  Model: integrator ``omega_c/s`` left by the pole-zero cancellation, exact
    delay, first-order filter; valid while the delay is the only sampling effect that
    matters (crossover below about ``f_s/4``); negative values mean an unstable loop.
    The margin falls with the bandwidth, the delay and the inductance ratio; it falls
    with a lower filter corner whenever it is positive (with ``r = w_x/w_f``,
    ``PM = pi/2 - w_c T_d / sqrt(1 + r^2) - atan(r)`` falls with ``r`` iff
    ``w_c T_d r < sqrt(1 + r^2)``, which ``PM > 0`` implies; an unstable loop can gain a
    little, because the lower crossover also cuts the delay lag).
    Source: derived here (docs/physics.md §7.3); the delay model follows Buso and
    Mattavelli, Digital Control in Power Electronics, 2006.
    """
    xp = namespace(bandwidth, total_delay, inductance_ratio, 0.0 if filter_corner is None else filter_corner)
    crossover = loop_crossover_frequency(bandwidth, filter_corner, inductance_ratio)
    margin = 0.5 * math.pi - 2.0 * math.pi * crossover * total_delay
    if filter_corner is None:
        return margin
    return margin - _atan(xp, crossover / filter_corner)


def loop_bandwidth_max_for_margin(total_delay, phase_margin, filter_corner=None, inductance_ratio=1.0):
    """Largest tuned bandwidth ``f_c`` [Hz] whose loop keeps at least a phase margin.

    Parameters: total_delay [s] ``T_d``; phase_margin [rad] required, below pi/2;
    filter_corner [Hz] ``f_f`` (None or inf: no filter); inductance_ratio [-]
    ``L_tuned / L_actual`` (the worst plant the gains must tolerate).
    Hz like ``current_loop_bandwidth_max`` and the other loop functions of this module.

    With ``theta = pi/2 - PM`` the crossover must satisfy
    ``g(f_x) = 2 pi f_x T_d + atan(f_x / f_f) <= theta``.  ``g`` rises strictly with
    ``f_x`` (a sum of a linear and an arctangent term, both increasing), and ``f_x`` rises
    strictly with ``f_c`` (``loop_crossover_frequency``), so the margin falls
    monotonically with the bandwidth and the limit is the single root of ``g = theta``:
    * no filter: ``f_x = theta / (2 pi T_d)`` (closed form; ``f_pwm/12`` at 45 deg with
      ``T_d = 1.5/f_pwm``);
    * no delay: ``f_x = f_f tan(theta)`` (infinite for ``theta >= pi/2``);
    * both: Illinois root of ``g`` on ``[0, theta / (2 pi T_d)]`` (``g`` at the upper end is
      at least ``theta`` because the arctangent is non-negative; docs/physics.md §9.2).
    Then ``f_c = f_x sqrt(1 + (f_x/f_f)^2) / (L_tuned/L_actual)`` (``|L(j w_x)| = 1``
    solved for ``omega_c``).  0 when ``PM >= pi/2``; infinite with no delay and no filter.
    Source: derived here (docs/physics.md §7.3).
    """
    corner = math.inf if filter_corner is None else filter_corner
    xp = namespace(total_delay, phase_margin, corner, inductance_ratio)
    theta = 0.5 * math.pi - phase_margin
    has_delay = total_delay > 0.0
    safe_delay = xp.where(has_delay, total_delay, 1.0)
    positive = theta > 0.0
    safe_theta = xp.where(positive, theta, 1.0)
    finite = xp.isfinite(corner)
    safe_corner = xp.where(finite, corner, 1.0)
    delay_only = safe_theta / (2.0 * math.pi * safe_delay)
    # no delay, filter only: tan(theta) below pi/2, unbounded from pi/2 on
    below_right_angle = safe_theta < 0.5 * math.pi
    cos_theta = xp.where(below_right_angle, xp.cos(safe_theta), 1.0)
    filter_only = xp.where(below_right_angle, safe_corner * xp.sin(safe_theta) / cos_theta, math.inf)

    def lag(f):
        return 2.0 * math.pi * f * safe_delay + _atan(xp, f / safe_corner)

    if xp.vector or (has_delay and finite and positive):
        both = illinois(lag, safe_theta, 0.0 * delay_only, delay_only, xp)
    else:
        both = delay_only
    crossover = xp.where(
        has_delay,
        xp.where(finite, both, delay_only),
        xp.where(finite, filter_only, math.inf),
    )
    q = xp.where(finite, crossover / safe_corner, 0.0)
    q = xp.where(xp.isfinite(q), q, 0.0)  # an infinite crossover stays infinite below
    bandwidth = crossover * xp.sqrt(1.0 + q * q) / inductance_ratio
    return xp.where(positive, bandwidth, 0.0)


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
