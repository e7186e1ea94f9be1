"""Hand-assembled FigureSets for the report tests (until figures.compute exists).

A small, explicit adapter written for the tests only: brushed DC on an
H-bridge and three-phase sinusoidal/space-vector PWM, the catalogue inductance
derated to one third when no table is given (docs/physics.md §5.3), the winding at
its temperature limit for the hot resistance. Every value is a physics call.
"""

from __future__ import annotations

import math

import numpy as np

from specguard.figures import FigureSet
from specguard.figures.curves import family
from specguard.physics import hbridge, inductance, operating, rms, thermal, threephase


def _limit(spec) -> float:
    th = spec.motor.thermal
    if th is not None and th.max_winding_temperature is not None:
        return float(th.max_winding_temperature)
    if th is not None and th.insulation_class is not None:
        return float(thermal.winding_temperature_limit(th.insulation_class))
    return 155.0 + 273.15


def make_figures(spec) -> FigureSet:
    fam, scheme = family(spec)
    motor, stage = spec.motor, spec.stage
    volts = float(stage.supply.voltage)
    f_leg = float(stage.pwm.frequency)
    r_on = float(stage.switch_resistance or 0.0)
    t_lim = _limit(spec)
    r_hot_motor = float(
        thermal.resistance_at_temperature(motor.terminal_resistance.value, motor.terminal_resistance.at, t_lim)
    )
    r20 = float(
        thermal.resistance_at_temperature(motor.terminal_resistance.value, motor.terminal_resistance.at, 293.15)
    )
    f_r = float(hbridge.ripple_frequency(f_leg, scheme)) if fam == "hbridge" else f_leg
    if motor.inductance_vs_frequency:
        tab = motor.inductance_vs_frequency
        l_motor = float(
            inductance.inductance_at_frequency(f_r, [p.frequency for p in tab], [p.inductance for p in tab]).value
        )
    else:
        l_motor = float(inductance.inductance_derated(motor.terminal_inductance.value))
    chokes = spec.chokes
    l_choke = float(chokes.inductance) * chokes.count if chokes else 0.0
    r_choke = float(chokes.resistance or 0.0) * chokes.count if chokes else 0.0
    if fam == "sinusoidal":
        loop_l = float(threephase.star_equivalent_inductance(l_motor)) + (float(chokes.inductance) if chokes else 0.0)
        loop_r = float(threephase.star_equivalent_resistance(r_hot_motor)) + r_on
        loss_r20 = 1.5 * r20
    else:
        loop_l = l_motor + l_choke
        loop_r = r_hot_motor + 2.0 * r_on + r_choke
        loss_r20 = r20
    rated = float(motor.rated_current)
    axis = {
        "motor_rated_current": rated,
        "supply_voltage": volts,
        "pwm_frequency_leg": f_leg,
        "ripple_frequency": f_r,
        "loop_inductance": loop_l,
        "loop_resistance_hot": loop_r,
        "winding_temperature_limit": t_lim,
    }
    if fam == "hbridge":
        worst = float(hbridge.ripple_peak_to_peak_worst(volts, loop_l, loop_r, f_leg, scheme))
    else:
        # reachable modulation indices with the stage's duty limit (docs/physics.md §4.3)
        top = float(
            operating.modulation_index(
                operating.phase_voltage_peak_max(volts, scheme, float(stage.pwm.max_duty)), volts
            )
        )
        grid = np.linspace(0.0, top, 257)
        worst = float(np.nanmax(threephase.phase_ripple_peak_to_peak_max(volts, loop_l, f_leg, grid, scheme)))
    axis["ripple_pp_worst"] = worst
    axis["ripple_ratio_worst"] = worst / rated
    th = motor.thermal
    points = []
    for op in spec.operating_points:
        current = float(
            operating.current_for_torque(op.torque, motor.torque_constant.value, float(motor.no_load_current or 0.0))
        )
        emf = float(operating.back_emf(motor.back_emf_constant.value, op.speed))
        vals: dict = {
            "point_speed": float(op.speed),
            "point_torque": float(op.torque),
            "point_ambient": float(op.ambient),
            "operating_current": current,
        }
        if fam == "hbridge":
            v_term = float(operating.terminal_voltage_dc(motor.back_emf_constant.value, op.speed, current, r_hot_motor))
            m = float(
                operating.modulation_required(
                    v_term, volts, current, 2.0 * r_on + r_choke, float(stage.pwm.dead_time or 0.0), f_leg, scheme
                )
            )
            m_max = float(operating.modulation_max(stage.pwm.max_duty, scheme))
            pp = float(hbridge.ripple_peak_to_peak(volts, loop_l, loop_r, f_leg, m, scheme))
            r_rms = float(hbridge.ripple_rms(volts, loop_l, loop_r, f_leg, m, scheme))
            vals.update(
                terminal_voltage=v_term,
                modulation=m,
                duty=float(hbridge.leg_duty(m, scheme)),
                modulation_ratio=m / m_max,
            )
        else:
            e_pk = emf * math.sqrt(2.0) / math.sqrt(3.0)  # line-to-line rms -> phase peak
            v_pk = e_pk + loop_r * current * math.sqrt(2.0)
            m = float(operating.modulation_index(v_pk, volts))
            m_max = threephase.modulation_index_limit(scheme) * float(stage.pwm.max_duty)
            pp = float(threephase.phase_ripple_peak_to_peak_max(volts, loop_l, f_leg, m, scheme))
            r_rms = float(threephase.phase_ripple_rms(volts, loop_l, f_leg, m, scheme))
            vals.update(
                terminal_voltage=v_pk,
                modulation=m,
                duty=0.5 + 0.5 * m / threephase.modulation_index_limit(scheme),
                modulation_ratio=m / m_max,
            )
        vals.update(ripple_pp=pp, ripple_ratio=pp / rated, ripple_rms=r_rms)
        i_rms = float(rms.three_phase_current_rms(current, r_rms))
        vals["rms_current"] = i_rms
        if th is not None:
            t_w = float(
                thermal.winding_temperature_steady(
                    i_rms, loss_r20, th.winding_to_housing, th.housing_to_ambient, op.ambient
                )
            )
            vals["winding_temperature"] = t_w
            vals["winding_margin"] = t_lim - t_w
        points.append((op.name, vals))
    axis["modulation_max"] = max(v["modulation"] for _, v in points)
    return FigureSet(
        axis=axis,
        points=tuple(points),
        missing={},
        notes={"loop_inductance": "test fixture: catalogue value x 1/3 or table value at the ripple frequency"},
    )


REPO = __import__("pathlib").Path(__file__).resolve().parents[2]


def with_figures(report):
    """The report with FigureSets on every file that has a spec: the pipeline's own
    (figures.compute) when it attached them, else hand-assembled ones."""
    import dataclasses

    files = []
    for r in report.files:
        if r.spec is not None and getattr(r, "figures", None) is None:
            r = dataclasses.replace(r, figures=make_figures(r.spec))
        files.append(r)
    return dataclasses.replace(report, files=tuple(files))


def demo_report():
    from specguard.pipeline import check_paths

    return with_figures(check_paths([str(REPO / "examples" / "robot")], root=REPO))
