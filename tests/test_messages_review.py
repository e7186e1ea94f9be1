"""The message review of the issue tracker, item by item: each test states one
point of the review list on the wording, numbering and counting of what specguard
prints, and fails on the code before the point was fixed."""

from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

from specguard.engine.waivers import apply_waivers
from specguard.pipeline import check_paths
from specguard.report import text as text_report
from specguard.results import FileResult, Report

from .policy.helpers import EXAMPLES, fake_locate, finding, run_cli, spec_with

TODAY = dt.date(2026, 12, 2)


# ------------------------------------------------------------ 6. waivers count from 1
def test_waivers_are_numbered_from_one():
    waivers = ({"rule": "pwm-audible"}, {"rule": "ripple-over-rated-curent"})
    names = {"pwm-audible": "pwm-audible", "ripple-over-rated-current": "ripple-over-rated-current"}
    out = apply_waivers([finding(point="hold")], spec_with(*waivers), fake_locate(), {}, TODAY, False, names=names)
    problems = sorted((f for f in out if f.rule == "waiver-invalid"), key=lambda f: f.location.line)
    assert [p.message.split(":")[0] for p in problems] == [
        "waiver 1 for 'pwm-audible'",
        "waiver 2 for 'ripple-over-rated-curent'",
    ]
    assert [p.location.line for p in problems] == [40, 51]  # the first waiver, the 'rule' key of the second


# ------------------------------------------------------- 9. schema and unit messages
CAROUSEL = """format: 1
axis:
  name: carousel
motor:
  from: ../library/motors/pm-42mm-48v.yaml
stage:
  from: ../library/stages/inverter-48v-10a.yaml
load:
  inertia: 2.1 kg*cm^2
operating_points:
  - { name: index, speed: 600 rpm, torque: 0.25 N*m, ambient: 35 degC }
"""


def _demo(tmp: Path) -> Path:
    """A copy of the demo robot as a repository of its own."""
    repo = tmp / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    (repo / ".git").mkdir()
    return repo


def _check(repo: Path, name: str, body: str) -> list[str]:
    path = repo / "robot" / "axes" / name
    path.write_text(body, encoding="utf-8")
    report = check_paths([str(path)], root=repo)
    return [f"{f.location.line}:{f.location.column}: {f.message} [{f.rule}]" for f in report.findings]


def test_missing_keys_of_a_mapping_are_one_finding_naming_what_it_needs(tmp_path):
    body = CAROUSEL + "  - { name: slew, speed: 600 rpm }\n"
    assert _check(_demo(tmp_path), "slew.axis.yaml", body) == [
        "12:5: operating_points[1]: missing required keys 'torque' and 'ambient' "
        "(this mapping needs name, speed, torque, ambient) [schema-violation]"
    ]


def test_a_slip_in_a_closed_list_value_names_the_nearest_allowed_value(tmp_path):
    repo = _demo(tmp_path)
    scheme = CAROUSEL.replace(
        "inverter-48v-10a.yaml\n", "inverter-48v-10a.yaml\n  pwm: { scheme: svpmw, alignment: Centre }\n"
    )
    assert _check(repo, "scheme.axis.yaml", scheme) == [
        "8:18: stage.pwm.scheme: 'svpmw' is not allowed; did you mean 'space-vector'? (a spec writes svpwm as "
        "'space-vector'; allowed: 'bipolar', 'unipolar-single', 'unipolar-phase-shifted', 'six-step-chop-one', "
        "'six-step-chop-both', 'sinusoidal', 'space-vector') [schema-violation]",
        "8:36: stage.pwm.alignment: 'Centre' is not allowed; did you mean 'center'? (a spec writes centre as "
        "'center'; allowed: 'center', 'edge') [schema-violation]",
    ]
    motor = CAROUSEL.replace(
        "  from: ../library/motors", "  type: bdlc\n  winding: iron-cor\n  from: ../library/motors"
    )
    assert _check(repo, "motor.axis.yaml", motor) == [
        "5:9: motor.type: 'bdlc' is not allowed; did you mean 'three-phase'? (a spec writes bldc as "
        "'three-phase'; allowed: 'brushed-dc', 'three-phase') [schema-violation]",
        "6:12: motor.winding: 'iron-cor' is not allowed; did you mean 'iron-core'? "
        "(allowed: 'iron-core', 'coreless', 'slotless') [schema-violation]",
    ]


