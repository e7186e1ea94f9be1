"""Waivers: used, unused, expired, unwaivable, strict mode, `at` vs `path` targets.

The expected behaviour is the one README.md ("Policy, waivers and a baseline") states:
waivers live in the spec, expired and unused ones are findings, a strict mode
ignores them, and the policy can mark rules that cannot be waived.
"""

from __future__ import annotations

import datetime as dt

from specguard.engine.types import RuleOverride
from specguard.engine.waivers import apply_waivers
from specguard.pipeline import FileResult, Report

from .helpers import fake_locate, finding, spec_with

TODAY = dt.date(2026, 12, 2)
NAMES = {
    "ripple-over-rated-current": "ripple-over-rated-current",
    "ripple-high": "ripple-over-rated-current",  # an alias
    "pwm-audible": "pwm-audible",
}


def run(findings, *waivers, overrides=None, today=TODAY, strict=False):
    return apply_waivers(findings, spec_with(*waivers), fake_locate(), overrides or {}, today, strict, names=NAMES)


def by_rule(out, rule):
    return [f for f in out if f.rule == rule]


def test_used_waiver_marks_the_finding_and_it_stops_counting():
    f = finding(point="hold")
    out = run([f], {"rule": "ripple-over-rated-current", "at": "hold"})
    assert len(out) == 1
    assert out[0].waived == "accepted in the lift review (approved by design review 12, until 2027-06-30)"
    report = Report((FileResult("axes/a.axis.yaml", tuple(out)),))
    assert report.exit_status() == 0  # waived: not counted
    assert report.counts()["error"] == 0
    # unwaived, the same finding fails the run
    assert Report((FileResult("axes/a.axis.yaml", (f,)),)).exit_status() == 1


def test_alias_in_a_waiver_matches_the_renamed_rule():
    out = run([finding()], {"rule": "ripple-high"})
    assert out[0].waived is not None
    assert not by_rule(out, "waiver-invalid")


def test_at_targets_one_operating_point_only():
    hold, lift = finding(point="hold"), finding(point="lift")
    out = run([hold, lift], {"rule": "ripple-over-rated-current", "at": "lift"})
    waived = {f.operating_point: f.waived is not None for f in out if f.rule != "waiver-invalid"}
    assert waived == {"hold": False, "lift": True}


def test_path_targets_a_document_path_prefix():
    pwm = finding(path=("stage", "pwm", "frequency"))
    supply = finding(path=("stage", "supply", "voltage"), line=12)
    out = run([pwm, supply], {"rule": "ripple-over-rated-current", "path": "/stage/pwm"})
    state = {f.location.pointer: f.waived is not None for f in out}
    assert state == {"/stage/pwm/frequency": True, "/stage/supply/voltage": False}


def test_path_prefix_stops_at_a_segment_boundary():
    # "/stage/pw" must not cover "/stage/pwm/frequency"
    out = run([finding()], {"rule": "ripple-over-rated-current", "path": "/stage/pw"})
    assert by_rule(out, "ripple-over-rated-current")[0].waived is None
    assert [f.rule for f in out].count("waiver-invalid") == 1


def test_at_and_path_together_must_both_match():
    a = finding(point="hold", path=("stage", "pwm", "frequency"))
    b = finding(point="lift", path=("stage", "pwm", "frequency"))
    out = run([a, b], {"rule": "ripple-over-rated-current", "at": "lift", "path": "/stage/pwm/frequency"})
    assert [(f.operating_point, f.waived is not None) for f in out if f.rule != "waiver-invalid"] == [
        ("hold", False),
        ("lift", True),
    ]


def test_no_target_waives_the_rule_in_the_whole_file_but_no_other_rule():
    a, b = finding(point="hold"), finding(point="lift")
    other = finding(rule="pwm-audible", point="hold")
    out = run([a, b, other], {"rule": "ripple-over-rated-current"})
    assert [f.waived is not None for f in by_rule(out, "ripple-over-rated-current")] == [True, True]
    assert by_rule(out, "pwm-audible")[0].waived is None


