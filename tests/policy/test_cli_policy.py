"""End to end through the command line: policy, waivers and baseline on a copy of
the demo robot. The exit status contract is docs/ci-gate.md's ("Exit statuses"): 0 clean, 1 findings at or
above the fail level, 2 bad invocation or config (docs/reliability.md I05, I07, I08, I10,
FI10, FI14, G17)."""

from __future__ import annotations

import json
import os
import shutil

import pytest

from specguard import atomic, cli
from specguard.engine import baseline as bl

from .helpers import EXAMPLES, demo_repo, have_figures, run_cli

pytestmark = pytest.mark.skipif(not have_figures(), reason="needs specguard/figures/compute.py")

# 2027-01-15 00:00 UTC, as seconds since the epoch (SOURCE_DATE_EPOCH).
JAN_2027 = "1799971200"


def text(done) -> str:
    return done.stdout.decode() + done.stderr.decode()


@pytest.fixture()
def repo(tmp_path):
    return demo_repo(tmp_path)


def check(repo, *args, env=None):
    return run_cli("check", *args, cwd=repo, env=env)


def test_epoch_constant_is_the_date_it_names():
    import datetime as dt

    assert dt.datetime.fromtimestamp(int(JAN_2027), tz=dt.timezone.utc).date() == dt.date(2027, 1, 15)


# ------------------------------------------------------------------ baseline
def test_write_then_check_suppresses_all_and_a_line_shift_keeps_it(repo):
    first = check(repo, "--write-baseline", "specguard-baseline.json", "robot/axes")
    assert first.returncode == 0, text(first)
    entries = json.loads((repo / "specguard-baseline.json").read_text())["entries"]
    assert len(entries) > 5 and all(not e["file"].startswith("/") for e in entries)
    plain = check(repo, "robot/axes")
    assert plain.returncode == 1
    done = check(repo, "--baseline", "specguard-baseline.json", "robot/axes")
    assert done.returncode == 0, text(done)
    suppressed = sum(e["count"] for e in entries)
    assert f"specguard: {suppressed} findings suppressed by the baseline specguard-baseline.json" in text(done)
    spec = repo / "robot" / "axes" / "pipette-x.axis.yaml"
    spec.write_text("# moved\n# down\n" + spec.read_text())
    shifted = check(repo, "--baseline", "specguard-baseline.json", "robot/axes")
    assert shifted.returncode == 0, text(shifted)
    assert f"{suppressed} findings suppressed" in text(shifted)


def test_changed_value_breaks_the_match_and_leaves_stale_entries(repo):
    assert check(repo, "--write-baseline", "b.json", "robot/axes").returncode == 0
    spec = repo / "robot" / "axes" / "pipette-x.axis.yaml"
    spec.write_text(spec.read_text().replace("frequency: 20 kHz", "frequency: 25 kHz"))
    done = check(repo, "--baseline", "b.json", "robot/axes")
    assert done.returncode == 1
    out = text(done)
    assert "[ripple-over-rated-current]" in out and "stale entr" in out


def test_stale_entries_fail_only_with_strict_baseline(repo):
    axes = repo / "robot" / "axes"
    shutil.copy(axes / "pipette-x.axis.yaml", axes / "pipette-y.axis.yaml")
    assert check(repo, "--write-baseline", "b.json", "robot/axes").returncode == 0
    (axes / "pipette-y.axis.yaml").unlink()
    loose = check(repo, "--baseline", "b.json", "robot/axes")
    assert loose.returncode == 0, text(loose)
    assert "stale entries matched no finding" in text(loose)
    strict = check(repo, "--baseline", "b.json", "--strict-baseline", "robot/axes")
    assert strict.returncode == 1 and "--strict-baseline: fails the run" in text(strict)
    report = json.loads(check(repo, "--baseline", "b.json", "--format", "json", "robot/axes").stdout)
    assert report["baseline"]["stale"] > 0
    assert {e["file"] for e in report["baseline"]["stale_entries"]} == {"robot/axes/pipette-y.axis.yaml"}


@pytest.mark.parametrize(
    "content, expected",
    [
        ('{"baseline_format": 1, "entries": [', "truncated"),
        ('{"baseline_format": 9, "entries": []}', "unknown baseline format 9"),
        ("", "empty"),
    ],
)
def test_damaged_baseline_is_exit_2_and_nothing_is_analysed(repo, content, expected):
    (repo / "b.json").write_text(content)
    done = check(repo, "--baseline", "b.json", "robot/axes")
    assert done.returncode == 2
    assert done.stdout == b""  # no report: the run stopped before analysis
    err = done.stderr.decode()
    assert err.startswith("b.json:") and "[baseline-invalid]" in err and expected in err


def test_missing_baseline_is_exit_2(repo):
    done = check(repo, "--baseline", "nope.json", "robot/axes")
    assert done.returncode == 2 and "[baseline-invalid]" in done.stderr.decode()


