"""Starter specs for ``specguard new``: a commented spec for one motor type and stage.

The text is generated from the format v1 model (:mod:`specguard.model.spec`): the keys,
their order, which ones are required, their descriptions, units and defaults come from
the pydantic field info, so the starter cannot drift from the format. Written by hand
here are only what the model cannot say on its own: the choices a kind narrows (a
brushed DC motor takes the H-bridge schemes, its constants refer to dc current and
terminal voltage), keys the cross-field checks require for a kind (``pole_pairs`` of a
three-phase motor, an inductance), plausible examples, and what an absent optional key
means to the figures (:data:`WHEN_ABSENT`, also printed in docs/format.md).

Every required value is a placeholder ``<meaning, e.g. 2.1 ohm>``: text that no field
accepts, so a spec left unfilled fails ``specguard check`` with an error located at
the placeholder and naming the field.
"""

from __future__ import annotations

import textwrap
import types
import typing
from dataclasses import dataclass, field
from typing import Any, Literal

from pydantic import BaseModel
from pydantic.fields import FieldInfo
from pydantic_core import PydanticUndefined

from .model import units
from .model.quantity import Quantity

# What the figures take when an optional key is absent, where absence is more than
# "the figures that need it are left out" (docs/format.md prints these beside the
# default). Keyed by (model class, field); read from the figure modules (specguard/figures/).
WHEN_ABSENT: dict[tuple[str, str], str] = {
    ("Motor", "terminal_inductance"): "an error unless `inductance_vs_frequency` is given",
    ("Motor", "inductance_vs_frequency"): "the catalogue inductance, derated for the ripple frequency",
    ("Motor", "d_axis_inductance"): "half the terminal inductance per phase (non-salient)",
    ("Motor", "q_axis_inductance"): "half the terminal inductance per phase (non-salient)",
    ("Motor", "peak_current"): "the rated current (times sqrt 2 for a sinusoidal three-phase axis)",
    ("Motor", "no_load_current"): "0 A",
    ("Motor", "pole_pairs"): "an error for a three-phase motor",
    ("Thermal", "max_winding_temperature"): "the limit of `insulation_class`",
    ("Stage", "switch_resistance"): "0 ohm",
    ("Stage", "output_inductance"): "0 H",
    ("Stage", "max_supply_voltage"): "no ceiling on the supply voltage",
    ("Pwm", "frequency_is"): (
        "with `unipolar-phase-shifted`: the frequency is read as the ripple frequency (the lower, "
        "conservative reading) and flagged as ambiguous; with other schemes the two are the same"
    ),
    ("Pwm", "dead_time"): "0 s",
    ("Pwm", "alignment"): "edge (one count per timer clock)",
    ("CurrentLimits", "peak"): "the continuous limit (times sqrt 2 for a sinusoidal three-phase axis)",
    ("Spec", "chokes"): "no chokes",
    ("Spec", "cable"): "0 ohm of cable",
    ("Spec", "load"): "no load inertia",
}


@dataclass(frozen=True)
class Kind:
    """One motor type and stage that ``specguard new --kind`` offers."""

    name: str
    title: str
    fixed: dict[str, Any]  # dotted path -> value the kind decides
    choices: dict[str, tuple[str, ...]]  # dotted path -> the values the kind allows
    required: frozenset[str]  # optional in the model, required by the cross-field checks
    omit: frozenset[str]  # keys that do not apply to the kind
    examples: dict[str, str] = field(default_factory=dict)  # dotted path -> example in a placeholder
    notes: dict[str, str] = field(default_factory=dict)  # dotted path -> extra hand-written comment


