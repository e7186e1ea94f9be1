"""Spec format v1: the pydantic model, the single source of truth.

The JSON Schema in ``schemas/spec-v1.schema.json`` and the format reference in
``docs/format.md`` are generated from these classes (``python -m
specguard.model.generate``); tests fail when the committed files differ from a
fresh generation.

Every dimensional value is a string with its unit and is held here in SI:
volts, amperes, ohms, henries, hertz, seconds, kelvin (absolute temperatures
and differences alike), rad/s, N*m, N*m/A, V*s/rad, kg*m^2, K/W, farads.
"""

import datetime as _dt
from typing import Annotated, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, StringConstraints, field_validator

from .quantity import Quantity

_CONFIG = ConfigDict(
    strict=True,
    extra="forbid",
    frozen=True,
    allow_inf_nan=False,
    hide_input_in_errors=True,
    populate_by_name=False,
    # Only Spec is ever validated: build its validator (nested models inline) on
    # first use instead of one per class at import; about 60 ms less start-up.
    defer_build=True,
)


class _Model(BaseModel):
    model_config = _CONFIG


def _as_tuple(value: object) -> object:
    # YAML sequences arrive as lists; the frozen model holds tuples. Strict
    # validation of the items still applies.
    return tuple(value) if isinstance(value, list) else value


AsTuple = BeforeValidator(_as_tuple)


def _integral(value: object) -> object:
    # JSON Schema's "integer" accepts 4.0; so does the model, to keep one policy
    # at both layers (docs/reliability.md F11). 4.5 and true stay errors.
    if isinstance(value, float) and value.is_integer():
        return int(value)
    return value


Integer = Annotated[int, BeforeValidator(_integral)]

# PWM schemes and commutations (also the values a rule's `applies.schemes` may name)
PwmScheme = Literal[
    "bipolar",
    "unipolar-single",
    "unipolar-phase-shifted",
    "six-step-chop-one",
    "six-step-chop-both",
    "sinusoidal",
    "space-vector",
]


Name = Annotated[
    str,
    StringConstraints(min_length=1, max_length=64, pattern=r"^[A-Za-z0-9][A-Za-z0-9_.\-]*$"),
]
Text = Annotated[str, StringConstraints(max_length=2000)]
LongText = Annotated[str, StringConstraints(max_length=20000)]
ShortText = Annotated[str, StringConstraints(min_length=1, max_length=200)]
Url = Annotated[str, StringConstraints(max_length=500, pattern=r"^https://[^\s]+$")]

# Dimensional field types (SI value after conversion).
Voltage = Annotated[float, Quantity("voltage", "voltage", gt=0)]
Current = Annotated[float, Quantity("current", "current", gt=0)]
Resistance = Annotated[float, Quantity("resistance", "resistance", gt=0)]
ResistanceOrZero = Annotated[float, Quantity("resistance", "resistance", ge=0)]
Inductance = Annotated[float, Quantity("inductance", "inductance", gt=0)]
InductanceOrZero = Annotated[float, Quantity("inductance", "inductance", ge=0)]
Frequency = Annotated[float, Quantity("frequency", "frequency", gt=0)]
Duration = Annotated[float, Quantity("time", "duration", gt=0)]
DurationOrZero = Annotated[float, Quantity("time", "duration", ge=0)]
# Absolute temperatures: above absolute zero and below 1000 degC (plausibility).
Temperature = Annotated[float, Quantity("temperature", "absolute temperature", gt=0, le=1273.15)]
CurrentOrZero = Annotated[float, Quantity("current", "current", ge=0)]
TorqueConstantValue = Annotated[float, Quantity("torque_constant", "torque constant", gt=0)]
BackEmfConstantValue = Annotated[float, Quantity("back_emf_constant", "back-EMF constant", gt=0)]
ThermalResistance = Annotated[float, Quantity("thermal_resistance", "thermal resistance", gt=0)]
PositiveSpeed = Annotated[float, Quantity("speed", "speed", gt=0)]
Speed = Annotated[float, Quantity("speed", "speed", ge=0)]
Torque = Annotated[float, Quantity("torque", "torque", ge=0)]
PositiveInertia = Annotated[float, Quantity("inertia", "inertia", gt=0)]
Inertia = Annotated[float, Quantity("inertia", "inertia", ge=0)]
Capacitance = Annotated[float, Quantity("capacitance", "capacitance", gt=0)]
Length = Annotated[float, Quantity("length", "length", gt=0)]
Power = Annotated[float, Quantity("power", "power", gt=0)]
TemperatureRise = Annotated[float, Quantity("temperature_difference", "temperature difference", gt=0)]
Resistivity = Annotated[float, Quantity("resistivity", "resistivity", gt=0)]


