"""The published JSON Schema and the format reference, generated from the model.

The pydantic model (:mod:`specguard.model.spec`) is the single source of truth.
``python -m specguard.schema`` rewrites ``schemas/spec-v1.schema.json`` and
``docs/format.md``; a test fails when the committed files differ from a fresh
generation.

At check time the model itself validates (strict pydantic, which accepts the
same documents as this schema; a test holds the two to that). Importing
jsonschema costs about 140 ms on the 2-core machine, more than a whole check of
one file, so it stays off the check path (see DEVELOPERS.md).
"""

from __future__ import annotations

import json
from typing import Any

SPEC_SCHEMA_ID = "urn:specguard:schema:spec:v1"
SPEC_SCHEMA_FILE = "spec-v1.schema.json"
DIALECT = "https://json-schema.org/draft/2020-12/schema"


def spec_schema() -> dict[str, Any]:
    from pydantic.json_schema import GenerateJsonSchema

    from ..model.spec import Spec

    class _Generator(GenerateJsonSchema):
        def generate(self, schema, mode="validation"):
            out = super().generate(schema, mode=mode)
            head = {"$schema": DIALECT, "$id": SPEC_SCHEMA_ID}
            return {**head, **out}

    return Spec.model_json_schema(schema_generator=_Generator)


CONFIG_SCHEMA_ID = "urn:specguard:schema:config:v1"
CONFIG_SCHEMA_FILE = "config-v1.schema.json"


def config_schema() -> dict[str, Any]:
    """The JSON Schema of the policy file ``.specguard.yaml``, from its model."""
    from ..engine.config import config_schema as _config_schema

    return _config_schema()


def dumps(schema: dict[str, Any]) -> str:
    return json.dumps(schema, indent=2, ensure_ascii=False, sort_keys=False) + "\n"


# ------------------------------------------------------------ format reference
def _resolve(schema: dict, node: dict) -> dict:
    ref = node.get("$ref")
    if ref:
        return schema["$defs"][ref.split("/")[-1]]
    return node


def _non_null(node: dict) -> dict:
    options = node.get("anyOf")
    if options:
        rest = [o for o in options if o.get("type") != "null"]
        if len(rest) == 1:
            merged = dict(rest[0])
            for key in ("description", "default"):
                if key in node:
                    merged[key] = node[key]
            return merged
    return node


def _kind(schema: dict, node: dict) -> tuple[str, dict | None]:
    node = _non_null(node)
    if "$ref" in node:
        target = _resolve(schema, node)
        return f"mapping ({node['$ref'].split('/')[-1]})", target
    if "x-dimension" in node:
        return f'{node["x-dimension"].replace("_", " ")} [{node["x-si-unit"]}], e.g. "{node["examples"][0]}"', None
    if "enum" in node:
        return "one of " + ", ".join(f"`{v}`" for v in node["enum"]), None
    if "const" in node:
        return f"`{node['const']}`", None
    t = node.get("type")
    if t == "array":
        if "prefixItems" in node:
            inner = [_kind(schema, i)[0] for i in node["prefixItems"]]
            return f"list [{', '.join(inner)}]", None
        item_kind, item_target = _kind(schema, node.get("items", {}))
        return f"list of {item_kind}", item_target
    if t == "string" and "pattern" in node:
        return "text", None
    return str(t or "value"), None


