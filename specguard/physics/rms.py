"""RMS with ripple, form factor and ripple losses.

docs/physics.md §3.  Triangular ripple (any rise/fall split) of peak-to-peak ``dI`` on a
locally constant current; for the exact exponential waveform use
:func:`specguard.physics.hbridge.ripple_rms`.
"""

from __future__ import annotations

from specguard.physics._num import namespace, np
from specguard.physics.inductance import series_resistance_at_frequency

__all__ = [
    "ripple_rms_triangular",
    "current_rms_with_ripple",
    "form_factor",
    "ripple_copper_loss",
    "ripple_copper_loss_relative",
    "triangle_harmonic_amplitude",
    "ripple_harmonic_loss",
    "three_phase_current_rms",
    "three_phase_copper_loss",
    "six_step_phase_current_rms",
]


def ripple_rms_triangular(ripple_peak_to_peak):
    """RMS of a triangular ripple ``dI / (2 sqrt 3)`` [A] (any rise/fall split).

    Parameters: ripple_peak_to_peak [A].  Source: standard result for a triangular wave
    (docs/physics.md §3.1).
    """
    return ripple_peak_to_peak / (2.0 * 3.0**0.5)


def current_rms_with_ripple(average_current, ripple_peak_to_peak):
    """Total RMS ``sqrt(I_avg^2 + dI^2/12)`` [A].

    Parameters: average_current [A] DC or locally constant; ripple_peak_to_peak [A].
    Source: standard result for a triangular wave (docs/physics.md §3.1).
    """
    xp = namespace(average_current, ripple_peak_to_peak)
    return xp.sqrt(average_current * average_current + ripple_peak_to_peak * ripple_peak_to_peak / 12.0)


def form_factor(average_current, ripple_peak_to_peak):
    """Form factor ``I_rms / |I_avg| = sqrt(1 + (dI/I_avg)^2 / 12)`` [-].

    Parameters: average_current [A] (non-zero); ripple_peak_to_peak [A].
    Source: derived here (docs/physics.md §3.1).
    """
    xp = namespace(average_current, ripple_peak_to_peak)
    ratio = ripple_peak_to_peak / average_current
    return xp.sqrt(1.0 + ratio * ratio / 12.0)


def ripple_copper_loss(resistance, ripple_peak_to_peak):
    """Extra DC-resistance copper loss of a triangular ripple ``R dI^2 / 12`` [W].

    Parameters: resistance [Ohm] hot DC resistance; ripple_peak_to_peak [A].
    Source: derived here (docs/physics.md §3.1).
    """
    return resistance * ripple_peak_to_peak * ripple_peak_to_peak / 12.0


def ripple_copper_loss_relative(average_current, ripple_peak_to_peak):
    """Extra copper loss relative to the DC loss ``(dI/I_avg)^2 / 12`` [-].

    Source: derived here (docs/physics.md §3.1) (10 % ripple -> +0.08 %, 100 % -> +8.3 %).
    """
    ratio = ripple_peak_to_peak / average_current
    return ratio * ratio / 12.0


def triangle_harmonic_amplitude(ripple_peak_to_peak, duty, harmonic_order):
    """Peak amplitude of the n-th harmonic of a triangular ripple [A].

    Parameters: ripple_peak_to_peak [A]; duty [-] rise fraction ``D`` in (0, 1);
    harmonic_order [-] ``n >= 1``.
    ``I_n = dI |sin(n pi D)| / (pi^2 n^2 D (1 - D))``; at D -> 0 or 1 it tends to
    ``dI / (pi n)`` (sawtooth), used there to avoid 0/0.
    Source: derived here (docs/physics.md §3.2).
    """
    xp = namespace(ripple_peak_to_peak, duty, harmonic_order)
    d = xp.minimum(xp.maximum(duty, 1e-12), 1.0 - 1e-12)
    n = harmonic_order
    return ripple_peak_to_peak * xp.abs(xp.sin(n * xp.pi * d)) / (xp.pi**2 * n * n * d * (1.0 - d))


def ripple_harmonic_loss(
    ripple_peak_to_peak,
    duty,
    ripple_frequency,
    table_frequencies,
    table_series_resistances,
    harmonic_count: int = 50,
):
    """Ripple loss from a measured series resistance ``R_s(f)`` [W].

    Parameters: ripple_peak_to_peak [A]; duty [-] rise fraction of the triangle;
    ripple_frequency [Hz] ``f_r``; table_frequencies [Hz] and
    table_series_resistances [Ohm] (locked-rotor series-model measurement);
    harmonic_count [-] harmonics summed (the mean square converges as 1/n^4; 50
    harmonics leave < 1e-5 of it out at D = 0.5).

    ``P = sum_n R_s(n f_r) I_n^2 / 2`` with ``R_s`` interpolated log-log and held at
    the table ends.  Terminal-referred copper AC + eddy loss; small-signal, locked
    rotor, no DC bias: good enough for a design-rule estimate, say so.
    Source: derived here (docs/physics.md §3.2 and §5.5).
    """
    xp = namespace(ripple_peak_to_peak, duty, ripple_frequency)
    orders = np.arange(1, harmonic_count + 1, dtype=float)
    if xp.vector:
        dI = np.asarray(ripple_peak_to_peak, dtype=float)[..., None]
        d = np.asarray(duty, dtype=float)[..., None]
        fr = np.asarray(ripple_frequency, dtype=float)[..., None]
    else:
        dI, d, fr = float(ripple_peak_to_peak), float(duty), float(ripple_frequency)
    amplitude = triangle_harmonic_amplitude(dI, d, orders)
    resistance = series_resistance_at_frequency(
        np.broadcast_to(fr * orders, np.shape(amplitude)),
        table_frequencies,
        table_series_resistances,
    ).value
    loss = np.sum(resistance * amplitude * amplitude, axis=-1) / 2.0
    return float(loss) if not xp.vector else loss


def three_phase_current_rms(fundamental_rms, ripple_rms):
    """Phase RMS current ``sqrt(I_1,rms^2 + I_r,rms^2)`` [A].

    Parameters: fundamental_rms [A]; ripple_rms [A].  Source: derived here (docs/physics.md
    §3.1).
    """
    xp = namespace(fundamental_rms, ripple_rms)
    return xp.sqrt(fundamental_rms * fundamental_rms + ripple_rms * ripple_rms)


def three_phase_copper_loss(phase_resistance, phase_current_rms):
    """Three-phase copper loss ``3 R_ph I_ph,rms^2 = 1.5 R_tt I_ph,rms^2`` [W].

    Parameters: phase_resistance [Ohm] hot star-equivalent; phase_current_rms [A].
    Source: derived here (docs/physics.md §3.1).
    """
    return 3.0 * phase_resistance * phase_current_rms * phase_current_rms


def six_step_phase_current_rms(block_current_rms):
    """RMS current of one phase of a turning six-step drive ``sqrt(2/3) I_block,rms`` [A].

    Parameters: block_current_rms [A] RMS of the loop (block) current, ripple included.
    With 120-degree conduction each phase carries the block current two thirds of the
    electrical period and none the rest. Holding at standstill one commutation state stays
    on: the phase then carries all of it (not this function). Source: derived here
    (docs/physics.md §3.1).
    """
    xp = namespace(block_current_rms)
    return xp.sqrt(2.0 / 3.0) * block_current_rms
