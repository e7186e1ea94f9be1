"""The published JSON Schema: generated equals committed, meta-schema valid, agrees with the model."""

from __future__ import annotations

import copy
import json
from importlib.resources import files
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator

from specguard.schema import SPEC_SCHEMA_FILE, dumps, format_reference, spec_schema
from tests.test_model import BASE, run, with_change

ROOT = Path(__file__).resolve().parents[1]


def test_committed_schema_equals_fresh_generation():
    committed = (ROOT / "schemas" / SPEC_SCHEMA_FILE).read_text(encoding="utf-8")
    assert committed == dumps(spec_schema()), "run: python -m specguard.schema"


def test_committed_format_reference_is_current():
    committed = (ROOT / "docs" / "format.md").read_text(encoding="utf-8")
    assert committed == format_reference() + "\n", "run: python -m specguard.schema"


def test_schema_is_draft_2020_12_with_id():
    schema = spec_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["$id"].startswith("urn:specguard:schema:spec:")
    Draft202012Validator.check_schema(schema)


def test_installed_schema_is_the_committed_one():
    # read through the package (as the installed tool does), not through the tree
    installed = (files("specguard.schemas") / SPEC_SCHEMA_FILE).read_text(encoding="utf-8")
    assert json.loads(installed) == spec_schema()


def _walk(node, schema, path=()):
    """Yield (path, property schema) for every leaf property."""
    if "$ref" in node:
        node = schema["$defs"][node["$ref"].split("/")[-1]]
    for key, prop in node.get("properties", {}).items():
        options = prop.get("anyOf", [prop])
        for option in options:
            if option.get("type") == "null":
                continue
            if "$ref" in option:
                yield from _walk(option, schema, path + (key,))
            elif option.get("type") == "array":
                items = option.get("prefixItems") or [option.get("items", {})]
                for item in items:
                    if "$ref" in item:
                        yield from _walk(item, schema, path + (key, "[]"))
                    else:
                        yield path + (key, "[]"), item
            else:
                yield path + (key,), option


# The only plain numbers in the format: dimensionless by nature (docs/reliability.md G06:
# every numeric field either declares its unit or is listed here with its reason).
DIMENSIONLESS = {
    ("stage", "pwm", "max_duty"): "a duty cycle is a fraction",
    ("motor", "pwm_loss", "at_duty"): "a duty cycle is a fraction",
    ("stage", "current_loop", "computation_delay"): "a count of samples",
    ("motor", "pole_pairs"): "a count",
    ("chokes", "count"): "a count",
    ("motor", "eddy_path", "relative_permeability"): "a relative permeability is a ratio of permeabilities",
    ("format",): "the format version",
}


def test_every_numeric_field_declares_a_unit():
    schema = spec_schema()
    plain_numbers = set()
    dimensional = 0
    for path, prop in _walk(schema, schema):
        if prop.get("type") in ("number", "integer") or "const" in prop:
            plain_numbers.add(tuple(p for p in path if p != "[]"))
        if "x-dimension" in prop:
            dimensional += 1
            assert prop["type"] == "string" and prop["pattern"].endswith(")$")
    assert plain_numbers == set(DIMENSIONLESS)
    assert dimensional >= 40  # the format is mostly dimensional values


def test_jsonschema_and_model_agree_on_traps():
    """Both layers accept the base spec and reject each trap (pydantic strict)."""
    validator = Draft202012Validator(spec_schema())
    assert list(validator.iter_errors(BASE)) == []
    assert run(BASE)[0] is not None
    traps = [
        (("motor", "rated_current"), 2),
        (("motor", "rated_current"), "2 a"),
        (("motor", "terminal_inductance", "value"), "2.5 MH"),
        (("motor", "pole_pairs"), True),
        (("motor", "pole_pairs"), 4.5),
        (("stage", "pwm", "max_duty"), "0.95"),
        (("stage", "supply", "absorbs_braking_energy"), "yes"),
        (("motor", "rated_curent"), "2 A"),
        (("stage", "pwm", "scheme"), "trapezoid"),
        (("axis", "name"), ""),
    ]
    for path, value in traps:
        data = with_change(path, value)
        schema_errors = list(validator.iter_errors(data))
        spec, findings = run(data)
        assert schema_errors, (path, value)
        assert spec is None and findings, (path, value)


@pytest.mark.parametrize("value", [4.0, 4])
def test_integral_numbers_agree(value):
    data = copy.deepcopy(BASE)
    data["motor"]["pole_pairs"] = value
    assert list(Draft202012Validator(spec_schema()).iter_errors(data)) == []
    assert run(data)[0] is not None


def test_committed_figures_reference_is_current():
    from specguard.schema import figures_reference

    committed = (ROOT / "docs" / "figures.md").read_text(encoding="utf-8")
    assert committed == figures_reference() + "\n", "run: python -m specguard.schema"