# --------------------------------------------------------------------- axis
class Axis(_Model):
    """Identity of the drive axis this spec describes."""

    name: Name = Field(description="short identifier of the axis, unique in the repository")
    description: Text | None = Field(None, description="what the axis does, in plain words")
    tags: Annotated[tuple[Name, ...], AsTuple] = Field(
        (), max_length=20, description="free labels a team's rules can select on (e.g. medical)"
    )


# -------------------------------------------------------------------- motor
class TerminalResistance(_Model):
    """Terminal resistance with the winding temperature it was measured at."""

    value: Resistance = Field(description="terminal resistance (line-to-line for three-phase motors)")
    at: Temperature = Field(description="winding temperature at which the value holds")


class TerminalInductance(_Model):
    """Catalogue terminal inductance and the frequency it was measured at."""

    value: Inductance = Field(description="terminal inductance (line-to-line for three-phase motors)")
    measured_at: Frequency = Field(description="measurement frequency of the value")


class InductancePoint(_Model):
    """One row of a measured inductance-versus-frequency table (series model)."""

    frequency: Frequency = Field(description="measurement frequency")
    inductance: Inductance = Field(description="terminal inductance at that frequency")
    series_resistance: Resistance | None = Field(None, description="series resistance at that frequency (optional)")


class TorqueConstant(_Model):
    """Torque constant with the current convention it refers to."""

    value: TorqueConstantValue = Field(description="torque per ampere")
    current: Literal["dc", "phase-rms", "phase-peak", "block"] = Field(
        description=(
            "which current the constant refers to: dc (brushed DC motor), phase-rms or "
            "phase-peak (sinusoidal phase current), block (six-step block current)"
        )
    )


class BackEmfConstant(_Model):
    """Back-EMF constant with the voltage convention it refers to."""

    value: BackEmfConstantValue = Field(description="back-EMF voltage per unit of mechanical speed")
    voltage: Literal["terminal", "line-to-line-peak", "line-to-line-rms", "phase-peak", "phase-rms"] = Field(
        description=(
            "which voltage the constant gives: terminal (brushed DC motor), or the "
            "line-to-line or phase voltage of a three-phase motor, peak or rms"
        )
    )


class Thermal(_Model):
    """Two-node thermal data of the motor (winding and housing)."""

    winding_to_housing: ThermalResistance = Field(description="thermal resistance from winding to housing")
    housing_to_ambient: ThermalResistance = Field(
        description="thermal resistance from housing to ambient, under the stated mounting"
    )
    winding_time_constant: Duration | None = Field(None, description="thermal time constant of the winding")
    motor_time_constant: Duration | None = Field(None, description="thermal time constant of the whole motor (housing)")
    max_winding_temperature: Temperature | None = Field(
        None, description="permitted winding temperature (preferred over the class)"
    )
    insulation_class: (
        Literal["Y", "A", "E", "B", "F", "H", "N", "R", "90", "105", "120", "130", "155", "180", "200", "220", "250"]
        | None
    ) = Field(
        None,
        description=(
            "insulation thermal class (IEC 60085) by letter or temperature in degC, as a "
            "string; used for the limit when no maximum winding temperature is given"
        ),
    )