# A complete three-phase spec (an invented gimbal axis), every section filled in; a test
# checks that it passes `specguard check` with no finding.
FORMAT_EXAMPLE = """\
# A complete three-phase axis (invented: the tilt axis of a camera gimbal on a lab robot).
format: 1
axis:
  name: gimbal-tilt
  description: Tilt axis of the inspection camera gimbal
  tags: [lab]
motor:
  type: three-phase
  winding: iron-core
  terminal_resistance: { value: 0.8 ohm, at: 25 degC }        # line-to-line
  terminal_inductance: { value: 3.2 mH, measured_at: 1 kHz }   # line-to-line
  inductance_vs_frequency:                                     # measured; used instead of a derated estimate
    - { frequency: 1 kHz, inductance: 3.1 mH, series_resistance: 1.0 ohm }
    - { frequency: 10 kHz, inductance: 2.4 mH, series_resistance: 3.2 ohm }
    - { frequency: 50 kHz, inductance: 1.8 mH, series_resistance: 9.5 ohm }
  torque_constant: { value: 0.11 N*m/A, current: phase-rms }
  back_emf_constant: { value: 6.65 V/krpm, voltage: line-to-line-rms }
  rated_current: 3.5 A          # RMS phase current
  peak_current: 10 A            # amplitude of the phase current
  no_load_current: 0.08 A
  pole_pairs: 4
  max_speed: 4000 rpm
  rotor_inertia: 48 g*cm^2
  thermal:
    winding_to_housing: 1.2 K/W
    housing_to_ambient: 3.0 K/W
    winding_time_constant: 30 s
    motor_time_constant: 900 s
    max_winding_temperature: 130 degC
    insulation_class: F
stage:
  supply: { voltage: 36 V, range: [34 V, 38 V], absorbs_braking_energy: true }
  pwm:
    frequency: 25 kHz
    frequency_is: leg
    scheme: space-vector
    freewheeling: synchronous
    max_duty: 0.97
    dead_time: 200 ns
    min_pulse: 400 ns
    timer_clock: 100 MHz
    alignment: center
  switch_resistance: 12 mohm
  current_limit: { continuous: 8 A, peak: 20 A }
  current_loop: { bandwidth: 1.5 kHz, sampling: single-update }
  bus_capacitance: 470 uF
  overvoltage_trip: 44 V
  max_supply_voltage: 42 V
chokes:
  inductance: 100 uH
  placement: per-phase
  count: 3
  resistance: 40 mohm
  saturation_current: 25 A
  rated_current: 6 A
cable: { length: 1.5 m, resistance: 30 mohm }
load:
  inertia: 60 g*cm^2
operating_points:
  - { name: track, speed: 600 rpm, torque: 0.15 N*m, ambient: 35 degC }
  - { name: slew, speed: 2400 rpm, torque: 0.25 N*m, ambient: 35 degC }
  - { name: hold, speed: 0 rpm, torque: 0.2 N*m, ambient: 35 degC }
profile:
  ambient: 35 degC
  segments:
    - { duration: 300 ms, speed: 2400 rpm, torque: 0.4 N*m }
    - { duration: 2 s, speed: 600 rpm, torque: 0.15 N*m }
    - { duration: 1 s, speed: 0 rpm, torque: 0.2 N*m }
notes: The hold point carries the unbalanced camera weight.
"""

