"""The policy file: precedence, suggestions, located errors, exit 2 before analysis,
and `specguard config FILE` naming where each value came from.

Required behaviour: README.md "Policy, waivers and a baseline" (a command shows the
effective config and where each value came from) and docs/reliability.md I05 (an
invalid config is exit 2 before any analysis).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from specguard import cli
from specguard.engine.config import (
    ConfigError,
    RuleFacts,
    glob_match,
    load_config,
    load_policy,
    validate,
)
from specguard.engine.types import RuleOverride
from specguard.source import load_bytes

from .helpers import ROOT, demo_repo, run_cli

CATALOGUE = {
    "ripple-over-rated-current": RuleFacts(
        "ripple-over-rated-current", {"warning": 0.2, "error": 0.5}, ("ripple-high",), "ratio"
    ),
    "pwm-audible": RuleFacts("pwm-audible", {"info": "20 kHz", "warning": "16 kHz"}, (), "frequency"),
}


def policy(text: str, root: Path = Path(".")):
    result = load_bytes(text.encode("utf-8"), ".specguard.yaml")
    assert result.data is not None, result.findings
    return validate(result.data, result.locations, ".specguard.yaml", root, lambda dirs: CATALOGUE)


def problems(text: str, root: Path = Path(".")) -> list[str]:
    with pytest.raises(ConfigError) as info:
        policy(text, root)
    for f in info.value.findings:
        assert f.rule == "config-invalid" and f.severity == "error"
    return [f"{f.location.line}:{f.location.column}: {f.message}" for f in info.value.findings]


LAYERED = """\
format: 1
rules:
  ripple-over-rated-current:
    thresholds: {warning: 0.15}
    severity: warning
paths:
  - match: "proto/**"
    rules:
      ripple-over-rated-current: {thresholds: {warning: 0.3}, enabled: false}
  - match: "proto/lab/*.axis.yaml"
    rules:
      ripple-high: {enabled: true}