class PwmLoss(_Model):
    """One bench measurement of the motor's extra loss under PWM (eddy currents in iron,
    magnets and windings beyond the copper loss of the ripple): the loss, or the extra
    winding temperature rise, at a stated ripple and ripple frequency. It calibrates the
    PWM loss at every operating point (docs/pwm-losses.md)."""

    extra_loss: Power | None = Field(None, description="extra loss measured under PWM at the reference")
    extra_temperature_rise: TemperatureRise | None = Field(
        None, description="extra winding temperature rise measured under PWM at the reference (needs motor.thermal)"
    )
    at_ripple: Current = Field(description="peak-to-peak ripple current at the reference")
    at_frequency: Frequency = Field(description="ripple frequency at the reference")
    at_duty: float = Field(0.5, gt=0.0, lt=1.0, description="duty cycle of the ripple wave at the reference")
    regime: Literal["resistance-limited", "skin-limited"] | None = Field(
        None,
        description=(
            "how the loss scales: resistance-limited (with the square of the current slope) or "
            "skin-limited (ripple squared times the square root of its frequency); default by winding"
        ),
    )


EddyMaterial = Literal[
    "electrical-steel", "soft-iron", "ndfeb", "smco", "ferrite", "copper", "aluminium", "stainless-steel"
]


class EddyPath(_Model):
    """The conductive part where the PWM ripple's field induces most of its eddy current
    (the stator laminations, the magnets, a sleeve): its material and thickness set
    the loss's conduction regime at the ripple frequency (docs/pwm-losses.md)."""

    material: EddyMaterial = Field(description="material of the part (typical resistivity and permeability)")
    thickness: Length = Field(description="thickness of the part across the field (a lamination sheet, a magnet)")
    resistivity: Resistivity | None = Field(
        None, description="resistivity, when known (else the material's typical value)"
    )
    relative_permeability: float | None = Field(
        None, gt=0.0, le=1.0e6, description="small-signal relative permeability, when known (else typical)"
    )


class Motor(_Model):
    """The motor's electrical, mechanical and thermal data."""

    type: Literal["brushed-dc", "three-phase"] = Field(description="motor type")
    winding: Literal["iron-core", "coreless", "slotless"] = Field(description="winding construction")
    datasheet: Url | None = Field(None, description="link to the datasheet (https only)")
    terminal_resistance: TerminalResistance
    terminal_inductance: TerminalInductance | None = Field(
        None, description="catalogue inductance (required unless a measured table is given)"
    )
    inductance_vs_frequency: Annotated[tuple[InductancePoint, ...], AsTuple] | None = Field(
        None,
        min_length=2,
        max_length=64,
        description="measured inductance-versus-frequency table, ascending frequency",
    )
    d_axis_inductance: Inductance | None = Field(
        None, description="per-phase d-axis inductance of a salient three-phase motor"
    )
    q_axis_inductance: Inductance | None = Field(
        None, description="per-phase q-axis inductance of a salient three-phase motor"
    )
    torque_constant: TorqueConstant
    back_emf_constant: BackEmfConstant
    rated_current: Current = Field(
        description=(
            "continuous (rated) current: the DC current of a brushed motor, the RMS phase "
            "current of a three-phase motor"
        )
    )
    peak_current: Current | None = Field(
        None,
        description=(
            "permitted peak current as an instantaneous value: for a three-phase motor the "
            "amplitude of the phase current (sqrt 2 times an RMS figure)"
        ),
    )
    no_load_current: CurrentOrZero | None = Field(
        None,
        description=(
            "no-load (friction) current, added to the torque current (RMS phase current for a three-phase motor)"
        ),
    )
    pole_pairs: Integer | None = Field(None, ge=1, le=200, description="number of pole pairs (three-phase motors)")
    max_speed: PositiveSpeed | None = Field(None, description="permitted maximum speed")
    rotor_inertia: PositiveInertia | None = Field(None, description="rotor moment of inertia")
    mechanical_time_constant: Duration | None = Field(
        None,
        description=(
            "catalogue mechanical time constant of the unloaded motor; checked against "
            "the rotor inertia, resistance and torque constant"
        ),
    )
    thermal: Thermal | None = Field(None, description="thermal data")
    pwm_loss: PwmLoss | None = Field(
        None, description="a bench measurement of the extra loss under PWM that calibrates the PWM eddy loss"
    )
    eddy_path: EddyPath | None = Field(
        None, description="material and thickness of the part the PWM eddy loss flows in (sets its regime)"
    )


