"""Eddy-loss index: mean-square ripple voltage and ripple-current slope.

docs/physics.md §2.4 and §5.4.  These are relative measures: never convert them to watts
without motor-specific calibration data (a measured ``R_s(f)`` or loss coefficient).
"""

from __future__ import annotations

import math

from specguard.physics import hbridge
from specguard.physics._num import namespace, np

__all__ = [
    "VACUUM_PERMEABILITY",
    "ripple_voltage_mean_square_hbridge",
    "ripple_voltage_mean_square_three_phase",
    "ripple_slope_mean_square",
    "eddy_loss_index",
    "skin_depth",
    "conduction_regime",
]

VACUUM_PERMEABILITY = 4e-7 * math.pi  # [H/m]; 1.25663706212e-6 since SI 2019, diff 5e-10


def ripple_voltage_mean_square_hbridge(supply_voltage, modulation, scheme: str):
    """Mean square of the ripple voltage across the load of an H-bridge [V^2].

    Parameters: supply_voltage [V]; modulation [-] ``m``; scheme.
    bipolar ``V^2 (1 - m^2)``; unipolar_single and unipolar_phase_shifted
    ``V^2 |m| (1 - |m|)``.  Independent of ``f_pwm``; drives the eddy loss of
    voltage-driven (winding-linked laminated) paths, ``P ~ <v_r^2>``.
    Source: derived here (docs/physics.md §2.4); Boglietti et al., IEEE Trans. Magnetics 39(2),
    2003 on PWM iron loss.
    """
    xp = namespace(supply_voltage, modulation)
    duty = hbridge.load_wave_duty(modulation, scheme)
    step = 2.0 * supply_voltage if scheme == hbridge.BIPOLAR else 1.0 * supply_voltage
    # Two-level wave: <(v - <v>)^2> = (V1 - V2)^2 D (1 - D).
    return xp.asarray(step * step * duty * (1.0 - duty))


def ripple_voltage_mean_square_three_phase(supply_voltage, modulation_index):
    """Mean square phase ripple voltage over a fundamental period, SPWM or SVPWM [V^2].

    Parameters: supply_voltage [V]; modulation_index [-] ``M``.
    ``<v_r^2>_ph = V^2 (M/(sqrt3 pi) - M^2/8)`` (zero sequence does not reach the
    phase-to-neutral voltage of an isolated star).  Source: derived here (docs/physics.md §2.4).
    """
    return (
        supply_voltage
        * supply_voltage
        * (modulation_index / (math.sqrt(3.0) * math.pi) - modulation_index * modulation_index / 8.0)
    )


def ripple_slope_mean_square(ripple_voltage_mean_square, inductance):
    """Mean square ripple-current slope ``<(di_r/dt)^2> = <v_r^2> / L^2`` [A^2/s^2].

    Parameters: ripple_voltage_mean_square [V^2]; inductance [H] at ``f_r``.
    Drives the eddy loss of current-driven parts (magnets, sleeves, solid parts in
    the air-gap field) in the resistance-limited regime.  Source: derived here
    (docs/physics.md §5.4).
    """
    return ripple_voltage_mean_square / (inductance * inductance)


def eddy_loss_index(quantity, reference_quantity):
    """Dimensionless eddy-loss index ``quantity / reference`` [-].

    Parameters: quantity and reference_quantity in the same unit (``V^2`` or
    ``A^2/s^2``); the reference is declared by the user (e.g. the same motor on the
    team's standard drive).  Never watts.  Source: derived here (docs/physics.md §5.4).
    """
    return quantity / reference_quantity


def skin_depth(frequency, resistivity, relative_permeability=1.0):
    """Skin depth ``delta = sqrt(2 rho / (omega mu))`` [m].

    Parameters: frequency [Hz]; resistivity [Ohm m]; relative_permeability [-].
    Source: published, classical electromagnetism (Stoll, The Analysis of Eddy Currents, 1974);
    docs/physics.md §5.1.  Copper (17.2 nOhm m) at 20 kHz: 0.47 mm.
    """
    xp = namespace(frequency, resistivity, relative_permeability)
    return xp.sqrt(2.0 * resistivity / (2.0 * math.pi * frequency * VACUUM_PERMEABILITY * relative_permeability))


def conduction_regime(thickness, skin_depth_m):
    """Eddy regime of a conductive part: resistance-limited / transition / skin-limited.

    Parameters: thickness [m] of the part (sheet, magnet, sleeve); skin_depth_m [m].
    ``d < delta`` resistance-limited, ``d > 2 delta`` skin-limited, else transition.
    Returns a str for scalars, an array of str otherwise.
    Source: derived here (docs/physics.md §5.4) (band edges: common practice, no published
    source).
    """
    xp = namespace(thickness, skin_depth_m)
    if not xp.vector:
        if thickness < skin_depth_m:
            return "resistance-limited"
        if thickness > 2.0 * skin_depth_m:
            return "skin-limited"
        return "transition"
    d = np.asarray(thickness, dtype=float)
    s = np.asarray(skin_depth_m, dtype=float)
    return np.where(d < s, "resistance-limited", np.where(d > 2.0 * s, "skin-limited", "transition"))
