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
Form = Literal["count", "number", "factor", "under", "over"]


@dataclass(frozen=True)
class FigureDef:
    name: str
    dimension: str  # a units dimension, or "ratio" or "flag"
    unit: str  # SI unit shown in JSON ("1" for ratios, "" for flags)
    scope: Scope
    meaning: str
    paths: tuple[tuple[str | int, ...], ...] = ()
    # how the figure reads in a message where its dimension alone does not say it
    # (specguard.engine.pack.figure_form): "count", "number", "factor", "under", "over"
    form: Form | None = None


class _Entry:
    """One row of the table :class:`Fig`: the attribute's name is the figure's name.
    Read on the class it is that name (``Fig.ripple_ratio == "ripple_ratio"``; once the
    table is read the entry is replaced by that string, and ``__get__`` tells the type
    checker what a read gives), so the
    code that fills and reads figure mappings names a figure through the table, where a
    misspelt name fails at import and in the type check instead of leaving a figure
    silently absent."""

    __slots__ = ("_args", "definition")

    def __init__(self, dimension: str, unit: str, scope: Scope, meaning: str, paths, form: Form | None) -> None:
        self._args = (dimension, unit, scope, meaning, tuple(tuple(p.split("/")) for p in paths), form)

    def __set_name__(self, owner: type, name: str) -> None:
        self.definition = FigureDef(name, *self._args)

    def __get__(self, obj: object, owner: type | None = None) -> str:
        return self.definition.name


def _d(dimension: str, unit: str, scope: Scope, meaning: str, *paths: str, form: Form | None = None) -> _Entry:
    return _Entry(dimension, unit, scope, meaning, paths, form)


_PWM = ("stage/pwm/frequency", "stage/pwm/scheme", "stage/supply/voltage")
_L = ("motor/terminal_inductance", "motor/inductance_vs_frequency", "chokes/inductance")