# -------------------------------------------------------------------- stage
class ReturnedEnergy(_Model):
    """What the supply does with the energy braking returns to the bus."""

    takes: Literal["battery", "nothing"] = Field(
        description=(
            "battery: it charges up to its full-charge voltage at up to its charge current; nothing: it cannot "
            "sink current (a laboratory supply, a diode rectifier)"
        )
    )
    full_charge_voltage: Voltage | None = Field(None, description="battery: voltage at which charging stops")
    charge_current_max: Current | None = Field(None, description="battery: largest charge current it accepts")
    charging_blocked: bool = Field(
        False, description="battery: a protection circuit may refuse charge (then it takes nothing)"
    )
    back_voltage_max: Voltage | None = Field(
        None, description="highest voltage the supply tolerates at its output; the bus must stay below it"
    )


class BrakeResistor(_Model):
    """A brake chopper and its resistor on the DC bus."""

    resistance: Resistance = Field(description="resistance of the brake resistor")
    turn_on_voltage: Voltage = Field(description="bus voltage at which the chopper switches the resistor in")
    power_rating: Power | None = Field(None, description="continuous power rating of the resistor")


class Supply(_Model):
    """The DC supply of the power stage."""

    voltage: Voltage = Field(description="nominal DC bus voltage")
    range: Annotated[tuple[Voltage, Voltage], AsTuple] | None = Field(
        None, description="lowest and highest bus voltage in operation [min, max]"
    )
    absorbs_braking_energy: bool | None = Field(
        None, description="whether the supply can take current back (battery, regenerative supply)"
    )
    returned_energy: ReturnedEnergy | None = Field(
        None,
        description="what the supply does with returned braking energy, in detail (refines absorbs_braking_energy)",
    )


class Pwm(_Model):
    """PWM settings."""

    frequency: Frequency = Field(description="PWM frequency, as declared by frequency_is")
    frequency_is: Literal["leg", "ripple"] | None = Field(
        None,
        description=(
            "leg: switching frequency of each half-bridge leg (carrier); ripple: the "
            "effective frequency of the current ripple seen by the motor"
        ),
    )
    scheme: PwmScheme = Field(description="PWM scheme or commutation")
    freewheeling: Literal["synchronous", "diode"] | None = Field(
        None, description="how the off-time current flows: synchronous switches or diodes only"
    )
    max_duty: float = Field(gt=0.5, le=1.0, description="highest duty cycle the stage can produce (0.5 < d <= 1)")
    dead_time: DurationOrZero | None = Field(None, description="dead time per switching edge")
    min_pulse: Duration | None = Field(None, description="shortest pulse the stage can produce")
    current_sense_window: Duration | None = Field(
        None,
        description=(
            "time the low-side switch must conduct in each period for a valid current sample (low-side shunts)"
        ),
    )
    timer_clock: Frequency | None = Field(None, description="clock of the PWM timer")
    alignment: Literal["center", "edge"] | None = Field(None, description="carrier alignment")


class CurrentLimits(_Model):
    """Current limits of the power stage."""

    continuous: Current = Field(description="continuous output current (the RMS phase current of a three-phase stage)")
    peak: Current | None = Field(
        None,
        description=(
            "peak output current as an instantaneous value (the amplitude of the phase current of a three-phase stage)"
        ),
    )


class CurrentLoop(_Model):
    """The current controller."""

    bandwidth: Frequency = Field(description="closed-loop current bandwidth")
    sampling: Literal["single-update", "double-update"] = Field(
        description="current sampled and duty updated once or twice per PWM period"
    )
    sampling_frequency: Frequency | None = Field(
        None, description="sampling rate of the current controller, when it differs from the PWM updates"
    )
    computation_delay: float = Field(
        1.0,
        ge=0.0,
        le=10.0,
        description="computation delay of the controller, in samples (1: duty applied next sample)",
    )
    feedback_filter: Frequency | None = Field(None, description="corner of the first-order current-feedback filter")
    tuned_for_inductance: Inductance | None = Field(
        None, description="the loop inductance the controller gains were tuned for"
    )


