"""Levers: what a designer can change on an axis, as edits of the spec.

A fix is a claim ("apply this edit and the finding is gone"), so every lever turns
an amount (an SI value) into the edit a person would make in the axis file: JSON
pointers of the spec as written, with values in units as text. A value that comes
from a library file is changed by an override in the axis file (a key beside
``from:``), never by editing the shared library file. The edit is applied to the
assembled spec data exactly as printed, so the verification sees what the person
will get.

Levers (name, what changes, direction of a fix):

- ``added_inductance``: series chokes (per lead on an H-bridge, per phase on a
  three-phase axis), fitted where none exist; at least.
- ``pwm_frequency``: ``stage.pwm.frequency`` (written as the spec declares it: per
  leg, or as the ripple frequency); at least.
- ``supply_voltage``: ``stage.supply.voltage`` with its declared range scaled alike
  (another supply of the same tolerance), within the stage's rating; at most or at
  least.
- ``choke_saturation_current``: ``chokes.saturation_current``; at least.
- ``loop_bandwidth``: ``stage.current_loop.bandwidth``; at most.
- ``pwm_scheme``: an H-bridge's two-level (bipolar) PWM switched to three-level
  (unipolar, phase-shifted legs); a categorical change, tried as it is.
- ``brake_resistor``: a brake chopper and resistor (``stage.brake_resistor``) added; its
  resistance at most, its turn-on voltage between the supply's top and the bus limit.
- ``stage_continuous_current``, ``stage_peak_current``: a stage rated for more current
  (``stage.current_limit.continuous`` / ``.peak``); at least.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ..model.units import format_si, parse_quantity
from .registry import Rem

# A choke fitted where none exists needs a resistance for the loop and the copper
# loss: about 1 mohm per uH for small power chokes of a few amperes (common
# practice, no published source; the fix says so and asks for the real value).
NEW_CHOKE_OHM_PER_HENRY = 1e-3 / 1e-6

# The highest PWM (leg) frequency a fix may propose: small drives switch at up to a few
# hundred kHz; above that the switching loss and the current sensing change the design
# (common practice, no published source).
PWM_FREQUENCY_MAX = 250e3

# Relative cost weights of the levers, for ordering fixes (a relative change of 1
# costs this much). Common practice of design reviews: a higher PWM frequency and a
# choke are cheap changes on paper; another supply voltage or stage is not.
# The policy's `modelling.fix_costs` replaces any of them (specguard.engine.config).
COST_WEIGHT = {
    "pwm_scheme": 0.3,  # a setting of the controller, where the bridge drives both legs
    "pwm_frequency": 1.0,
    "added_inductance": 1.0,
    "choke_saturation_current": 1.0,
    "loop_bandwidth": 0.5,
    "supply_voltage": 2.0,
    # another stage: a part change, weighed like another supply
    "stage_continuous_current": 2.0,
    "stage_peak_current": 2.0,
    "brake_resistor": 1.0,  # a part added where none was
}


@dataclass(frozen=True)
class Edit:
    """One lever at one amount: the edit, the words, and its relative size."""

    lever: str
    amount: float  # SI, as printed (rounded to the safe side)
    text: str
    # (JSON pointer in the axis file, value as written: a text with its unit, a list
    # of them, or a whole section as (key, value) pairs)
    changes: tuple[tuple[str, Any], ...]
    data: dict  # the assembled spec data with the edit applied
    cost: float


def safe_text(value: float, dimension: str, at_least: bool) -> tuple[str, float]:
    """``value`` as printed (4 significant digits) on the safe side of ``value``:
    never below it for an "at least" fix, never above it for an "at most" fix.
    Returns the text and the SI value it reads as."""
    text = format_si(value, dimension)
    back = parse_quantity(text, dimension)
    if (at_least and back < value) or (not at_least and back > value):
        number, unit = text.split(" ", 1)
        shown = float(number)
        step = 10.0 ** (math.floor(math.log10(abs(shown))) - 3) if shown else 1e-3
        shown = shown + step if at_least else shown - step
        text = format_si(parse_quantity(f"{shown!r} {unit}", dimension), dimension)
        back = parse_quantity(text, dimension)
    return text, back


def _set(data: dict, path: tuple[str, ...], value: Any) -> None:
    """Set ``path`` in ``data``, copying each mapping on the way (``data`` is a fresh
    top-level copy; the mappings it shares with the original stay untouched)."""
    node = data
    for key in path[:-1]:
        child = node.get(key)
        child = dict(child) if isinstance(child, dict) else {}
        node[key] = child
        node = child
    node[path[-1]] = value


def _pointer(path: tuple[str, ...]) -> str:
    return "/" + "/".join(p.replace("~", "~0").replace("/", "~1") for p in path)


class Lever:
    name = ""
    dimension = ""
    at_least = True
    categorical = False  # an edit without an amount to search (a scheme)

    def current(self, spec) -> float | None:
        """The lever's present amount (SI), for the cost of a change."""
        raise NotImplementedError

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        raise NotImplementedError

    def reshapes(self, spec) -> bool:
        """An edit adds or replaces a section of the spec (not only values)."""
        return False

    def fields(self, spec, amounts) -> tuple[dict[tuple[str, ...], Any], Any]:
        """The spec values the edits at ``amounts`` (an array) write, unrounded, and the
        mask of the amounts that are edits at all (the batch evaluator's view of
        :meth:`edit`)."""
        raise NotImplementedError

    # the cost weights in force (the policy's, merged over COST_WEIGHT); None: the defaults
    cost_weights: Mapping[str, float] | None = None

    def weight(self) -> float:
        """What a relative change of 1 of this lever costs (a part added: one change)."""
        return (self.cost_weights if self.cost_weights is not None else COST_WEIGHT).get(self.name, 1.0)

    def costed(self, weights: Mapping[str, float] | None):
        """This lever with the cost weights ``weights`` (None: the defaults)."""
        self.cost_weights = weights
        return self

    def _cost(self, spec, amount: float) -> float:
        now = self.current(spec)
        weight = self.weight()
        if not now:
            return weight * 1.0  # something added where nothing was
        return weight * abs(amount - now) / abs(now)


