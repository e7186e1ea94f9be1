"""`specguard explore`: every option in the table, applied to a copy of the axis file
as a person would (the values set at the JSON pointers), leaves no finding at its band
but the ones the table says are beyond these levers. Check values: the tool's own
check, re-run on the edited file (the property is the contract of the table)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from specguard.explore import explore, render_json, render_text
from specguard.findings import SEVERITY_ORDER
from specguard.pipeline import check_paths
from specguard.source import load_bytes
from tests.test_fix_closure import _set

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def tree(tmp_path_factory):
    tree = tmp_path_factory.mktemp("explore") / "demo"
    shutil.copytree(ROOT / "examples" / "robot", tree / "robot")
    shutil.copytree(ROOT / "examples" / "medical", tree / "medical")
    (tree / ".git").mkdir()
    return tree


@pytest.mark.parametrize(
    "rel",
    ["robot/axes/sample-lift.axis.yaml", "robot/axes/pipette-x.axis.yaml", "medical/axes/infusion-drive.axis.yaml"],
)
def test_every_option_clears_its_band_when_applied(tree, rel):
    spec = tree / rel
    result = explore(spec, tree)
    assert result.options, render_text(result)  # each of these axes has a way out
    original = spec.read_bytes()
    data = load_bytes(original, rel).data
    for option in result.options:
        edited = json.loads(json.dumps(data))
        for pointer, value in option.changes:
            _set(edited, pointer, value)
        spec.write_text(json.dumps(edited), encoding="utf-8")
        try:
            after = check_paths([str(spec)], root=tree)
        finally:
            spec.write_bytes(original)
        left = {
            f.rule
            for f in after.findings
            if SEVERITY_ORDER[f.severity] >= SEVERITY_ORDER[option.level] and not f.suppressed
        }
        assert left <= set(result.beyond[option.level]), (option.text, sorted(left))


def test_a_spec_that_passes_needs_no_change(tree):
    result = explore(tree / "robot" / "axes" / "carousel.axis.yaml", tree)
    assert result.passing >= {"error"} and not [o for o in result.options if o.level == "error"]
    assert "nothing to change" in render_text(result)
    assert json.loads(render_json(result))["meets_as_written"]