def test_unused_waiver_is_a_warning_at_the_waiver():
    out = run([finding(point="hold")], {"rule": "ripple-over-rated-current", "at": "lift"})
    problems = by_rule(out, "waiver-invalid")
    assert len(problems) == 1
    assert problems[0].severity == "warning"
    assert problems[0].location.line == 40  # waiver 0
    assert "unused" in problems[0].message and "operating point 'lift'" in problems[0].message
    assert by_rule(out, "ripple-over-rated-current")[0].waived is None


def test_expired_waiver_is_an_error_at_its_expiry_and_waives_nothing():
    out = run([finding()], {"rule": "ripple-over-rated-current", "expires": "2026-12-01"})
    problems = by_rule(out, "waiver-invalid")
    assert [p.severity for p in problems] == ["error"]
    assert problems[0].location.line == 46  # waiver 0, the 'expires' key
    assert "expired on 2026-12-01" in problems[0].message
    assert by_rule(out, "ripple-over-rated-current")[0].waived is None


def test_waiver_is_valid_through_its_expiry_day():
    out = run([finding()], {"rule": "ripple-over-rated-current", "expires": "2026-12-02"})
    assert by_rule(out, "ripple-over-rated-current")[0].waived is not None
    assert not by_rule(out, "waiver-invalid")


def test_unwaivable_rule_cannot_be_waived():
    overrides = {"ripple-over-rated-current": RuleOverride(unwaivable=True)}
    out = run([finding()], {"rule": "ripple-over-rated-current"}, overrides=overrides)
    problems = by_rule(out, "waiver-invalid")
    assert [p.severity for p in problems] == ["error"]
    assert "not waivable" in problems[0].message
    assert problems[0].location.line == 41  # the 'rule' key of waiver 0
    assert by_rule(out, "ripple-over-rated-current")[0].waived is None


def test_strict_mode_ignores_every_waiver_and_reports_nothing_about_them():
    waivers = (
        {"rule": "ripple-over-rated-current"},
        {"rule": "pwm-audible", "expires": "2020-01-01"},
    )
    out = run([finding()], *waivers, strict=True)
    assert [f.rule for f in out] == ["ripple-over-rated-current"]
    assert out[0].waived is None


def test_unknown_rule_in_a_waiver_is_an_error_with_a_suggestion():
    out = run([finding()], {"rule": "ripple-over-rated-curent"})
    problems = by_rule(out, "waiver-invalid")
    assert len(problems) == 1 and problems[0].severity == "error"
    assert "did you mean 'ripple-over-rated-current'?" in problems[0].message


def test_built_in_findings_cannot_be_waived():
    schema = finding(rule="schema-violation")
    out = run([schema], {"rule": "schema-violation"})
    assert by_rule(out, "schema-violation")[0].waived is None
    assert "cannot be waived" in by_rule(out, "waiver-invalid")[0].message


def test_second_waiver_over_the_same_finding_is_reported_as_redundant():
    out = run(
        [finding()],
        {"rule": "ripple-over-rated-current"},
        {"rule": "ripple-over-rated-current", "at": "hold"},
    )
    problems = by_rule(out, "waiver-invalid")
    assert len(problems) == 1 and problems[0].location.line == 50  # waiver 1
    assert "already waived" in problems[0].message


def test_waiver_for_a_rule_the_policy_disabled_says_so():
    overrides = {"pwm-audible": RuleOverride(enabled=False)}
    out = run([], {"rule": "pwm-audible"}, overrides=overrides)
    assert "disabled by the policy" in by_rule(out, "waiver-invalid")[0].message


def test_output_is_sorted_and_keeps_every_finding():
    items = [finding(point="lift", line=30), finding(point="hold", line=10)]
    out = run(items, {"rule": "ripple-over-rated-current", "at": "lift"})
    assert [f.location.line for f in out] == sorted(f.location.line for f in out)
    assert len([f for f in out if f.rule == "ripple-over-rated-current"]) == 2