_COMMON_EXAMPLES = {
    "axis.name": "dose-pump",
    "motor.terminal_resistance.at": "25 degC",
    "motor.terminal_inductance.measured_at": "1 kHz",
    "operating_points.name": "run",
    "operating_points.ambient": "40 degC",
    "profile.ambient": "40 degC",
    "profile.segments.duration": "200 ms",
    "motor.thermal.winding_time_constant": "15 s",
    "motor.thermal.motor_time_constant": "600 s",
    "motor.mechanical_time_constant": "6 ms",
    "stage.pwm.dead_time": "300 ns",
    "stage.pwm.min_pulse": "500 ns",
    "stage.pwm.timer_clock": "80 MHz",
    "stage.current_loop.bandwidth": "2 kHz",
    "stage.bus_capacitance": "220 uF",
    "motor.thermal.max_winding_temperature": "125 degC",
    "cable.length": "1.5 m",
    "cable.resistance": "30 mohm",
    "chokes.resistance": "25 mohm",
    "stage.switch_resistance": "30 mohm",
    "stage.output_inductance": "10 uH",
    "stage.pwm.max_duty": "0.95",
    "waivers.rule": "pwm-audible",
    "waivers.at": "run",
    "waivers.path": "/stage/pwm/frequency",
    "waivers.reason": "why the finding is accepted",
    "waivers.approved_by": "who approved it",
    "waivers.expires": "2030-12-31",
}

# Words for a placeholder where the key's own name says too little.
_LABELS = {
    "axis.name": "axis name",
    "motor.terminal_resistance.at": "winding temperature of the value",
    "motor.terminal_inductance.measured_at": "measurement frequency",
    "stage.supply.voltage": "nominal supply voltage",
    "stage.supply.range": "voltage",
    "stage.pwm.frequency": "PWM frequency",
    "stage.current_limit.continuous": "continuous current",
    "stage.current_limit.peak": "peak current",
    "stage.current_loop.bandwidth": "current-loop bandwidth",
    "chokes.inductance": "inductance of one choke",
    "chokes.resistance": "resistance of one choke",
    "chokes.rated_current": "rated current of one choke",
    "cable.resistance": "resistance of one conductor",
    "load.inertia": "load inertia",
    "operating_points.name": "operating point name",
    "operating_points.speed": "motor speed",
    "operating_points.torque": "motor torque",
    "operating_points.ambient": "ambient temperature",
    "profile.ambient": "ambient temperature",
    "waivers.rule": "rule id",
    "waivers.at": "operating point name",
    "waivers.path": "document path",
    "waivers.expires": "expiry date",
}

_SCHEME_NOTE = "docs/format.md explains every scheme and option (section 'PWM schemes and options')"

_DC = Kind(
    name="dc-h-bridge",
    title="a brushed DC motor on an H-bridge",
    fixed={
        "motor.type": "brushed-dc",
        "motor.torque_constant.current": "dc",
        "motor.back_emf_constant.voltage": "terminal",
        "chokes.placement": "per-lead",
    },
    choices={"stage.pwm.scheme": ("bipolar", "unipolar-single", "unipolar-phase-shifted")},
    required=frozenset({"motor.terminal_inductance"}),
    omit=frozenset({"motor.pole_pairs", "motor.d_axis_inductance", "motor.q_axis_inductance"}),
    examples={
        **_COMMON_EXAMPLES,
        "motor.terminal_resistance.value": "2.1 ohm",
        "motor.terminal_inductance.value": "120 uH",
        "motor.torque_constant.value": "23.5 mN*m/A",
        "motor.back_emf_constant.value": "2.46 mV/rpm",
        "motor.rated_current": "1.5 A",
        "motor.peak_current": "6 A",
        "stage.supply.voltage": "24 V",
        "stage.supply.range": "22 V;26 V",
        "stage.pwm.frequency": "25 kHz",
        "operating_points.speed": "3000 rpm",
        "operating_points.torque": "20 mN*m",
        "chokes.count": "2",
    },
    notes={"stage.pwm.scheme": _SCHEME_NOTE},
)

