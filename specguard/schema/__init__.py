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
        lines.append("| key | required | type and unit | meaning |")
        lines.append("|---|---|---|---|")
        required = set(node.get("required", ()))
        for key, prop in node.get("properties", {}).items():
            kind, target = _kind(schema, prop)
            meaning = _non_null(prop).get("description") or prop.get("description") or ""
            if not meaning and target is not None:
                meaning = target.get("description", "")
            lines.append(f"| `{key}` | {'yes' if key in required else 'no'} | {kind} | {meaning} |")
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