class Fig:
    """The figure table: one entry per figure, its name written once (the attribute).

    Adding a figure is one entry here and the code in a domain module of
    :mod:`specguard.figures` that computes it (``axis[Fig.name] = ...`` or, for a point
    figure, ``row[Fig.name] = ...``; when the spec lacks what it needs,
    ``missing[Fig.name] = why``). tests/test_figure_table.py keeps every other module
    from spelling a figure's name as a string.
    """

    # --- inputs repeated as figures so that messages and reports can quote them
    motor_rated_current = _d("current", "A", "axis", "rated (continuous) current of the motor", "motor/rated_current")
    supply_voltage = _d("voltage", "V", "axis", "nominal supply (bus) voltage", "stage/supply/voltage")
    supply_voltage_high = _d(
        "voltage",
        "V",
        "axis",
        "top of the declared supply range (a full battery), else the nominal voltage: ripple, worst-case "
        "ripple, choke peak and braking are judged there",
        "stage/supply/range",
        "stage/supply/voltage",
    )
    supply_voltage_low = _d(
        "voltage",
        "V",
        "axis",
        "bottom of the declared supply range (a flat battery), else the nominal voltage: modulation, duty "
        "and headroom are judged there",
        "stage/supply/range",
        "stage/supply/voltage",
    )
    point_speed = _d("speed", "rad/s", "point", "motor speed at the operating point", "operating_points")
    point_torque = _d("torque", "N*m", "point", "motor torque at the operating point", "operating_points")
    point_ambient = _d("temperature", "K", "point", "ambient temperature at the operating point", "operating_points")
    # --- PWM and inductance (axis)
    ripple_frequency = _d(
        "frequency",
        "Hz",
        "axis",
        "fundamental frequency of the current ripple seen by the motor",
        *_PWM[:2],
        "stage/pwm/frequency_is",
    )
    pwm_frequency_leg = _d(
        "frequency",
        "Hz",
        "axis",
        "switching frequency of each half-bridge leg",
        "stage/pwm/frequency",
        "stage/pwm/frequency_is",
    )
    pwm_frequency_ambiguous = _d(
        "flag",
        "",
        "axis",
        "the spec gives a PWM frequency for a phase-shifted scheme without saying leg or ripple",
        "stage/pwm/frequency",
        "stage/pwm/frequency_is",
    )
    loop_inductance = _d(
        "inductance",
        "H",
        "axis",
        "inductance of the ripple loop at the ripple frequency (motor, possibly derated, plus chokes and stage)",
        *_L,
    )
    loop_inductance_catalogue = _d(
        "inductance",
        "H",
        "axis",
        "the same loop inductance with the catalogue motor value, not derated",
        *_L,
    )
    motor_inductance_ripple = _d(
        "inductance",
        "H",
        "axis",
        "the motor's terminal inductance at the ripple frequency: interpolated in the measured table, else "
        "the catalogue value, derated to an estimate when it was measured well below the ripple frequency",
        "motor/terminal_inductance",
        "motor/inductance_vs_frequency",
    )
    motor_inductance_catalogue = _d(
        "inductance",
        "H",
        "axis",
        "the motor's catalogue terminal inductance (else the first row of its measured table)",
        "motor/terminal_inductance",
        "motor/inductance_vs_frequency",
    )
    loop_resistance_hot = _d(
        "resistance",
        "ohm",
        "axis",
        "resistance of the ripple loop with the winding at its temperature limit",
        "motor/terminal_resistance",
        "chokes/resistance",
        "cable/resistance",
        "stage/switch_resistance",
    )
    electrical_time_constant = _d("time", "s", "axis", "L/R of the ripple loop", *_L, "motor/terminal_resistance")
    inductance_estimated = _d(
        "flag",
        "",
        "axis",
        "no measured inductance table: the motor inductance at the ripple frequency is a derated estimate",
        "motor/terminal_inductance",
    )
    inductance_extrapolated = _d(
        "flag",
        "",
        "axis",
        "the ripple frequency lies outside the measured inductance table (end value held)",
        "motor/inductance_vs_frequency",
    )
    inductance_table_rising = _d(
        "flag",
        "",
        "axis",
        "the measured inductance rises with frequency somewhere in the table",
        "motor/inductance_vs_frequency",
    )
    inductance_table_rise = _d(
        "ratio",
        "",
        "axis",
        "largest rise of the measured inductance from one table row to the next, relative (0 when it never rises)",
        "motor/inductance_vs_frequency",
    )
    ripple_period_over_tau = _d(
        "ratio",
        "1",
        "axis",
        "ripple period divided by the electrical time constant (above 1: exponential regime)",
        *_L,
        *_PWM[:1],
        form="factor",
    )
    # --- ripple
    ripple_pp = _d("current", "A", "point", "peak-to-peak current ripple (exact periodic solution)", *_PWM, *_L)
    ripple_pp_catalogue = _d(
        "current",
        "A",
        "point",
        "peak-to-peak ripple with the catalogue inductance (lower end of the range)",
        *_PWM,
        *_L,
    )
    ripple_ratio = _d(
        "ratio",
        "1",
        "point",
        "peak-to-peak ripple divided by the rated current",
        *_PWM,
        *_L,
        "motor/rated_current",
    )
    ripple_ratio_worst_catalogue = _d(
        "ratio",
        "1",
        "axis",
        "worst-case ripple over the rated current with the catalogue inductance in the loop instead of the "
        "inductance at the ripple frequency (an estimate, or a measured table)",
        *_PWM,
        *_L,
    )
    ripple_pp_worst = _d(
        "current",
        "A",
        "axis",
        "largest peak-to-peak ripple over the envelope of duty cycles or modulation indices the axis can reach",
        *_PWM,
        *_L,
    )
    ripple_ratio_worst = _d(
        "ratio",
        "1",
        "axis",
        "worst-case ripple divided by the rated current",
        *_PWM,
        *_L,
        "motor/rated_current",
    )
    ripple_rms = _d("current", "A", "point", "RMS of the ripple component alone", *_PWM, *_L)
    conduction_margin = _d(
        "ratio",
        "1",
        "point",
        "average current divided by half the ripple (below 1 with diode freewheeling: discontinuous conduction)",
        "stage/pwm/freewheeling",
        *_PWM,
    )
    # --- voltage and duty
    operating_current = _d(
        "current",
        "A",
        "point",
        "average (DC or phase rms) current at the operating point",
        "motor/torque_constant",
        "operating_points",
    )
    terminal_voltage = _d(
        "voltage",
        "V",
        "point",
        "terminal voltage needed at the operating point with the winding hot",
        "motor/back_emf_constant",
        "motor/terminal_resistance",
        "operating_points",
    )
    modulation = _d(
        "ratio",
        "1",
        "point",
        "modulation needed at the operating point at the bottom of the supply range (average load voltage over "
        "bus voltage; M for three-phase)",
        "stage/supply/voltage",
        "operating_points",
    )
    current_max = _d(
        "current",
        "A",
        "point",
        "largest instantaneous current: the maximum of the exact periodic current (H-bridge, six-step), the "
        "phase amplitude plus half the ripple (sinusoidal); judged against the stage's, motor's and choke's peaks",
        *_PWM,
        *_L,
        "operating_points",
    )
    current_min = _d(
        "current",
        "A",
        "point",
        "smallest instantaneous current of the exact periodic current (H-bridge, six-step)",
        *_PWM,
        *_L,
        "operating_points",
    )
    ripple_pp_linear = _d(
        "current",
        "A",
        "point",
        "peak-to-peak ripple of the small-ripple (linear) formula, beside the exact ripple_pp",
        *_PWM,
        *_L,
        "operating_points",
    )
    loop_phase_margin = _d(
        "angle",
        "rad",
        "axis",
        "phase margin of the current loop as built: its sampling and computation delay, feedback filter and the "
        "inductance its gains were tuned for (first-order loop with a pure delay)",
        "stage/current_loop",
        "stage/pwm/frequency",
    )
    loop_crossover_shift = _d(
        "ratio",
        "1",
        "axis",
        "how many times the loop's crossover lies away from its tuned bandwidth: the inductance the gains were "
        "tuned for against the loop inductance at the ripple frequency, the larger over the smaller",
        "stage/current_loop/tuned_for_inductance",
        *_L,
    )
    loop_tuned_inductance = _d(
        "inductance",
        "H",
        "axis",
        "the loop inductance the current-loop gains were tuned for",
        "stage/current_loop/tuned_for_inductance",
    )
    pulse_window_ratio = _d(
        "ratio",
        "1",
        "point",
        "the shorter of the leg's on- and off-time at the operating point's duty over the stage's shortest pulse",
        "stage/pwm/min_pulse",
        "stage/pwm/frequency",
        "operating_points",
    )
    sense_window_ratio = _d(
        "ratio",
        "1",
        "point",
        "the low side's conduction time at the operating point's duty over the current sense window",
        "stage/pwm/current_sense_window",
        "stage/pwm/frequency",
        "operating_points",
    )
    copper_loss = _d(
        "power",
        "W",
        "point",
        "copper loss of the RMS current (ripple included) in the winding at its steady temperature",
        "motor/terminal_resistance",
        "operating_points",
    )
    housing_temperature = _d(
        "temperature",
        "K",
        "point",
        "steady housing temperature (two-node model: ambient plus the losses through the housing)",
        "motor/thermal",
        "operating_points",
    )
    runaway_current = _d(
        "current",
        "A",
        "axis",
        "RMS current at which the winding has no steady temperature (copper loss outgrows the cooling)",
        "motor/thermal",
        "motor/terminal_resistance",
    )
    profile_start_temperature = _d(
        "temperature",
        "K",
        "axis",
        "winding temperature at the start of the repeated motion profile, in its periodic steady state",
        "profile",
        "motor/thermal",
    )
    electrical_speed = _d(
        "speed",
        "rad/s",
        "point",
        "electrical angular speed (pole pairs times the mechanical speed) of a three-phase point",
        "motor/pole_pairs",
        "operating_points",
    )
    voltage_d = _d(
        "voltage",
        "V",
        "point",
        "d-axis component of the peak phase voltage (i_d = 0 control)",
        "operating_points",
    )
    voltage_q = _d(
        "voltage",
        "V",
        "point",
        "q-axis component of the peak phase voltage (i_d = 0 control)",
        "operating_points",
    )
    standstill_hold = _d(
        "flag",
        "",
        "point",
        "a three-phase point holding torque at standstill: one phase carries the amplitude continuously, and the "
        "thermal and stage checks use it",
        "operating_points",
    )
    ripple_modulation = _d(
        "ratio",
        "1",
        "point",
        "modulation at the top of the supply range, where the ripple is computed (equals modulation without a range)",
        "stage/supply/range",
        "operating_points",
    )
    duty = _d("ratio", "1", "point", "duty cycle of the switching leg at the operating point", "stage/pwm/scheme")
    modulation_ratio = _d(
        "ratio",
        "1",
        "point",
        "modulation needed divided by the highest modulation the stage can produce (above 1: unreachable)",
        "stage/pwm/max_duty",
        "stage/supply/voltage",
        "operating_points",
    )
    modulation_max = _d(
        "ratio",
        "1",
        "axis",
        "highest modulation needed over the operating points (low: supply oversized)",
        "stage/supply/voltage",
    )
    supply_min = _d(
        "voltage",
        "V",
        "axis",
        "lowest supply voltage that reaches every operating point with control headroom",
        "stage/supply/voltage",
    )
    supply_max = _d(
        "voltage",
        "V",
        "axis",
        "highest supply voltage that keeps the duty above its floor and the ripple within its limit",
        "stage/supply/voltage",
    )
    supply_window_width = _d(
        "voltage",
        "V",
        "axis",
        "supply_max minus supply_min (negative: no supply voltage satisfies both)",
        "stage/supply/voltage",
        form="over",
    )
    supply_min_static = _d(
        "voltage",
        "V",
        "axis",
        "lowest supply voltage that reaches every operating point with the reserve, without the control "
        "headroom for a current step (what the points need to be reached at all)",
        "operating_points",
        "stage/supply/voltage",
    )
    supply_window_width_static = _d(
        "voltage",
        "V",
        "axis",
        "supply_max minus supply_min_static (negative: no supply voltage reaches the points within the ripple "
        "and duty limits)",
        "stage/supply/voltage",
        form="over",
    )
    control_headroom_voltage = _d(
        "voltage",
        "V",
        "axis",
        "voltage a step of the rated current at the current-loop bandwidth needs across the catalogue "
        "inductance, 2 pi f_c L I_rated (part of supply_min)",
        "stage/current_loop/bandwidth",
        "motor/terminal_inductance",
        "motor/rated_current",
    )
    # --- audible, control
    loop_bandwidth_ratio = _d(
        "ratio",
        "1",
        "axis",
        "current-loop bandwidth divided by the PWM (sampling) frequency",
        "stage/current_loop/bandwidth",
        "stage/pwm/frequency",
    )
    loop_bandwidth_max = _d(
        "frequency",
        "Hz",
        "axis",
        "highest current-loop bandwidth for 45 degrees phase margin with the sampling delay",
        "stage/current_loop",
        "stage/pwm/frequency",
    )
    constant_mismatch = _d(
        "ratio",
        "1",
        "axis",
        "relative mismatch between the torque constant and the back-EMF constant in SI under the declared conventions",
        "motor/torque_constant",
        "motor/back_emf_constant",
    )
    # --- thermal
    winding_temperature_limit = _d(
        "temperature",
        "K",
        "axis",
        "permitted winding temperature (declared, or insulation class minus 10 K)",
        "motor/thermal/max_winding_temperature",
        "motor/thermal/insulation_class",
    )
    rms_current = _d("current", "A", "point", "RMS current including the ripple", "operating_points")
    winding_temperature = _d(
        "temperature",
        "K",
        "point",
        "steady-state winding temperature at the operating point with ripple and ambient",
        "motor/thermal",
        "operating_points",
    )
    winding_margin = _d(
        "temperature_difference",
        "K",
        "point",
        "permitted winding temperature minus the steady-state winding temperature",
        "motor/thermal",
        form="under",
    )
    pwm_eddy_loss = _d(
        "power",
        "W",
        "point",
        "PWM eddy loss (iron, magnets, windings) from the ripple: calibrated by motor.pwm_loss, else the high end "
        "of an estimate for the winding construction",
        "motor/pwm_loss",
        "motor/winding",
        "operating_points",
    )
    pwm_loss_low = _d(
        "power",
        "W",
        "point",
        "low end of the estimated PWM eddy loss (no calibration)",
        "motor/winding",
        "operating_points",
    )
    pwm_loss_to_copper = _d(
        "ratio",
        "1",
        "point",
        "PWM eddy loss over the copper loss (RMS current, ripple included, in the hot winding)",
        "motor/pwm_loss",
        "operating_points",
    )
    pwm_loss_temperature_rise = _d(
        "temperature_difference",
        "K",
        "point",
        "winding temperature rise the PWM eddy loss causes (through the node it heats)",
        "motor/pwm_loss",
        "motor/thermal",
    )
    pwm_loss_margin_share = _d(
        "ratio",
        "1",
        "point",
        "share of the winding temperature margin (without the PWM loss) that the PWM eddy loss takes",
        "motor/pwm_loss",
        "motor/thermal",
    )
    profile_pwm_loss_temperature_rise = _d(
        "temperature_difference",
        "K",
        "axis",
        "part of the profile's peak winding temperature that the calibrated PWM eddy loss causes",
        "motor/pwm_loss",
        "profile",
    )
    eddy_path_thickness_ratio = _d(
        "ratio",
        "1",
        "axis",
        "half-thickness of the eddy path over its skin depth at the ripple frequency (at most 0.5: "
        "resistance-limited, at least 2: skin-limited)",
        "motor/eddy_path",
        "stage/pwm/frequency",
        form="factor",
    )
    pwm_loss_estimated = _d(
        "flag",
        "",
        "axis",
        "the PWM eddy loss is an estimate (no motor.pwm_loss calibration): kept out of the thermal budget",
        "motor/winding",
    )
    runaway_number = _d(
        "ratio",
        "1",
        "point",
        "thermal runaway number alpha*R_th*I^2*R20 (1 or more: no steady state)",
        "motor/thermal",
        form="number",
    )
    continuous_current_max = _d(
        "current",
        "A",
        "point",
        "highest continuous RMS current at the operating point's ambient",
        "motor/thermal",
    )
    rms_current_ratio = _d(
        "ratio",
        "1",
        "point",
        "RMS current divided by the highest continuous current at the ambient",
        "motor/thermal",
    )
    profile_peak_temperature = _d(
        "temperature",
        "K",
        "axis",
        "peak winding temperature over the periodic steady state of the motion profile",
        "profile",
        "motor/thermal",
    )
    profile_mean_temperature = _d(
        "temperature",
        "K",
        "axis",
        "mean winding temperature over the periodic steady state of the motion profile",
        "profile",
        "motor/thermal",
    )
    profile_margin = _d(
        "temperature_difference",
        "K",
        "axis",
        "permitted winding temperature minus the profile's peak winding temperature",
        "profile",
        "motor/thermal",
        form="under",
    )
    # --- currents against limits
    peak_current_reached = _d(
        "current",
        "A",
        "axis",
        "largest instantaneous current over the operating points: the maximum of the exact periodic current "
        "(H-bridge, six-step), the phase current amplitude plus half its ripple (sinusoidal)",
        "operating_points",
    )
    peak_current_ratio_stage = _d(
        "ratio",
        "1",
        "axis",
        "peak current divided by the stage's peak current limit (else the continuous one; its amplitude "
        "on a sinusoidal axis)",
        "stage/current_limit",
    )
    peak_current_ratio_motor = _d(
        "ratio",
        "1",
        "axis",
        "peak current divided by the motor's peak current (else the rated one; its amplitude on a sinusoidal axis)",
        "motor/peak_current",
    )
    choke_peak_current = _d(
        "current",
        "A",
        "axis",
        "peak choke current: the motor's or stage's peak current plus half the ripple",
        "chokes",
    )
    choke_saturation_ratio = _d(
        "ratio",
        "1",
        "axis",
        "peak choke current divided by the choke's saturation current",
        "chokes/saturation_current",
    )
    choke_rms_ratio = _d(
        "ratio",
        "1",
        "axis",
        "largest RMS choke current divided by the choke's rated current",
        "chokes/rated_current",
    )
    # --- braking
    braking_energy = _d(
        "energy",
        "J",
        "axis",
        "kinetic energy returned when braking from the fastest operating point to standstill",
        "load/inertia",
        "motor/rotor_inertia",
        "operating_points",
    )
    bus_absorbable_energy = _d(
        "energy",
        "J",
        "axis",
        "energy the bus capacitance takes between the top of the supply range and the over-voltage trip (or the "
        "supply's back-voltage limit, when lower)",
        "stage/bus_capacitance",
        "stage/overvoltage_trip",
    )
    braking_energy_ratio = _d(
        "ratio",
        "1",
        "axis",
        "braking energy divided by the energy the bus capacitance can absorb",
        "stage/supply/absorbs_braking_energy",
    )
    bus_voltage_after_braking = _d(
        "voltage",
        "V",
        "axis",
        "highest bus voltage while braking from the top of the supply range, after what the supply and a "
        "brake resistor take",
        "stage/bus_capacitance",
        "stage/supply",
        "stage/brake_resistor",
    )
    braking_torque = _d(
        "torque",
        "N*m",
        "axis",
        "motor torque braking the load from the fastest speed to standstill in load.stop_time",
        "load/stop_time",
        "load/inertia",
    )
    braking_power_peak = _d(
        "power",
        "W",
        "axis",
        "power braking returns at its start (braking torque times the fastest speed)",
        "load/stop_time",
        "load/inertia",
    )
    braking_supply_energy = _d(
        "energy",
        "J",
        "axis",
        "share of the braking energy the supply takes back (a battery below its full-charge voltage, at its "
        "charge current)",
        "stage/supply/returned_energy",
        "stage/supply/absorbs_braking_energy",
    )
    braking_resistor_energy = _d(
        "energy",
        "J",
        "axis",
        "share of the braking energy the brake resistor takes per stop",
        "stage/brake_resistor",
    )
    # --- plausibility: values against each other and the usual ranges of small drives
    winding_electrical_time_constant = _d(
        "time",
        "s",
        "axis",
        "electrical time constant of the motor winding alone: catalogue terminal inductance over terminal resistance",
        "motor/terminal_inductance",
        "motor/inductance_vs_frequency",
        "motor/terminal_resistance",
    )
    resistance_reference_temperature = _d(
        "temperature",
        "K",
        "axis",
        "winding temperature at which the terminal resistance is stated",
        "motor/terminal_resistance/at",
    )
    inductance_frequency_lowest = _d(
        "frequency",
        "Hz",
        "axis",
        "lowest frequency at which the spec states a motor inductance (catalogue or table)",
        "motor/terminal_inductance/measured_at",
        "motor/inductance_vs_frequency",
    )
    inductance_frequency_highest = _d(
        "frequency",
        "Hz",
        "axis",
        "highest frequency at which the spec states a motor inductance (catalogue or table)",
        "motor/terminal_inductance/measured_at",
        "motor/inductance_vs_frequency",
    )
    table_resistance_ratio_min = _d(
        "ratio",
        "1",
        "axis",
        "lowest series resistance of the inductance table divided by the terminal resistance",
        "motor/inductance_vs_frequency",
        "motor/terminal_resistance",
    )
    table_resistance_ratio_max = _d(
        "ratio",
        "1",
        "axis",
        "highest series resistance of the inductance table divided by the terminal resistance",
        "motor/inductance_vs_frequency",
        "motor/terminal_resistance",
        form="factor",
    )
    table_resistance_falling = _d(
        "flag",
        "",
        "axis",
        "the series resistance of the inductance table falls with frequency somewhere",
        "motor/inductance_vs_frequency",
    )
    torque_ratio = _d(
        "ratio",
        "1",
        "point",
        "torque at the operating point divided by the rated torque (torque constant times rated current)",
        "operating_points",
        "motor/torque_constant",
        "motor/rated_current",
    )
    profile_torque_ratio_min = _d(
        "ratio",
        "1",
        "axis",
        "smallest torque of the motion profile divided by the rated torque",
        "profile",
        "motor/rated_current",
    )
    profile_ambient = _d("temperature", "K", "axis", "ambient temperature of the motion profile", "profile/ambient")
    motor_peak_ratio = _d(
        "ratio",
        "1",
        "axis",
        "the motor's peak current divided by its rated current",
        "motor/peak_current",
        "motor/rated_current",
        form="factor",
    )
    rated_current_thermal_ratio = _d(
        "ratio",
        "1",
        "axis",
        "rated current divided by the highest continuous current the thermal data allow at 25 degC ambient",
        "motor/rated_current",
        "motor/thermal",
        "motor/terminal_resistance",
    )
    thermal_time_constant_ratio = _d(
        "ratio",
        "1",
        "axis",
        "thermal time constant of the winding divided by that of the whole motor",
        "motor/thermal/winding_time_constant",
        "motor/thermal/motor_time_constant",
    )
    thermal_resistance_ratio = _d(
        "ratio",
        "1",
        "axis",
        "thermal resistance winding-to-housing divided by housing-to-ambient",
        "motor/thermal/winding_to_housing",
        "motor/thermal/housing_to_ambient",
        form="factor",
    )
    winding_limit_over_class = _d(
        "temperature_difference",
        "K",
        "axis",
        "declared maximum winding temperature minus the temperature of the declared insulation class",
        "motor/thermal/max_winding_temperature",
        "motor/thermal/insulation_class",
        form="over",
    )
    mechanical_time_constant_computed = _d(
        "time",
        "s",
        "axis",
        "mechanical time constant of the unloaded motor: rotor inertia times loss resistance over the torque "
        "constant squared",
        "motor/rotor_inertia",
        "motor/terminal_resistance",
        "motor/torque_constant",
    )
    mechanical_time_constant_mismatch = _d(
        "ratio",
        "1",
        "axis",
        "relative difference between the declared (catalogue) mechanical time constant and the one "
        "computed from rotor inertia, loss resistance and torque constant",
        "motor/mechanical_time_constant",
        "motor/rotor_inertia",
        "motor/terminal_resistance",
        "motor/torque_constant",
    )
    mechanical_corner_frequency = _d(
        "frequency",
        "Hz",
        "axis",
        "corner frequency of the loaded axis' mechanics, 1 / (2 pi R (J_rotor + J_load) / (k_t k_e))",
        "motor/rotor_inertia",
        "load/inertia",
        "motor/terminal_resistance",
        "motor/torque_constant",
    )
    loop_bandwidth_over_mechanical = _d(
        "ratio",
        "1",
        "axis",
        "current-loop bandwidth over the loaded axis' mechanical corner frequency",
        "stage/current_loop/bandwidth",
        "motor/rotor_inertia",
        "load/inertia",
        form="factor",
    )
    inertia_ratio = _d(
        "ratio",
        "1",
        "axis",
        "load inertia divided by rotor inertia",
        "load/inertia",
        "motor/rotor_inertia",
        form="factor",
    )
    speed_ratio = _d(
        "ratio",
        "1",
        "point",
        "speed at the operating point divided by the motor's maximum speed",
        "operating_points",
        "motor/max_speed",
    )
    profile_speed_ratio = _d(
        "ratio",
        "1",
        "axis",
        "highest speed of the motion profile divided by the motor's maximum speed",
        "profile",
        "motor/max_speed",
    )
    max_speed_over_no_load = _d(
        "ratio",
        "1",
        "axis",
        "the motor's maximum speed divided by its no-load speed at the highest supply voltage",
        "motor/max_speed",
        "motor/back_emf_constant",
        "stage/supply",
        form="factor",
    )
    pwm_periods_per_electrical_period = _d(
        "ratio",
        "1",
        "axis",
        "PWM periods per electrical period at the highest speed (three-phase motors)",
        "stage/pwm/frequency",
        "motor/pole_pairs",
        "motor/max_speed",
        form="count",
    )
    profile_acceleration_ratio = _d(
        "ratio",
        "1",
        "axis",
        "longest time to change to a segment's speed at the peak torque, divided by that segment's duration",
        "profile",
        "load/inertia",
        "motor/rotor_inertia",
        "motor/peak_current",
    )
    supply_range_high_ratio = _d(
        "ratio",
        "1",
        "axis",
        "highest supply voltage of the range divided by the nominal",
        "stage/supply/range",
        "stage/supply/voltage",
    )
    supply_range_low_margin = _d(
        "voltage",
        "V",
        "axis",
        "lowest supply voltage of the range minus the lowest supply that reaches every operating point",
        "stage/supply/range",
        form="over",
    )
    trip_margin = _d(
        "voltage",
        "V",
        "axis",
        "over-voltage trip minus the highest supply voltage in operation",
        "stage/overvoltage_trip",
        "stage/supply",
        form="under",
    )
    rating_margin = _d(
        "voltage",
        "V",
        "axis",
        "the stage's highest rated supply voltage minus the highest supply voltage in operation",
        "stage/max_supply_voltage",
        "stage/supply",
        form="under",
    )
    stage_rating_over_supply = _d(
        "ratio",
        "1",
        "axis",
        "the stage's highest rated supply voltage divided by the nominal supply",
        "stage/max_supply_voltage",
        form="factor",
    )
    trip_over_rating = _d(
        "ratio",
        "1",
        "axis",
        "over-voltage trip divided by the stage's highest rated supply voltage",
        "stage/overvoltage_trip",
        "stage/max_supply_voltage",
    )
    pwm_dead_time = _d("time", "s", "axis", "dead time per switching edge", "stage/pwm/dead_time")
    dead_time_fraction = _d(
        "ratio",
        "1",
        "axis",
        "two dead times divided by the PWM period of a leg",
        "stage/pwm/dead_time",
        "stage/pwm/frequency",
    )
    min_pulse_fraction = _d(
        "ratio",
        "1",
        "axis",
        "shortest pulse divided by the PWM period of a leg",
        "stage/pwm/min_pulse",
        "stage/pwm/frequency",
    )
    min_pulse_over_dead_time = _d(
        "ratio",
        "1",
        "axis",
        "shortest pulse divided by the dead time",
        "stage/pwm/min_pulse",
        "stage/pwm/dead_time",
        form="factor",
    )
    pwm_timer_clock = _d("frequency", "Hz", "axis", "clock of the PWM timer", "stage/pwm/timer_clock")
    pwm_count_step = _d(
        "ratio",
        "1",
        "axis",
        "one timer count as a share of the PWM period (one over the counts per period)",
        "stage/pwm/timer_clock",
        "stage/pwm/frequency",
        "stage/pwm/alignment",
    )
    stage_current_rms = _d(
        "current",
        "A",
        "point",
        "RMS current of one stage output at the operating point, ripple included (a six-step phase conducts "
        "two thirds of the period while turning, all of it holding at standstill)",
        "operating_points",
    )
    stage_current_ratio = _d(
        "ratio",
        "1",
        "point",
        "RMS current of one stage output at the operating point divided by the stage's continuous current",
        "stage/current_limit",
    )
    stage_to_motor_current = _d(
        "ratio",
        "1",
        "axis",
        "the stage's continuous current divided by the motor's rated current",
        "stage/current_limit/continuous",
        form="factor",
    )
    stage_peak_over_continuous = _d(
        "ratio",
        "1",
        "axis",
        "the stage's peak current divided by its continuous current",
        "stage/current_limit",
    )
    current_loop_bandwidth = _d(
        "frequency",
        "Hz",
        "axis",
        "closed-loop current bandwidth",
        "stage/current_loop/bandwidth",
    )
    stage_switch_resistance = _d(
        "resistance",
        "ohm",
        "axis",
        "on-resistance of one conducting switch",
        "stage/switch_resistance",
    )
    choke_to_motor_inductance = _d(
        "ratio",
        "1",
        "axis",
        "inductance of one choke divided by the motor's catalogue terminal inductance",
        "chokes/inductance",
        form="factor",
    )
    choke_time_constant = _d(
        "time",
        "s",
        "axis",
        "inductance of one choke over its DC resistance",
        "chokes/inductance",
        "chokes/resistance",
    )
    choke_saturation_over_rated = _d(
        "ratio",
        "1",
        "axis",
        "the choke's saturation current divided by its rated (thermal) current",
        "chokes/saturation_current",
        "chokes/rated_current",
        form="factor",
    )
    cable_resistance_ratio = _d(
        "ratio",
        "1",
        "axis",
        "resistance of one cable conductor divided by that of a 1 mm^2 copper conductor of the same length",
        "cable/resistance",
        "cable/length",
        form="factor",
    )