"""


def test_precedence_default_then_config_then_path_entries_in_order():
    cfg = policy(LAYERED)
    plain = cfg.for_file("axes/a.axis.yaml")["ripple-over-rated-current"]
    proto = cfg.for_file("proto/x.axis.yaml")["ripple-over-rated-current"]
    lab = cfg.for_file("proto/lab/y.axis.yaml")["ripple-over-rated-current"]
    assert plain == RuleOverride(enabled=True, severity="warning", thresholds={"warning": 0.15})
    assert proto == RuleOverride(enabled=False, severity="warning", thresholds={"warning": 0.3})
    # the later entry (written with the rule's alias) switches it back on
    assert lab == RuleOverride(enabled=True, severity="warning", thresholds={"warning": 0.3})
    # untouched rules keep the built-in defaults
    assert cfg.for_file("axes/a.axis.yaml")["pwm-audible"] == RuleOverride()


def test_explain_names_the_source_of_every_value():
    cfg = policy(LAYERED)
    items = {(e.scope, e.key): (e.value, e.source) for e in cfg.explain_for_file("proto/lab/y.axis.yaml")}
    assert items[("ripple-over-rated-current", "enabled")] == (
        "true",
        ".specguard.yaml:12:30 (paths[1], match 'proto/lab/*.axis.yaml')",
    )
    assert items[("ripple-over-rated-current", "threshold warning")] == (
        "0.3",
        ".specguard.yaml:9:57 (paths[0], match 'proto/**')",
    )
    assert items[("ripple-over-rated-current", "severity")] == ("warning", ".specguard.yaml:5:15")
    assert items[("ripple-over-rated-current", "threshold error")] == (
        "0.5",
        "rule pack default (rule pack)",
    )
    assert items[("pwm-audible", "waivable")] == ("true", "built-in default")
    assert items[("run", "fail_level")] == ("error", "built-in default")


def test_waivable_false_marks_the_rule_unwaivable():
    cfg = policy("format: 1\nrules:\n  pwm-audible: {waivable: false}\n")
    assert cfg.for_file("a.axis.yaml")["pwm-audible"].unwaivable is True


def test_include_exclude_and_fail_level():
    cfg = policy('format: 1\nfail_level: warning\ninclude: ["**/*.yaml"]\nexclude: ["archive/**"]\n')
    assert cfg.fail_level.value == "warning"
    assert cfg.wanted("axes/a.yaml") and not cfg.wanted("archive/a.yaml")
    default = policy("format: 1\n")
    assert default.wanted("deep/er/x.axis.yml") and not default.wanted("lib/motor.yaml")


@pytest.mark.parametrize(
    "pattern, path, expected",
    [
        ("**/*.axis.yaml", "a.axis.yaml", True),  # ** matches no directory too
        ("**/*.axis.yaml", "x/y/a.axis.yaml", True),
        ("proto/**", "proto/x/y.yaml", True),
        ("proto/**", "prototype/y.yaml", False),
        ("a/*/b", "a/x/y/b", False),  # * stays within one segment
        ("a/**/b", "a/b", True),
        ("axes/[ab].axis.yaml", "axes/b.axis.yaml", True),
        ("axes/[!ab].axis.yaml", "axes/b.axis.yaml", False),
        ("axes/?.axis.yaml", "axes/ab.axis.yaml", False),
    ],
)
def test_globs(pattern, path, expected):
    assert glob_match(pattern, path) is expected


def test_unknown_top_level_key_suggests_the_right_one():
    assert problems("format: 1\nrulez: {}\n") == ["2:1: unknown key 'rulez'; did you mean 'rules'?"]


def test_unknown_rule_key_suggests_the_right_one():
    assert problems("format: 1\nrules:\n  pwm-audible: {enabeld: false}\n") == [
        "3:17: rules.pwm-audible: unknown key 'enabeld'; did you mean 'enabled'?"
    ]


def test_unknown_rule_id_suggests_the_right_one_in_path_entries_too():
    text = "format: 1\npaths:\n  - match: x/**\n    rules:\n      pwm-audibel: {enabled: false}\n"
    assert problems(text) == ["5:7: paths[0].rules: unknown rule id 'pwm-audibel'; did you mean 'pwm-audible'?"]


@pytest.mark.parametrize(
    "text, expected",
    [
        ("format: 2\n", "format: expected one of 1"),
        (
            "format: 1\nfail_level: fatal\n",
            "fail_level: expected one of 'error', 'warning' or 'info'",
        ),
        (
            "format: 1\nrules:\n  pwm-audible: {enabled: yes}\n",
            "YAML 1.2 booleans are true and false only",
        ),
        ("format: 1\nrules:\n  pwm-audible: {thresholds: {error: 3 kHz}}\n", "has no 'error' band"),
        (
            "format: 1\nrules:\n  pwm-audible: {thresholds: {fatal: 3 kHz}}\n",
            "a band is one of error, warning, info",
        ),
        ("format: 1\nrules:\n  pwm-audible: {thresholds: {warning: 12}}\n", "12 needs its unit"),
        (
            "format: 1\nrules:\n  pwm-audible: {thresholds: {warning: 12 MHZ}}\n",
            "not a frequency unit",
        ),
        (
            "format: 1\nrules:\n  ripple-over-rated-current: {thresholds: {warning: 20 kHz}}\n",
            "plain number",
        ),
        (
            "format: 1\nrules:\n  ripple-high: {}\n  ripple-over-rated-current: {}\n",
            "configured twice",
        ),
        ("format: 1\ninclude: [/abs/**]\n", "no leading '/'"),
        ("format: 1\nexclude: [../**]\n", "must not contain '..'"),
        ("format: 1\npaths: [{match: a/**}]\n", "missing required key 'rules'"),
    ],
)
def test_invalid_values_are_located_errors(text, expected):
    found = problems(text)
    assert any(expected in p for p in found), found


def test_extra_rule_dirs_stay_inside_the_root(tmp_path):
    (tmp_path / "policy").mkdir()
    (tmp_path.parent / "outside-rules").mkdir(exist_ok=True)
    (tmp_path / "escape").symlink_to(tmp_path.parent / "outside-rules")
    found = problems("format: 1\nextra_rule_dirs: [policy, ../outside-rules, escape, missing, .git]\n", tmp_path)
    assert [p.split(": ", 1)[1] for p in found] == [
        "extra_rule_dirs[1]: '../outside-rules' leaves the repository root",
        "extra_rule_dirs[2]: 'escape' leaves the repository root (through a symbolic link)",
        "extra_rule_dirs[3]: 'missing' is not a directory",
        "extra_rule_dirs[4]: '.git' must not point into .git",
    ]
    ok = policy("format: 1\nextra_rule_dirs: [policy]\n", tmp_path)
    assert ok.extra_rule_paths == (tmp_path / "policy",)


def test_yaml_errors_in_the_config_are_config_errors(tmp_path):
    path = tmp_path / ".specguard.yaml"
    path.write_text("format: 1\nrules: {a: 1\n")
    with pytest.raises(ConfigError) as info:
        load_config(path, tmp_path, lambda dirs: CATALOGUE)
    (finding,) = info.value.findings
    assert finding.rule == "config-invalid" and finding.location.file == ".specguard.yaml"
    assert finding.location.line >= 2


def test_duplicate_keys_in_the_config_are_errors(tmp_path):
    path = tmp_path / ".specguard.yaml"
    path.write_text("format: 1\nfail_level: info\nfail_level: error\n")
    with pytest.raises(ConfigError) as info:
        load_config(path, tmp_path, lambda dirs: CATALOGUE)
    assert info.value.findings[0].location.line == 3


def test_real_pack_thresholds_are_checked_as_evaluation_reads_them(tmp_path):
    path = tmp_path / ".specguard.yaml"
    path.write_text("format: 1\nrules:\n  pwm-audible: {thresholds: {warning: 18 kHz}}\n")
    cfg, pack = load_policy(path, tmp_path)
    assert pack.get("pwm-audible") is not None
    assert cfg.for_file("a.axis.yaml")["pwm-audible"].thresholds == {"warning": "18 kHz"}
    path.write_text("format: 1\nrules:\n  pwm-audible: {thresholds: {warning: 18 kV}}\n")
    with pytest.raises(ConfigError) as info:
        load_policy(path, tmp_path)
    assert "pwm-audible" in info.value.findings[0].message


def test_generated_config_schema_is_committed():
    from specguard.schema import CONFIG_SCHEMA_FILE, config_schema, dumps

    committed = (ROOT / "schemas" / CONFIG_SCHEMA_FILE).read_text(encoding="utf-8")
    assert committed == dumps(config_schema()), "run: python -m specguard.schema"
    schema = json.loads(committed)
    assert schema["$id"] == "urn:specguard:schema:config:v1"
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"


def test_config_schema_accepts_the_demo_policy_and_rejects_unknown_keys():
    from jsonschema import Draft202012Validator

    from specguard.schema import config_schema

    validator = Draft202012Validator(config_schema())
    data = load_bytes((ROOT / "examples" / "specguard-policy.yaml").read_bytes(), "x").data
    assert list(validator.iter_errors(data)) == []
    assert list(validator.iter_errors({**data, "rulez": {}}))


# ------------------------------------------------------------------ CLI
def test_config_error_is_exit_2_before_any_analysis(tmp_path, monkeypatch, capsys):
    (tmp_path / ".specguard.yaml").write_text("format: 1\nrules:\n  pwm-audibel: {enabled: false}\n")
    (tmp_path / ".git").mkdir()
    import specguard.pipeline as pipeline

    def no_analysis(*args, **kwargs):
        raise AssertionError("analysis must not start with an invalid config")

    monkeypatch.setattr(pipeline, "check_paths", no_analysis)
    monkeypatch.chdir(tmp_path)
    assert cli.main(["check", "."]) == 2
    err = capsys.readouterr().err
    assert err == (
        ".specguard.yaml:3:3: error: rules: unknown rule id 'pwm-audibel'; "
        "did you mean 'pwm-audible'? [config-invalid]\n"
    )


def test_missing_explicit_config_is_exit_2(tmp_path, capsys):
    assert (
        cli.main(
            [
                "check",
                "--root",
                str(tmp_path),
                "--config",
                str(tmp_path / "nope.yaml"),
                str(tmp_path),
            ]
        )
        == 2
    )
    assert "[config-invalid]" in capsys.readouterr().err


def test_output_problems_are_exit_2_before_any_analysis(tmp_path, monkeypatch, capsys):
    import specguard.pipeline as pipeline

    monkeypatch.setattr(pipeline, "check_paths", lambda *a, **k: pytest.fail("analysis started"))
    for target in (tmp_path / "missing-dir" / "r.json", tmp_path):
        assert cli.main(["check", "--root", str(tmp_path), "--output", str(target), str(tmp_path)]) == 2
        assert "[output-error]" in capsys.readouterr().err
    assert cli.main(["check", "--root", str(tmp_path), "--write-baseline", str(tmp_path), str(tmp_path)]) == 2


def test_specguard_config_shows_sources(tmp_path):
    repo = demo_repo(tmp_path)
    (repo / ".specguard.yaml").write_text(
        "format: 1\n"
        "fail_level: warning\n"
        "rules:\n"
        "  pwm-audible:\n"
        "    severity: error\n"
        "paths:\n"
        "  - match: robot/axes/pipette-*.axis.yaml\n"
        "    rules:\n"
        "      pwm-audible: {enabled: false}\n"
    )
    done = run_cli("config", "robot/axes/pipette-x.axis.yaml", cwd=repo)
    assert done.returncode == 0, done.stderr
    out = done.stdout.decode()
    assert "effective policy for robot/axes/pipette-x.axis.yaml" in out
    assert "  fail_level = warning    [.specguard.yaml:2:13]" in out
    block = out.split("rule pwm-audible:\n", 1)[1].split("\nrule ", 1)[0]
    assert ("    enabled = false    [.specguard.yaml:9:30 (paths[0], match 'robot/axes/pipette-*.axis.yaml')]") in block
    assert "    severity = error    [.specguard.yaml:5:15]" in block
    assert "    waivable = true    [built-in default]" in block
    assert "threshold warning = 16 kHz    [rule pack default (specguard.pack/pwm-audible.yaml)]" in block
    # without a file: the repository-wide values, the path entry only listed
    whole = run_cli("config", cwd=repo).stdout.decode()
    assert "    enabled = true    [built-in default]" in whole.split("rule pwm-audible:\n", 1)[1]
    assert "paths[0] match 'robot/axes/pipette-*.axis.yaml'    [.specguard.yaml:7:5]" in whole


def test_specguard_config_with_a_bad_config_is_exit_2(tmp_path):
    (tmp_path / ".git").mkdir()
    (tmp_path / ".specguard.yaml").write_text("format: 1\nfail_levle: info\n")
    done = run_cli("config", cwd=tmp_path)
    assert done.returncode == 2
    assert done.stderr.decode() == (
        ".specguard.yaml:2:1: error: unknown key 'fail_levle'; did you mean 'fail_level'? [config-invalid]\n"
    )