# What each PWM scheme and option means (hand-written; the physics is docs/physics.md).
PWM_SECTION = """\
## PWM schemes and options

`stage.pwm.scheme` says how the power stage switches. The motor type decides which
schemes apply: a brushed DC motor takes the three H-bridge schemes, a three-phase motor
the four others; any other pairing is a schema error. `V` is the supply voltage, `f`
the leg frequency, `L` the inductance of the ripple loop.

**H-bridge (brushed DC motor).** Two half-bridge legs, one at each motor terminal.

- `bipolar`: both legs switch, in opposite states (the diagonals alternate); the motor
  sees `+V` and `-V`. The ripple repeats at `f`; the voltage step is `2V`, so the
  ripple is the largest of the three (worst case about `V / (2 L f)`).
- `unipolar-single`: one leg switches, the other is held (its low side on); the motor
  sees `+V` and `0` (`0` and `-V` in reverse). Ripple at `f`, step `V` (worst case
  about `V / (4 L f)`).
- `unipolar-phase-shifted`: both legs switch with mirrored references, half a period
  apart; the motor again sees `+V` and `0`, but twice per leg period, so the ripple
  repeats at `2f` (worst case about `V / (8 L f)`). The terminals' common-mode voltage
  still moves at `f`.

**Leg or ripple frequency (`frequency_is`).** `leg` declares `frequency` as the
switching frequency of each half-bridge leg (the carrier); `ripple` declares it as the
frequency of the current ripple the motor sees. The two differ only for
`unipolar-phase-shifted` (ripple = 2 x leg); for every other scheme they are the same
and the key changes nothing. A phase-shifted stage without `frequency_is` is read the
cautious way (the value is the ripple frequency, the legs switch at half of it) and
reported by `pwm-frequency-ambiguous`.

**Freewheeling (`freewheeling`).** How the current flows while the active switches are
off. `synchronous`: the opposite switch of the leg is turned on, the current may
reverse and conduction stays continuous. `diode`: only the diodes conduct, the current
cannot reverse, and at light load it stops for part of each period (discontinuous
conduction), where the ripple formulas no longer hold; `conduction-discontinuous`
checks this on H-bridge and six-step axes. When the key is absent that check is skipped.

**Six-step (block) commutation.** Two phases conduct in series in each sixth of the
electrical revolution (120-degree current blocks, chosen by the rotor position); PWM
sets the current of the active pair.

- `six-step-chop-one`: one transistor of the active pair switches, the other stays on;
  the pair sees `+V` and `0`, like `unipolar-single`.
- `six-step-chop-both`: both transistors of the pair switch together; the pair sees
  `+V` and `-V`, like `bipolar`, with twice the ripple for the same `L` and `f`.

**Sinusoidal and space-vector PWM.** All three legs switch at `f` every period and the
phase currents are sinusoidal (field-oriented control); the ripple repeats at `f`.

- `sinusoidal`: each leg follows a sinusoidal reference. The modulation stays linear up
  to an index `M = 1`, a phase-voltage amplitude of `V / 2`.
- `space-vector`: a common-mode term is added to the three references (equivalent to
  space-vector modulation with centred zero vectors). Linear up to `M = 2/sqrt 3`, about
  15 % more phase voltage from the same supply, with somewhat less ripple at high
  modulation.

**Timing options.** `max_duty` is the highest duty cycle a leg can produce (bootstrap
supplies and current sensing usually need some off time); it caps the voltage the motor
can get. `dead_time` is the gap between turning one switch of a leg off and the other on;
each switching leg loses about `V x dead_time x f` of average voltage. `min_pulse` is the
shortest pulse the stage produces. `timer_clock` and `alignment` set the PWM resolution:
an edge-aligned counter has `timer_clock / f` steps per period, a centre-aligned one
(counting up and down) half as many.

docs/physics.md (sections 0.3, 1.2, 1.6, 2.2 and 2.3) gives the formulas behind these
statements.
"""


def _default_cell(title: str, key: str, prop: dict, required: bool) -> str:
    from ..starter import WHEN_ABSENT

    if required:
        return "(required)"
    default = _non_null(prop).get("default", prop.get("default"))
    if default is None or default == []:
        shown = "absent" if default is None else "`[]`"
    else:
        shown = f"`{json.dumps(default)}`"
    when = WHEN_ABSENT.get((title.split(" ")[0], key))
    return f"{shown}; when absent: {when}" if when else shown