_THREE_PHASE_COMMON = {
    **_COMMON_EXAMPLES,
    "axis.name": "gimbal-pan",
    "motor.terminal_resistance.value": "0.8 ohm",
    "motor.terminal_inductance.value": "1.2 mH",
    "motor.torque_constant.value": "0.11 N*m/A",
    "motor.back_emf_constant.value": "6.65 V/krpm",
    "motor.rated_current": "3.5 A",
    "motor.peak_current": "10 A",
    "motor.pole_pairs": "4",
    "stage.supply.voltage": "48 V",
    "stage.supply.range": "44 V;52 V",
    "stage.pwm.frequency": "20 kHz",
    "operating_points.speed": "1500 rpm",
    "operating_points.torque": "0.2 N*m",
    "chokes.count": "3",
}

_SINUSOIDAL = Kind(
    name="three-phase-sinusoidal",
    title="a three-phase motor with sinusoidal or space-vector PWM",
    fixed={"motor.type": "three-phase", "chokes.placement": "per-phase"},
    choices={
        "stage.pwm.scheme": ("sinusoidal", "space-vector"),
        "motor.torque_constant.current": ("phase-rms", "phase-peak"),
        "motor.back_emf_constant.voltage": ("line-to-line-rms", "line-to-line-peak", "phase-rms", "phase-peak"),
    },
    required=frozenset({"motor.terminal_inductance", "motor.pole_pairs"}),
    omit=frozenset(),
    examples=_THREE_PHASE_COMMON,
    notes={"stage.pwm.scheme": _SCHEME_NOTE},
)

_SIX_STEP = Kind(
    name="three-phase-six-step",
    title="a three-phase motor with six-step (block) commutation",
    fixed={"motor.type": "three-phase", "chokes.placement": "per-phase"},
    choices={
        "stage.pwm.scheme": ("six-step-chop-one", "six-step-chop-both"),
        "motor.torque_constant.current": ("block", "phase-rms", "phase-peak"),
        "motor.back_emf_constant.voltage": ("line-to-line-peak", "line-to-line-rms", "phase-peak", "phase-rms"),
    },
    required=frozenset({"motor.terminal_inductance", "motor.pole_pairs"}),
    omit=frozenset({"motor.d_axis_inductance", "motor.q_axis_inductance"}),
    examples={**_THREE_PHASE_COMMON, "axis.name": "pump-rotor"},
    notes={
        "stage.pwm.scheme": _SCHEME_NOTE,
        "motor.torque_constant.current": "a block-commutated motor's catalogue usually quotes the block current",
    },
)

KINDS: dict[str, Kind] = {k.name: k for k in (_DC, _SINUSOIDAL, _SIX_STEP)}

_LINE = 100  # wrap comments at this width


# ---------------------------------------------------------------- field info
@dataclass
class _Info:
    """What the starter needs to know of one field, read from its annotation."""

    model: type[BaseModel] | None = None  # a mapping
    many: bool = False  # a list (of models or of scalars)
    pair: tuple[Quantity, ...] | None = None  # a fixed-length list of quantities
    quantity: Quantity | None = None
    literal: tuple[Any, ...] | None = None
    scalar: type | None = None  # bool, int, float, str


def _quantity(items) -> Quantity | None:
    return next((m for m in items if isinstance(m, Quantity)), None)


def _info(info: FieldInfo) -> _Info:
    out = _Info(quantity=_quantity(info.metadata))
    annotation: Any = info.annotation
    while True:
        origin = typing.get_origin(annotation)
        if origin is typing.Annotated:
            args = typing.get_args(annotation)
            out.quantity = out.quantity or _quantity(args[1:])
            annotation = args[0]
        elif origin in (typing.Union, types.UnionType):
            annotation = next(a for a in typing.get_args(annotation) if a is not type(None))
        elif origin is tuple:
            args = typing.get_args(annotation)
            if len(args) == 2 and args[1] is Ellipsis:
                out.many = True
                annotation = args[0]
            else:
                out.pair = tuple(_quantity(typing.get_args(a)[1:]) for a in args)  # type: ignore[misc]
                return out
        elif origin is Literal:
            out.literal = typing.get_args(annotation)
            return out
        else:
            break
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        out.model = annotation
    else:
        out.scalar = annotation
    return out