def test_a_temperature_in_degrees_sign_says_exactly_what_to_write(tmp_path):
    body = CAROUSEL.replace("ambient: 35 degC", "ambient: 35 \u00b0C")
    assert _check(_demo(tmp_path), "degrees.axis.yaml", body) == [
        "11:63: operating_points[0].ambient: '35 \u00b0C': '\u00b0C' is not accepted for an absolute temperature; "
        "write '35 degC'; accepted: degC, K [unit-invalid]"
    ]


# --------------------------------------------------- 10. another format: one error
def test_another_format_version_is_one_error_and_nothing_follows(tmp_path):
    body = CAROUSEL.replace("format: 1", "format: 2").replace("name: carousel", "name: carousel\n  colour: red")
    body = body.replace("pm-42mm-48v.yaml", "no-such-motor.yaml").replace("35 degC", "35 C")
    assert _check(_demo(tmp_path), "v2.axis.yaml", body) == [
        "1:9: format: 2 is a spec format this version of specguard does not read (it reads format 1); "
        "the rest of the file was not checked [schema-violation]"
    ]
    boolean = CAROUSEL.replace("format: 1", "format: true")
    assert _check(_demo(tmp_path / "b"), "bool.axis.yaml", boolean) == [
        "1:9: format: true is not a format version; write 'format: 1' (the format this version of specguard "
        "reads); the rest of the file was not checked [schema-violation]"
    ]


# ------------------------------------------- 5. read but invalid is not "unreadable"
def test_a_file_read_but_invalid_is_never_called_unreadable(tmp_path):
    from specguard.report import html, markdown

    repo = _demo(tmp_path)
    broken = repo / "robot" / "broken" / "door-latch.axis.yaml"
    report = check_paths([str(broken)], root=repo)
    assert report.files[0].input_error is None and report.files[0].spec is None
    summary = markdown.render(report)
    page = html.render(report, plots=False, feasibility_maps=False)
    for out in (summary, page):
        assert "could not be read" not in out
        assert "not a valid spec" in out
    # a file that really cannot be read still says so
    gone = check_paths([str(repo / "robot" / "axes" / "gone.axis.yaml")], root=repo)
    assert "could not be read" in markdown.render(gone)


# ------------------------------------------- 7. a missing path is not a file of the run
def test_a_missing_path_is_not_counted_as_a_file(tmp_path):
    from specguard.report import json_report, markdown

    repo = _demo(tmp_path)
    axes = repo / "robot" / "axes"
    report = check_paths([str(axes / "gone.axis.yaml"), str(axes / "carousel.axis.yaml")], root=repo)
    assert report.file_count == 1 and report.exit_status() == 2
    assert text_report.summary(report) == "specguard: 0 errors, 0 warnings, 0 info in 1 file, 1 missing path"
    assert json_report.document(report)["summary"]["files"] == 1
    assert "in 1 file(s)" in markdown.render(report)
    # an unreadable file is still a file of the run
    unreadable = FileResult("robot/axes/locked.axis.yaml", (), input_error="permission denied")
    both = Report((*report.files, unreadable))
    assert text_report.summary(both).endswith("in 2 files, 1 unreadable, 1 missing path")


# ------------------------------------------- 8. outside the root is not "unreadable"
def test_a_file_outside_the_root_is_not_an_unreadable_input(tmp_path):
    here = tmp_path / "here"
    (here / ".git").mkdir(parents=True)
    other = _demo(tmp_path / "elsewhere")
    # named inside the root, but a symbolic link leads out of it
    (here / "lift.axis.yaml").symlink_to(other / "robot" / "axes" / "sample-lift.axis.yaml")
    report = check_paths([str(here / "lift.axis.yaml")], root=here)
    assert [r.input_error for r in report.files] == [None]
    assert report.files[0].spec is not None  # checked within the root of its own, references resolved
    assert not [f for f in report.findings if f.rule in ("input-unreadable", "reference-invalid")]