def format_reference() -> str:
    """The field-by-field reference of spec format v1 (Markdown)."""
    schema = spec_schema()
    lines = [
        "# Spec format v1: field reference",
        "",
        "Generated from the model by `python -m specguard.schema`; do not edit by hand.",
        "Every dimensional value is a string with its unit (see [units.md](units.md));",
        "the unit column gives the SI unit the value is converted to. A nonzero value",
        "must lie between 1e-12 and 1e12 in that SI unit (`x-si-magnitude` in the",
        "schema): nothing in an electric drive is further out, and such a number is a slip.",
        "",
        "`specguard new --kind dc-h-bridge|three-phase-sinusoidal|three-phase-six-step FILE`",
        "writes a commented starter spec: every required key with a placeholder that fails",
        "the check until it is filled, every optional key commented out with its default.",
        "",
        "## A complete example (three-phase)",
        "",
        "Every section filled in; `specguard check` finds nothing to report in it.",
        "",
        "```yaml",
        FORMAT_EXAMPLE.rstrip("\n"),
        "```",
        "",
        PWM_SECTION.rstrip("\n"),
        "",
        "## Defaults",
        "",
        "An optional key may be left out. Its default is `absent` unless the table says",
        "otherwise: the figures that need the value are then left out and listed under",
        "`missing` (see [figures.md](figures.md)), and the rules that judge them report",
        "`rule-not-applicable` at info level. Where the figures take a value in place of an",
        'absent key, the default column says which ("when absent").',
        "",
        "## What a check says about a malformed spec",
        "",
        "- A spec whose `format` is not 1 is not checked further: one `schema-violation` at",
        "  the value says which format this version reads, and nothing follows from keys",
        "  that mean other things in another format.",
        "- The required keys a mapping lacks are one `schema-violation` at the mapping, naming",
        "  the missing keys and every key the mapping needs.",
        "- A value outside a closed list (a scheme, a motor type, a winding) names the allowed",
        "  values and the nearest one: another case or separator (`Leg`), a slip of the",
        "  keyboard (`iron-cor`), or a name the format writes differently (`svpwm` and its",
        "  slips are `space-vector`, `bldc` is `three-phase`).",
        "- A unit spelt in a common way the table does not take (`40 \u00b0C`, `3000 r/min`,",
        "  `48 Vdc`) is an error that gives the value to write (`'40 degC'`); see",
        "  [units.md](units.md).",
        "",
    ]
    seen: set[str] = set()
    queue: list[tuple[str, dict]] = [("Spec (top level)", schema)]
    while queue:
        title, node = queue.pop(0)
        lines.append(f"## {title}")
        lines.append("")
        if node.get("description"):
            lines.append(node["description"])
            lines.append("")
        lines.append("| key | required | type and unit | default | meaning |")
        lines.append("|---|---|---|---|---|")
        required = set(node.get("required", ()))
        for key, prop in node.get("properties", {}).items():
            kind, target = _kind(schema, prop)
            meaning = _non_null(prop).get("description") or prop.get("description") or ""
            if not meaning and target is not None:
                meaning = target.get("description", "")
            default = _default_cell(title, key, prop, key in required)
            lines.append(f"| `{key}` | {'yes' if key in required else 'no'} | {kind} | {default} | {meaning} |")
            ref = _non_null(prop).get("$ref") or _non_null(prop).get("items", {}).get("$ref")
            if ref:
                name = ref.split("/")[-1]
                if name not in seen:
                    seen.add(name)
                    queue.append((name, schema["$defs"][name]))
        lines.append("")
    return "\n".join(lines)


# ------------------------------------------------------------ rule format and rule docs
RULE_SCHEMA_ID = "urn:specguard:schema:rule:v1"
RULE_SCHEMA_FILE = "rule-v1.schema.json"


def rule_schema() -> dict[str, Any]:
    """JSON Schema (2020-12) of a rule file, generated from specguard.engine.pack.Rule."""
    from pydantic.json_schema import GenerateJsonSchema

    from ..engine.pack import Rule

    class _Generator(GenerateJsonSchema):
        def generate(self, schema, mode="validation"):
            out = super().generate(schema, mode=mode)
            return {"$schema": DIALECT, "$id": RULE_SCHEMA_ID, **out}

    return Rule.model_json_schema(schema_generator=_Generator)