class AddedInductance(Lever):
    """Series chokes: ``amount`` is the inductance added per lead (H-bridge), per
    phase (sinusoidal) or in the two conducting phases together (six-step)."""

    name = "added_inductance"
    dimension = "inductance"

    def __init__(self, topology: str) -> None:
        self.topology = topology

    def current(self, spec) -> float | None:
        return spec.chokes.inductance if spec.chokes is not None else 0.0

    def _layout(self) -> tuple[str, int]:
        return ("per-lead", 2) if self.topology == "dc" else ("per-phase", 3)

    def reshapes(self, spec) -> bool:
        placement, count = self._layout()
        chokes = spec.chokes
        return not (chokes is not None and chokes.placement == placement and chokes.count == count)

    def reshaped(self, spec):
        """The spec model with a chokes section of this lever's layout in place of the
        one it has (none, or another layout), its values to be set by :meth:`fields`
        (plot sweeps; a fix goes through :meth:`edit` and the model build instead)."""
        from ..model.spec import Chokes

        placement, count = self._layout()
        chokes = Chokes.model_construct(inductance=0.0, placement=placement, count=count, resistance=0.0)
        return spec.model_copy(update={"chokes": chokes})

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        placement, count = self._layout()
        per_choke_added = amount / 2.0 if self.topology == "six-step" else amount
        shown_added, per_choke_added = safe_text(per_choke_added, "inductance", True)
        chokes = spec.chokes
        keeps = chokes is not None and chokes.placement == placement and chokes.count == count
        existing = chokes.inductance if keeps and chokes is not None else 0.0
        total_text, total = safe_text(existing + per_choke_added, "inductance", True)
        new = dict(data)
        where = {"per-lead": "per lead", "per-phase": "per phase"}[placement]
        if keeps and chokes is not None:
            changes: list[tuple[str, Any]] = [("/chokes/inductance", total_text)]
            _set(new, ("chokes", "inductance"), total_text)
            if chokes.resistance:
                r_text, _ = safe_text(chokes.resistance * total / chokes.inductance, "resistance", True)
                changes.append(("/chokes/resistance", r_text))
                _set(new, ("chokes", "resistance"), r_text)
            text = f"add at least {shown_added} {where} (chokes of {total_text} {where} instead of " + (
                f"{format_si(chokes.inductance, 'inductance')})"
            )
        else:
            r_text, _ = safe_text(total * NEW_CHOKE_OHM_PER_HENRY, "resistance", True)
            section: dict[str, Any] = {
                "inductance": total_text,
                "placement": placement,
                "count": count,
                "resistance": r_text,
            }
            changes = [("/chokes", tuple(section.items()))]
            new["chokes"] = section
            text = (
                f"add at least {shown_added} {where}: {count} chokes of {total_text} "
                f"(resistance taken as {r_text}; write the real value)"
            )
        return Edit(self.name, per_choke_added, text, tuple(changes), new, self._cost(spec, total))

    def fields(self, spec, amounts):
        import numpy as np

        amounts = np.asarray(amounts, dtype=float)
        placement, count = self._layout()
        per_choke_added = amounts / 2.0 if self.topology == "six-step" else amounts
        chokes = spec.chokes
        keeps = chokes is not None and chokes.placement == placement and chokes.count == count
        existing = chokes.inductance if keeps and chokes is not None else 0.0
        total = existing + per_choke_added
        out: dict[tuple[str, ...], Any] = {("chokes", "inductance"): total}
        if keeps and chokes is not None and chokes.resistance:
            out[("chokes", "resistance")] = chokes.resistance * total / chokes.inductance
        elif not keeps:
            out[("chokes", "resistance")] = total * NEW_CHOKE_OHM_PER_HENRY
        return out, amounts >= 0.0


