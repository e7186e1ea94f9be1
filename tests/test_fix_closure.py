"""Every printed fix works when a person applies it.

For each spec (the demo, the examples, every rule's failing example, and generated
axes), each fix's ``changes`` are applied to a copy of the axis file as text (the
axis file's own YAML with the values set at the JSON pointers, written back as
JSON, which is YAML 1.2), and the whole check runs again on the copy. The finding
must be gone at its band (its rule no longer fires at that operating point at the
finding's band or above; ``reaches`` says which lower band is left) and no finding
at or above the fail level may appear that the spec did not have.

The check values come from the tool itself, re-run on the edited file; the
property (a fix clears its finding and trades it for nothing at the fail level)
is the contract of the fixes (README.md, "Using it"; docs/physics.md §7.7). The closure rate is
printed; it must be 100 %.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings

from specguard.engine.evaluate import example_data, load_pack
from specguard.findings import SEVERITY_ORDER
from specguard.pipeline import check_paths
from specguard.source import load_bytes

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
PACK = load_pack([EXAMPLES / "team-rules"])


def _set(data: dict, pointer: str, value) -> None:
    parts = [p.replace("~1", "/").replace("~0", "~") for p in pointer.split("/")[1:]]
    node = data
    for key in parts[:-1]:
        if not isinstance(node.get(key), dict):
            node[key] = {}
        node = node[key]
    node[parts[-1]] = _plain(value)


def _plain(value):
    if isinstance(value, tuple):
        return {k: _plain(v) for k, v in value}
    if isinstance(value, list):
        return [_plain(v) for v in value]
    return value


def _failing(report, level="error") -> set:
    return {
        (f.rule, f.operating_point)
        for f in report.findings
        if SEVERITY_ORDER[f.severity] >= SEVERITY_ORDER[level] and not f.suppressed
    }


def _with_policy(path: Path, tree: Path):
    """The check of one file under the policy file of its tree (.specguard.yaml)."""
    from specguard.pipeline import RunOptions, plan, run_targets
    from specguard.runsetup import PolicyIndex

    index = PolicyIndex(None, None, None, RunOptions())
    report = run_targets(plan([str(path)], tree, index))
    assert not index.errors
    return report


def _closure(tree: Path, spec_rel: str, tally: dict, level: str = "error", check=None) -> list[str]:
    """Apply every fix of the spec at ``tree/spec_rel``; return what failed (``level``:
    the fail level of the policy in force; ``check``: how a file is checked)."""
    spec_path = tree / spec_rel
    check_paths_ = check or (lambda path, root: check_paths([str(path)], root=root))
    report = check_paths_(spec_path, tree)
    before = _failing(report, level)
    problems = []
    original = spec_path.read_bytes()
    data = load_bytes(original, spec_rel).data
    for finding in report.findings:
        for fix in finding.fixes:
            edited = json.loads(json.dumps(data))
            for change in fix.changes:
                _set(edited, change.pointer, change.value)
            spec_path.write_text(json.dumps(edited, indent=1), encoding="utf-8")
            try:
                after = check_paths_(spec_path, tree)
            finally:
                spec_path.write_bytes(original)
            tally["fixes"] += 1
            same = [f for f in after.findings if (f.rule, f.operating_point) == (finding.rule, finding.operating_point)]
            still = [f for f in same if SEVERITY_ORDER[f.severity] >= SEVERITY_ORDER[finding.severity]]
            new = _failing(after, level) - before
            unreadable = [f for f in after.findings if f.severity == "error" and f.rule not in PACK.by_id]
            if still or new or unreadable:
                problems.append(
                    f"{spec_rel}: {finding.rule} at {finding.operating_point}: fix '{fix.text}' "
                    f"leaves {[f.message for f in still]}, adds {sorted(new)}, "
                    f"built-in {[f.message for f in unreadable]}"
                )
            else:
                tally["closed"] += 1
    return problems


@pytest.fixture()
def demo_tree(tmp_path):
    tree = tmp_path / "demo"
    shutil.copytree(EXAMPLES, tree, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    (tree / ".git").mkdir()
    return tree


def test_every_fix_of_the_demo_closes_its_finding(demo_tree):
    tally = {"fixes": 0, "closed": 0}
    problems = []
    for spec in sorted(demo_tree.rglob("*.axis.yaml")):
        problems += _closure(demo_tree, spec.relative_to(demo_tree).as_posix(), tally)
    print(f"\ndemo: {tally['closed']}/{tally['fixes']} fixes close their finding")
    assert tally["fixes"] >= 15  # the demo's broken axes have fixes to try (18 when written)
    assert not problems, "\n".join(problems)


@pytest.mark.parametrize("rule_id", [r.id for r in PACK.rules if r.rule.remedies])
def test_every_fix_of_a_rule_example_closes_its_finding(tmp_path, rule_id):
    tree = tmp_path / "repo"
    tree.mkdir()
    (tree / ".git").mkdir()
    spec = tree / "example.axis.yaml"
    spec.write_text(json.dumps(example_data(PACK.get(rule_id), "fail")), encoding="utf-8")
    tally = {"fixes": 0, "closed": 0}
    problems = _closure(tree, "example.axis.yaml", tally)
    assert not problems, "\n".join(problems)


def _generated():
    from tests.test_properties_input import valid_spec

    return valid_spec()


_TALLY = {"fixes": 0, "closed": 0, "specs": 0}


@settings(
    max_examples=200,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large],
)
@given(spec=_generated())
def test_every_fix_of_a_generated_axis_closes_its_finding(tmp_path_factory, spec):
    tree = tmp_path_factory.mktemp("gen")
    (tree / ".git").mkdir(exist_ok=True)
    (tree / "gen.axis.yaml").write_text(json.dumps(spec), encoding="utf-8")
    _TALLY["specs"] += 1
    problems = _closure(tree, "gen.axis.yaml", _TALLY)
    assert not problems, "\n".join(problems)


def test_generated_axes_tried_fixes():
    """The property above ran fixes on the generated axes (printed as the closure rate)."""
    if _TALLY["specs"] == 0:
        pytest.skip("run together with the property test")
    print(f"\ngenerated axes: {_TALLY['closed']}/{_TALLY['fixes']} fixes close their finding")
    assert _TALLY["fixes"] > 50
    assert _TALLY["closed"] == _TALLY["fixes"]


def test_policy_ripple_bands_move_the_supply_window_and_the_fixes(demo_tree):
    """Every threshold a window or a fix uses comes from the policy in force: ripple
    bands moved to 60/80 % widen the supply window (no supply-window-empty error on
    the lift axis) and make the ripple fixes ask for less. Check values: the tool's
    own figures under the two policies (the window's ripple bound grows with the
    allowed ripple, docs/physics.md §4.6)."""
    from specguard.pipeline import RunOptions, plan, run_targets
    from specguard.runsetup import PolicyIndex

    spec = demo_tree / "robot" / "axes" / "sample-lift.axis.yaml"

    def judged(policy_text: str | None):
        (demo_tree / ".specguard.yaml").write_text(policy_text or "format: 1\n", encoding="utf-8")
        index = PolicyIndex(None, None, None, RunOptions())
        report = run_targets(plan([str(spec)], demo_tree, index))
        assert not index.errors
        return report.files[0]

    default = judged(None)
    loose = judged(
        "format: 1\nrules:\n"
        "  ripple-over-rated-current: {thresholds: {warning: 0.6, error: 0.8}}\n"
        "  worst-ripple-over-rated-current: {thresholds: {warning: 0.6, error: 0.8}}\n"
    )
    assert "supply-window-empty" in {f.rule for f in default.findings}
    assert "supply-window-empty" not in {f.rule for f in loose.findings}
    assert loose.figures.value("supply_max") > default.figures.value("supply_max")
    assert not [f for f in loose.findings if f.rule == "ripple-over-rated-current"]


def test_the_scheme_fix_of_a_two_level_bridge_closes_its_finding(demo_tree):
    """The sample lift on a two-level (bipolar) bridge: the three-level scheme is offered
    as a fix where it clears a ripple finding, and it closes it when applied."""
    stage = demo_tree / "robot" / "library" / "stages" / "bridge-48v-8a.yaml"
    stage.write_text(
        stage.read_text(encoding="utf-8").replace("scheme: unipolar-phase-shifted", "scheme: bipolar"),
        encoding="utf-8",
    )
    report = check_paths([str(demo_tree / "robot" / "axes" / "sample-lift.axis.yaml")], root=demo_tree)
    scheme_fixes = [
        x for f in report.findings for x in f.fixes if any(c.pointer == "/stage/pwm/scheme" for c in x.changes)
    ]
    assert scheme_fixes  # offered where it clears
    tally = {"fixes": 0, "closed": 0}
    assert not _closure(demo_tree, "robot/axes/sample-lift.axis.yaml", tally)
    assert tally["fixes"] == tally["closed"] > 0


def test_a_two_lever_fix_closes_its_finding(demo_tree):
    """Where no lever alone clears a finding, the cheapest pair the search finds is the
    fix. The lift under a policy that fails at warnings and lets a fix raise the PWM
    frequency to 55 kHz only: a choke for the ripple takes control headroom, so the
    bottom of the supply range falls short (a new warning); raising the supply for it
    raises the ripple again. The pair (choke and supply together) must clear the ripple
    and add nothing at the warning level when a person applies both edits."""
    (demo_tree / ".specguard.yaml").write_text(
        "format: 1\nfail_level: warning\nmodelling:\n  fix_pwm_frequency_max: 55 kHz\n", encoding="utf-8"
    )
    rel = "robot/axes/sample-lift.axis.yaml"
    report = _with_policy(demo_tree / rel, demo_tree)
    pairs = [
        (f, x)
        for f in report.findings
        for x in f.fixes
        if {c.pointer for c in x.changes} >= {"/chokes/inductance", "/stage/supply/voltage"}
    ]
    assert {f.rule for f, _ in pairs} >= {"ripple-over-rated-current", "worst-ripple-over-rated-current"}
    assert all("two together do" in f.message and ", and raise the supply" in x.text for f, x in pairs)
    tally = {"fixes": 0, "closed": 0}
    problems = _closure(demo_tree, rel, tally, level="warning", check=_with_policy)
    assert tally["fixes"] >= len(pairs) and not problems, "\n".join(problems)


# An axis the property above generated (hypothesis, derandomised) on which a fix once
# failed when applied: its worst-case ripple is judged an error but shown as a warning
# (the verdict rests on the inductance estimate; with the catalogue value it would be a
# warning). Raising the supply 11-fold for an unreachable point made that ripple an
# error the catalogue value also gives, so the applied fix added an error.
_SOFTENED = {
    "format": 1,
    "axis": {"name": "kk"},
    "motor": {
        "type": "three-phase",
        "winding": "iron-core",
        "terminal_resistance": {"value": "35.1523 ohm", "at": "30.8488 degC"},
        "torque_constant": {"value": "0.984361 N*m/A", "current": "phase-rms"},
        "back_emf_constant": {"value": "1.95952 V/(rad/s)", "voltage": "line-to-line-peak"},
        "rated_current": "6 A",
        "terminal_inductance": {"value": "0.0265542 H", "measured_at": "298.15 Hz"},
        "pole_pairs": 88,
        "no_load_current": "0 A",
    },
    "stage": {
        "supply": {"voltage": "300.908 V"},
        "pwm": {
            "frequency": "1000 Hz",
            "scheme": "six-step-chop-one",
            "max_duty": 0.986230526390157,
            "freewheeling": "synchronous",
            "min_pulse": "4.13962e-06 s",
            "alignment": "center",
        },
        "current_limit": {"continuous": "82.2172 A"},
        "current_loop": {"bandwidth": "11634.7 Hz", "sampling": "single-update"},
    },
    "chokes": {"inductance": "0.002 H", "placement": "per-phase", "count": 3},
    "cable": {"resistance": "0 ohm", "length": "11.5247 m"},
    "operating_points": [
        {"name": "sylxf8l", "speed": "0 rad/s", "torque": "0 N*m", "ambient": "57.4585 degC"},
        {"name": "q", "speed": "0 rad/s", "torque": "0 N*m", "ambient": "9.25494 degC"},
        {"name": "nwpef", "speed": "0 rad/s", "torque": "0 mN*m", "ambient": "267.835K"},
        {"name": "r", "speed": "1697.23 rad/s", "torque": "0uN*m", "ambient": "0 degC"},
    ],
}


def test_a_fix_never_worsens_a_finding_shown_below_the_fail_level(tmp_path):
    tree = tmp_path / "repo"
    (tree / ".git").mkdir(parents=True)
    (tree / "soft.axis.yaml").write_text(json.dumps(_SOFTENED), encoding="utf-8")
    report = check_paths([str(tree / "soft.axis.yaml")], root=tree)
    ripple = [f for f in report.findings if f.rule == "worst-ripple-over-rated-current"]
    assert ripple and ripple[0].severity == "warning" and "rests on the estimated inductance" in ripple[0].message
    tally = {"fixes": 0, "closed": 0}
    problems = _closure(tree, "soft.axis.yaml", tally)
    assert tally["fixes"] >= 3 and not problems, "\n".join(problems)