def test_baseline_is_not_written_when_an_input_is_unreadable(repo):
    done = check(repo, "--write-baseline", "b.json", "robot/axes", "robot/missing.axis.yaml")
    assert done.returncode == 2
    assert not (repo / "b.json").exists()
    assert "baseline was not written" in done.stderr.decode()


def test_failed_baseline_write_keeps_the_previous_file(repo, monkeypatch, capsys):
    monkeypatch.chdir(repo)
    assert cli.main(["check", "--write-baseline", "b.json", "robot/axes/sample-lift.axis.yaml"]) == 0
    before = (repo / "b.json").read_bytes()

    def broken_fsync(fd):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(os, "fsync", broken_fsync)
    capsys.readouterr()
    assert cli.main(["check", "--write-baseline", "b.json", "robot/axes"]) == 2
    err = capsys.readouterr().err
    assert "Input/output error" in err and "[output-error]" in err
    assert (repo / "b.json").read_bytes() == before
    assert [p.name for p in repo.iterdir() if p.name.endswith(".tmp")] == []


def test_second_writer_gives_up_after_the_lock_timeout(repo, monkeypatch, capsys):
    monkeypatch.chdir(repo)
    monkeypatch.setattr(cli, "BASELINE_LOCK_TIMEOUT", 0.3)
    with atomic.locked(bl.lock_path(repo / "b.json")):
        status = cli.main(["check", "--write-baseline", "b.json", "robot/axes/sample-lift.axis.yaml"])
    assert status == 2
    err = capsys.readouterr().err
    assert f"locked by PID {os.getpid()}" in err and "[output-error]" in err
    assert not (repo / "b.json").exists()


# ------------------------------------------------------------------ waivers
WAIVER = """
waivers:
  - rule: ripple-over-rated-current
    at: lift
    reason: the lift phase lasts under a second
    approved_by: design review of the lift module
    expires: 2027-06-30
"""


def lift_with(repo, extra: str):
    spec = repo / "robot" / "axes" / "sample-lift.axis.yaml"
    spec.write_text(spec.read_text() + extra)
    return "robot/axes/sample-lift.axis.yaml"


def ripple_lines(out: str) -> list[str]:
    return [
        line
        for line in out.splitlines()
        if line.endswith(("[ripple-over-rated-current]", "[ripple-over-rated-current] (waived)"))
    ]


def test_waiver_waives_one_point_and_strict_mode_ignores_it(repo):
    path = lift_with(repo, WAIVER)
    env = {"SOURCE_DATE_EPOCH": JAN_2027}
    done = check(repo, path, env=env)
    lines = ripple_lines(text(done))
    # ripple findings at 'lift' (waived) and 'sprint' (the 'hold' ripple, 19.9 % at the
    # motor's effective duty, no longer fires)
    assert [("'lift'" in line, line.endswith("(waived)")) for line in lines] == [
        (True, True),
        (False, False),
    ]
    assert "1 waived" in text(done)
    report = json.loads(check(repo, "--format", "json", path, env=env).stdout)
    waived = [f for f in report["files"][0]["findings"] if f["waived"]]
    assert waived[0]["waived"] == (
        "the lift phase lasts under a second (approved by design review of the lift module, until 2027-06-30)"
    )
    strict = check(repo, "--no-waivers", path, env=env)
    assert not any(line.endswith("(waived)") for line in ripple_lines(text(strict)))


def test_expired_waiver_is_an_error_and_waives_nothing(repo):
    path = lift_with(repo, WAIVER.replace("2027-06-30", "2026-12-31"))
    done = check(repo, path, env={"SOURCE_DATE_EPOCH": JAN_2027})
    assert done.returncode == 1
    out = text(done)
    assert "expired on 2026-12-31" in out and "[waiver-invalid]" in out
    assert not any(line.endswith("(waived)") for line in ripple_lines(out))


def test_policy_can_forbid_waiving_a_rule(repo):
    path = lift_with(repo, WAIVER)
    (repo / ".specguard.yaml").write_text("format: 1\nrules:\n  ripple-over-rated-current: {waivable: false}\n")
    done = check(repo, path, env={"SOURCE_DATE_EPOCH": JAN_2027})
    assert "the policy marks rule 'ripple-over-rated-current' as not waivable" in text(done)


def test_unused_waiver_is_a_warning(repo):
    path = lift_with(
        repo,
        WAIVER.replace("at: lift", "at: hold").replace("ripple-over-rated-current", "pwm-audible"),
    )
    out = text(check(repo, path, env={"SOURCE_DATE_EPOCH": JAN_2027}))
    assert "warning: waiver 1 for 'pwm-audible': unused" in out


def test_bad_source_date_epoch_is_exit_2(repo):
    done = check(repo, "robot/axes", env={"SOURCE_DATE_EPOCH": "yesterday"})
    assert done.returncode == 2 and "SOURCE_DATE_EPOCH" in done.stderr.decode()


