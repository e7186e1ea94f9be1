"""The closed-form remedies: for a finding, the amount of a lever that brings its figure
to a threshold (the verified fixes start from these, specguard.engine.fixes)."""

from __future__ import annotations

import math

from .. import physics as P
from ..model.spec import Spec
from . import FigureSet, Remedy
from .axis import SQRT3, FigureSettings, _axis, _fmt, _highest_supply, _lowest_supply, _motor_inductance
from .energy import brake_turn_on


def remedy(
    name: str,
    spec: Spec,
    figures: FigureSet,
    *,
    point: str | None,
    limit: float,
    settings: FigureSettings | None = None,
) -> Remedy | None:
    settings = settings or FigureSettings()
    ax = _axis(spec, settings)
    # ripple remedies at the top of the supply range, where the ripple is judged; the
    # modulation figure is taken at the bottom, and scales as 1/V to the top
    V_nom, V, V_low = spec.stage.supply.voltage, _highest_supply(spec), _lowest_supply(spec)
    rated = spec.motor.rated_current
    modulation = figures.value("modulation", point) if point is not None else None
    if modulation is not None:
        modulation = float(modulation) * V_low / V
    three = ax.topology == "sinusoidal"
    if name == "added_inductance":
        if three:
            M = modulation if modulation is not None else P.threephase.modulation_index_limit(ax.scheme)
            value = P.remedies.added_phase_inductance_min(
                V,
                ax.inductance,
                ax.f_leg,
                min(M, P.threephase.modulation_index_limit(ax.scheme)),
                ax.scheme,
                rated,
                limit,
            )
            where = "per phase (one choke in each phase)"
        else:
            m = None if modulation is None else min(max(modulation, 0.0), 1.0)
            value = P.remedies.added_inductance_min(
                V, ax.inductance, ax.resistance_hot, ax.f_leg, ax.scheme, rated, limit, modulation=m
            )
            where = (
                "in total, split over both motor leads"
                if ax.topology == "dc"
                else "in the two conducting phases together"
            )
            if value is not None and ax.topology == "dc" and value > 0:
                return Remedy(name, f"add at least {_fmt(value / 2.0, 'inductance')} per lead", float(value) / 2.0, "H")
        if value is None:
            return Remedy(name, "no added inductance below 1 H reaches the limit", None, "H")
        if value <= 0:
            return None
        return Remedy(name, f"add at least {_fmt(value, 'inductance')} {where}", float(value), "H")
    if name == "pwm_frequency":

        def frequency_for(inductance: float):
            if three:
                M = modulation if modulation is not None else P.threephase.modulation_index_limit(ax.scheme)
                return P.remedies.pwm_frequency_min_three_phase(
                    V, inductance, min(M, P.threephase.modulation_index_limit(ax.scheme)), ax.scheme, rated, limit
                )
            m = None if modulation is None else min(max(modulation, 0.0), 1.0)
            return P.remedies.pwm_frequency_min(V, inductance, ax.resistance_hot, ax.scheme, rated, limit, modulation=m)

        value = frequency_for(ax.inductance)
        # the motor's inductance falls with frequency (a measured table or the estimate
        # curve): solve again with the loop inductance at the new frequency, a few
        # fixed-point steps (the verification judges the result on the full model)
        for _ in range(3):
            if value is None or not (value > ax.f_leg):
                break
            f_ripple = value * ax.f_ripple / ax.f_leg
            l_motor, _l_cat = _motor_inductance(spec, f_ripple, settings, {}, {})
            share = ax.motor_inductance * l_motor / ax.terminal_inductance
            again = frequency_for(ax.inductance - ax.motor_inductance + share)
            if again is None or abs(again - value) <= 1e-4 * value:
                value = again if again is not None else value
                break
            value = again
        if value is None:
            return Remedy(name, "no PWM frequency below 1 MHz reaches the limit", None, "Hz")
        if value <= 0 or value <= ax.f_leg:
            return None
        note = " (re-check the inductance there)" if spec.motor.inductance_vs_frequency else ""
        text = f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg{note}"
        return Remedy(name, text, float(value), "Hz")
    if name == "supply_voltage_for_ripple":
        if three and point is not None:
            point_values = next(values for n, values in figures.points if n == point)
            phase_peak = float(point_values["terminal_voltage"]) / SQRT3  # peak line-to-line / sqrt3
            value = P.threephase.supply_voltage_max_for_phase_ripple(
                phase_peak, ax.inductance, ax.f_leg, ax.scheme, limit * rated
            )
            if value == 0.0:
                return Remedy(
                    name,
                    "lowering the supply does not help: the ripple at this point exceeds the limit at every "
                    "supply voltage; add inductance or raise the PWM frequency",
                    None,
                    "V",
                )
        elif three:
            worst = figures.value("ripple_pp_worst")
            if not worst:
                return None
            # the worst case sits at the highest reachable M, which the duty limits fix
            # independently of the supply: the closed-form ripple is linear in V there
            value = V * limit * rated / float(worst)
        elif point is not None:
            point_values = next(values for n, values in figures.points if n == point)
            value = P.remedies.supply_voltage_max_for_ripple(
                ax.inductance,
                ax.resistance_hot,
                ax.f_leg,
                ax.scheme,
                rated,
                limit,
                terminal_voltage=float(point_values["terminal_voltage"]),
                current=float(point_values["operating_current"]),
                series_resistance=ax.series_resistance,
                dead_time=ax.dead_time,
            )
        else:
            value = P.remedies.supply_voltage_max_for_ripple(
                ax.inductance, ax.resistance_hot, ax.f_leg, ax.scheme, rated, limit
            )
        # ``value`` bounds the top of the range; a supply of the same tolerance scales
        # its whole range, so the nominal voltage moves by the same factor
        if value is None or not math.isfinite(value) or value >= V:
            return None
        needed = figures.value("supply_min")  # bounds the bottom of the range
        if needed is not None and value / V < float(needed) / V_low:
            if V == V_low:
                why = (
                    f"the ripple limit needs at most {_fmt(value, 'voltage')} but the operating points need "
                    f"at least {_fmt(float(needed), 'voltage')}"
                )
            else:
                why = (
                    f"the ripple limit needs the top of the supply range at most {_fmt(value, 'voltage')} "
                    f"(now {_fmt(V, 'voltage')}), which takes its bottom to {_fmt(V_low * value / V, 'voltage')}, "
                    f"below the {_fmt(float(needed), 'voltage')} the operating points need"
                )
            return Remedy(name, f"lowering the supply does not help: {why}", None, "V")
        nominal = V_nom * value / V
        return Remedy(name, f"lower the supply to at most {_fmt(nominal, 'voltage')}", float(nominal), "V")
    if name == "supply_voltage_for_duty":
        needed = figures.value("modulation_max")  # at the bottom of the range
        if not needed:
            return None
        scale = float(needed) / limit  # m scales as 1/V for fixed terminal voltage
        if scale >= 1.0:
            return None
        value = V_nom * scale
        text = (
            f"lower the supply to at most {_fmt(value, 'voltage')} "
            f"(modulation then {limit:.0%} at the most demanding point)"
        )
        return Remedy(name, text, value, "V")
    if name == "supply_voltage_min":
        value = figures.value("supply_min")  # the bottom of the range must reach it
        if value is None:
            return None
        nominal = V_nom * float(value) / V_low
        return Remedy(name, f"raise the supply to at least {_fmt(nominal, 'voltage')}", nominal, "V")
    if name == "supply_voltage_for_modulation":
        # the modulation an operating point needs falls as 1/V with the bottom of the range
        ratio = figures.value("modulation_ratio", point) if point is not None else None
        if ratio is None or limit <= 0:
            return None
        nominal = V_nom * float(ratio) / limit
        return Remedy(name, f"raise the supply to at least {_fmt(nominal, 'voltage')}", nominal, "V")
    if name == "pwm_frequency_inaudible":
        ratio = ax.f_ripple / ax.f_leg
        value = limit / ratio
        text = (
            f"raise the PWM frequency to at least {_fmt(value, 'frequency')} per leg "
            f"(ripple then at {_fmt(limit, 'frequency')})"
        )
        return Remedy(name, text, value, "Hz")
    if name == "stage_continuous_current":
        i_out = figures.value("stage_current_rms", point) if point is not None else None
        if i_out is None or limit <= 0:
            return None
        value = float(i_out) / limit
        return Remedy(name, f"use a stage rated for at least {_fmt(value, 'current')} continuous", value, "A")
    if name == "stage_peak_current":
        peak = figures.value("peak_current_reached")
        if peak is None or limit <= 0:
            return None
        value = float(peak) / limit
        return Remedy(name, f"use a stage rated for at least {_fmt(value, 'current')} peak", value, "A")
    if name == "choke_saturation_current":
        i_pk = figures.value("choke_peak_current")
        if i_pk is None or limit <= 0:
            return None
        value = float(i_pk) / limit
        return Remedy(name, f"use chokes rated for at least {_fmt(value, 'current')} saturation current", value, "A")
    if name == "pwm_scheme":
        if spec.motor.type != "brushed-dc" or spec.stage.pwm.scheme != "bipolar":
            return None
        return Remedy(name, "switch to three-level PWM", 1.0, "")
    if name == "brake_resistor":
        window = brake_turn_on(spec)
        if window is None:
            return None
        v_on, top, limit_v = window
        if not math.isfinite(v_on):
            return Remedy(
                name,
                f"a brake resistor does not help: the supply's top {_fmt(top, 'voltage')} leaves no room for a "
                f"turn-on voltage below the bus limit {_fmt(limit_v, 'voltage')}",
                None,
                "ohm",
            )
        peak = figures.value("braking_power_peak")
        if peak is None or not float(peak) > 0:
            return Remedy(
                name,
                f"fit a brake chopper switching in at {_fmt(v_on, 'voltage')} (give load.stop_time to size its "
                "resistor)",
                None,
                "ohm",
            )
        r_max = float(P.braking.shunt_resistance_max(v_on, float(peak)))
        return Remedy(name, f"fit a brake resistor of at most {_fmt(r_max, 'resistance')}", r_max, "ohm")
    if name == "loop_bandwidth_for_margin":
        loop = spec.stage.current_loop
        if loop is None:
            return None
        double = loop.sampling == "double-update"
        sampling = loop.sampling_frequency or ax.f_leg * (2.0 if double else 1.0)
        delay = float(P.control.loop_total_delay(sampling, loop.computation_delay))
        ratio = (loop.tuned_for_inductance / ax.inductance) if loop.tuned_for_inductance is not None else 1.0
        value = float(P.control.loop_bandwidth_max_for_margin(delay, limit, loop.feedback_filter, ratio))
        if not value > 0 or value >= loop.bandwidth:
            return None
        text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}"
        return Remedy(name, text, value, "Hz")
    if name == "loop_bandwidth":
        loop = spec.stage.current_loop
        if loop is None:
            return None
        sampling = ax.f_leg * (2.0 if loop.sampling == "double-update" else 1.0)
        value = limit * sampling
        text = f"lower the current-loop bandwidth to at most {_fmt(value, 'frequency')}, or raise the PWM frequency"
        return Remedy(name, text, value, "Hz")
    return None
