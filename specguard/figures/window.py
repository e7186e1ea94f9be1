"""The supply window: the lowest supply that reaches every operating point (with and
without the current loop's step headroom) and the highest that keeps the ripple, the
duty floor and the stage's rating (docs/physics.md §4.5-4.6)."""

from __future__ import annotations

import math

from .. import physics as P
from ._vec import (
    any_of,
    finite,
    is_vector,
    masked,
    minimum,
    per_variant,
    real,
)
from .registry import Fig


def _most_demanding(elec: list[dict]) -> dict:
    """The operating point with the highest terminal voltage (the first of equals); for
    a batch, per variant: a point whose values are gathered from the points' arrays."""
    if not any(is_vector(e[Fig.terminal_voltage]) for e in elec):
        return max(elec, key=lambda e: e[Fig.terminal_voltage])
    import numpy as np

    index = np.argmax(np.stack([np.broadcast_to(e[Fig.terminal_voltage], _shape(elec)) for e in elec]), axis=0)
    out = {}
    for name in elec[0]:
        values = [e[name] for e in elec]
        if isinstance(values[0], bool):
            continue
        stacked = np.stack([np.broadcast_to(np.asarray(v, dtype=float), _shape(elec)) for v in values])
        out[name] = np.take_along_axis(stacked, index[None, :], axis=0)[0]
    return out


def _shape(elec: list[dict]) -> tuple[int, ...]:
    for e in elec:
        for v in e.values():
            if is_vector(v):
                return v.shape
    return ()


def _no_window(missing):
    why = "the dead times leave no usable duty at this PWM frequency: no supply voltage reaches the load"
    for name in _WINDOW_NAMES:
        missing[name] = why


_WINDOW_NAMES = (
    Fig.supply_min,
    Fig.supply_max,
    Fig.supply_window_width,
    Fig.supply_min_static,
    Fig.supply_window_width_static,
)


def _supply_window(spec, ax, elec, settings, axis, missing):
    """The supply window twice: with the control headroom for a step of the rated current
    at the loop bandwidth (a dynamic reserve, docs/physics.md §4.5), and without it (what
    the operating points need to be reached at all). Only the second can make the axis
    impossible; the first shortens transients."""
    stage = spec.stage
    rated = spec.motor.rated_current
    loop = stage.current_loop
    # control headroom for a step of the rated current at the loop bandwidth
    # (docs/physics.md §4.5: V_headroom >= omega_c L dI_step)
    headroom = 0.0
    if loop is not None:
        headroom = real(P.control.current_step_headroom_voltage(loop.bandwidth, ax.inductance_catalogue, rated))
        axis[Fig.control_headroom_voltage] = headroom
    else:
        missing[Fig.control_headroom_voltage] = "the spec has no stage.current_loop"
    ceiling = stage.max_supply_voltage if stage.max_supply_voltage is not None else math.inf
    worst = _most_demanding(elec)
    limit = settings.ripple_limit_ratio * rated
    keep: object = True  # the variants that have a window (a batch: an array)
    if ax.topology in ("dc", "six-step"):
        legs = P.hbridge.switching_leg_count(ax.scheme)
        usable = float(P.operating.modulation_max(ax.max_duty, ax.scheme)) - legs * ax.dead_time * ax.f_leg
        if not any_of(usable > 0.0):  # the dead times eat the whole duty range (dead-time-large says so)
            _no_window(missing)
            return
        keep = usable > 0.0

        def window(headroom_voltage: float) -> tuple[float, float]:
            found = P.operating.supply_voltage_window(
                worst[Fig.terminal_voltage],
                worst[Fig.terminal_voltage],
                worst["current"],
                worst["current"],
                ax.max_duty,
                ax.scheme,
                ax.inductance,
                ax.resistance_hot,
                ax.f_leg,
                limit,
                series_resistance=ax.series_resistance,
                headroom_voltage=headroom_voltage,
                reserve_fraction=settings.reserve_fraction,
                modulation_floor=settings.modulation_floor,
                dead_time=ax.dead_time,
                controller_voltage_max=ceiling,
            )
            return real(found.minimum), real(found.maximum)

        v_min, v_max = window(headroom)
        v_min_static = window(0.0)[0] if any_of(headroom > 0.0) else v_min
        # the ripple bound holds at every point, not only the most demanding one: the
        # bipolar bound is tightest at low terminal voltage (2 L f dI_max at
        # standstill, docs/physics.md §4.6), the unipolar one is not monotonic in V_req
        # (the most demanding point's own bound is already in the window: same arguments)
        for e in elec:
            if e is worst:
                continue
            v_max = minimum(
                v_max,
                real(
                    P.operating.supply_voltage_max_ripple(
                        e[Fig.terminal_voltage],
                        ax.inductance,
                        ax.resistance_hot,
                        ax.f_leg,
                        limit,
                        ax.scheme,
                        e["current"],
                        ax.series_resistance,
                        ax.dead_time,
                    )
                ),
            )
    else:
        v_ph = worst["phase_voltage_peak"]
        v_min = real(P.operating.supply_voltage_min_sinusoidal(v_ph, ax.scheme, ax.max_duty, ax.dead_time, ax.f_leg))
        reached = finite(v_min)
        if not any_of(reached):  # the dead times eat the whole duty range
            _no_window(missing)
            return
        keep = reached
        v_min *= 1.0 + settings.reserve_fraction
        v_min_static = v_min  # the sinusoidal minimum carries no step headroom
        # duty floor: M = 2 V_ph / V >= floor at the most demanding point
        if is_vector(v_ph):
            import numpy as np

            v_max = np.where(v_ph > 0, np.minimum(ceiling, 2.0 * v_ph / settings.modulation_floor), ceiling)
        else:
            v_max = min(ceiling, 2.0 * v_ph / settings.modulation_floor) if v_ph > 0 else ceiling
        # ripple: the maximum peak-to-peak phase ripple rises with the supply at a
        # fixed operating point (docs/physics.md §2.3); every point must stay within it
        for e in elec:
            v_max = minimum(
                v_max,
                per_variant(
                    P.threephase.supply_voltage_max_for_phase_ripple,
                    e["phase_voltage_peak"],
                    ax.inductance,
                    ax.f_leg,
                    ax.scheme,
                    limit,
                ),
            )
    bounded = finite(v_max)
    axis[Fig.supply_min] = masked(v_min, keep)
    axis[Fig.supply_min_static] = masked(v_min_static, keep)
    if any_of(bounded):
        if is_vector(bounded, keep):
            import numpy as np

            keep = np.logical_and(keep, bounded)
        axis[Fig.supply_max] = masked(v_max, keep)
        axis[Fig.supply_window_width] = masked(v_max - v_min, keep)
        axis[Fig.supply_window_width_static] = masked(v_max - v_min_static, keep)
    else:
        missing[Fig.supply_max] = "no upper bound applies (no duty floor, ripple or controller limit reached)"
        missing[Fig.supply_window_width] = missing[Fig.supply_max]
        missing[Fig.supply_window_width_static] = missing[Fig.supply_max]