def _unit_phrase(q: Quantity) -> str:
    dim = units.DIMENSIONS[q.dimension]
    spellings = [u for u in units.accepted_units(q.dimension) if u.isascii()]
    others = [u for u in spellings if u != dim.si_unit]
    also = f" (also {', '.join(others)})" if others else ""
    return f"unit: {dim.si_unit}{also}"


def default_of(info: FieldInfo) -> str:
    """The model default of an optional field as written in a spec: ``absent`` for None."""
    default = info.default
    if default is None or default is PydanticUndefined:
        return "absent"
    if default == ():
        return "[]"
    return str(default).lower() if isinstance(default, bool) else str(default)


def _default_text(info: FieldInfo, model: type[BaseModel], name: str) -> str:
    shown = default_of(info)
    when = WHEN_ABSENT.get((model.__name__, name))
    return f"optional, default: {shown}" + (f"; when absent: {when}" if when else "")


# ---------------------------------------------------------------- the text
class _Writer:
    def __init__(self, kind: Kind) -> None:
        self.kind = kind
        self.lines: list[str] = []

    def comment(self, indent: int, commented: bool, text: str) -> None:
        lead = " " * indent + ("# " if commented else "") + "# "
        for line in textwrap.wrap(text, width=max(40, _LINE - len(lead)), break_on_hyphens=False):
            self.lines.append(lead + line)

    def line(self, indent: int, commented: bool, text: str, dash: bool = False) -> None:
        self.lines.append(" " * indent + ("# " if commented else "") + ("- " if dash else "") + text)

    def placeholder(self, path: str, label: str, f: _Info) -> str:
        example = self.kind.examples.get(path)
        if f.literal is not None:
            allowed = self.kind.choices.get(path, f.literal)
            if len(allowed) == 1:
                return f"<{allowed[0]}>"
            return "<one of " + ", ".join(str(a) for a in allowed[:-1]) + f" or {allowed[-1]}>"
        if f.quantity is not None:
            example = example or units.DIMENSIONS[f.quantity.dimension].example
            return f"<{label}, e.g. {example}>"
        if f.pair is not None:  # a flow list: no comma inside the placeholders
            low, high = (example or "22 V;26 V").split(";")
            return f"[<lowest {label} e.g. {low}>, <highest {label} e.g. {high}>]"
        if f.scalar is bool:
            return "<true or false>"
        if f.scalar is int:
            return f"<whole number, e.g. {example or 1}>"
        if f.scalar is float:
            return f"<number, e.g. {example or 0.5}>"
        if f.many:
            return f"[<{label}>]"
        return f"<{label}, e.g. {example}>" if example else f"<{label}>"

    def meaning(self, model: type[BaseModel], name: str, info: FieldInfo, f: _Info) -> str:
        text = info.description or (f.model.__doc__ or "" if f.model else "")
        return text.strip().rstrip(".")

    def unit(self, f: _Info, path: str) -> str:
        if f.quantity is not None:
            return _unit_phrase(f.quantity)
        if f.pair is not None and f.pair[0] is not None:
            return _unit_phrase(f.pair[0])
        if f.literal is not None and len(f.literal) == 1:
            return ""
        if f.literal is not None:
            return "unit: none (a word from the list)"
        if f.scalar is float:
            return "unit: none (a fraction)"
        if f.scalar is int:
            return "unit: none (a count)"
        if f.scalar is bool:
            return "unit: none (true or false)"
        if f.model is not None:
            return ""
        return "unit: none (text)"

    def model(self, model: type[BaseModel], path: tuple[str, ...], indent: int, commented: bool) -> None:
        for name, info in model.model_fields.items():
            self.field(model, name, info, path, indent, commented)

    def field(
        self,
        model: type[BaseModel],
        name: str,
        info: FieldInfo,
        path: tuple[str, ...],
        indent: int,
        commented: bool,
    ) -> None:
        kind = self.kind
        dotted = ".".join(path + (name,))
        if dotted in kind.omit:
            return
        f = _info(info)
        required = info.is_required() or dotted in kind.required
        off = commented or not required  # this key is written commented out
        parts = [self.meaning(model, name, info, f)]
        unit = self.unit(f, dotted)
        if unit:
            parts.append(unit)
        if dotted in kind.notes:
            parts.append(kind.notes[dotted])
        if dotted in kind.fixed:
            parts.append(f"set by --kind {kind.name}")
        elif dotted in kind.choices and len(kind.choices[dotted]) < len(f.literal or ()):
            parts.append(f"--kind {kind.name} allows: {', '.join(kind.choices[dotted])}")
        if not required:
            parts.append(_default_text(info, model, name))
        elif dotted in kind.required:
            parts.append(f"required for --kind {kind.name}")
        # the comment sits above the key, at the key's indent (inside a commented block too)
        self.comment(indent, commented, "; ".join(p for p in parts if p) + ".")
        label = _LABELS.get(dotted) or (path[-1] if name == "value" and path else name).replace("_", " ")
        if f.model is not None and not f.many:
            self.line(indent, off, f"{name}:")
            self.model(f.model, path + (name,), indent + 2, off)
        elif f.model is not None:
            self.line(indent, off, f"{name}:")
            self.item(f.model, path + (name,), indent + 2, off)
        elif dotted in kind.fixed:
            self.line(indent, off, f"{name}: {kind.fixed[dotted]}")
        elif f.literal is not None and len(f.literal) == 1:
            self.line(indent, off, f"{name}: {f.literal[0]}")
        elif info.default not in (None, PydanticUndefined) and not required:
            self.line(indent, off, f"{name}: {'[]' if info.default == () else info.default}")
        else:
            self.line(indent, off, f"{name}: {self.placeholder(dotted, label, f)}")

    def item(self, model: type[BaseModel], path: tuple[str, ...], indent: int, commented: bool) -> None:
        """One list item: the first key on the dash line (its comment above the dash), the rest below."""
        start = len(self.lines)
        self.model(model, path, indent + 2, commented)
        mark = "# # " if commented else "# "
        for i in range(start, len(self.lines)):
            body = self.lines[i][indent + 2 :]
            if body.startswith(mark):  # the first key's comment: align it with the dash
                self.lines[i] = " " * indent + body
                continue
            key = body[2:] if commented else body
            self.lines[i] = " " * indent + ("# " if commented else "") + "- " + key
            break


def _header(kind: Kind) -> list[str]:
    return [
        f"# Starter spec for {kind.title}",
        f"# (specguard new --kind {kind.name}), spec format 1.",
        "#",
        "# Replace every <...> placeholder with a value: a dimensional value is text with its unit",
        "# (e.g. 2.1 ohm, 25 kHz); a placeholder left in place fails 'specguard check' with an error",
        "# that names the field. Optional keys are commented out and show their default; remove the",
        "# leading '# ' to use one, then fill its placeholder. The full field reference is",
        "# docs/format.md; save the spec as NAME.axis.yaml so that a directory check finds it.",
        "",
    ]


def starter_text(kind_name: str) -> str:
    """The commented starter spec of ``kind_name`` (a key of :data:`KINDS`)."""
    from .model.spec import Spec

    kind = KINDS[kind_name]
    writer = _Writer(kind)
    writer.lines.extend(_header(kind))
    for name, info in Spec.model_fields.items():
        writer.field(Spec, name, info, (), 0, False)
        writer.lines.append("")
    return "\n".join(writer.lines).rstrip("\n") + "\n"