def test_compare_names_a_path_outside_the_repository_for_what_it_is(tmp_path):
    import subprocess

    repo = tmp_path / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    git = ["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid"]
    for args in (["init", "-q", "."], ["add", "-A"], ["commit", "-q", "-m", "demo"]):
        subprocess.run(git + args, cwd=repo, check=True, capture_output=True)
    outside = _demo(tmp_path / "elsewhere") / "robot" / "axes" / "carousel.axis.yaml"
    done = run_cli("compare", "HEAD", str(outside), cwd=repo)
    err = done.stderr.decode()
    assert done.returncode == 2, err
    assert "[input-outside-root]" in err and "input-unreadable" not in err
    assert "outside the repository root" in err and "check a file elsewhere with 'specguard check'" in err


# ----------------------------------- 1-3. messages that say only what is true of the spec
def _judged(overlay: dict, rule: str, base: str = "dc-axis", figures=None) -> list[str]:
    """The messages of one rule of the pack on a base example spec with an overlay
    (figures computed, or the given FigureSet)."""
    from specguard.engine.evaluate import evaluate, load_pack
    from specguard.figures import compute

    from .engine.helpers import base_spec

    spec, locate = base_spec(base, overlay)
    figs = figures if figures is not None else compute(spec)
    return [f.message for f in evaluate(spec, figs, locate, load_pack(), remedy=lambda *a, **k: None) if f.rule == rule]


def test_an_empty_supply_window_at_zero_volts_says_no_supply_keeps_the_ripple_under_the_limit():
    from .engine.helpers import figures

    def window(top: float) -> list[str]:
        axis = {"supply_min_static": 14.42, "supply_max": top, "supply_window_width_static": top - 14.42}
        return _judged({}, "supply-window-empty", figures=figures(axis=axis))

    assert window(0.0) == [
        "no supply voltage keeps the ripple under its limit: lowering the supply lowers the ripple only down to "
        "a floor set by the voltage an operating point needs, the inductance and the PWM frequency, and at one "
        "point that floor is already above the limit (the points need at least 14.42 V); add inductance or "
        "raise the PWM frequency"
    ]
    # a window that closes above 0 V keeps the general wording
    assert window(5.6) == [
        "no supply voltage works: the operating points need at least 14.42 V but the ripple, duty and stage limits "
        "end 8.82 V below that (at 5.6 V); add inductance, raise the PWM frequency or change the scheme, or choose "
        "a stage rated higher"
    ]


def test_an_audible_ripple_names_the_chokes_only_when_there_are_chokes():
    slow = {"stage": {"pwm": {"frequency": "6 kHz"}}}
    with_chokes = _judged(slow, "pwm-audible")
    without = _judged({**slow, "chokes": None}, "pwm-audible")
    assert with_chokes == [
        "the current ripple at 12 kHz is audible (limit 16 kHz); the motor and the chokes will whine"
    ]
    assert without == ["the current ripple at 12 kHz is audible (limit 16 kHz); the motor will whine"]


def test_the_choke_peak_message_says_what_the_peak_is_made_of():
    small = {"chokes": {"saturation_current": "4 A"}}
    stage = _judged(small, "choke-saturation")
    motor = _judged({**small, "stage": {"current_limit": {"peak": None}}}, "choke-saturation")
    neither = _judged(
        {
            "chokes": {"saturation_current": "0.5 A"},
            "stage": {"current_limit": {"peak": None}},
            "motor": {"peak_current": None},
        },
        "choke-saturation",
    )
    assert len(stage) == len(motor) == len(neither) == 1
    assert "(the stage's peak current limit plus half the worst-case ripple " in stage[0]
    assert "(the motor's peak current plus half the worst-case ripple " in motor[0]
    assert (
        "(the largest operating current, as an amplitude on a sinusoidal axis, plus half the worst-case" in neither[0]
    )
    for text in stage + motor + neither:
        assert ", the highest supply) is " in text