class PwmFrequency(Lever):
    """``amount`` is the leg (carrier) frequency; written as the spec declares it."""

    name = "pwm_frequency"
    dimension = "frequency"

    def __init__(self, written_per_leg: float, note: str = "", maximum: float = 0.0) -> None:
        self.written_per_leg = written_per_leg  # written frequency / leg frequency
        self.note = note
        self.maximum = maximum or PWM_FREQUENCY_MAX

    def current(self, spec) -> float | None:
        return spec.stage.pwm.frequency

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        if amount > self.maximum:
            return None  # not a fix a small drive can take (the policy may move the bound)
        shown_leg, leg = safe_text(amount, "frequency", True)
        written_text, _written = safe_text(leg * self.written_per_leg, "frequency", True)
        new = dict(data)
        _set(new, ("stage", "pwm", "frequency"), written_text)
        text = f"raise the PWM frequency to at least {shown_leg} per leg"
        if self.written_per_leg != 1.0:
            text += f" (write 'frequency: {written_text}', the ripple frequency)"
        text += self.note
        return Edit(self.name, leg, text, (("/stage/pwm/frequency", written_text),), new, self._cost(spec, _written))

    def fields(self, spec, amounts):
        import numpy as np

        amounts = np.asarray(amounts, dtype=float)
        return {("stage", "pwm", "frequency"): amounts * self.written_per_leg}, amounts <= self.maximum


