"""Every rule's own examples, run through the real pipeline stages (loader, model,
figures, rules). Parametrised over the pack: adding a rule adds its tests.

The failing example must yield the rule's finding, the passing one must not,
and both must be *applicable* (an example that passes only because the rule was
skipped or could not be applied would be a check that cannot fail)."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest

from specguard.engine.evaluate import applicability, evaluate, example_data, load_pack
from specguard.engine.pack import Pack
from specguard.findings import Location
from specguard.model import build

ROOT = Path(__file__).resolve().parents[2]
TEAM_RULES = ROOT / "examples" / "team-rules"
PACK = load_pack([TEAM_RULES])
HAVE_COMPUTE = importlib.util.find_spec("specguard.figures.compute") is not None
needs_compute = pytest.mark.skipif(
    not HAVE_COMPUTE,
    reason="specguard/figures/compute.py does not exist yet: figures.compute() cannot run",
)


def _locate(path, key=False):
    return Location("example.axis.yaml", 1, 1, path=tuple(path)), ()


def _run(rule_id: str, which: str):
    from specguard.figures import compute

    prule = PACK.get(rule_id)
    spec, findings = build(example_data(prule, which), _locate)
    assert spec is not None, f"{which} example of {rule_id} is not a valid spec: {[f.message for f in findings]}"
    figures = compute(spec)
    status, reason, _ = applicability(prule, spec, figures)
    assert status == "applies", f"{which} example of {rule_id} does not exercise the rule: {reason}"
    one = Pack((prule,), {prule.id: prule}, {})
    return evaluate(spec, figures, _locate, one, debug=True)


@needs_compute
@pytest.mark.parametrize("rule_id", [r.id for r in PACK.rules])
def test_failing_example_yields_the_finding(rule_id):
    found = _run(rule_id, "fail")
    assert [f for f in found if f.rule == rule_id], f"no {rule_id} finding: {[f.message for f in found]}"


@needs_compute
@pytest.mark.parametrize("rule_id", [r.id for r in PACK.rules])
def test_passing_example_does_not(rule_id):
    found = _run(rule_id, "pass")
    assert not found, [f.message for f in found]


@pytest.mark.parametrize("rule_id", [r.id for r in PACK.rules])
def test_examples_are_valid_specs(rule_id):
    """Independent of the figures: both examples build into the model."""
    prule = PACK.get(rule_id)
    for which in ("pass", "fail"):
        spec, findings = build(example_data(prule, which), _locate)
        assert spec is not None, (which, [f.message for f in findings])
    assert example_data(prule, "pass") != example_data(prule, "fail")


@needs_compute
def test_medical_axis_violates_the_team_rule():
    from specguard.pipeline import RunOptions, check_paths

    report = check_paths([str(ROOT / "examples" / "medical")], root=ROOT, options=RunOptions(pack=PACK))
    hits = [f for f in report.findings if f.rule == "pwm-medical-minimum"]
    assert len(hits) == 1
    assert hits[0].message == "the leg PWM frequency 25 kHz is below the medical line's minimum 40 kHz"
    assert hits[0].location.file == "examples/medical/axes/infusion-drive.axis.yaml"
    assert hits[0].location.path == ("stage", "pwm", "frequency")


def test_team_rule_loads_through_extra_dirs():
    prule = PACK.get("pwm-medical-minimum")
    assert prule is not None and not prule.builtin
    assert prule.rule.applies.tags == ("medical",)
    assert [(b.severity, b.comparator, b.threshold) for b in prule.bands] == [("error", "below", 40_000.0)]


def test_overlay_merge_rules():
    from specguard.engine.pack import merge_overlay

    base = {"a": {"b": 1, "c": [1, 2]}, "d": 2, "e": {"f": 1}}
    merged = merge_overlay(base, {"a": {"c": [3]}, "d": None, "e": {"g": {"h": None, "i": 1}}})
    assert merged == {"a": {"b": 1, "c": [3]}, "e": {"f": 1, "g": {"i": 1}}}
    assert base == {"a": {"b": 1, "c": [1, 2]}, "d": 2, "e": {"f": 1}}  # not mutated