def test_a_message_case_is_checked_like_the_message():
    from specguard.engine.pack import Rule, semantic_problems

    text = (EXAMPLES.parent / "rules" / "pwm-audible.yaml").read_text(encoding="utf-8")
    from specguard.source import load_bytes

    data = load_bytes(text.encode(), "pwm-audible.yaml").data
    assert semantic_problems(Rule.model_validate(data)) == []
    data["message_cases"] = [
        {"when": {}, "message": "ripple {ripple_frequncy}"},
        {"when": {"figure": "supply_max", "above": "3 A"}, "message": "x"},
        {"when": {"present": ["chokes/colour"]}, "message": "x"},
    ]
    problems = [(path, text) for path, text in semantic_problems(Rule.model_validate(data))]
    assert (
        ("message_cases", 0, "message"),
        "unknown placeholder {ripple_frequncy}; did you mean {ripple_frequency}?",
    ) in problems
    assert (("message_cases", 0, "when"), "give at least one of present, absent, equals and figure") in problems
    assert any(path == ("message_cases", 1, "when", "above") for path, _ in problems)
    assert (("message_cases", 2, "when", "present", 0), "'chokes/colour' is not a path of the spec format") in problems


# ----------------------------------- 4. the estimate is the motor's, not the loop's
def test_inductance_estimated_speaks_of_the_motors_inductance():
    from specguard.figures import compute

    from .engine.helpers import base_spec

    overlay = {"motor": {"inductance_vs_frequency": None}}
    messages = _judged(overlay, "inductance-estimated")
    figs = compute(base_spec("dc-axis", overlay)[0])
    # the loop holds the chokes too: its totals are not the motor's inductance
    assert figs.value("loop_inductance") > figs.value("motor_inductance_ripple")
    assert len(messages) == 1
    text = messages[0]
    assert text.startswith("no measured inductance table: the motor's terminal inductance at the ripple frequency ")
    assert "an estimate, 50.16 uH from its catalogue value 150 uH," in text and "loop" not in text


# --------------------------------- 11. no figure is named like a key of the spec format
def _spec_keys() -> set[str]:
    """Every key name of the spec format, at any depth (the leaf of each path)."""
    import typing

    from pydantic import BaseModel

    from specguard.model.spec import Spec

    keys: set[str] = set()
    seen: set[type] = set()

    def walk(model: type[BaseModel]) -> None:
        if model in seen:
            return
        seen.add(model)
        for name, field in model.model_fields.items():
            keys.add(field.alias or name)

            def inner(annotation) -> None:
                if isinstance(annotation, type) and issubclass(annotation, BaseModel):
                    walk(annotation)
                for arg in typing.get_args(annotation):
                    inner(arg)

            inner(field.annotation)

    walk(Spec)
    return keys


def test_no_figure_name_equals_a_spec_key():
    from specguard.figures.registry import FIGURES

    keys = _spec_keys()
    assert {"rated_current", "winding_time_constant", "speed", "dead_time"} <= keys  # the walk reaches the leaves
    assert sorted(f.name for f in FIGURES if f.name in keys) == []


def test_a_rule_file_may_still_name_a_renamed_figure_by_its_former_name(tmp_path):
    from specguard.engine.baseline import values_digest
    from specguard.engine.evaluate import load_pack

    from .engine.helpers import write_rule

    write_rule(
        tmp_path / "team",
        "id: team-slow-point\n"
        "title: a slow point\n"
        "figure: speed\n"
        "scope: point\n"
        "bands: [{ severity: info, below: 100 rpm }]\n"
        "at: operating_points/{point}/speed\n"
        "message: at '{point}' the speed {speed} is slow; the rated current is {rated_current}\n"
        "checks: the speed\nwhy: a team rule\nformula: none\nsources: ['common practice, no published source']\n"
        "examples: { base: dc-axis, pass: {}, fail: {} }\n",
    )
    rule = next(r for r in load_pack([tmp_path / "team"]).rules if r.id == "team-slow-point")
    assert rule.rule.figure == "point_speed" and rule.figures_used == ("point_speed", "motor_rated_current")
    # a baseline written before the rename still matches
    assert values_digest([("motor_rated_current", 1.9, "A")]) == values_digest([("rated_current", 1.9, "A")])


def test_the_peak_current_message_says_how_the_peak_is_found():
    exact = _judged({"motor": {"peak_current": "0.5 A"}}, "peak-current-over-motor-limit")
    assert (
        len(exact) == 1 and "(the largest maximum of the exact current waveform over the operating points)" in exact[0]
    )
    sine = _judged({"motor": {"peak_current": "0.5 A"}}, "peak-current-over-motor-limit", base="three-phase-axis")
    assert len(sine) == 1
    assert "(the largest phase current amplitude over the operating points plus half its ripple)" in sine[0]