class SupplyVoltage(Lever):
    name = "supply_voltage"
    dimension = "voltage"

    def __init__(self, at_least: bool) -> None:
        self.at_least = at_least

    def current(self, spec) -> float | None:
        return spec.stage.supply.voltage

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        text_v, volts = safe_text(amount, "voltage", self.at_least)
        supply = spec.stage.supply
        ceiling = spec.stage.max_supply_voltage
        if volts <= 0:
            return None
        new = dict(data)
        _set(new, ("stage", "supply", "voltage"), text_v)
        changes: list[tuple[str, Any]] = [("/stage/supply/voltage", text_v)]
        top = volts
        if supply.range is not None:
            scale = volts / supply.voltage
            low_text, _ = safe_text(supply.range[0] * scale, "voltage", False)
            high_text, top = safe_text(supply.range[1] * scale, "voltage", True)
            _set(new, ("stage", "supply", "range"), [low_text, high_text])
            changes.append(("/stage/supply/range", [low_text, high_text]))
        if ceiling is not None and top > ceiling:
            return None  # beyond the stage's rating: not a fix
        verb = "raise" if self.at_least else "lower"
        text = f"{verb} the supply to {'at least' if self.at_least else 'at most'} {text_v}"
        if supply.range is not None:
            text += f" (range {changes[1][1][0]} to {changes[1][1][1]})"
        return Edit(self.name, volts, text, tuple(changes), new, self._cost(spec, volts))

    def fields(self, spec, amounts):
        import numpy as np

        amounts = np.asarray(amounts, dtype=float)
        supply = spec.stage.supply
        out: dict[tuple[str, ...], Any] = {("stage", "supply", "voltage"): amounts}
        top = amounts
        if supply.range is not None:
            scale = amounts / supply.voltage
            top = supply.range[1] * scale
            out[("stage", "supply", "range")] = (supply.range[0] * scale, top)
        valid = amounts > 0
        ceiling = spec.stage.max_supply_voltage
        if ceiling is not None:
            valid = valid & (top <= ceiling)
        return out, valid


class ChokeSaturation(Lever):
    name = "choke_saturation_current"
    dimension = "current"

    def current(self, spec) -> float | None:
        return spec.chokes.saturation_current if spec.chokes is not None else None

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        text_i, amps = safe_text(amount, "current", True)
        new = dict(data)
        _set(new, ("chokes", "saturation_current"), text_i)
        text = f"use chokes rated for at least {text_i} saturation current"
        return Edit(self.name, amps, text, (("/chokes/saturation_current", text_i),), new, self._cost(spec, amps))


class StageCurrentRating(Lever):
    """A stage rated for more current: ``stage.current_limit.continuous`` or ``.peak``
    (at least); a stage from a library file gets the rating as an override beside
    ``from:``, so the edit says which stage to look for, not that the file changed."""

    dimension = "current"

    def __init__(self, which: str) -> None:
        self.which = which  # "continuous" or "peak"
        self.name = f"stage_{which}_current"

    def current(self, spec) -> float | None:
        limits = spec.stage.current_limit
        return getattr(limits, self.which, None) if limits is not None else None

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        if spec.stage.current_limit is None:
            return None
        text_i, amps = safe_text(amount, "current", True)
        new = dict(data)
        _set(new, ("stage", "current_limit", self.which), text_i)
        text = f"use a stage rated for at least {text_i} {self.which}"
        changes = ((f"/stage/current_limit/{self.which}", text_i),)
        return Edit(self.name, amps, text, changes, new, self._cost(spec, amps))


class LoopBandwidth(Lever):
    name = "loop_bandwidth"
    dimension = "frequency"
    at_least = False

    def current(self, spec) -> float | None:
        return spec.stage.current_loop.bandwidth if spec.stage.current_loop is not None else None

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        text_f, hertz = safe_text(amount, "frequency", False)
        if hertz <= 0:
            return None
        new = dict(data)
        _set(new, ("stage", "current_loop", "bandwidth"), text_f)
        text = f"lower the current-loop bandwidth to at most {text_f}"
        changes = (("/stage/current_loop/bandwidth", text_f),)
        return Edit(self.name, hertz, text, changes, new, self._cost(spec, hertz))


class PwmScheme(Lever):
    """Switching an H-bridge from two-level (bipolar) to three-level (unipolar) PWM: the
    load sees half the voltage step, and with phase-shifted legs twice the ripple
    frequency; the ripple and the PWM eddy loss fall (docs/physics.md §1.2). ``amount``
    is not used: the edit is the scheme itself (a categorical lever)."""

    name = "pwm_scheme"
    dimension = ""
    categorical = True
    TARGET = "unipolar-phase-shifted"

    def current(self, spec) -> float | None:
        return 1.0

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        pwm = spec.stage.pwm
        if spec.motor.type != "brushed-dc" or pwm.scheme != "bipolar":
            return None
        new = dict(data)
        _set(new, ("stage", "pwm", "scheme"), self.TARGET)
        changes: list[tuple[str, Any]] = [("/stage/pwm/scheme", self.TARGET)]
        # the frequency stays the legs' frequency: say so where the spec left it open
        _set(new, ("stage", "pwm", "frequency_is"), "leg")
        changes.append(("/stage/pwm/frequency_is", "leg"))
        text = (
            "switch the H-bridge to three-level PWM (unipolar, phase-shifted legs at the same leg frequency: "
            "half the voltage step, twice the ripple frequency)"
        )
        return Edit(self.name, 1.0, text, tuple(changes), new, self.weight())


