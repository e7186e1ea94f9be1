"""Winding temperature: copper resistance, steady state, two-node transient, cycles.

docs/physics.md §6.  Absolute temperatures are in kelvin (SI) and temperature
differences in K; the IEC relations are written in degrees Celsius and converted
internally (``T_C = T - 273.15``).  The two-node network (winding, housing):

    C_w dtheta_w/dt = P_w - (theta_w - theta_h)/R_wh
    C_h dtheta_h/dt = P_h + (theta_w - theta_h)/R_wh - theta_h/R_ha,  theta = T - T_a

Lumped-parameter practice (Mellor et al., IEE Proc. B 138(5), 1991; Boglietti et al., IEEE
Trans. Ind. Electronics 56(3), 2009; docs/physics.md §6.2).
It gives the average winding temperature, not hot spots; ``R_th,ha`` depends strongly
on mounting and speed.  The matrix exponential of the 2x2 system is written in closed
form from its two real eigenvalues (no scipy at run time).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import NamedTuple

from specguard.physics._num import namespace, np

__all__ = [
    "CELSIUS_OFFSET",
    "COPPER_ALPHA_20",
    "COPPER_RESISTIVITY_20",
    "INSULATION_CLASSES",
    "copper_temperature_coefficient",
    "resistance_at_temperature",
    "runaway_number",
    "runaway_current",
    "winding_temperature_steady",
    "current_continuous_max",
    "average_current_continuous_max",
    "current_continuous_max_at_ambient",
    "capacitances_from_time_constants",
    "two_node_time_constants",
    "two_node_temperature_rise",
    "two_node_temperature_rise_decoupled",
    "winding_temperature_rise_peak_on_off",
    "Segment",
    "CycleResult",
    "winding_temperature_cyclic",
    "insulation_class_temperature",
    "winding_temperature_limit",
]

CELSIUS_OFFSET = 273.15
# IEC 60028:1925 international standard of resistance for copper (docs/physics.md §6.1).
COPPER_ALPHA_20 = 0.00393  # [1/K] at 20 degC, 100 % IACS
COPPER_RESISTIVITY_20 = 1.0 / 58.0 * 1e-6  # [Ohm m] = 0.017241 Ohm mm^2/m
_T20 = 20.0 + CELSIUS_OFFSET

# IEC 60085:2007 thermal classes [degC] (docs/physics.md §6.6).  Higher classes continue
# in 25 K steps from 250.
INSULATION_CLASSES = {
    "Y": 90.0,
    "A": 105.0,
    "E": 120.0,
    "B": 130.0,
    "F": 155.0,
    "H": 180.0,
    "N": 200.0,
    "R": 220.0,
}


def copper_temperature_coefficient(reference_temperature, alpha_20=COPPER_ALPHA_20):
    """Copper temperature coefficient referred to another temperature [1/K].

    Parameters: reference_temperature [K]; alpha_20 [1/K] coefficient at 20 degC
    (IEC 60028: 0.00393).
    ``alpha_T = alpha_20 / (1 + alpha_20 (T - 20 degC))``; 25 degC -> 0.003854,
    40 degC -> 0.003644.  Source: IEC 60028:1925; derived here (docs/physics.md §6.1).
    """
    return alpha_20 / (1.0 + alpha_20 * (reference_temperature - _T20))


def resistance_at_temperature(resistance, temperature_from, temperature_to, alpha_20=COPPER_ALPHA_20):
    """Convert a winding resistance between temperatures (linear copper law) [Ohm].

    Parameters: resistance [Ohm] at temperature_from [K]; temperature_to [K];
    alpha_20 [1/K].  ``R(T2) = R(T1) (1 + a20 (T2 - 20)) / (1 + a20 (T1 - 20))``,
    equivalent to ``(234.5 + T2)/(234.5 + T1)`` in degC for a20 = 0.00393 (IEC
    60034-1's resistance method uses 235).  Datasheet R25 -> R20:
    factor 0.98073.  Source: IEC 60028:1925 (docs/physics.md §6.1).
    """
    return resistance * (1.0 + alpha_20 * (temperature_to - _T20)) / (1.0 + alpha_20 * (temperature_from - _T20))


def runaway_number(
    current_rms,
    resistance_20,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    alpha_20=COPPER_ALPHA_20,
):
    """Thermal runaway number ``k = alpha R_th I^2 R20`` [-]; no steady state if k >= 1.

    Parameters: current_rms [A] including ripple; resistance_20 [Ohm] at 20 degC
    (three-phase: use the loss-equivalent resistance, e.g. ``3 R_ph`` with the phase
    RMS); thermal resistances [K/W]; alpha_20 [1/K].
    Source: derived here (docs/physics.md §6.3).
    """
    r_th = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    return alpha_20 * r_th * current_rms * current_rms * resistance_20


def runaway_current(
    resistance_20,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    alpha_20=COPPER_ALPHA_20,
):
    """Current at which the winding runs away thermally ``1/sqrt(alpha R_th R20)`` [A].

    Source: derived here (docs/physics.md §6.3).
    """
    xp = namespace(resistance_20, thermal_resistance_winding_housing, thermal_resistance_housing_ambient)
    r_th = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    return 1.0 / xp.sqrt(alpha_20 * r_th * resistance_20)


def winding_temperature_steady(
    current_rms,
    resistance_20,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    ambient_temperature,
    housing_loss=0.0,
    alpha_20=COPPER_ALPHA_20,
):
    """Steady-state winding temperature with temperature-dependent resistance [K].

    Parameters: current_rms [A] total RMS including ripple (§3); resistance_20 [Ohm]
    loss-equivalent resistance at 20 degC; thermal_resistance_winding_housing and
    thermal_resistance_housing_ambient [K/W]; ambient_temperature [K];
    housing_loss [W] fixed loss injected at the housing node (iron, friction);
    alpha_20 [1/K].

    ``T_w - T_a = [R_th I^2 R20 (1 + alpha (T_a - 20)) + R_th,ha P_h] / (1 - k)``,
    ``k = alpha R_th I^2 R20``.  Exact within the model (linear R(T), constant thermal
    resistances) because the loss is linear in the winding temperature.
    Returns +inf where ``k >= 1`` (thermal runaway: no steady state; error).
    Source: derived here (docs/physics.md §6.3).
    """
    xp = namespace(
        current_rms,
        resistance_20,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
        ambient_temperature,
        housing_loss,
    )
    r_th = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    loss_at_ambient = current_rms * current_rms * resistance_20 * (1.0 + alpha_20 * (ambient_temperature - _T20))
    k = alpha_20 * r_th * current_rms * current_rms * resistance_20
    denominator = 1.0 - k
    safe = xp.where(denominator > 0.0, denominator, 1.0)  # keep the unused branch finite
    rise = (r_th * loss_at_ambient + thermal_resistance_housing_ambient * housing_loss) / safe
    return xp.where(denominator > 0.0, ambient_temperature + rise, xp.inf)


def current_continuous_max(
    temperature_max,
    ambient_temperature,
    resistance_20,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    housing_loss=0.0,
    alpha_20=COPPER_ALPHA_20,
):
    """Maximum continuous RMS current (ripple included) at an ambient [A].

    Parameters: temperature_max [K] permitted winding temperature; ambient_temperature
    [K]; resistance_20 [Ohm]; thermal resistances [K/W]; housing_loss [W]; alpha_20.

    ``I_max = sqrt((T_max - T_a - R_th,ha P_h) / (R_th R20 (1 + alpha (T_max - 20))))``;
    0 where the numerator is not positive (no current allowed).
    Source: derived here (docs/physics.md §6.4).
    """
    xp = namespace(
        temperature_max,
        ambient_temperature,
        resistance_20,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
        housing_loss,
    )
    r_th = thermal_resistance_winding_housing + thermal_resistance_housing_ambient
    numerator = temperature_max - ambient_temperature - thermal_resistance_housing_ambient * housing_loss
    denominator = r_th * resistance_20 * (1.0 + alpha_20 * (temperature_max - _T20))
    return xp.sqrt(xp.maximum(numerator, 0.0) / denominator)


def average_current_continuous_max(current_max_rms, ripple_rms):
    """Largest average (DC or fundamental RMS) current once the ripple is counted [A].

    Parameters: current_max_rms [A] from :func:`current_continuous_max`; ripple_rms [A].
    ``I_avg,max = sqrt(I_max^2 - I_r,rms^2)``, 0 if the ripple alone exceeds it.
    Source: derived here (docs/physics.md §6.4).
    """
    xp = namespace(current_max_rms, ripple_rms)
    return xp.sqrt(xp.maximum(current_max_rms * current_max_rms - ripple_rms * ripple_rms, 0.0))


def current_continuous_max_at_ambient(current_max_reference, temperature_max, ambient_reference, ambient_new):
    """Ambient derating of the continuous current (no housing loss) [A].

    Parameters: current_max_reference [A] at ambient_reference [K]; temperature_max
    [K]; ambient_new [K].  ``I(T_a2) = I(T_a1) sqrt((T_max - T_a2)/(T_max - T_a1))``,
    exact within the model because R is evaluated at T_max in both cases.
    Source: derived here (docs/physics.md §6.4).
    """
    xp = namespace(current_max_reference, temperature_max, ambient_reference, ambient_new)
    ratio = (temperature_max - ambient_new) / (temperature_max - ambient_reference)
    return current_max_reference * xp.sqrt(xp.maximum(ratio, 0.0))


def capacitances_from_time_constants(
    winding_time_constant,
    housing_time_constant,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
):
    """Usual identification ``C_w = tau_w/R_wh``, ``C_h = tau_h/R_ha`` [J/K].

    Parameters: datasheet winding and housing time constants [s]; thermal
    resistances [K/W].  Valid when ``tau_h >> tau_w``.  Source: derived here
    (docs/physics.md §6.2).
    """
    return (
        winding_time_constant / thermal_resistance_winding_housing,
        housing_time_constant / thermal_resistance_housing_ambient,
    )


def _system(c_w, c_h, r_wh, r_ha, extra_conductance=0.0):
    """Matrix entries of A (extra_conductance: -dP_w/dtheta_w from R(T), may be <0)."""
    a11 = -(1.0 / r_wh - extra_conductance) / c_w
    a12 = 1.0 / (r_wh * c_w)
    a21 = 1.0 / (r_wh * c_h)
    a22 = -(1.0 / r_wh + 1.0 / r_ha) / c_h
    return a11, a12, a21, a22


def _eigen(a11, a12, a21, a22, xp):
    # Real and distinct: discriminant (a11 - a22)^2/4 + a12 a21 > 0 since a12 a21 > 0.
    half_trace = 0.5 * (a11 + a22)
    root = xp.sqrt(0.25 * (a11 - a22) ** 2 + a12 * a21)
    det = a11 * a22 - a12 * a21
    # The eigenvalue of larger magnitude without cancellation (half_trace and root
    # added with the same sign), the other from the product det; never 0 / 0, since
    # root > 0. The sum form alone cancels to 0 when a large R(T) feedback makes a11
    # positive (a runaway), which divided by zero.
    big = xp.where(half_trace >= 0.0, half_trace + root, half_trace - root)
    other = det / big
    return xp.minimum(big, other), xp.maximum(big, other)  # (fast, slow)


def two_node_time_constants(
    winding_capacitance,
    housing_capacitance,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
):
    """Exact time constants (fast, slow) of the two-node network [s].

    Parameters: winding_capacitance, housing_capacitance [J/K]; thermal resistances
    [K/W].  Negative inverse eigenvalues of A (docs/physics.md §6.2):
    ``lambda = -s/2 +- sqrt(s^2/4 - q)``.  E10: 20 s / 1200 s datasheet pair ->
    19.033 s / 1260.97 s.  Source: derived here (docs/physics.md §6.2).
    """
    xp = namespace(
        winding_capacitance,
        housing_capacitance,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
    )
    a = _system(
        winding_capacitance,
        housing_capacitance,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
    )
    lam_fast, lam_slow = _eigen(*a, xp)
    return -1.0 / lam_fast, -1.0 / lam_slow


def _phi_functions(lam, dt, xp):
    """e^{lam dt}, int_0^dt e^{lam s} ds, int_0^dt int_0^t e^{lam s} ds dt.

    Written with expm1 and a series for |lam dt| < 1e-3 so that lam -> 0 (the runaway
    boundary) and lam dt -> -inf are both finite.
    """
    z = lam * dt
    e = xp.exp(z)
    z_safe = xp.where(xp.abs(z) < 1e-3, 1.0, z)
    psi1_closed = dt * xp.expm1(z_safe) / z_safe
    psi2_closed = dt * dt * (xp.expm1(z_safe) - z_safe) / (z_safe * z_safe)
    psi1_series = dt * (1.0 + z / 2.0 + z * z / 6.0 + z * z * z / 24.0)
    psi2_series = dt * dt * (0.5 + z / 6.0 + z * z / 24.0 + z * z * z / 120.0)
    small = xp.abs(z) < 1e-3
    return e, xp.where(small, psi1_series, psi1_closed), xp.where(small, psi2_series, psi2_closed)


def _spectral(f1, f2, a, lam1, lam2):
    """f(A) = (f1 (A - lam2 I) - f2 (A - lam1 I)) / (lam1 - lam2) as 4 entries."""
    a11, a12, a21, a22 = a
    d = lam1 - lam2
    return (
        (f1 * (a11 - lam2) - f2 * (a11 - lam1)) / d,
        (f1 - f2) * a12 / d,
        (f1 - f2) * a21 / d,
        (f1 * (a22 - lam2) - f2 * (a22 - lam1)) / d,
    )


def two_node_temperature_rise(
    time,
    winding_loss,
    housing_loss,
    winding_capacitance,
    housing_capacitance,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    initial_winding_rise=0.0,
    initial_housing_rise=0.0,
):
    """Exact two-node response to constant losses: (winding rise, housing rise) [K].

    Parameters: time [s] since the start; winding_loss, housing_loss [W] constant;
    capacitances [J/K]; thermal resistances [K/W]; initial rises over ambient [K].

    ``x(t) = Phi(t) x0 + Psi(t) B``, ``Phi = expm(A t)``, ``Psi = int_0^t expm(A s) ds``,
    ``B = [P_w/C_w, P_h/C_h]``, both from the spectral form of the 2x2 matrix
    (real distinct eigenvalues).  Constant resistance (use
    :func:`winding_temperature_cyclic` for R(T)).
    Source: derived here (docs/physics.md §6.2); network after Mellor et al., IEE Proc. B
    138(5), 1991.
    """
    xp = namespace(
        time,
        winding_loss,
        housing_loss,
        winding_capacitance,
        housing_capacitance,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
        initial_winding_rise,
        initial_housing_rise,
    )
    a = _system(
        winding_capacitance,
        housing_capacitance,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
    )
    lam1, lam2 = _eigen(*a, xp)
    e1, p1, _ = _phi_functions(lam1, time, xp)
    e2, p2, _ = _phi_functions(lam2, time, xp)
    phi = _spectral(e1, e2, a, lam1, lam2)
    psi = _spectral(p1, p2, a, lam1, lam2)
    b1 = winding_loss / winding_capacitance
    b2 = housing_loss / housing_capacitance
    theta_w = phi[0] * initial_winding_rise + phi[1] * initial_housing_rise + psi[0] * b1 + psi[1] * b2
    theta_h = phi[2] * initial_winding_rise + phi[3] * initial_housing_rise + psi[2] * b1 + psi[3] * b2
    return theta_w, theta_h


def two_node_temperature_rise_decoupled(
    time,
    winding_loss,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    winding_time_constant,
    housing_time_constant,
):
    """Common decoupled approximation of the winding rise from cold [K].

    ``theta_w ~ P R_wh (1 - e^{-t/tau_w}) + P R_ha (1 - e^{-t/tau_h})`` (tau_h >> tau_w);
    over-predicts early heating by a few K (E10): prefer the exact form.
    Source: derived here (docs/physics.md §6.2).
    """
    xp = namespace(time, winding_loss, winding_time_constant, housing_time_constant)
    return winding_loss * (
        -thermal_resistance_winding_housing * xp.expm1(-time / winding_time_constant)
        - thermal_resistance_housing_ambient * xp.expm1(-time / housing_time_constant)
    )


def winding_temperature_rise_peak_on_off(power, thermal_resistance, time_constant, on_time, cycle_time):
    """Single-node periodic peak rise for an on/off loss cycle [K].

    Parameters: power [W] during on_time [s]; thermal_resistance [K/W];
    time_constant [s]; cycle_time [s].
    ``theta_pk = P R (1 - e^{-t_on/tau}) / (1 - e^{-T_cyc/tau})``; mean rise
    ``P R t_on / T_cyc``.  Source: derived here (docs/physics.md §6.5).
    """
    xp = namespace(power, thermal_resistance, time_constant, on_time, cycle_time)
    return power * thermal_resistance * xp.expm1(-on_time / time_constant) / xp.expm1(-cycle_time / time_constant)


def _segment_maps(segments, resistance_20, c_w, c_h, r_wh, r_ha, alpha_20, loss_factor, xp):
    maps = []
    for seg in segments:
        i2r = xp.asarray(seg.current_rms) ** 2 * float(resistance_20)
        a = _system(c_w, c_h, r_wh, r_ha, extra_conductance=alpha_20 * i2r)
        lam1, lam2 = _eigen(*a, xp)
        dt = float(seg.duration)
        e1, p1, q1 = _phi_functions(lam1, dt, xp)
        e2, p2, q2 = _phi_functions(lam2, dt, xp)
        b = ((i2r * loss_factor + xp.asarray(seg.winding_loss)) / c_w, xp.asarray(seg.housing_loss) / c_h)
        maps.append(
            (
                a,
                lam1,
                lam2,
                dt,
                _spectral(e1, e2, a, lam1, lam2),
                _spectral(p1, p2, a, lam1, lam2),
                _spectral(q1, q2, a, lam1, lam2),
                b,
            )
        )
    return maps


class Segment(NamedTuple):
    """One segment of a cyclic load profile."""

    duration: float  # [s]
    current_rms: float  # [A] RMS over the segment, ripple included
    housing_loss: float = 0.0  # [W] into the housing node (e.g. PWM eddy loss in the stator iron)
    winding_loss: float = 0.0  # [W] into the winding node, not scaled with R(T) (e.g. eddy loss in a coreless winding)


class CycleResult(NamedTuple):
    """Periodic steady state of a cyclic profile."""

    peak_winding_temperature: float  # [K]; +inf on runaway
    mean_winding_temperature: float  # [K]; time average over the cycle
    peak_housing_temperature: float  # [K]
    start_winding_temperature: float  # [K] at the start of the cycle
    start_housing_temperature: float  # [K]
    runaway: bool


def winding_temperature_cyclic(
    segments: Sequence[Segment],
    resistance_20,
    winding_capacitance,
    housing_capacitance,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    ambient_temperature,
    alpha_20=COPPER_ALPHA_20,
    samples_per_segment: int = 8,
) -> CycleResult:
    """Periodic steady state of a cyclic profile with R(T): peak and mean temperature.

    Parameters: segments sequence of :class:`Segment` (duration [s], RMS current [A],
    housing loss [W], winding loss beyond copper [W]); resistance_20 [Ohm] loss-equivalent at 20 degC; capacitances
    [J/K]; thermal resistances [K/W]; ambient_temperature [K]; alpha_20 [1/K];
    samples_per_segment [-] interior points where the peak is also looked for.

    With linear R(T) the winding loss ``I^2 R20 (1 + alpha (T_a - 20)) + I^2 R20 alpha
    theta_w`` is linear in ``theta_w``, so each segment is an exact linear ODE with
    ``A_k = A + diag(I^2 R20 alpha / C_w, 0)``; its map ``x -> Phi_k x + g_k`` is built
    in closed form (no sub-stepping needed).  The cycle map ``x -> Phi_c x + g_c`` is
    solved for ``x0 = (I - Phi_c)^-1 g_c`` and marched once; the mean uses the exact
    segment integral ``int x dt = Psi1 x0 + Psi2 B``.  Runaway (spectral radius of
    ``Phi_c >= 1``) returns +inf temperatures.
    Source: derived here (docs/physics.md §6.5) (composition of segment maps); §6.3 for R(T).
    """
    if not segments:
        raise ValueError("a cycle needs at least one segment")
    # arrays of segment currents or losses: one cycle per element (a batch of design
    # variants, specguard.figures.batch); runaway elements are +inf
    xp = namespace(*(v for seg in segments for v in (seg.current_rms, seg.housing_loss, seg.winding_loss)))
    if not xp.vector:
        # a check judges many variants of one design; those that leave the losses alone
        # (a brake resistor, a rating) reuse the cycle
        return _cyclic_scalar(
            tuple(Segment(*(float(v) for v in seg)) for seg in segments),
            *(
                float(v)
                for v in (
                    resistance_20,
                    winding_capacitance,
                    housing_capacitance,
                    thermal_resistance_winding_housing,
                    thermal_resistance_housing_ambient,
                    ambient_temperature,
                    alpha_20,
                )
            ),
            int(samples_per_segment),
        )
    # arrays: a runaway element overflows quietly to +inf (masked at the end)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        return _cyclic(
            segments,
            resistance_20,
            winding_capacitance,
            housing_capacitance,
            thermal_resistance_winding_housing,
            thermal_resistance_housing_ambient,
            ambient_temperature,
            alpha_20,
            samples_per_segment,
            xp,
        )


def winding_temperature_trace(
    segments: Sequence[Segment],
    resistance_20,
    winding_capacitance,
    housing_capacitance,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    ambient_temperature,
    alpha_20=COPPER_ALPHA_20,
) -> list[tuple[float, float]] | None:
    """Winding temperature over one cycle in periodic steady state, at the start of
    every segment and at the end of the cycle: [(time [s], temperature [K])]; None on
    runaway. Parameters as :func:`winding_temperature_cyclic` (floats).

    The periodic start state is the fixed point of the cycle's affine map; each segment
    maps it on exactly (the R(T) loss is linear in the temperature), so one pass gives
    what solving the cycle rotated to start at each segment gives, in O(n) instead of
    O(n^2). Source: derived here (docs/physics.md §6.5)."""
    walk: list[tuple[float, float]] = []
    result = _cyclic(
        tuple(segments),
        resistance_20,
        winding_capacitance,
        housing_capacitance,
        thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient,
        ambient_temperature,
        alpha_20,
        1,
        namespace(0.0),
        walk,
    )
    return None if result.runaway else walk


@functools.lru_cache(maxsize=256)
def _cyclic_scalar(segments, r20, c_w, c_h, r_wh, r_ha, ambient, alpha_20, samples):
    return _cyclic(segments, r20, c_w, c_h, r_wh, r_ha, ambient, alpha_20, samples, namespace(0.0))


def _cyclic(
    segments,
    resistance_20,
    winding_capacitance,
    housing_capacitance,
    thermal_resistance_winding_housing,
    thermal_resistance_housing_ambient,
    ambient_temperature,
    alpha_20,
    samples_per_segment,
    xp,
    walk: list | None = None,
) -> CycleResult:
    r_wh = float(thermal_resistance_winding_housing)
    r_ha = float(thermal_resistance_housing_ambient)
    c_w = float(winding_capacitance)
    c_h = float(housing_capacitance)
    loss_factor = 1.0 + alpha_20 * (float(ambient_temperature) - _T20)
    try:
        maps = _segment_maps(segments, resistance_20, c_w, c_h, r_wh, r_ha, alpha_20, loss_factor, xp)
    except OverflowError:  # exp of a positive eigenvalue over a long segment: runaway
        return CycleResult(math.inf, math.inf, math.inf, math.inf, math.inf, True)

    def apply(m, x):
        return (m[0] * x[0] + m[1] * x[1], m[2] * x[0] + m[3] * x[1])

    # Compose the cycle map x -> P x + g.
    p_c = (1.0, 0.0, 0.0, 1.0)
    g_c = (0.0, 0.0)
    for _, _, _, _, phi, psi, _, b in maps:
        gb = apply(psi, b)
        g_c = tuple(v + w for v, w in zip(apply(phi, g_c), gb, strict=True))
        p_c = (
            phi[0] * p_c[0] + phi[1] * p_c[2],
            phi[0] * p_c[1] + phi[1] * p_c[3],
            phi[2] * p_c[0] + phi[3] * p_c[2],
            phi[2] * p_c[1] + phi[3] * p_c[3],
        )
    trace = p_c[0] + p_c[3]
    det = p_c[0] * p_c[3] - p_c[1] * p_c[2]
    disc = xp.sqrt(xp.maximum(0.25 * trace * trace - det, 0.0))
    spectral_radius = xp.maximum(xp.abs(0.5 * trace + disc), xp.abs(0.5 * trace - disc))
    t_a = float(ambient_temperature)
    runaway = xp.logical_or(xp.logical_not(xp.isfinite(spectral_radius)), spectral_radius >= 1.0)
    if not xp.vector and runaway:
        return CycleResult(math.inf, math.inf, math.inf, math.inf, math.inf, True)
    m11, m12, m21, m22 = 1.0 - p_c[0], -p_c[1], -p_c[2], 1.0 - p_c[3]
    det_m = m11 * m22 - m12 * m21
    x = ((m22 * g_c[0] - m12 * g_c[1]) / det_m, (-m21 * g_c[0] + m11 * g_c[1]) / det_m)
    start = x
    peak_w = x[0]
    peak_h = x[1]
    integral_w = 0.0
    total_time = 0.0
    if walk is not None:  # the states at the segment boundaries
        walk.append((0.0, t_a + x[0]))
    for a, lam1, lam2, dt, phi, psi, psi2, b in maps:
        integral_w += apply(psi, x)[0] + apply(psi2, b)[0]
        total_time += dt
        for k in range(1, samples_per_segment + 1):
            t = dt * k / samples_per_segment
            e1, s1, _ = _phi_functions(lam1, t, xp)
            e2, s2, _ = _phi_functions(lam2, t, xp)
            xt = tuple(
                u + v
                for u, v in zip(
                    apply(_spectral(e1, e2, a, lam1, lam2), x),
                    apply(_spectral(s1, s2, a, lam1, lam2), b),
                    strict=True,
                )
            )
            peak_w = xp.maximum(peak_w, xt[0])
            peak_h = xp.maximum(peak_h, xt[1])
        x = tuple(u + v for u, v in zip(apply(phi, x), apply(psi, b), strict=True))
        if walk is not None:
            walk.append((total_time, t_a + x[0]))
    if xp.vector:
        out = [
            xp.where(runaway, xp.inf, t_a + v) for v in (peak_w, integral_w / total_time, peak_h, start[0], start[1])
        ]
        return CycleResult(out[0], out[1], out[2], out[3], out[4], runaway)
    return CycleResult(
        peak_winding_temperature=t_a + peak_w,
        mean_winding_temperature=t_a + integral_w / total_time,
        peak_housing_temperature=t_a + peak_h,
        start_winding_temperature=t_a + start[0],
        start_housing_temperature=t_a + start[1],
        runaway=False,
    )


def insulation_class_temperature(thermal_class) -> float:
    """Temperature of an IEC 60085 thermal class [K].

    Parameters: thermal_class letter (``"Y"``, ``"A"``, ``"E"``, ``"B"``, ``"F"``,
    ``"H"``, ``"N"``, ``"R"``) or class number in degC (90 ... 220, 250 and 25 K steps
    above).  Y 90, A 105, E 120, B 130, F 155, H 180, N 200, R 220 degC.
    Source: IEC 60085:2007 (docs/physics.md §6.6).
    """
    if isinstance(thermal_class, str) and thermal_class.strip().upper() in INSULATION_CLASSES:
        return INSULATION_CLASSES[thermal_class.strip().upper()] + CELSIUS_OFFSET
    try:
        value = float(thermal_class)
    except (TypeError, ValueError):
        raise ValueError(f"unknown insulation class {thermal_class!r}") from None
    if value in INSULATION_CLASSES.values() or (value >= 250.0 and (value - 250.0) % 25.0 == 0.0):
        return value + CELSIUS_OFFSET
    raise ValueError(f"unknown insulation class {thermal_class!r}")


def winding_temperature_limit(thermal_class, hot_spot_allowance=10.0) -> float:
    """Default permitted average winding temperature from the class [K].

    ``T_max = class temperature - allowance``; default allowance 10 K (common practice,
    no published source; IEC 60034-1 rise limits leave 10-15 K for the hot spot).
    Prefer the datasheet maximum winding temperature when given.
    Source: common practice, no published source (the allowance); IEC 60085:2007 and
    IEC 60034-1 (docs/physics.md §6.6).
    """
    return insulation_class_temperature(thermal_class) - hot_spot_allowance
