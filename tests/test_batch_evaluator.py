"""The batch evaluator gives every variant what a check gives it.

For each spec (the demo, every rule's passing and failing example, the regression
specs and generated axes), a batch of variants with random PWM frequencies, added
chokes (none for some) and supply voltages is judged at once; every tenth variant is
then built as a spec of its own (the same values, as floats) and checked the way
``check`` does, one variant at a time. Every figure must agree (relative 1e-9; a
figure a variant lacks is NaN in the batch) and so must every rule's verdict.

The check values come from the tool's own scalar path, which the rest of the suite
checks against ngspice, scipy and worked examples; what is tested here is that the
vectorised path is the same computation.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings

from specguard.engine.evaluate import evaluate, example_data, load_pack
from specguard.figures import compute
from specguard.figures.batch import compute_batch, judge_batch, with_values
from specguard.figures.compute import FigureSettings
from specguard.figures.levers import AddedInductance, PwmFrequency, SupplyVoltage, topology
from specguard.findings import SEVERITY_ORDER
from specguard.model import build
from specguard.source import Limits
from specguard.source.library import LibraryCache, assemble

ROOT = Path(__file__).resolve().parents[1]
PACK = load_pack([ROOT / "examples" / "team-rules"])
SETTINGS = FigureSettings()
VARIANTS = 60


def _levers(spec, rng):
    pwm = spec.stage.pwm
    per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
    f_leg = pwm.frequency / per_leg
    motor_l = spec.motor.terminal_inductance.value if spec.motor.terminal_inductance else 1e-4
    n = VARIANTS
    freq = f_leg * np.exp(rng.uniform(-0.7, 2.0, n))
    added = np.where(rng.uniform(size=n) < 0.3, 0.0, motor_l * np.exp(rng.uniform(-4.0, 3.0, n)))
    supply = spec.stage.supply.voltage * rng.uniform(0.5, 1.4, n)
    return [
        (PwmFrequency(per_leg, maximum=1e9), freq),
        (AddedInductance(topology(spec)), added),
        (SupplyVoltage(True), supply),
    ]


def _one(data, spec, locate, levers, j):
    """Variant ``j`` as a spec of its own (floats), its figures and its verdicts."""
    base = spec
    for lever, amounts in levers:
        if lever.reshapes(spec) and amounts[j] > 0:
            base, _ = build(lever.edit(data, spec, float(amounts[j])).data, locate)
    values = {}
    for lever, amounts in levers:
        if lever.reshapes(spec) and amounts[j] <= 0:
            continue
        fields, _ok = lever.fields(spec, np.array([amounts[j]]))
        for path, v in fields.items():
            values[path] = tuple(float(x[0]) for x in v) if isinstance(v, tuple) else float(v[0])
    variant = with_values(base, values)
    figures = compute(variant, SETTINGS)
    ranks: dict[str, int] = {}
    for f in evaluate(variant, figures, locate, PACK, {}, remedy=lambda *a, **k: None, lean=True):
        ranks[f.rule] = max(ranks.get(f.rule, -1), SEVERITY_ORDER[f.severity])
    return figures, ranks


# Figures found by an iterative root solve (tolerance 1e-10 relative to the bound; a batch
# stops when every variant has converged, so one variant may take more steps than alone)
# and the window widths that subtract two of them.
_SOLVED = ("supply_max", "supply_window_width", "supply_window_width_static", "loop_bandwidth_max")


def _close(a, b, name: str = "") -> bool:
    if isinstance(b, bool):
        return bool(a) == b
    if math.isinf(b):
        return float(a) == b
    if name in _SOLVED:
        return math.isclose(float(a), b, rel_tol=1e-7, abs_tol=1e-9)
    if name == "current_min":  # the mean less half the ripple: near zero it keeps 1e-15 of the current
        return math.isclose(float(a), b, rel_tol=1e-9, abs_tol=1e-12)
    # absolute 1e-15 for values that are zero but for rounding (a current minimum of -1e-16 A)
    return math.isclose(float(a), b, rel_tol=1e-9, abs_tol=1e-15)


def _agree(data, spec, locate, seed: int) -> list[str]:
    rng = np.random.default_rng(seed)
    levers = _levers(spec, rng)
    verdict = judge_batch(data, spec, locate, PACK, {}, SETTINGS, levers)
    problems = []
    info = SEVERITY_ORDER["info"]
    for j in range(0, VARIANTS, 10):
        if not verdict.valid[j]:
            continue
        figures, ranks = _one(data, spec, locate, levers, j)
        for rule in set(ranks) | set(verdict.ranks):
            if rule == "rule-not-applicable":
                continue
            batch = int(verdict.ranks.get(rule, np.full(VARIANTS, -1))[j])
            alone = ranks.get(rule, -1)
            # a rule not applicable to one variant is an info finding in both paths
            if batch != alone and not (alone == -1 and batch == info and "rule-not-applicable" in ranks):
                problems.append(f"variant {j}: {rule} batch {batch} alone {alone}")
        shown = figures.axis.get("ripple_ratio_worst")
        if shown is not None and not _close(verdict.figures["ripple_ratio_worst"][j], shown):
            problems.append(f"variant {j}: worst ripple {verdict.figures['ripple_ratio_worst'][j]} vs {shown}")
    return problems


def _figures_agree(data, spec, locate, seed: int) -> list[str]:
    """Every figure of the batch against the variant alone."""
    rng = np.random.default_rng(seed)
    levers = _levers(spec, rng)
    problems = []
    # one shape per batch here (chokes fitted in every variant) so that the batch's
    # figure set can be compared directly
    levers = [(lv, np.where(a > 0, a, 1e-6) if lv.reshapes(spec) else a) for lv, a in levers]
    base = spec
    for lever, amounts in levers:
        if lever.reshapes(spec):
            base, _ = build(lever.edit(data, spec, float(amounts[0])).data, locate)
    values = {}
    for lever, amounts in levers:
        fields, _ok = lever.fields(spec, amounts)
        values.update(fields)
    batch = compute_batch(with_values(base, values), SETTINGS)
    for j in range(0, VARIANTS, 10):
        alone, _ranks = _one(data, spec, locate, levers, j)
        for name, value in alone.axis.items():
            got = batch.axis.get(name)
            got = np.broadcast_to(got, (VARIANTS,))[j] if got is not None else None
            if got is None or not _close(got, value, name):
                problems.append(f"variant {j}: {name} batch {got} alone {value}")
        for (point, values_alone), (_p, values_batch) in zip(alone.points, batch.points, strict=True):
            for name, value in values_alone.items():
                got = values_batch.get(name)
                got = np.broadcast_to(got, (VARIANTS,))[j] if got is not None else None
                if got is None or not _close(got, value, name):
                    problems.append(f"variant {j} at {point}: {name} batch {got} alone {value}")
        for name in batch.axis:
            if name not in alone.axis:
                got = np.broadcast_to(batch.axis[name], (VARIANTS,))[j]
                if not (isinstance(got, float | np.floating) and np.isnan(got)):
                    problems.append(f"variant {j}: {name} is {got} in the batch, missing alone")
    return problems


def _assembled(path: Path, root: Path = ROOT):
    doc = assemble(path.read_bytes(), path.stat().st_size, path, root, Limits(), LibraryCache(Limits()))
    assert doc.data is not None, path
    spec, _problems = build(doc.data, doc.locate)
    return doc, spec


SPECS = sorted(
    p
    for p in [*(ROOT / "examples").rglob("*.axis.yaml"), *(ROOT / "tests" / "regression").glob("*.axis.yaml")]
    if "broken" not in p.parts
)


@pytest.mark.parametrize("path", SPECS, ids=lambda p: p.name)
def test_batch_verdicts_equal_the_check_of_each_variant(path):
    doc, spec = _assembled(path)
    assert spec is not None
    problems = _agree(doc.data, spec, doc.locate, seed=len(path.name))
    assert not problems, "\n".join(problems[:20])


@pytest.mark.parametrize("path", SPECS, ids=lambda p: p.name)
def test_batch_figures_equal_the_figures_of_each_variant(path):
    doc, spec = _assembled(path)
    problems = _figures_agree(doc.data, spec, doc.locate, seed=3 + len(path.name))
    assert not problems, "\n".join(problems[:20])


@pytest.mark.parametrize("rule_id", [r.id for r in PACK.rules])
@pytest.mark.parametrize("which", ["pass", "fail"])
def test_batch_on_rule_examples(tmp_path, rule_id, which):
    path = tmp_path / "example.axis.yaml"
    path.write_text(json.dumps(example_data(PACK.get(rule_id), which)), encoding="utf-8")
    doc, spec = _assembled(path, tmp_path)
    if spec is None:
        pytest.skip("the example is not a valid spec on its own")
    problems = _agree(doc.data, spec, doc.locate, seed=len(rule_id))
    problems += _figures_agree(doc.data, spec, doc.locate, seed=7 + len(rule_id))
    assert not problems, "\n".join(problems[:20])


def _generated():
    from tests.test_properties_input import valid_spec

    return valid_spec()


@settings(
    max_examples=200,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large],
)
@given(data=_generated())
def test_batch_on_generated_axes(tmp_path_factory, data):
    tree = tmp_path_factory.mktemp("gen")
    path = tree / "gen.axis.yaml"
    path.write_text(json.dumps(data), encoding="utf-8")
    doc, spec = _assembled(path, tree)
    if spec is None:
        return
    problems = _agree(doc.data, spec, doc.locate, seed=11)
    problems += _figures_agree(doc.data, spec, doc.locate, seed=13)
    assert not problems, "\n".join(problems[:20])


def test_a_batch_of_one_shape_needs_one_compute():
    """10^4 variants of the demo's lift axis are judged in a handful of groups (one per
    shape), not one by one: the figures come back as arrays of 10^4."""
    doc, spec = _assembled(ROOT / "examples" / "robot" / "axes" / "pipette-x.axis.yaml")
    n = 10_000
    f, l_add = np.meshgrid(np.geomspace(20e3, 200e3, 100), np.geomspace(1e-6, 1e-3, 100))
    levers = [(PwmFrequency(1.0, maximum=1e9), f.ravel()), (AddedInductance(topology(spec)), l_add.ravel())]
    verdict = judge_batch(doc.data, spec, doc.locate, PACK, {}, SETTINGS, levers)
    assert verdict.size == n and verdict.figures["ripple_ratio_worst"].shape == (n,)
    # more inductance never raises the worst ripple at a fixed frequency (docs/physics.md §1.4)
    ripple = verdict.figures["ripple_ratio_worst"].reshape(100, 100)
    assert (np.diff(ripple, axis=0) <= 1e-12).all()