class Stage(_Model):
    """The power stage: supply, PWM and protection."""

    supply: Supply
    pwm: Pwm
    switch_resistance: ResistanceOrZero | None = Field(None, description="on-resistance of one conducting switch")
    output_inductance: InductanceOrZero | None = Field(None, description="built-in output inductance per lead or phase")
    current_limit: CurrentLimits | None = None
    current_loop: CurrentLoop | None = None
    bus_capacitance: Capacitance | None = Field(None, description="DC bus capacitance")
    overvoltage_trip: Voltage | None = Field(None, description="bus over-voltage trip level")
    brake_resistor: BrakeResistor | None = Field(None, description="brake chopper and resistor on the DC bus")
    max_supply_voltage: Voltage | None = Field(None, description="highest rated supply voltage")


# ------------------------------------------------------------- chokes, cable
class Chokes(_Model):
    """External series chokes between stage and motor."""

    inductance: Inductance = Field(description="inductance of one choke at the operating current")
    placement: Literal["per-lead", "per-phase"] = Field(
        description="one choke in each motor lead (DC) or in each phase (three-phase)"
    )
    count: Integer = Field(ge=1, le=3, description="number of chokes fitted")
    resistance: ResistanceOrZero | None = Field(None, description="DC resistance of one choke")
    saturation_current: Current | None = Field(None, description="saturation current of one choke")
    rated_current: Current | None = Field(None, description="thermal (rms) current rating")


class Cable(_Model):
    """Motor cable."""

    length: Length | None = Field(None, description="cable length")
    resistance: ResistanceOrZero = Field(description="resistance of one conductor")


class Load(_Model):
    """The mechanical load."""

    inertia: Inertia = Field(description="load inertia referred to the motor shaft")
    stop_time: Duration | None = Field(
        None, description="time to brake from the fastest operating point to standstill (sets the braking power)"
    )


# ---------------------------------------------------------- operating points
class OperatingPoint(_Model):
    """A steady operating point the axis must reach."""

    name: Name = Field(description="name of the operating point, unique in the spec")
    speed: Speed = Field(description="motor speed")
    torque: Torque = Field(description="motor torque")
    ambient: Temperature = Field(description="ambient temperature")


class ProfileSegment(_Model):
    """One segment of a cyclic motion profile."""

    duration: Duration = Field(description="duration of the segment")
    speed: Speed = Field(description="motor speed during the segment")
    torque: Torque = Field(description="motor torque during the segment")


class Profile(_Model):
    """A cyclic motion profile, repeated without end (for the thermal transient)."""

    ambient: Temperature = Field(description="ambient temperature during the profile")
    segments: Annotated[tuple[ProfileSegment, ...], AsTuple] = Field(min_length=1, max_length=200)


class Waiver(_Model):
    """An accepted finding, reviewed like any change."""

    rule: Annotated[str, StringConstraints(pattern=r"^[a-z][a-z0-9-]{1,63}$")] = Field(
        description="id of the rule waived"
    )
    at: Name | None = Field(None, description="operating point the waiver covers")
    path: Annotated[str, StringConstraints(max_length=200)] | None = Field(
        None, description="document path the waiver covers, e.g. /stage/pwm/frequency"
    )
    reason: ShortText = Field(description="why the finding is accepted")
    approved_by: ShortText = Field(description="who approved the waiver")
    expires: Annotated[str, StringConstraints(pattern=r"^\d{4}-\d{2}-\d{2}$")] = Field(
        description="expiry date, ISO 8601 (YYYY-MM-DD)"
    )

    @field_validator("expires")
    @classmethod
    def _real_date(cls, value: str) -> str:
        _dt.date.fromisoformat(value)  # raises ValueError on 2027-02-30
        return value


# --------------------------------------------------------------------- spec
class Spec(_Model):
    """One drive axis."""

    format: Literal[1] = Field(description="spec format version")
    axis: Axis
    motor: Motor
    stage: Stage
    chokes: Chokes | None = None
    cable: Cable | None = None
    load: Load | None = None
    operating_points: Annotated[tuple[OperatingPoint, ...], AsTuple] = Field(min_length=1, max_length=500)
    profile: Profile | None = None
    waivers: Annotated[tuple[Waiver, ...], AsTuple] = Field((), max_length=200)
    notes: LongText | None = Field(None, description="free text for the reader")
