"""The named figures: stable names, units, meanings and the spec paths behind them.

A figure is a derived quantity a reviewer would compute by hand. Axis figures
have one value per spec; point figures one value per operating point. Values
are SI floats (or booleans for flags). ``dimension`` names the unit table
dimension used to parse rule thresholds and to display values; ``ratio`` is a
plain number (1 = 100 %), ``flag`` a boolean.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

Scope = Literal["axis", "point"]


@dataclass(frozen=True)
class FigureDef:
    name: str
    dimension: str  # a units dimension, or "ratio" or "flag"
    unit: str  # SI unit shown in JSON ("1" for ratios, "" for flags)
    scope: Scope
    meaning: str
    paths: tuple[tuple[str | int, ...], ...] = ()


def _d(name, dimension, unit, scope, meaning, *paths) -> FigureDef:
    return FigureDef(name, dimension, unit, scope, meaning, tuple(tuple(p.split("/")) for p in paths))


_PWM = ("stage/pwm/frequency", "stage/pwm/scheme", "stage/supply/voltage")
_L = ("motor/terminal_inductance", "motor/inductance_vs_frequency", "chokes/inductance")

FIGURES: tuple[FigureDef, ...] = (
    # --- inputs repeated as figures so that messages and reports can quote them
    _d("rated_current", "current", "A", "axis", "rated (continuous) current of the motor", "motor/rated_current"),
    _d("supply_voltage", "voltage", "V", "axis", "nominal supply (bus) voltage", "stage/supply/voltage"),
    _d("speed", "speed", "rad/s", "point", "motor speed at the operating point", "operating_points"),
    _d("torque", "torque", "N*m", "point", "motor torque at the operating point", "operating_points"),
    _d("ambient", "temperature", "K", "point", "ambient temperature at the operating point", "operating_points"),
    # --- PWM and inductance (axis)
    _d("ripple_frequency", "frequency", "Hz", "axis",
       "fundamental frequency of the current ripple seen by the motor", *_PWM[:2], "stage/pwm/frequency_is"),
    _d("pwm_frequency_leg", "frequency", "Hz", "axis",
       "switching frequency of each half-bridge leg", "stage/pwm/frequency", "stage/pwm/frequency_is"),
    _d("pwm_frequency_ambiguous", "flag", "", "axis",
       "the spec gives a PWM frequency for a phase-shifted scheme without saying leg or ripple",
       "stage/pwm/frequency", "stage/pwm/frequency_is"),
    _d("loop_inductance", "inductance", "H", "axis",
       "inductance of the ripple loop at the ripple frequency (motor, possibly derated, plus chokes and stage)", *_L),
    _d("loop_inductance_catalogue", "inductance", "H", "axis",
       "the same loop inductance with the catalogue motor value, not derated", *_L),
    _d("loop_resistance_hot", "resistance", "ohm", "axis",
       "resistance of the ripple loop with the winding at its temperature limit",
       "motor/terminal_resistance", "chokes/resistance", "cable/resistance", "stage/switch_resistance"),
    _d("electrical_time_constant", "time", "s", "axis", "L/R of the ripple loop", *_L, "motor/terminal_resistance"),
    _d("inductance_estimated", "flag", "", "axis",
       "no measured inductance table: the motor inductance at the ripple frequency is a derated estimate",
       "motor/terminal_inductance"),
    _d("inductance_extrapolated", "flag", "", "axis",
       "the ripple frequency lies outside the measured inductance table (end value held)",
       "motor/inductance_vs_frequency"),
    _d("inductance_table_rising", "flag", "", "axis",
       "the measured inductance rises with frequency somewhere in the table",
       "motor/inductance_vs_frequency"),
    _d("ripple_period_over_tau", "ratio", "1", "axis",
       "ripple period divided by the electrical time constant (above 1: exponential regime)", *_L, *_PWM[:1]),
    # --- ripple
    _d("ripple_pp", "current", "A", "point", "peak-to-peak current ripple (exact periodic solution)", *_PWM, *_L),
    _d("ripple_pp_catalogue", "current", "A", "point",
       "peak-to-peak ripple with the catalogue inductance (lower end of the range)", *_PWM, *_L),
    _d("ripple_ratio", "ratio", "1", "point", "peak-to-peak ripple divided by the rated current",
       *_PWM, *_L, "motor/rated_current"),
    _d("ripple_pp_worst", "current", "A", "axis",
       "largest peak-to-peak ripple over the envelope of duty cycles or modulation indices the axis can reach", *_PWM, *_L),
    _d("ripple_ratio_worst", "ratio", "1", "axis", "worst-case ripple divided by the rated current",
       *_PWM, *_L, "motor/rated_current"),
    _d("ripple_rms", "current", "A", "point", "RMS of the ripple component alone", *_PWM, *_L),
    _d("conduction_margin", "ratio", "1", "point",
       "average current divided by half the ripple (below 1 with diode freewheeling: discontinuous conduction)",
       "stage/pwm/freewheeling", *_PWM),
    # --- voltage and duty
    _d("current", "current", "A", "point", "average (DC or phase rms) current at the operating point",
       "motor/torque_constant", "operating_points"),
    _d("terminal_voltage", "voltage", "V", "point",
       "terminal voltage needed at the operating point with the winding hot", "motor/back_emf_constant",
       "motor/terminal_resistance", "operating_points"),
    _d("modulation", "ratio", "1", "point",
       "modulation needed at the operating point (average load voltage over bus voltage; M for three-phase)",
       "stage/supply/voltage", "operating_points"),
    _d("duty", "ratio", "1", "point", "duty cycle of the switching leg at the operating point", "stage/pwm/scheme"),
    _d("modulation_ratio", "ratio", "1", "point",
       "modulation needed divided by the highest modulation the stage can produce (above 1: unreachable)",
       "stage/pwm/max_duty", "stage/supply/voltage", "operating_points"),
    _d("modulation_max", "ratio", "1", "axis",
       "highest modulation needed over the operating points (low: supply oversized)", "stage/supply/voltage"),
    _d("supply_min", "voltage", "V", "axis",
       "lowest supply voltage that reaches every operating point with control headroom", "stage/supply/voltage"),
    _d("supply_max", "voltage", "V", "axis",
       "highest supply voltage that keeps the duty above its floor and the ripple within its limit",
       "stage/supply/voltage"),
    _d("supply_window_width", "voltage", "V", "axis",
       "supply_max minus supply_min (negative: no supply voltage satisfies both)", "stage/supply/voltage"),
    # --- audible, control
    _d("loop_bandwidth_ratio", "ratio", "1", "axis",
       "current-loop bandwidth divided by the PWM (sampling) frequency",
       "stage/current_loop/bandwidth", "stage/pwm/frequency"),
    _d("loop_bandwidth_max", "frequency", "Hz", "axis",
       "highest current-loop bandwidth for 45 degrees phase margin with the sampling delay",
       "stage/current_loop", "stage/pwm/frequency"),
    _d("constant_mismatch", "ratio", "1", "axis",
       "relative mismatch between the torque constant and the back-EMF constant in SI under the declared conventions",
       "motor/torque_constant", "motor/back_emf_constant"),
    # --- thermal
    _d("winding_temperature_limit", "temperature", "K", "axis",
       "permitted winding temperature (declared, or insulation class minus 10 K)",
       "motor/thermal/max_winding_temperature", "motor/thermal/insulation_class"),
    _d("rms_current", "current", "A", "point", "RMS current including the ripple", "operating_points"),
    _d("winding_temperature", "temperature", "K", "point",
       "steady-state winding temperature at the operating point with ripple and ambient",
       "motor/thermal", "operating_points"),
    _d("winding_margin", "temperature_difference", "K", "point",
       "permitted winding temperature minus the steady-state winding temperature", "motor/thermal"),
    _d("runaway_number", "ratio", "1", "point",
       "thermal runaway number alpha*R_th*I^2*R20 (1 or more: no steady state)", "motor/thermal"),
    _d("continuous_current_max", "current", "A", "point",
       "highest continuous RMS current at the operating point's ambient", "motor/thermal"),
    _d("rms_current_ratio", "ratio", "1", "point",
       "RMS current divided by the highest continuous current at the ambient", "motor/thermal"),
    _d("profile_peak_temperature", "temperature", "K", "axis",
       "peak winding temperature over the periodic steady state of the motion profile", "profile", "motor/thermal"),
    _d("profile_mean_temperature", "temperature", "K", "axis",
       "mean winding temperature over the periodic steady state of the motion profile", "profile", "motor/thermal"),
    _d("profile_margin", "temperature_difference", "K", "axis",
       "permitted winding temperature minus the profile's peak winding temperature", "profile", "motor/thermal"),
    # --- currents against limits
    _d("peak_current", "current", "A", "axis",
       "largest instantaneous current: largest operating current plus half its ripple", "operating_points"),
    _d("peak_current_ratio_stage", "ratio", "1", "axis",
       "peak current divided by the stage's peak (else continuous) current limit", "stage/current_limit"),
    _d("peak_current_ratio_motor", "ratio", "1", "axis",
       "peak current divided by the motor's peak (else rated) current", "motor/peak_current"),
    _d("choke_peak_current", "current", "A", "axis",
       "peak choke current: the motor's or stage's peak current plus half the ripple", "chokes"),
    _d("choke_saturation_ratio", "ratio", "1", "axis",
       "peak choke current divided by the choke's saturation current", "chokes/saturation_current"),
    _d("choke_rms_ratio", "ratio", "1", "axis",
       "largest RMS choke current divided by the choke's rated current", "chokes/rated_current"),
    # --- braking
    _d("braking_energy", "energy", "J", "axis",
       "kinetic energy returned when braking from the fastest operating point to standstill",
       "load/inertia", "motor/rotor_inertia", "operating_points"),
    _d("bus_absorbable_energy", "energy", "J", "axis",
       "energy the bus capacitance takes between the supply voltage and the over-voltage trip",
       "stage/bus_capacitance", "stage/overvoltage_trip"),
    _d("braking_energy_ratio", "ratio", "1", "axis",
       "braking energy divided by the energy the bus capacitance can absorb", "stage/supply/absorbs_braking_energy"),
    _d("bus_voltage_after_braking", "voltage", "V", "axis",
       "bus voltage after braking with no shunt and a supply that takes no current back", "stage/bus_capacitance"),
)

FIGURE_DEFS: dict[str, FigureDef] = {f.name: f for f in FIGURES}

# Remedies a rule can ask for: computed from the exact physics inverses.
REMEDIES: dict[str, str] = {
    "added_inductance": "the smallest added series inductance that brings the ripple to the limit",
    "pwm_frequency": "the lowest PWM frequency that brings the ripple to the limit",
    "supply_voltage_for_ripple": "the highest supply voltage that keeps the ripple within the limit",
    "supply_voltage_for_duty": "the highest supply voltage that keeps the modulation above its floor",
    "supply_voltage_min": "the lowest supply voltage that reaches the operating point with headroom",
    "pwm_frequency_inaudible": "the lowest PWM frequency whose ripple lies above the audible band",
    "choke_saturation_current": "the saturation current a choke needs, with margin",
    "loop_bandwidth": "the highest current-loop bandwidth the PWM frequency supports",
}