class BrakeResistorLever(Lever):
    """A brake chopper and resistor on the bus: ``amount`` is the resistance (at most);
    the turn-on voltage sits between the supply's top and the bus limit."""

    name = "brake_resistor"
    dimension = "resistance"
    at_least = False

    def current(self, spec) -> float | None:
        return spec.stage.brake_resistor.resistance if spec.stage.brake_resistor is not None else None

    def edit(self, data: Mapping, spec, amount: float) -> Edit | None:
        from .compute import brake_turn_on

        window = brake_turn_on(spec)
        if window is None or not math.isfinite(window[0]) or amount <= 0:
            return None
        r_text, ohms = safe_text(amount, "resistance", False)
        v_text, _volts = safe_text(window[0], "voltage", False)
        section: dict[str, Any] = {"resistance": r_text, "turn_on_voltage": v_text}
        new = dict(data)
        _set(new, ("stage", "brake_resistor"), section)
        text = f"fit a brake resistor of at most {r_text}, switched in at {v_text}"
        return Edit(self.name, ohms, text, (("/stage/brake_resistor", tuple(section.items())),), new, self.weight())


def topology(spec) -> str:
    if spec.motor.type == "brushed-dc":
        return "dc"
    return "six-step" if spec.stage.pwm.scheme.startswith("six-step") else "sinusoidal"


def lever_for(
    remedy_name: str, spec, pwm_frequency_max: float = 0.0, cost_weights: Mapping[str, float] | None = None
) -> Lever | None:
    """The lever a remedy of the rule pack moves (``specguard.figures.REMEDIES``);
    ``pwm_frequency_max`` bounds the PWM-frequency lever (0: the default);
    ``cost_weights`` weigh its changes (None: COST_WEIGHT)."""
    lever = _lever_for(remedy_name, spec, pwm_frequency_max)
    return lever.costed(cost_weights) if lever is not None else None


def cost_weights(settings) -> Mapping[str, float] | None:
    """The cost weights in force under ``settings`` (a FigureSettings): the policy's
    over the defaults, None when the policy sets none."""
    given = getattr(settings, "fix_costs", ())
    return {**COST_WEIGHT, **dict(given)} if given else None


def _lever_for(remedy_name: str, spec, pwm_frequency_max: float) -> Lever | None:
    if remedy_name == Rem.added_inductance:
        return AddedInductance(topology(spec))
    if remedy_name in (Rem.pwm_frequency, Rem.pwm_frequency_inaudible):
        pwm = spec.stage.pwm
        per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
        note = " (re-check the inductance table there)" if spec.motor.inductance_vs_frequency else ""
        return PwmFrequency(per_leg, note, pwm_frequency_max)
    if remedy_name in (Rem.supply_voltage_for_ripple, Rem.supply_voltage_for_duty):
        return SupplyVoltage(at_least=False)
    if remedy_name in (Rem.supply_voltage_min, Rem.supply_voltage_for_modulation):
        return SupplyVoltage(at_least=True)
    if remedy_name == Rem.choke_saturation_current:
        return ChokeSaturation()
    if remedy_name in (Rem.loop_bandwidth, Rem.loop_bandwidth_for_margin):
        return LoopBandwidth()
    if remedy_name == Rem.brake_resistor:
        return BrakeResistorLever()
    if remedy_name == Rem.pwm_scheme:
        return PwmScheme()
    if remedy_name == Rem.stage_continuous_current:
        return StageCurrentRating("continuous")
    if remedy_name == Rem.stage_peak_current:
        return StageCurrentRating("peak")
    return None


def pointer(path: tuple[str, ...]) -> str:
    return _pointer(path)
