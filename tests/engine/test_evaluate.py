"""Rule evaluation: band selection, comparators, overrides, messages, locations,
not-applicable reporting and internal errors. Figures are faked (FigureSet with
hand-set values) so that these tests judge the engine alone; the values are
invented, not physics check values."""

from __future__ import annotations

import math

import pytest

from specguard.engine.evaluate import evaluate, load_pack
from specguard.engine.pack import OverrideError
from specguard.engine.types import RuleOverride

from .helpers import base_spec, fake_remedy, figures, rule_text, single


@pytest.fixture()
def spec_locate():
    return base_spec("dc-axis")


def ripple_figs(hold: float, run: float, **extra_axis):
    axis = {"motor_rated_current": 1.9, **extra_axis}
    return figures(
        axis=axis,
        points={
            "hold": {"ripple_ratio": hold, "ripple_pp": hold * 1.9},
            "run": {"ripple_ratio": run, "ripple_pp": run * 1.9},
        },
    )


def run(pack, spec_locate, figs, overrides=None, calls=None):
    spec, locate = spec_locate
    return evaluate(spec, figs, locate, pack, overrides or {}, remedy=fake_remedy(calls))


# ------------------------------------------------------------ band selection
def test_most_severe_matching_band_wins(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    out = run(pack, spec_locate, ripple_figs(hold=0.3, run=0.7))
    by_point = {f.operating_point: f for f in out}
    assert by_point["hold"].severity == "warning"
    assert by_point["run"].severity == "error"
    assert {f.rule for f in out} == {"test-ripple-share"}


def test_no_band_matches_no_finding(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    # 0.2 exactly is not "above 0.2"
    assert run(pack, spec_locate, ripple_figs(hold=0.1, run=0.2)) == []


@pytest.mark.parametrize(
    "comparator, threshold, value, matches",
    [
        ("above", "0.5", 0.5, False),
        ("above", "0.5", 0.5000001, True),
        ("below", "0.5", 0.5, False),
        ("below", "0.5", 0.4999999, True),
        ("at_least", "0.5", 0.5, True),
        ("at_least", "0.5", 0.4999999, False),
        ("at_most", "0.5", 0.5, True),
        ("at_most", "0.5", 0.5000001, False),
        ("above", "0.5", math.nan, False),
    ],
)
def test_comparator_semantics(tmp_path, spec_locate, comparator, threshold, value, matches):
    pack = single(
        tmp_path,
        rule_text(
            id="test-loop-ratio",
            figure="loop_bandwidth_ratio",
            scope="axis",
            at="stage/current_loop/bandwidth",
            bands=(f"- {{severity: warning, {comparator}: {threshold}}}",),
            related="[]",
            message="ratio {loop_bandwidth_ratio} (limit {limit})",
        ),
    )
    out = run(pack, spec_locate, figures(axis={"loop_bandwidth_ratio": value}))
    assert [f.rule for f in out] == (["test-loop-ratio"] if matches else [])


@pytest.mark.parametrize("value, expected", [(True, ["warning"]), (False, [])])
def test_flag_band(tmp_path, spec_locate, value, expected):
    pack = single(
        tmp_path,
        rule_text(
            id="test-flag-rule",
            figure="inductance_table_rising",
            scope="axis",
            at="motor/inductance_vs_frequency",
            bands=("- {severity: warning, is: true}",),
            related="[]",
            message="table rises",
        ),
    )
    out = run(pack, spec_locate, figures(axis={"inductance_table_rising": value}))
    assert [f.severity for f in out] == expected


# ------------------------------------------------------------ overrides
def test_override_severity(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    out = run(
        pack,
        spec_locate,
        ripple_figs(0.3, 0.7),
        {"test-ripple-share": RuleOverride(severity="info")},
    )
    assert sorted(f.severity for f in out) == ["info", "info"]


def test_override_thresholds_ratio(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    # the warning band moves from 0.2 to 0.35: hold (0.3) passes now, run (0.4) is a warning
    out = run(
        pack,
        spec_locate,
        ripple_figs(0.3, 0.4),
        {"test-ripple-share": RuleOverride(thresholds={"warning": 0.35})},
    )
    assert [(f.operating_point, f.severity) for f in out] == [("run", "warning")]
    assert "(limit 35 %)" in out[0].message


def test_override_thresholds_with_units(tmp_path, spec_locate):
    pack = single(
        tmp_path,
        rule_text(
            id="test-audible-band",
            figure="ripple_frequency",
            scope="axis",
            at="stage/pwm/frequency",
            bands=("- {severity: warning, below: 16 kHz}",),
            related="[]",
            message="ripple at {ripple_frequency} (limit {limit})",
        ),
    )
    figs = figures(axis={"ripple_frequency": 18_000.0})
    assert run(pack, spec_locate, figs) == []
    out = run(
        pack,
        spec_locate,
        figs,
        {"test-audible-band": RuleOverride(thresholds={"warning": "25 kHz"})},
    )
    assert len(out) == 1
    assert out[0].message == "ripple at 18 kHz (limit 25 kHz)"


def test_override_disabled_and_by_alias(tmp_path, spec_locate):
    text = rule_text().replace("remedies: []", "remedies: []\naliases: [old-ripple-share]")
    pack = single(tmp_path, text)
    assert (
        run(
            pack,
            spec_locate,
            ripple_figs(0.3, 0.7),
            {"old-ripple-share": RuleOverride(enabled=False)},
        )
        == []
    )
    # a disabled rule does not even report that it could not be applied
    assert (
        run(
            pack,
            spec_locate,
            figures(missing={"ripple_ratio": "no data"}),
            {"test-ripple-share": RuleOverride(enabled=False)},
        )
        == []
    )


def test_override_unknown_band_or_bad_unit_is_an_override_error(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    with pytest.raises(OverrideError, match="no info band"):
        run(
            pack,
            spec_locate,
            ripple_figs(0.3, 0.7),
            {"test-ripple-share": RuleOverride(thresholds={"info": 0.1})},
        )
    with pytest.raises(OverrideError, match="plain number"):
        run(
            pack,
            spec_locate,
            ripple_figs(0.3, 0.7),
            {"test-ripple-share": RuleOverride(thresholds={"warning": "20 kHz"})},
        )


# ------------------------------------------------------------ message, figures, locations, remedies
def test_message_units_percent_limit_point(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    out = run(pack, spec_locate, ripple_figs(0.1, 0.87))
    (f,) = out
    assert f.message == "ripple 1.653 A at 'run' is 87 % of 1.9 A (limit 50 %)"
    assert f.operating_point == "run"
    assert f.figures == (
        ("ripple_ratio", 0.87, "1"),
        ("ripple_pp", pytest.approx(1.653), "A"),
        ("motor_rated_current", 1.9, "A"),
    )
    assert f.help == "it matters"


def test_locations_primary_and_related(tmp_path, spec_locate):
    pack = single(
        tmp_path,
        rule_text(related="[motor/rated_current, motor/peak_current, stage/output_inductance]"),
    )
    (f,) = run(pack, spec_locate, ripple_figs(0.1, 0.87))
    # 'run' is operating_points[1]; the base spec lists it on line 58 (grep -n "name: run")
    assert f.location.path == ("operating_points", 1)
    assert (f.location.file, f.location.line) == ("dc-axis.yaml", 58)
    paths = [r.path for r in f.related]
    assert ("motor", "rated_current") in paths and ("motor", "peak_current") in paths
    # output_inductance is not in the spec: not shown
    assert ("stage", "output_inductance") not in paths
    # the rule lists its related paths, so the figure's own inputs are not added
    assert ("stage", "pwm", "frequency") not in paths and ("chokes", "inductance") not in paths
    # each names what it is and its value
    assert all(r.label.startswith(".".join(map(str, r.path)) + " = ") for r in f.related), f.related
    # never the primary location twice
    assert all((r.line, r.column) != (f.location.line, f.location.column) for r in f.related)


def test_remedies_aim_at_the_band_that_fired_and_skip_none(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text(remedies="[added_inductance, pwm_frequency]"))
    calls: list = []
    (f,) = run(pack, spec_locate, ripple_figs(0.1, 0.87), calls=calls)
    # the finding is an error (above 0.5): its fix aims at the error band, not at the
    # warning band below it (that would ask for far more than clearing the error
    # needs); the lowest band is kept for "... more also clears the warning"
    assert calls == [("added_inductance", "run", 0.5), ("pwm_frequency", "run", 0.5)]
    assert f.remedies == ("added_inductance for limit 0.5",)
    assert f.aim == (0.5, 0.2, "warning")


def test_remedy_limit_follows_threshold_override(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text(remedies="[added_inductance]"))
    calls: list = []
    run(
        pack,
        spec_locate,
        ripple_figs(0.1, 0.87),
        {"test-ripple-share": RuleOverride(thresholds={"warning": 0.1, "error": 0.4})},
        calls=calls,
    )
    assert calls == [("added_inductance", "run", 0.4)]


def test_remedy_limit_in_si_for_dimensional_threshold(tmp_path, spec_locate):
    pack = single(
        tmp_path,
        rule_text(
            id="test-audible-fix",
            figure="ripple_frequency",
            scope="axis",
            at="stage/pwm/frequency",
            bands=("- {severity: warning, below: 16 kHz}", "- {severity: info, below: 20 kHz}"),
            related="[]",
            message="ripple at {ripple_frequency}",
            remedies="[pwm_frequency_inaudible]",
        ),
    )
    calls: list = []
    run(pack, spec_locate, figures(axis={"ripple_frequency": 12_000.0}), calls=calls)
    # 12 kHz fires the warning band (below 16 kHz): the fix aims there
    assert calls == [("pwm_frequency_inaudible", None, 16_000.0)]


# ------------------------------------------------------------ applicability
def test_required_path_missing_is_one_not_applicable_finding(tmp_path):
    spec_locate = base_spec("dc-axis", {"stage": {"current_loop": None}})
    pack = single(
        tmp_path,
        rule_text(
            id="test-loop-needs",
            figure="loop_bandwidth_ratio",
            scope="axis",
            at="stage/current_loop/bandwidth",
            applies="applies: {requires: [stage/current_loop]}",
            related="[]",
            message="x {loop_bandwidth_ratio}",
        ),
    )
    out = run(pack, spec_locate, figures(axis={"loop_bandwidth_ratio": 0.9}))
    assert [(f.rule, f.severity) for f in out] == [("rule-not-applicable", "info")]
    assert "test-loop-needs" in out[0].message and "stage.current_loop" in out[0].message
    assert ("rule", "test-loop-needs") in out[0].meta


def test_missing_figure_is_one_not_applicable_finding(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    out = run(
        pack,
        spec_locate,
        figures(
            axis={"motor_rated_current": 1.9},
            missing={"ripple_pp": "no inductance at the ripple frequency"},
        ),
    )
    assert len(out) == 1 and out[0].rule == "rule-not-applicable"
    assert "ripple_pp" in out[0].message and "no inductance at the ripple frequency" in out[0].message
    assert out[0].location.path == ("operating_points",)


def test_figure_absent_at_some_points_is_reported(tmp_path, spec_locate):
    pack = single(tmp_path, rule_text())
    figs = figures(
        axis={"motor_rated_current": 1.9},
        points={"hold": {}, "run": {"ripple_ratio": 0.9, "ripple_pp": 1.7}},
    )
    out = run(pack, spec_locate, figs)
    assert sorted(f.rule for f in out) == ["rule-not-applicable", "test-ripple-share"]
    (na,) = [f for f in out if f.rule == "rule-not-applicable"]
    assert "hold" in na.message


@pytest.mark.parametrize(
    "applies",
    [
        "applies: {motor_types: [three-phase]}",
        "applies: {schemes: [bipolar]}",
        "applies: {windings: [iron-core]}",
        "applies: {tags: [medical]}",
        "applies: {absent: [chokes]}",
        "applies: {present: [stage/output_inductance]}",
        "applies: {equals: {stage/supply/absorbs_braking_energy: false}}",
    ],
)
def test_topology_filters_skip_silently(tmp_path, spec_locate, applies):
    pack = single(tmp_path, rule_text(applies=applies))
    assert run(pack, spec_locate, ripple_figs(0.9, 0.9)) == []
    assert run(pack, spec_locate, figures(missing={"ripple_ratio": "x"})) == []


def test_equals_path_missing_is_not_applicable(tmp_path):
    spec_locate = base_spec("dc-axis", {"stage": {"supply": {"absorbs_braking_energy": None}}})
    pack = single(
        tmp_path,
        rule_text(applies="applies: {equals: {stage/supply/absorbs_braking_energy: false}}"),
    )
    out = run(pack, spec_locate, ripple_figs(0.9, 0.9))
    assert [f.rule for f in out] == ["rule-not-applicable"]
    assert "absorbs_braking_energy" in out[0].message


# ------------------------------------------------------------ internal errors
class _Exploding(dict):
    def get(self, key, default=None):
        raise RuntimeError("boom")


def test_rule_that_raises_becomes_internal_error(tmp_path, spec_locate):
    from specguard.figures import FigureSet

    pack = single(
        tmp_path,
        rule_text(
            id="test-axis-boom",
            figure="loop_bandwidth_ratio",
            scope="axis",
            at="stage/current_loop",
            related="[]",
            message="x",
        ),
    )
    spec, locate = spec_locate
    figs = FigureSet(axis=_Exploding(), points=(), missing={})
    out = evaluate(spec, figs, locate, pack, remedy=fake_remedy())
    assert [(f.rule, f.severity) for f in out] == [("internal-error", "error")]
    assert "test-axis-boom" in out[0].message and "test-axis-boom.yaml" in out[0].message
    assert "RuntimeError: boom" in out[0].message
    with pytest.raises(RuntimeError):
        evaluate(spec, figs, locate, pack, remedy=fake_remedy(), debug=True)


def test_internal_error_maps_to_exit_3():
    from specguard.findings import Finding, Location
    from specguard.pipeline import FileResult, Report

    report = Report((FileResult("a.axis.yaml", (Finding("internal-error", "error", "x", Location("a")),)),))
    assert report.exit_status() == 3


# ------------------------------------------------------------ speed
def test_whole_pack_builds_every_finding_on_ten_points(spec_locate):
    """Every rule trips on 10 points at once without an internal error."""
    from specguard.figures.registry import FIGURE_DEFS

    pack = load_pack()
    spec, locate = spec_locate
    points = [
        {"name": f"p{i}", "speed": f"{300 * i} rpm", "torque": "20 mN*m", "ambient": "30 degC"} for i in range(10)
    ]
    spec, locate = base_spec(
        "dc-axis",
        {"operating_points": points, "stage": {"supply": {"absorbs_braking_energy": False}}},
    )
    # every figure set to a value that trips its rule's most severe band (worst case: all findings built)
    value = {
        "ratio": 5.0,
        "flag": True,
        "temperature_difference": -5.0,
        "voltage": -1.0,
        "frequency": 1000.0,
    }
    axis, point = {}, {}
    for name, fdef in FIGURE_DEFS.items():
        v = value.get(fdef.dimension, 1.0)
        (axis if fdef.scope == "axis" else point)[name] = v
    figs = figures(axis=axis, points={f"p{i}": dict(point) for i in range(10)})
    remedy = fake_remedy()
    out = evaluate(spec, figs, locate, pack, remedy=remedy)
    # the timing of this worst case lives in benchmarks/bench_rules.py
    assert len([f for f in out if f.rule != "rule-not-applicable"]) > 60
    assert not [f for f in out if f.rule == "internal-error"]
