"""The policy's modelling section: the inductance estimate per winding, whether a verdict
resting on the estimate drops a band, the supply reserve, the bound of the PWM-frequency
fixes; `specguard config` shows them. Check values: the estimate curve of
docs/physics.md §5.3 by hand (L_cat max((f/f_cat)^-n, floor))."""

from __future__ import annotations

import json
import shutil

import pytest

from .helpers import EXAMPLES, run_cli

AXIS = "robot/axes/sample-lift.axis.yaml"


@pytest.fixture()
def repo(tmp_path):
    repo = tmp_path / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    (repo / ".git").mkdir()
    return repo


def _figures(repo):
    done = run_cli("check", "--format", "json", "--no-cache", AXIS, cwd=repo)
    return json.loads(done.stdout)["files"][0]


def _axis_value(file, name):
    return next(f["value"] for f in file["figures"]["axis"] if f["name"] == name)


def test_the_estimate_curve_and_the_softening_follow_the_policy(repo):
    before = _figures(repo)
    (repo / ".specguard.yaml").write_text(
        "format: 1\nmodelling:\n  inductance_estimate:\n    coreless: {exponent: 0.0, floor: 1.0}\n"
        "  estimate_softens_verdicts: false\n",
        encoding="utf-8",
    )
    after = _figures(repo)
    # exponent 0: the catalogue value as it is (the loop's motor share equals the catalogue)
    assert _axis_value(after, "loop_inductance") == pytest.approx(_axis_value(after, "loop_inductance_catalogue"))
    assert _axis_value(before, "loop_inductance") < _axis_value(before, "loop_inductance_catalogue")
    # the sample lift's motor is coreless: with the catalogue value nothing rests on an estimate
    assert not any("rests on the estimated inductance" in f["message"] for f in after["findings"])


def test_a_bad_bound_is_a_config_error(repo):
    (repo / ".specguard.yaml").write_text("format: 1\nmodelling:\n  fix_pwm_frequency_max: 100\n", encoding="utf-8")
    done = run_cli("check", "--no-cache", AXIS, cwd=repo)
    assert done.returncode == 2
    assert "modelling.fix_pwm_frequency_max" in done.stderr.decode()


def test_config_shows_the_modelling_choices(repo):
    (repo / ".specguard.yaml").write_text("format: 1\nmodelling:\n  supply_reserve: 0.2\n", encoding="utf-8")
    out = run_cli("config", AXIS, cwd=repo).stdout.decode()
    assert "supply reserve: 0.2" in out and "iron-core (f/f_cat)^-0.367 at least 0.25" in out


def test_a_modelling_change_is_never_answered_from_the_cache(repo, tmp_path):
    """The result cache keys each file by its policy; the modelling section changes the
    figures, so it is part of that key (a warm run after the change equals a cold one)."""
    env = {"SPECGUARD_CACHE_DIR": str(tmp_path / "cache")}
    first = run_cli("check", "--format", "json", AXIS, cwd=repo, env=env)
    (repo / ".specguard.yaml").write_text(
        "format: 1\nmodelling:\n  inductance_estimate:\n    coreless: {exponent: 0.0, floor: 1.0}\n",
        encoding="utf-8",
    )
    warm = run_cli("check", "--format", "json", AXIS, cwd=repo, env=env)
    cold = run_cli("check", "--format", "json", "--no-cache", AXIS, cwd=repo)
    assert warm.stdout == cold.stdout
    assert warm.stdout != first.stdout


def _ripple_fixes(repo):
    file = _figures(repo)
    finding = next(
        f for f in file["findings"] if f["rule"] == "ripple-over-rated-current" and f.get("operating_point") == "lift"
    )
    return [(fix["changes"][0]["pointer"], fix["cost"]) for fix in finding["fixes"]]


def test_the_fix_costs_of_the_policy_order_the_fixes(repo):
    """Fixes are ordered by cost: the relative change of the lever times its weight
    (defaults: the PWM frequency and a choke 1 each; the lift's frequency fix is a
    change of 39 %, its choke fix adds 107 uH to 47 uH: 228 %). A team whose controller
    cannot switch faster weighs the frequency up, and the choke comes first."""
    before = _ripple_fixes(repo)
    assert [p for p, _ in before] == ["/stage/pwm/frequency", "/chokes/inductance"]
    (repo / ".specguard.yaml").write_text(
        "format: 1\nmodelling:\n  fix_costs: {pwm_frequency: 10, added_inductance: 0.5}\n", encoding="utf-8"
    )
    after = _ripple_fixes(repo)
    assert [p for p, _ in after] == ["/chokes/inductance", "/stage/pwm/frequency"]
    cost = dict(before)
    assert dict(after)["/stage/pwm/frequency"] == pytest.approx(10 * cost["/stage/pwm/frequency"], rel=1e-6)
    assert dict(after)["/chokes/inductance"] == pytest.approx(0.5 * cost["/chokes/inductance"], rel=1e-6)
    out = run_cli("config", AXIS, cwd=repo).stdout.decode()
    assert "fix costs: added_inductance 0.5, brake_resistor 1" in out and "pwm_frequency 10," in out


@pytest.mark.parametrize(
    "text, expected",
    [
        ("{pwm_freq: 3}", "modelling.fix_costs.pwm_freq: unknown key 'pwm_freq'; did you mean 'pwm_frequency'?"),
        ("{supply_voltage: -1}", "modelling.fix_costs.supply_voltage: must be at least 0.0 (it is -1)"),
        ("{supply_voltage: cheap}", "modelling.fix_costs.supply_voltage: expected a number"),
    ],
)
def test_bad_fix_costs_are_config_errors(repo, text, expected):
    (repo / ".specguard.yaml").write_text(f"format: 1\nmodelling:\n  fix_costs: {text}\n", encoding="utf-8")
    done = run_cli("check", "--no-cache", AXIS, cwd=repo)
    assert done.returncode == 2
    assert expected in done.stderr.decode()


def test_the_policy_names_every_lever_that_has_a_cost():
    """The policy's closed list of fix_costs keys and the levers' default weights
    (specguard.figures.levers.COST_WEIGHT) name the same levers."""
    from typing import get_args

    from specguard.engine.config import Modelling
    from specguard.figures.levers import COST_WEIGHT

    mapping = next(a for a in get_args(Modelling.model_fields["fix_costs"].annotation) if a is not type(None))
    keys = get_args(get_args(mapping)[0])
    assert sorted(keys) == sorted(COST_WEIGHT)
