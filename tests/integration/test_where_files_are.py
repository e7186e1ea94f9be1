"""Configuration where the files are, directory walks that honour the repository's
ignore rules, files outside the repository, and a report from a plain install.

Every case runs the command line in a subprocess on a repository made in a
temporary folder (a real ``git init`` where git's ignore rules matter): the exit
status and the bytes on stdout are what a CI gate sees. The verdicts compared are
(file, rule, severity, message, operating point) of the JSON report.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.policy.helpers import EXAMPLES, run_cli

HAVE_GIT = shutil.which("git") is not None


def _git(repo: Path, *args: str) -> None:
    subprocess.run(
        ["git", *args],
        cwd=repo,
        check=True,
        capture_output=True,
        env={"GIT_CONFIG_GLOBAL": "/dev/null", "GIT_CONFIG_NOSYSTEM": "1", "HOME": str(repo), "PATH": "/usr/bin:/bin"},
    )


def _monorepo(tmp: Path) -> Path:
    """A repository with two sub-projects: `lab/` with its own policy (a stricter
    ripple band, the medical team rule from a folder beside it, a per-path entry
    written relative to `lab/`), and `pump/` under the top-level policy only."""
    repo = tmp / "mono"
    shutil.copytree(EXAMPLES / "robot", repo / "lab" / "robot")
    shutil.copytree(EXAMPLES / "team-rules", repo / "lab" / "team-rules")
    shutil.copytree(EXAMPLES / "medical", repo / "lab" / "medical")
    shutil.copytree(EXAMPLES / "robot", repo / "pump" / "robot")
    (repo / ".specguard.yaml").write_text("format: 1\nfail_level: error\n", encoding="utf-8")
    (repo / "lab" / ".specguard.yaml").write_text(
        "format: 1\n"
        "fail_level: warning\n"
        "extra_rule_dirs: [team-rules]\n"
        "rules:\n"
        "  ripple-over-rated-current: {thresholds: {warning: 0.1}}\n"
        "paths:\n"
        "  - match: 'robot/broken/**'\n"
        "    rules:\n"
        "      supply-oversized: {enabled: false}\n",
        encoding="utf-8",
    )
    (repo / ".git").mkdir()  # a repository root (git itself is not needed here)
    return repo


def _verdicts(done) -> tuple[set, int]:
    """(file, rule, severity, message, point) of every finding, and the exit status.
    Paths are relative to the repository root wherever the run starts."""
    report = json.loads(done.stdout)
    out = set()
    for f in report["files"]:
        for finding in f["findings"]:
            out.add(
                (f["file"], finding["rule"], finding["severity"], finding["message"], finding.get("operating_point"))
            )
    return out, done.returncode


def test_each_spec_is_judged_by_the_nearest_policy_wherever_the_run_starts(tmp_path):
    repo = _monorepo(tmp_path)
    from_top = run_cli("check", "--format", "json", "--no-cache", "lab", cwd=repo)
    from_lab = run_cli("check", "--format", "json", "--no-cache", ".", cwd=repo / "lab")
    from_axes = run_cli("check", "--format", "json", "--no-cache", "..", cwd=repo / "lab" / "robot")
    top, status_top = _verdicts(from_top)
    assert status_top == 1, from_top.stderr.decode()
    assert (top, status_top) == _verdicts(from_lab) == _verdicts(from_axes)
    rules = {r for _f, r, *_ in top}
    # the lab's policy is in force: its team rule is loaded (a rule of examples/team-rules)
    team_rule = next(p.stem for p in (EXAMPLES / "team-rules").glob("*.yaml"))
    assert any(r == team_rule or r.startswith("pwm-medical") for r in rules), sorted(rules)
    # its per-path entry (relative to lab/) disabled a rule for robot/broken only
    assert any(f.startswith("lab/robot/broken/") for f, *_ in top)
    assert not any(f.startswith("lab/robot/broken/") and r == "supply-oversized" for f, r, *_ in top)


def test_a_sub_project_policy_does_not_leak_to_its_neighbour(tmp_path):
    repo = _monorepo(tmp_path)
    lab = _verdicts(run_cli("check", "--format", "json", "--no-cache", "lab/robot/axes", cwd=repo))[0]
    pump = _verdicts(run_cli("check", "--format", "json", "--no-cache", "pump/robot/axes", cwd=repo))[0]
    # the same axes, judged under a warning band of 10 % in lab/ and the pack's 20 % in pump/
    lab_ripple = {m for _f, r, _s, m, _p in lab if r == "ripple-over-rated-current"}
    pump_ripple = {m for _f, r, _s, m, _p in pump if r == "ripple-over-rated-current"}
    assert lab_ripple != pump_ripple
    assert any("limit 10 %" in m for m in lab_ripple), lab_ripple
    assert not any("limit 10 %" in m for m in pump_ripple), pump_ripple


def test_the_fail_level_of_a_sub_project_policy_decides_its_files(tmp_path):
    repo = _monorepo(tmp_path)
    # the lab's 10 % ripple band warns on the carousel; it also moves the supply window
    # (an error there), which this test leaves out to judge warnings alone
    (repo / "lab" / ".specguard.yaml").write_text(
        "format: 1\nfail_level: warning\nrules:\n"
        "  ripple-over-rated-current: {thresholds: {warning: 0.1}}\n"
        "  supply-window-empty: {enabled: false}\n",
        encoding="utf-8",
    )
    lab_axis = "lab/robot/axes/carousel.axis.yaml"
    pump_axis = "pump/robot/axes/carousel.axis.yaml"
    # carousel has warnings and no error (demo README): fails under lab's warning level
    lab = run_cli("check", "--no-cache", lab_axis, cwd=repo)
    pump = run_cli("check", "--no-cache", pump_axis, cwd=repo)
    assert (lab.returncode, pump.returncode) == (1, 0), (lab.stdout + pump.stdout).decode()
    override = run_cli("check", "--no-cache", "--fail-level", "error", lab_axis, cwd=repo)
    assert override.returncode == 0, override.stdout.decode()


def test_config_names_the_policy_file_in_force_and_config_overrides(tmp_path):
    repo = _monorepo(tmp_path)
    lab = run_cli("config", "lab/robot/axes/carousel.axis.yaml", cwd=repo)
    assert lab.returncode == 0, lab.stderr.decode()
    assert lab.stdout.decode().splitlines()[0] == "policy file in force: lab/.specguard.yaml"
    pump = run_cli("config", "pump/robot/axes/carousel.axis.yaml", cwd=repo)
    assert pump.stdout.decode().splitlines()[0] == "policy file in force: .specguard.yaml"
    changed = run_cli("config", "--changed", "lab/robot/axes/carousel.axis.yaml", cwd=repo).stdout.decode()
    assert "threshold warning = 0.1" in changed and "threshold error" not in changed, changed
    forced = run_cli(
        "check", "--no-cache", "--config", ".specguard.yaml", "lab/robot/axes/carousel.axis.yaml", cwd=repo
    )
    assert forced.returncode == 0, forced.stdout.decode()  # the top policy: fail level error


def test_a_broken_nested_policy_stops_the_run_before_analysis(tmp_path):
    repo = _monorepo(tmp_path)
    (repo / "lab" / ".specguard.yaml").write_text("format: 1\nfail_levle: warning\n", encoding="utf-8")
    done = run_cli("check", "--no-cache", ".", cwd=repo)
    assert done.returncode == 2
    assert "lab/.specguard.yaml:2:1: error:" in done.stderr.decode(), done.stderr.decode()
    assert done.stdout == b""


@pytest.mark.skipif(not HAVE_GIT, reason="needs git")
def test_a_directory_walk_skips_what_git_ignores(tmp_path):
    repo = tmp_path / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    shutil.copytree(EXAMPLES / "robot", repo / "build" / "lib" / "demo" / "robot")
    shutil.copytree(EXAMPLES / "robot", repo / "scratch" / "robot")
    (repo / ".gitignore").write_text("build/\nscratch/robot/axes/carousel.axis.yaml\n", encoding="utf-8")
    _git(repo, "init", "-q")
    done = run_cli("check", "--format", "json", "--no-cache", ".", cwd=repo)
    files = [f["file"] for f in json.loads(done.stdout)["files"]]
    assert not any(f.startswith("build/") for f in files), files
    assert "scratch/robot/axes/carousel.axis.yaml" not in files
    assert "scratch/robot/axes/pipette-x.axis.yaml" in files
    assert "robot/axes/carousel.axis.yaml" in files
    # a file named on the command line is always checked, ignored or not
    named = run_cli("check", "--format", "json", "--no-cache", "build/lib/demo/robot/axes/carousel.axis.yaml", cwd=repo)
    assert [f["file"] for f in json.loads(named.stdout)["files"]] == ["build/lib/demo/robot/axes/carousel.axis.yaml"]


def test_outside_git_virtual_environments_and_build_output_are_skipped(tmp_path):
    repo = tmp_path / "plain"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    shutil.copytree(EXAMPLES / "robot", repo / "build" / "robot")
    shutil.copytree(EXAMPLES / "robot", repo / "env" / "lib" / "robot")
    (repo / "env" / "pyvenv.cfg").write_text("home = /usr/bin\n", encoding="utf-8")
    (repo / ".specguard.yaml").write_text("format: 1\n", encoding="utf-8")
    done = run_cli("check", "--format", "json", "--no-cache", ".", cwd=repo)
    files = [f["file"] for f in json.loads(done.stdout)["files"]]
    assert files and all(f.startswith("robot/") for f in files), files


def test_a_spec_outside_the_repository_is_checked_within_its_own_root(tmp_path):
    here = tmp_path / "here"
    (here / ".git").mkdir(parents=True)
    other = tmp_path / "elsewhere"
    shutil.copytree(EXAMPLES / "robot", other / "robot")
    (other / ".specguard.yaml").write_text("format: 1\n", encoding="utf-8")
    target = other / "robot" / "axes" / "sample-lift.axis.yaml"
    absolute = run_cli("check", "--no-cache", "--no-color", str(target), cwd=here)
    relative = run_cli("check", "--no-cache", "--no-color", "../elsewhere/robot/axes/sample-lift.axis.yaml", cwd=here)
    a, r = absolute.stdout.decode(), relative.stdout.decode()
    assert absolute.returncode == relative.returncode == 1, a + absolute.stderr.decode()
    assert "input-unreadable" not in a + r and "reference-invalid" not in a + r
    first = [line for line in a.splitlines() if ": error: " in line][0]
    assert first.startswith(f"{other.as_posix()}/robot/"), first  # a path the user can open
    path, line = first.split(":")[0], int(first.split(":")[1])
    assert Path(path).is_file() and line >= 1
    assert all(line.startswith("../elsewhere/robot/") for line in r.splitlines() if ": error: " in line)
    # library references stay inside that root
    (other / "robot" / "axes" / "escape.axis.yaml").write_text(
        target.read_text(encoding="utf-8").replace("../library/motors/", "../../../here/"), encoding="utf-8"
    )
    escape = run_cli("check", "--no-cache", "--no-color", str(other / "robot/axes/escape.axis.yaml"), cwd=here)
    assert "leads outside the repository root [reference-invalid]" in escape.stdout.decode()


def test_report_without_the_plotting_library_writes_the_report_and_says_why(tmp_path):
    """A plain install has matplotlib; one that lost it still writes the report
    (without plots), says so in one line, and keeps the exit status."""
    blocker = tmp_path / "block"
    blocker.mkdir()
    (blocker / "matplotlib.py").write_text("raise ImportError('blocked for the test')\n", encoding="utf-8")
    (blocker / "sitecustomize.py").write_text(
        "import importlib.util, sys\n"
        "_find = importlib.util.find_spec\n"
        "def find_spec(name, package=None):\n"
        "    return None if name.split('.')[0] == 'matplotlib' else _find(name, package)\n"
        "importlib.util.find_spec = find_spec\n",
        encoding="utf-8",
    )
    repo = tmp_path / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    (repo / ".git").mkdir()
    done = run_cli("report", "robot", "--html", "r.html", cwd=repo, env={"PYTHONPATH": str(blocker)})
    err = done.stderr.decode()
    assert done.returncode == 1, err
    assert "internal error" not in err
    assert err.count("the HTML report has no plots: matplotlib is not installed") == 1, err
    page = (repo / "r.html").read_text(encoding="utf-8")
    assert "Plots are not drawn in this report" in page and "<svg" not in page