# ------------------------------------------------------------------ policy
def test_config_fail_level_severity_and_per_path_switch(repo):
    lift = "robot/axes/sample-lift.axis.yaml"
    base = text(check(repo, lift))
    assert "warning: " in base and "[winding-temperature-margin]" in base
    (repo / ".specguard.yaml").write_text(
        "format: 1\n"
        "fail_level: warning\n"
        "rules:\n"
        "  winding-temperature-margin: {severity: info}\n"
        "paths:\n"
        "  - match: robot/axes/sample-*.axis.yaml\n"
        "    rules:\n"
        "      ripple-over-rated-current: {enabled: false}\n"
    )
    done = check(repo, lift)
    out = text(done)
    assert "[ripple-over-rated-current]" not in out
    assert "info: at 'lift' the winding settles" in out
    assert done.returncode == 1  # warnings remain and the config's fail level is warning
    assert check(repo, "--fail-level", "error", lift).returncode == 1  # errors remain too
    assert "[ripple-over-rated-current]" in text(check(repo, "robot/axes/pipette-x.axis.yaml"))


def test_config_threshold_override_changes_the_finding(repo):
    lift = "robot/axes/sample-lift.axis.yaml"
    # the 'lift' ripple (53.7 % of the rated current) fires the 20/50 % bands of the pack
    assert "at 'lift' is 53.7 %" in text(check(repo, lift))
    (repo / ".specguard.yaml").write_text(
        "format: 1\nrules:\n  ripple-over-rated-current: {thresholds: {warning: 0.6, error: 0.8}}\n"
    )
    assert "at 'lift' is 53.7 %" not in text(check(repo, lift))


def test_exclude_skips_files_in_a_directory_search_only(repo):
    (repo / ".specguard.yaml").write_text('format: 1\nexclude: ["robot/broken/**"]\n')
    out = text(check(repo, "robot"))
    assert "robot/broken/" not in out and "in 3 files" in out
    named = text(check(repo, "robot/broken/feeder.axis.yaml"))
    assert "[yaml-key]" in named  # named explicitly: checked anyway


def test_explicit_config_file_is_used(repo):
    (repo / "policy.yaml").write_text("format: 1\nrules:\n  ripple-over-rated-current: {enabled: false}\n")
    out = text(check(repo, "--config", "policy.yaml", "robot/axes/sample-lift.axis.yaml"))
    assert "[ripple-over-rated-current]" not in out


def test_team_rule_directory_is_loaded_configured_and_shown_relative(repo):
    # examples/team-rules holds a team rule in the rule pack format
    shutil.copytree(EXAMPLES / "team-rules", repo / "policy" / "rules")
    (repo / ".specguard.yaml").write_text(
        "format: 1\nextra_rule_dirs: [policy/rules]\nrules:\n  pwm-medical-minimum: {severity: warning}\n"
    )
    shown = run_cli("config", "robot/axes/sample-lift.axis.yaml", cwd=repo)
    assert shown.returncode == 0, text(shown)
    block = shown.stdout.decode().split("rule pwm-medical-minimum:\n", 1)[1]
    assert "    severity = warning    [.specguard.yaml:4:35]" in block
    assert "[rule pack default (policy/rules/pwm-medical-minimum.yaml)]" in block
    assert str(repo) not in shown.stdout.decode()
    assert check(repo, "robot/axes").returncode == 1  # the run works with the team's rule
    # without the directory the same id is unknown: exit 2 with a located error
    (repo / ".specguard.yaml").write_text("format: 1\nrules:\n  pwm-medical-minimum: {severity: warning}\n")
    done = check(repo, "robot/axes")
    assert done.returncode == 2
    assert done.stderr.decode().startswith(".specguard.yaml:3:3: error: rules: unknown rule id 'pwm-medical-minimum'")


def test_bad_team_rule_file_is_a_config_error(repo):
    (repo / "policy").mkdir()
    (repo / "policy" / "broken-rule.yaml").write_text("id: broken-rule\ntitle: x\n")
    (repo / ".specguard.yaml").write_text("format: 1\nextra_rule_dirs: [policy]\n")
    done = check(repo, "robot/axes")
    assert done.returncode == 2 and done.stdout == b""
    err = done.stderr.decode()
    assert err.startswith("policy/broken-rule.yaml:") and "[config-invalid]" in err
    assert str(repo) not in err


def test_failed_report_write_is_exit_2_and_keeps_the_previous_report(repo, monkeypatch, capsys):
    monkeypatch.chdir(repo)
    (repo / "out.json").write_text("previous report")

    def broken_fsync(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", broken_fsync)
    status = cli.main(["check", "--format", "json", "--output", "out.json", "robot/axes"])
    assert status == 2
    err = capsys.readouterr().err
    assert "cannot write out.json: No space left on device [output-error]" in err
    assert (repo / "out.json").read_text() == "previous report"
    assert [p.name for p in repo.iterdir() if p.name.endswith(".tmp")] == []
