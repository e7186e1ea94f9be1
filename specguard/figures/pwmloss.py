"""The PWM eddy loss per operating point: its conduction regime, the calibrated loss in
the thermal budget or the estimate range beside it, and its share of the copper loss
and of the thermal margin (docs/physics.md §5.6, docs/pwm-losses.md)."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .. import physics as P
from ._vec import (
    clip,
    is_vector,
    largest,
    masked,
    maximum,
    real,
    smallest,
)
from .axis import KELVIN_20C, _Axis
from .registry import Fig


class MixedRegimes(ValueError):
    """A batch whose variants fall in different PWM eddy-loss regimes (the batch
    evaluator judges them in groups that share one)."""


# Default conduction regime of the PWM eddy loss by winding construction when the
# calibration does not say: laminations at PWM frequencies are thicker than the skin
# depth (iron-core, slotless back iron); a coreless winding's loss sits in thin strands
# and far magnets (common practice, no published source; docs/pwm-losses.md).
_PWM_REGIME = {"iron-core": "skin-limited", "slotless": "skin-limited", "coreless": "resistance-limited"}


@dataclass(frozen=True)
class _PwmLoss:
    """The PWM eddy loss per operating point: watts in the thermal budget (calibrated
    only), the (low, high) estimate range otherwise, and the node it heats."""

    in_budget: tuple[float, ...]  # W per point, 0 when only estimated
    high: tuple[float, ...]
    low: tuple[float, ...]
    estimated: bool
    node_resistance: float  # K/W from the heated node to ambient
    law: Callable[[Mapping[str, float]], float] | None = None  # W in the budget for one electrical state
    winding_node: bool = False  # the loss heats the winding (coreless), else the housing


class _LossLaw:
    """The calibrated PWM loss of one electrical state (a point or a profile segment)."""

    def __init__(self, cal, regime: str, ax: _Axis) -> None:
        self.cal, self.regime, self.ax = cal, regime, ax

    def __call__(self, e: Mapping[str, float]) -> float:
        pp, duty = _ripple_load(self.ax, e)
        if self.regime == P.eddy.TRANSITION:
            # neither law holds between the edges: the larger of the two (docs/pwm-losses.md)
            return largest(real(P.eddy.ripple_loss(c, pp, self.ax.f_ripple, duty)) for c in self.cal)
        return real(P.eddy.ripple_loss(self.cal, pp, self.ax.f_ripple, duty))


def _ripple_load(ax: _Axis, e: Mapping[str, float]) -> tuple[float, float]:
    """(peak-to-peak ripple, duty of the ripple wave) of one electrical state."""
    if ax.topology == "sinusoidal":
        duty = 0.5  # a sinusoidal axis' ripple duty sweeps the period; its mean is taken
    else:
        duty = real(P.hbridge.load_wave_duty(clip(e[Fig.ripple_modulation], 0.0, 1.0), ax.scheme))
    return real(e[Fig.ripple_pp]), clip(duty, 1e-6, 1.0 - 1e-6)


def _pwm_regime(motor, ax: _Axis, axis, notes) -> str:
    """The conduction regime of the PWM eddy loss: the calibration's, else the declared
    eddy path's half-thickness against its skin depth at the ripple frequency, else the
    default of the winding construction."""
    calibration = motor.pwm_loss
    if calibration is not None and calibration.regime is not None:
        return calibration.regime
    part = motor.eddy_path
    if part is None:
        return _PWM_REGIME[motor.winding]
    rho_default, mu_default = P.eddy.EDDY_MATERIALS[part.material]
    rho = part.resistivity if part.resistivity is not None else rho_default
    mu = part.relative_permeability if part.relative_permeability is not None else mu_default
    depth = real(P.eddy.skin_depth(ax.f_ripple, rho, mu))
    axis[Fig.eddy_path_thickness_ratio] = 0.5 * part.thickness / depth
    if is_vector(ax.f_ripple):
        # a batch is split so that its variants share one regime (specguard.figures.batch)
        import numpy as np

        frequencies = set(np.ravel(ax.f_ripple).tolist())
        regimes = {str(P.eddy.plate_regime(f, part.thickness, rho, mu)) for f in frequencies}
        if len(regimes) != 1:
            raise MixedRegimes("a batch of variants spans more than one eddy-loss regime")
        regime = regimes.pop()
        notes[Fig.eddy_path_thickness_ratio] = f"{part.material}, {regime} at the ripple frequency"
        return regime
    regime = str(P.eddy.plate_regime(ax.f_ripple, part.thickness, rho, mu))
    notes[Fig.eddy_path_thickness_ratio] = (
        f"{part.material}, {regime} at the ripple frequency (skin depth {depth * 1e3:.3g} mm)"
    )
    return regime


def _pwm_loss(spec, ax, elec, rows, axis, missing, notes) -> _PwmLoss | None:
    """PWM eddy loss per point from the ripple (docs/physics.md §5.6, docs/pwm-losses.md)."""
    motor = spec.motor
    thermal = motor.thermal
    names = (
        Fig.pwm_eddy_loss,
        Fig.pwm_loss_low,
        Fig.pwm_loss_to_copper,
        Fig.pwm_loss_temperature_rise,
        Fig.pwm_loss_margin_share,
        Fig.pwm_loss_estimated,
    )
    if motor.eddy_path is None:
        missing[Fig.eddy_path_thickness_ratio] = "the spec has no motor.eddy_path"
    if thermal is None:
        for name in names:
            missing[name] = "the spec has no motor.thermal data"
        return None
    # the loss heats the stator iron and the housing (iron-core, slotless) or the winding
    # itself (coreless): the node's thermal resistance to ambient
    winding_node = motor.winding == "coreless"
    node = thermal.housing_to_ambient + (thermal.winding_to_housing if winding_node else 0.0)
    calibration = motor.pwm_loss
    regime = _pwm_regime(motor, ax, axis, notes)
    three = ax.topology == "sinusoidal"
    phases = 3 if three else 1
    # the DC resistance of the path one ripple flows in: the loop (dc, six-step), one phase
    r_dc = ax.loss_resistance_20 / (1.5 if three else 1.0)
    r_dc = r_dc / 2.0 if three else r_dc
    loads = [_ripple_load(ax, e) for e in elec]
    laws = (P.eddy.RESISTANCE_LIMITED, P.eddy.SKIN_LIMITED) if regime == P.eddy.TRANSITION else (regime,)
    if calibration is not None:
        reference = calibration.extra_loss
        if reference is None:
            reference = calibration.extra_temperature_rise / node
        cals = tuple(
            P.eddy.calibrate_ripple_loss(
                reference, calibration.at_ripple, calibration.at_frequency, calibration.at_duty, law
            )
            for law in laws
        )
        law_fn = _LossLaw(cals if len(cals) > 1 else cals[0], regime, ax)
        values = tuple(law_fn(e) for e in elec)
        notes[Fig.pwm_eddy_loss] = f"calibrated from motor.pwm_loss ({regime}); in the thermal budget"
        axis[Fig.pwm_loss_estimated] = False
        return _PwmLoss(values, values, values, False, node, law_fn, winding_node)
    lows, highs = [], []
    for law in laws:
        k_low, k_high = P.eddy.ripple_loss_coefficient_default(motor.winding, r_dc, law)
        lows.append(
            [phases * real(P.eddy.ripple_loss_from_coefficient(k_low, pp, ax.f_ripple, d, law)) for pp, d in loads]
        )
        highs.append(
            [phases * real(P.eddy.ripple_loss_from_coefficient(k_high, pp, ax.f_ripple, d, law)) for pp, d in loads]
        )
    low = tuple(smallest(v) for v in zip(*lows, strict=True))
    high = tuple(largest(v) for v in zip(*highs, strict=True))
    notes[Fig.pwm_eddy_loss] = (
        f"estimate for a {motor.winding} winding ({regime}; common practice, no published source): not in the "
        "thermal budget; give motor.pwm_loss from one bench measurement"
    )
    notes[Fig.pwm_loss_low] = notes[Fig.pwm_eddy_loss]
    axis[Fig.pwm_loss_estimated] = True
    return _PwmLoss(tuple(0.0 for _ in loads), high, low, True, node, None, winding_node)


def _pwm_loss_effect(spec, ax, rows, pwm: _PwmLoss | None, missing) -> None:
    """The PWM loss against the copper loss and the thermal margin, per point."""
    if pwm is None:
        return
    if not pwm.estimated:
        missing[Fig.pwm_loss_low] = "the PWM loss is calibrated (motor.pwm_loss): one value"
    for row, high, low in zip(rows, pwm.high, pwm.low, strict=True):
        row[Fig.pwm_eddy_loss] = high
        if pwm.estimated:
            row[Fig.pwm_loss_low] = low
        rise = high * pwm.node_resistance
        row[Fig.pwm_loss_temperature_rise] = rise
        t_w = row.get(Fig.winding_temperature)
        if t_w is not None:
            r_hot = real(P.thermal.resistance_at_temperature(ax.loss_resistance_20, KELVIN_20C, t_w))
            copper = real(row[Fig.rms_current]) ** 2 * r_hot
            if is_vector(copper):
                row[Fig.pwm_loss_to_copper] = masked(high / maximum(copper, 1e-300), copper > 0)
            elif copper > 0:
                row[Fig.pwm_loss_to_copper] = high / copper
        margin = row.get(Fig.winding_margin)
        if margin is not None:
            # the share of the margin the loss takes: of the margin it would have without it
            before = margin + (0.0 if pwm.estimated else rise)
            if is_vector(before):
                import numpy as np

                row[Fig.pwm_loss_margin_share] = masked(rise / np.where(before > 0, before, 1.0), before > 0)
            elif before > 0:
                row[Fig.pwm_loss_margin_share] = rise / before
    for name in (Fig.pwm_loss_to_copper, Fig.pwm_loss_margin_share):
        if not all(name in row for row in rows):
            for row in rows:
                row.pop(name, None)
            missing[name] = "no steady winding temperature or margin at some operating point"
        elif is_vector(*(row[name] for row in rows)):
            # a batch: a variant lacking the figure at some point lacks it at every point
            import numpy as np

            lacking = np.logical_or.reduce([np.isnan(row[name]) for row in rows])
            for row in rows:
                row[name] = np.where(lacking, np.nan, row[name])