def rules_reference(pack=None) -> str:
    """docs/rules.md: one section per built-in rule (Markdown)."""
    from ..engine.evaluate import load_pack
    from ..engine.pack import band_text, one_line
    from ..figures.registry import REMEDIES

    pack = pack or load_pack()
    rules = sorted(pack.rules, key=lambda r: r.id)
    lines = [
        "# The built-in rules",
        "",
        "Generated from the rule files in `rules/` by `python -m specguard.schema`; do not edit by hand.",
        "Every threshold can be changed, and every rule disabled or given another severity, in the",
        "config. `specguard explain RULE` prints the same text with the rule's examples.",
        "",
        "| rule | default severity | title |",
        "|---|---|---|",
        *(f"| [`{r.id}`](#{r.id}) | {r.rule.default_severity} | {r.rule.title} |" for r in rules),
        "",
    ]
    for r in rules:
        rule, figure = r.rule, r.figure
        lines += [
            f"## {r.id}",
            "",
            f"{rule.title[0].upper()}{rule.title[1:]}.",
            "",
            f"- **Figure:** `{figure.name}` ({figure.unit or 'flag'}), {figure.meaning}",
            f"- **Judged:** {'at each operating point' if rule.scope == 'point' else 'once per axis'}",
            "- **Thresholds:** " + "; ".join(band_text(b, figure) for b in r.bands),
        ]
        if rule.aliases:
            lines.append("- **Former ids:** " + ", ".join(f"`{a}`" for a in rule.aliases))
        lines += [
            "",
            f"**What it checks.** {one_line(rule.checks)}",
            "",
            f"**Why it matters.** {one_line(rule.why)}",
            "",
            f"**Formula.** {one_line(rule.formula)}",
            "",
            "**Sources.**",
            "",
            *(f"- {s}" for s in rule.sources),
            "",
        ]
        if rule.remedies:
            lines += ["**Remedies computed.**", "", *(f"- {REMEDIES[name]}" for name in rule.remedies), ""]
    return "\n".join(lines)


def figures_reference() -> str:
    """The figure catalogue and the JSON layout of `specguard figures` (Markdown)."""
    from ..figures.registry import FIGURES, REMEDIES
    from ..report.figures_table import FIGURES_FORMAT

    lines = [
        "# Figures: the numbers behind the findings",
        "",
        "Generated from `specguard/figures/registry.py` by `python -m specguard.schema`;",
        "do not edit by hand. `specguard figures SPEC` prints them as a table;",
        "`specguard figures --format json SPEC` prints everything in SI.",
        "",
        "## Catalogue",
        "",
        "Axis figures have one value per spec, point figures one value per operating",
        "point. Ratios are plain numbers (1 = 100 %); flags are true or false. A figure",
        "the spec lacks the inputs for is absent and listed under `missing` with the",
        "reason; no value is ever guessed.",
        "",
        "| name | scope | SI unit | meaning | spec paths |",
        "|---|---|---|---|---|",
    ]
    for f in FIGURES:
        unit = f.unit or "flag"
        paths = ", ".join("`/" + "/".join(str(p) for p in path) + "`" for path in f.paths)
        lines.append(f"| `{f.name}` | {f.scope} | {unit} | {f.meaning} | {paths} |")
    lines += [
        "",
        "## Remedies",
        "",
        "| name | meaning |",
        "|---|---|",
    ]
    lines += [f"| `{name}` | {meaning} |" for name, meaning in REMEDIES.items()]
    lines += [
        "",
        f"## JSON layout (`figures_format`: {FIGURES_FORMAT})",
        "",
        "```",
        "{",
        f'  "figures_format": {FIGURES_FORMAT},',
        '  "tool": {"name": "specguard", "version": "..."},',
        '  "definitions": [{"name", "unit", "dimension", "scope", "meaning", "paths": ["/motor/..."]}],',
        '  "files": [{',
        '    "file": "specs/lift.axis.yaml",          # repository-relative',
        '    "input_error": null,                      # or why the file could not be read',
        '    "figures": {                              # null when the spec did not validate',
        '      "axis":    [{"name", "value", "unit"}],  # SI values, sorted by name',
        '      "points":  [{"name": "<operating point>", "figures": [{"name", "value", "unit"}]}],',
        '      "missing": [{"name", "reason"}],',
        '      "notes":   [{"name", "note"}]',
        "    }",
        "  }]",
        "}",
        "```",
        "",
        "The same `figures` object appears per file in the JSON report of `specguard check",
        "--format json`. The format number changes when a key is renamed or removed; new",
        "figures may appear without a change of the number.",
    ]
    return "\n".join(lines)