FIGURES: tuple[FigureDef, ...] = tuple(v.definition for v in vars(Fig).values() if isinstance(v, _Entry))
# the entries give way to their names: reading ``Fig.name`` is then a plain class
# attribute (a descriptor call cost about 45 ns per read in the figure code's loops)
for _f in FIGURES:
    setattr(Fig, _f.name, _f.name)
del _f

FIGURE_DEFS: dict[str, FigureDef] = {f.name: f for f in FIGURES}

# Figures renamed so that no figure name equals a key of the spec format (a figure
# `rated_current` beside `motor.rated_current` and `chokes.rated_current`, or an
# electrical L/R called `winding_time_constant` beside the thermal
# `motor.thermal.winding_time_constant`, read as the spec's own values). A rule file
# may still name a figure by its former name; baseline digests keep the former names,
# so existing baselines keep matching.
FORMER_FIGURE_NAMES: dict[str, str] = {
    "current": Fig.operating_current,
    "rated_current": Fig.motor_rated_current,
    "peak_current": Fig.peak_current_reached,
    "mechanical_time_constant": Fig.mechanical_time_constant_computed,
    "winding_time_constant": Fig.winding_electrical_time_constant,
    "pwm_loss": Fig.pwm_eddy_loss,
    "dead_time": Fig.pwm_dead_time,
    "timer_clock": Fig.pwm_timer_clock,
    "switch_resistance": Fig.stage_switch_resistance,
    "speed": Fig.point_speed,
    "torque": Fig.point_torque,
    "ambient": Fig.point_ambient,
}


