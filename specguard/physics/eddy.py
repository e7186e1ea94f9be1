"""Eddy currents under PWM: the relative index, the plate loss laws and the ripple loss in watts.

docs/physics.md §2.4, §5.4 and §5.6.  The index functions (mean-square ripple voltage,
mean-square ripple-current slope, ``eddy_loss_index``) are relative measures.  Watts come
from the classical plate laws (a loss density for a part whose thickness, resistivity and
field are known) or from the PWM ripple loss of §5.6, which needs a coefficient ``k``:
calibrated from one bench measurement (ratio form, exact), or, without calibration, the
order-of-magnitude default range per winding construction (common practice, no published
source).  A temperature measurement on the real motor decides; these are estimates.
"""

from __future__ import annotations

import math
from typing import Any, NamedTuple

from specguard.physics import hbridge
from specguard.physics._num import namespace, np

__all__ = [
    "VACUUM_PERMEABILITY",
    "EDDY_MATERIALS",
    "ripple_voltage_mean_square_hbridge",
    "ripple_voltage_mean_square_three_phase",
    "ripple_slope_mean_square",
    "eddy_loss_index",
    "skin_depth",
    "conduction_regime",
    "RESISTANCE_LIMITED",
    "TRANSITION",
    "SKIN_LIMITED",
    "WINDING_CONSTRUCTIONS",
    "DEFAULT_EDDY_RESISTANCE_RATIO",
    "DEFAULT_RATIO_FREQUENCY",
    "TRIANGLE_SQRT_HARMONIC_SUM",
    "plate_eddy_loss_density_thin",
    "plate_eddy_loss_density",
    "plate_eddy_loss_density_surface",
    "plate_eddy_loss_density_skin",
    "plate_regime",
    "triangle_slope_mean_square",
    "skin_ripple_measure",
    "ripple_loss_measure",
    "RippleLossCalibration",
    "calibrate_ripple_loss",
    "calibrate_ripple_loss_from_temperature_rise",
    "ripple_loss",
    "ripple_loss_from_coefficient",
    "ripple_loss_coefficient_default",
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


# Resistivity [Ohm m] and small-signal relative permeability of the materials an eddy
# path may name (typical handbook values at room temperature, common practice, no
# published source; copper: the annealed copper of IEC 60028; docs/pwm-losses.md lists
# them). A spec may give its own values.
EDDY_MATERIALS: dict[str, tuple[float, float]] = {
    "electrical-steel": (0.48e-6, 1000.0),
    "soft-iron": (0.12e-6, 500.0),
    "ndfeb": (1.5e-6, 1.05),
    "smco": (0.8e-6, 1.05),
    "ferrite": (1.0e2, 1.1),
    "copper": (17.24e-9, 1.0),
    "aluminium": (28.2e-9, 1.0),
    "stainless-steel": (0.72e-6, 1.0),
}


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
    Coarse bands on the whole thickness, kept for the existing figures; :func:`plate_regime`
    compares the half-thickness with the skin depth on edges tied to the error of the two
    asymptotic loss laws (docs/physics.md §5.6) and is the one the watt model uses.
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


# ---------------------------------------------------------------- plate loss laws (§5.6)

RESISTANCE_LIMITED = "resistance-limited"
TRANSITION = "transition"
SKIN_LIMITED = "skin-limited"
_LOSS_REGIMES = (RESISTANCE_LIMITED, SKIN_LIMITED)

# Below xi = d/delta = 1 the closed forms of the plate factors lose digits (sinh - sin ~
# xi^3/3, cosh - cos ~ xi^2); their Taylor series are used there.  The series are kept to
# the xi^12 terms: the first omitted term at xi = 1 is below 1e-13 relative.
_PLATE_SERIES_LIMIT = 1.0


def _plate_half_terms(xi, xp):
    """Return ``(sinh - sin)/2``, ``(cosh - cos)/2``, ``(cosh + cos)/2`` divided by ``e^xi``, for xi >= 1."""
    e1 = xp.exp(-xi)
    e2 = e1 * e1
    s = xp.sin(xi) * e1
    c = xp.cos(xi) * e1
    return 0.5 * (1.0 - e2) - s, 0.5 * (1.0 + e2) - c, 0.5 * (1.0 + e2) + c


def _mean_flux_factor(xi, xp):
    """F(xi) = (3/xi) (sinh xi - sin xi)/(cosh xi - cos xi); F(0) = 1, F -> 3/xi."""
    xs = xp.minimum(xi, _PLATE_SERIES_LIMIT)  # keeps the unused branch finite
    x4 = xs * xs * xs * xs
    num = 1.0 / 6.0 + x4 * (1.0 / 5040.0 + x4 * (1.0 / 39916800.0 + x4 / 1307674368000.0))
    den = 0.5 + x4 * (1.0 / 720.0 + x4 * (1.0 / 3628800.0 + x4 / 87178291200.0))
    series = 3.0 * num / den
    xc = xp.maximum(xi, _PLATE_SERIES_LIMIT)
    sinh_minus_sin, cosh_minus_cos, _ = _plate_half_terms(xc, xp)
    closed = 3.0 / xc * sinh_minus_sin / cosh_minus_cos
    return xp.where(xi < _PLATE_SERIES_LIMIT, series, closed)


def _surface_field_factor(xi, xp):
    """G(xi) = (6/xi^3) (sinh xi - sin xi)/(cosh xi + cos xi); G(0) = 1, G -> 6/xi^3."""
    xs = xp.minimum(xi, _PLATE_SERIES_LIMIT)
    x4 = xs * xs * xs * xs
    num = 1.0 + x4 * (6.0 / 5040.0 + x4 * (6.0 / 39916800.0 + x4 * 6.0 / 1307674368000.0))
    den = 1.0 + x4 * (1.0 / 24.0 + x4 * (1.0 / 40320.0 + x4 / 479001600.0))
    series = num / den
    xc = xp.maximum(xi, _PLATE_SERIES_LIMIT)
    sinh_minus_sin, _, cosh_plus_cos = _plate_half_terms(xc, xp)
    closed = 6.0 / (xc * xc * xc) * sinh_minus_sin / cosh_plus_cos
    return xp.where(xi < _PLATE_SERIES_LIMIT, series, closed)


def plate_eddy_loss_density_thin(frequency, flux_density, thickness, resistivity):
    """Classical thin-plate eddy loss per unit volume, time average [W/m^3].

    Parameters: frequency [Hz] ``f``; flux_density [T] amplitude ``B`` of the sinusoidal
    flux density (uniform across the plate); thickness [m] ``d``; resistivity [Ohm m] ``rho``.

    ``p = (pi f B d)^2 / (6 rho)`` (the sinusoidal case of ``p = d^2 <(dB/dt)^2> / (12 rho)``).
    Assumptions: 1-D (plate much wider than thick), flux parallel to the faces, the field of
    the eddy currents neglected (resistance-limited: ``d << delta``), linear material, no
    hysteresis.  Valid within 0.2 % for ``d <= delta`` when ``B`` is the mean flux density
    (:func:`plate_eddy_loss_density`) and within 4 % when it is the surface value
    (:func:`plate_eddy_loss_density_surface`); over-estimates beyond.
    Source: published, the classical lamination eddy-current loss (Stoll, The Analysis of
    Eddy Currents, Clarendon Press, 1974, the infinite plate; Lammeraner and Stafl, Eddy
    Currents, Iliffe, 1964, the lamination); docs/physics.md §5.6.
    """
    xp = namespace(frequency, flux_density, thickness, resistivity)
    x = math.pi * xp.asarray(frequency) * flux_density * thickness
    return x * x / (6.0 * resistivity)


def plate_eddy_loss_density(frequency, flux_density, thickness, resistivity, relative_permeability=1.0):
    """Eddy loss per unit volume of a plate of any thickness, given its mean flux density [W/m^3].

    Parameters: frequency [Hz]; flux_density [T] amplitude of the sinusoidal flux density
    averaged over the thickness (flux per cross-section, what the winding's voltage fixes in a
    lamination); thickness [m] ``d``; resistivity [Ohm m]; relative_permeability [-] ``mu_r``.

    ``p = (pi f B d)^2 / (6 rho) * F(xi)``, ``F(xi) = (3/xi) (sinh xi - sin xi)/(cosh xi - cos xi)``,
    ``xi = d / delta`` (:func:`skin_depth`).  ``F -> 1`` for ``xi -> 0`` (thin-plate law) and
    ``F -> 3/xi`` for ``xi >> 1``, where at a fixed mean flux the loss grows as ``f^1.5``.
    Assumptions: 1-D diffusion of a sinusoidal field into an infinite plate, the same field on
    both faces, linear material (constant ``mu_r``, so no saturation), no hysteresis.  Taylor
    series below ``xi = 1``; no overflow for any ``xi``.
    Source: published (Stoll, The Analysis of Eddy Currents, 1974, the infinite plate;
    Lammeraner and Stafl, Eddy Currents, 1964); checked in the tests against a numerical
    solution of the diffusion equation (docs/physics.md §5.6).
    """
    xp = namespace(frequency, flux_density, thickness, resistivity, relative_permeability)
    delta = skin_depth(frequency, resistivity, relative_permeability)
    xi = xp.asarray(thickness / delta)
    return plate_eddy_loss_density_thin(frequency, flux_density, thickness, resistivity) * _mean_flux_factor(xi, xp)


def plate_eddy_loss_density_surface(frequency, surface_flux_density, thickness, resistivity, relative_permeability=1.0):
    """Eddy loss per unit volume of a plate of any thickness, given the field at its faces [W/m^3].

    Parameters: frequency [Hz]; surface_flux_density [T] amplitude ``B_s = mu H_s`` of the
    sinusoidal flux density at both faces (what a winding current fixes in a part that does
    not set the reluctance of the path: magnets, sleeves, solid iron behind an air gap);
    thickness [m] ``d``; resistivity [Ohm m]; relative_permeability [-].

    ``p = (pi f B_s d)^2 / (6 rho) * G(xi)``, ``G(xi) = (6/xi^3) (sinh xi - sin xi)/(cosh xi + cos xi)``,
    ``xi = d / delta``.  ``G -> 1`` for ``xi -> 0`` (thin-plate law) and ``G -> 6/xi^3`` for
    ``xi >> 1``: the skin-limited law :func:`plate_eddy_loss_density_skin`,
    ``p = rho H_s^2 / (delta d)``, i.e. ``~ B_s^2 sqrt(f)`` at a fixed surface field.
    Assumptions as :func:`plate_eddy_loss_density`.  This and the mean-flux form are the same
    solution; they differ by ``|B_mean / B_s|^2 = |tanh(u)/u|^2``, ``u = (1 + j) xi / 2``.
    Source: published (Stoll, The Analysis of Eddy Currents, 1974, the infinite plate; Lammeraner and
    Stafl, Eddy Currents, 1964); docs/physics.md §5.6.
    """
    xp = namespace(frequency, surface_flux_density, thickness, resistivity, relative_permeability)
    delta = skin_depth(frequency, resistivity, relative_permeability)
    xi = xp.asarray(thickness / delta)
    thin = plate_eddy_loss_density_thin(frequency, surface_flux_density, thickness, resistivity)
    return thin * _surface_field_factor(xi, xp)


def plate_eddy_loss_density_skin(frequency, surface_flux_density, thickness, resistivity, relative_permeability=1.0):
    """Skin-limited eddy loss per unit volume of a thick plate, field given at both faces [W/m^3].

    Parameters as :func:`plate_eddy_loss_density_surface`.
    ``p = rho H_s^2 / (delta d)`` with ``H_s = B_s / (mu_0 mu_r)``: each face absorbs
    ``rho H_s^2 / (2 delta)`` per unit area (the loss of a semi-infinite conductor), so
    ``p ~ B_s^2 sqrt(f rho / mu_r^3)`` at a fixed surface field.
    Limits: within 5.3 % of the exact form for ``d >= 4 delta`` (half-thickness ``>= 2 delta``),
    within 1 % for ``d >= 5 delta``; over-estimates thin plates without bound.
    Source: published (Stoll, The Analysis of Eddy Currents, 1974, the semi-infinite
    conductor); docs/physics.md §5.6.
    """
    xp = namespace(frequency, surface_flux_density, thickness, resistivity, relative_permeability)
    delta = skin_depth(frequency, resistivity, relative_permeability)
    field = xp.asarray(surface_flux_density) / (VACUUM_PERMEABILITY * relative_permeability)
    return resistivity * field * field / (delta * thickness)


def plate_regime(
    frequency,
    thickness,
    resistivity,
    relative_permeability=1.0,
    resistance_limited_edge=0.5,
    skin_limited_edge=2.0,
):
    """Eddy regime of a plate-like part from its half-thickness against the skin depth.

    Parameters: frequency [Hz] (the ripple frequency ``f_r``); thickness [m] ``d`` (the
    half-thickness is ``a = d/2``); resistivity [Ohm m]; relative_permeability [-];
    resistance_limited_edge [-], skin_limited_edge [-]: the edges on ``a / delta``.

    ``a <= 0.5 delta`` (``d <= delta``) ``"resistance-limited"``: the thin-plate law is within
    0.2 % (mean flux given) or 4 % (surface field given) of the exact loss;
    ``a >= 2 delta`` (``d >= 4 delta``) ``"skin-limited"``: the skin law is within 5.3 %
    (surface field given) or 1.8 % (mean flux given, ``F ~ 3/xi``) of the exact loss, and the
    PWM ripple loss scales as ``dI^2 sqrt(f_r)``; ``"transition"`` in between, where neither
    scaling holds and a PWM estimate should carry both.  Returns a str for scalars, an array
    of str otherwise.
    Source: derived here from the exact plate loss (docs/physics.md §5.6); the edges are a
    choice made on the stated errors.
    """
    xp = namespace(frequency, thickness, resistivity, relative_permeability)
    ratio = 0.5 * thickness / skin_depth(frequency, resistivity, relative_permeability)
    if not xp.vector:
        if ratio <= resistance_limited_edge:
            return RESISTANCE_LIMITED
        if ratio >= skin_limited_edge:
            return SKIN_LIMITED
        return TRANSITION
    r = np.asarray(ratio, dtype=float)
    return np.where(
        r <= resistance_limited_edge,
        RESISTANCE_LIMITED,
        np.where(r >= skin_limited_edge, SKIN_LIMITED, TRANSITION),
    )


# ---------------------------------------------------------------- PWM ripple loss in watts (§5.6)

# Sum over the harmonics of a triangle of unit peak-to-peak at duty 0.5 of I_n,rms^2 sqrt(n):
# (8/pi^4) (1 - 2^-3.5) zeta(3.5) (odd harmonics, amplitude 4/(pi^2 n^2)).  Derived here; the
# tests recompute it by direct summation.  At other duties the sum rises to 0.0975 (D = 0.1)
# and 0.127 (D -> 0), which the skin-limited measure neglects.
TRIANGLE_SQRT_HARMONIC_SUM = 0.08435711383

WINDING_CONSTRUCTIONS = ("iron-core", "slotless", "coreless")

# Order of magnitude of the extra series resistance of the locked-rotor winding at
# DEFAULT_RATIO_FREQUENCY over its DC resistance, (R_s(f) - R_dc) / R_dc, by construction.
# Common practice, order of magnitude, no published source: use only without calibration.
DEFAULT_RATIO_FREQUENCY = 20e3  # [Hz]
DEFAULT_EDDY_RESISTANCE_RATIO = {
    "iron-core": (1.0, 20.0),
    "slotless": (0.2, 3.0),
    "coreless": (0.02, 0.5),
}


def _check_loss_regime(regime: str) -> str:
    if regime not in _LOSS_REGIMES:
        raise ValueError(
            f"ripple loss regime {regime!r}: expected one of {_LOSS_REGIMES}; a part in transition "
            "has no single scaling, evaluate both and report the range"
        )
    return regime


def triangle_slope_mean_square(ripple_pp, ripple_frequency, duty):
    """Mean square of the slope of a triangular ripple ``<(di/dt)^2>`` [A^2/s^2].

    Parameters: ripple_pp [A] peak-to-peak ``dI``; ripple_frequency [Hz] ``f_r``; duty [-]
    ``D``, the share of the period on the rising slope (the load-wave duty of
    docs/physics.md §1.2).

    ``<(di/dt)^2> = D (dI/(D T))^2 + (1 - D) (dI/((1 - D) T))^2 = dI^2 f_r^2 / (D (1 - D))``.
    With the small-ripple triangle ``dI = (V1 - V2) D (1 - D) / (L f_r)`` this equals
    ``<v_r^2> / L^2`` (:func:`ripple_slope_mean_square`), independent of ``f_r``.  Zero
    when ``dI = 0`` (also at ``D`` = 0 or 1, where a consistent ``dI`` is zero).
    Source: derived here (docs/physics.md §5.6).
    """
    xp = namespace(ripple_pp, ripple_frequency, duty)
    ripple_pp, ripple_frequency, duty = map(xp.asarray, (ripple_pp, ripple_frequency, duty))
    shape = xp.maximum(duty * (1.0 - duty), 1e-300)  # keeps the dI = 0 branch finite
    slope = ripple_pp * ripple_frequency
    return xp.where(ripple_pp == 0.0, 0.0, slope * slope / shape)


def skin_ripple_measure(ripple_pp, ripple_frequency):
    """Skin-limited ripple measure ``dI^2 sqrt(f_r)`` [A^2 Hz^0.5].

    Parameters: ripple_pp [A]; ripple_frequency [Hz].
    In a skin-limited part the loss of each harmonic goes as ``I_n^2 sqrt(n f_r)``
    (:func:`plate_eddy_loss_density_skin` with ``H_s ~ i``); for a triangle the harmonic sum
    is ``TRIANGLE_SQRT_HARMONIC_SUM dI^2 sqrt(f_r)`` at ``D = 0.5``.  The duty dependence of the
    triangle's harmonics (up to a factor 1.16 at ``D = 0.1``, 1.5 as ``D -> 0``) is neglected.
    Source: derived here (docs/physics.md §5.6).
    """
    xp = namespace(ripple_pp, ripple_frequency)
    ripple_pp = xp.asarray(ripple_pp)
    return ripple_pp * ripple_pp * xp.sqrt(ripple_frequency)


def ripple_loss_measure(ripple_pp, ripple_frequency, duty, regime: str):
    """The ripple measure the PWM eddy loss is proportional to, by regime.

    Parameters: ripple_pp [A]; ripple_frequency [Hz]; duty [-] (load-wave duty);
    regime ``"resistance-limited"`` or ``"skin-limited"`` (:func:`plate_regime` of the part
    that dominates the loss).

    resistance-limited: :func:`triangle_slope_mean_square` [A^2/s^2] (the loss density is
    ``d^2 <(dB/dt)^2>/(12 rho)`` with ``B ~ i``); skin-limited: :func:`skin_ripple_measure`
    [A^2 Hz^0.5].  A ``"transition"`` part raises ValueError: evaluate both and carry the
    range.  Source: derived here (docs/physics.md §5.6).
    """
    if _check_loss_regime(regime) == RESISTANCE_LIMITED:
        return triangle_slope_mean_square(ripple_pp, ripple_frequency, duty)
    return skin_ripple_measure(ripple_pp, ripple_frequency)


class RippleLossCalibration(NamedTuple):
    """One bench reference of the PWM ripple loss: the loss and the measure it was taken at.

    reference_loss [W]; reference_measure [A^2/s^2 or A^2 Hz^0.5, see ``regime``]; regime.
    Scaling is done in ratio form (``ripple_loss``), so the reference point gives back the
    reference loss bit for bit and the scaled loss is linear in the reference loss.
    """

    reference_loss: Any
    reference_measure: Any
    regime: str

    @property
    def coefficient(self):
        """``k = P_ref / measure_ref`` [Ohm s^2 resistance-limited, W/(A^2 Hz^0.5) skin-limited]."""
        return self.reference_loss / self.reference_measure


def calibrate_ripple_loss(reference_loss, ripple_pp, ripple_frequency, duty, regime: str) -> RippleLossCalibration:
    """Calibration of the PWM ripple loss from one measured extra loss.

    Parameters: reference_loss [W] extra loss measured with the ripple (against the same
    operating point without ripple, e.g. a linear supply, or calorimetric); ripple_pp [A],
    ripple_frequency [Hz], duty [-] of the ripple during the measurement; regime.

    ``k = P_ref / M(dI_ref, f_ref, D_ref)``; the measure must be positive.
    Source: derived here (docs/physics.md §5.6); the method is common practice.
    """
    measure = ripple_loss_measure(ripple_pp, ripple_frequency, duty, regime)
    xp = namespace(measure)
    if not xp.vector and not measure > 0.0:
        raise ValueError("a calibration needs ripple at the reference point (measure > 0)")
    return RippleLossCalibration(reference_loss, measure, regime)


def calibrate_ripple_loss_from_temperature_rise(
    temperature_rise, thermal_resistance, ripple_pp, ripple_frequency, duty, regime: str
) -> RippleLossCalibration:
    """Calibration of the PWM ripple loss from one measured extra temperature rise.

    Parameters: temperature_rise [K] extra steady-state rise of the winding caused by the
    ripple; thermal_resistance [K/W] from the heated parts to ambient (for a first estimate
    the winding-to-ambient value; the eddy heat in magnets and iron takes a different path);
    ripple_pp [A], ripple_frequency [Hz], duty [-] at the measurement; regime.

    ``P_ref = dT / R_th``, then :func:`calibrate_ripple_loss`.  Linear thermal network
    (steady state, ``R_th`` independent of the loss).
    Source: derived here (docs/physics.md §5.6).
    """
    return calibrate_ripple_loss(temperature_rise / thermal_resistance, ripple_pp, ripple_frequency, duty, regime)


def ripple_loss(calibration: RippleLossCalibration, ripple_pp, ripple_frequency, duty):
    """PWM eddy loss at an operating point, scaled from a calibration [W].

    Parameters: calibration (:func:`calibrate_ripple_loss`); ripple_pp [A],
    ripple_frequency [Hz], duty [-] at the operating point.

    ``P = P_ref * M / M_ref`` in the calibration's regime: resistance-limited
    ``M = dI^2 f_r^2 / (D (1 - D))`` (``~ <v_r^2>/L^2``: falls as ``1/L^2``, does not depend on
    ``f_r`` at a fixed voltage wave), skin-limited ``M = dI^2 sqrt(f_r)`` (falls as ``1/L^2``
    and as ``f_r^-1.5``).  Zero without ripple.  Valid while the dominant part stays in the
    calibration's regime (:func:`plate_regime` at the new ``f_r``) and the same parts dominate;
    temperature-dependent resistivity and saturation are not followed.
    Source: derived here (docs/physics.md §5.6).
    """
    measure = ripple_loss_measure(ripple_pp, ripple_frequency, duty, calibration.regime)
    return calibration.reference_loss * (measure / calibration.reference_measure)


def ripple_loss_from_coefficient(coefficient, ripple_pp, ripple_frequency, duty, regime: str):
    """PWM eddy loss ``P = k M`` from a coefficient [W].

    Parameters: coefficient ``k`` [Ohm s^2 resistance-limited, W/(A^2 Hz^0.5) skin-limited],
    e.g. one end of :func:`ripple_loss_coefficient_default`; ripple_pp [A];
    ripple_frequency [Hz]; duty [-]; regime.
    Source: derived here (docs/physics.md §5.6).
    """
    return coefficient * ripple_loss_measure(ripple_pp, ripple_frequency, duty, regime)


def ripple_loss_coefficient_default(construction: str, winding_resistance, regime: str):
    """Uncertain default range ``(k_low, k_high)`` of the PWM eddy-loss coefficient.

    Parameters: construction ``"iron-core"``, ``"slotless"`` or ``"coreless"``;
    winding_resistance [Ohm] DC resistance of the loop the ripple flows in (terminal value
    for the terminal ripple); regime.

    The table ``DEFAULT_EDDY_RESISTANCE_RATIO`` holds a range of ``r = (R_s(f0) - R_dc)/R_dc``
    at ``f0 = 20 kHz``: iron-core 1 to 20, slotless 0.2 to 3, coreless 0.02 to 0.5.  With an
    extra series resistance ``dR(f)`` growing as ``f^2`` (resistance-limited) or ``sqrt f``
    (skin-limited) and the ripple's harmonics: resistance-limited
    ``k = r R_dc / (2 pi f0)^2`` [Ohm s^2] (exact: ``sum dR(f_n) I_n^2 = k <(di/dt)^2>``);
    skin-limited ``k = TRIANGLE_SQRT_HARMONIC_SUM r R_dc / sqrt(f0)`` [W/(A^2 Hz^0.5)].
    Use only when no calibration exists and no ``R_s(f)`` table is given (docs/physics.md §5.5
    gives the loss from a measured table directly).
    Source: common practice, order of magnitude, no published source (the ratios); the
    conversion is derived here (docs/physics.md §5.6).
    """
    if construction not in DEFAULT_EDDY_RESISTANCE_RATIO:
        raise ValueError(f"unknown winding construction {construction!r}; expected one of {WINDING_CONSTRUCTIONS}")
    low, high = DEFAULT_EDDY_RESISTANCE_RATIO[construction]
    if _check_loss_regime(regime) == RESISTANCE_LIMITED:
        scale = winding_resistance / (2.0 * math.pi * DEFAULT_RATIO_FREQUENCY) ** 2
    else:
        scale = TRIANGLE_SQRT_HARMONIC_SUM * winding_resistance / math.sqrt(DEFAULT_RATIO_FREQUENCY)
    return low * scale, high * scale
