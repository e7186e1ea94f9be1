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


def test_the_screen_judges_ten_thousand_variants_and_finds_islands(tree):
    """The screen covers 100 x 100 variants of PWM frequency and added inductance. On
    the lift axis the region that leaves no warning is an island (a higher frequency
    alone brings the dead-time share and the supply range into findings; a few uH more
    at about 60 kHz per leg clear the ripple before that): the table holds an option
    from it, and applied as written it leaves no warning beyond the listed rules
    (checked by the test above). Check values: the tool's own check of the edited file."""
    result = explore(tree / "robot" / "axes" / "sample-lift.axis.yaml", tree)
    screen = result.screen
    assert screen is not None
    assert screen.pwm_frequency[2] * screen.added_inductance[2] >= 10_000
    assert result.variants >= 10_000
    assert 0 < screen.passing["warning"] < screen.passing["error"]
    warning_options = [o for o in result.options if o.level == "warning"]
    assert warning_options and all(len(o.levers) == 2 for o in warning_options)
    text = render_text(result)
    assert "screen: 100 PWM frequencies" in text
    assert "beyond these levers" in text and "choke-saturation" in text
    assert json.loads(render_json(result))["screen"]["passing"]["warning"] == screen.passing["warning"]