class _RemedyEntry:
    """One row of the table :class:`Rem`, named like a row of :class:`Fig`."""

    __slots__ = ("meaning", "name")

    def __init__(self, meaning: str) -> None:
        self.meaning = meaning

    def __set_name__(self, owner: type, name: str) -> None:
        self.name = name

    def __get__(self, obj: object, owner: type | None = None) -> str:
        return self.name


class Rem:
    """The remedies a rule can ask for, computed from the exact physics inverses (one
    function each in specguard.figures.remedies, registered under the entry)."""

    added_inductance = _RemedyEntry("the smallest added series inductance that brings the ripple to the limit")
    pwm_frequency = _RemedyEntry("the lowest PWM frequency that brings the ripple to the limit")
    supply_voltage_for_ripple = _RemedyEntry("the highest supply voltage that keeps the ripple within the limit")
    supply_voltage_for_duty = _RemedyEntry("the highest supply voltage that keeps the modulation above its floor")
    supply_voltage_min = _RemedyEntry("the lowest supply voltage that reaches the operating point with headroom")
    supply_voltage_for_modulation = _RemedyEntry(
        "the lowest supply voltage at which the point's modulation meets the limit"
    )
    pwm_frequency_inaudible = _RemedyEntry("the lowest PWM frequency whose ripple lies above the audible band")
    choke_saturation_current = _RemedyEntry("the saturation current a choke needs, with margin")
    loop_bandwidth = _RemedyEntry("the highest current-loop bandwidth the PWM frequency supports")
    loop_bandwidth_for_margin = _RemedyEntry(
        "the highest current-loop bandwidth that keeps the phase margin, the loop as built"
    )
    pwm_scheme = _RemedyEntry("three-level (unipolar, phase-shifted) PWM instead of two-level on an H-bridge")
    brake_resistor = _RemedyEntry(
        "the largest brake resistor that takes the peak braking power, its turn-on voltage and energy"
    )
    stage_continuous_current = _RemedyEntry("the continuous (RMS) current rating a stage needs for the operating point")
    stage_peak_current = _RemedyEntry("the peak current rating a stage needs for the largest current the axis reaches")


REMEDIES: dict[str, str] = {v.name: v.meaning for v in vars(Rem).values() if isinstance(v, _RemedyEntry)}
for _r in REMEDIES:
    setattr(Rem, _r, _r)
del _r
