"""`specguard rules` and `specguard explain`."""

from __future__ import annotations

from pathlib import Path

from specguard.cli import main
from specguard.engine.evaluate import load_pack

ROOT = Path(__file__).resolve().parents[2]


def test_rules_lists_every_rule(capsys):
    assert main(["rules"]) == 0
    out = capsys.readouterr().out.splitlines()
    pack = load_pack()
    assert len(out) == len(pack.rules)
    line = next(x for x in out if x.startswith("ripple-over-rated-current "))
    assert line.split()[1] == "error"  # the highest band's severity
    assert "current ripple is a large share" in line
    line = next(x for x in out if x.startswith("inductance-estimated "))
    assert line.split()[1] == "info"


def test_rules_with_team_dir(capsys):
    assert main(["rules", "--rules-dir", str(ROOT / "examples" / "team-rules")]) == 0
    assert "pwm-medical-minimum" in capsys.readouterr().out


def test_explain_prints_everything(capsys):
    assert main(["explain", "pwm-audible"]) == 0
    out = capsys.readouterr().out
    for part in [
        "pwm-audible: the current ripple lies in the audible band",
        "figure: ripple_frequency",
        "thresholds: warning below 16 kHz; info below 20 kHz",
        "What it checks:",
        "Why it matters:",
        "Formula:",
        "ISO 226:2003",
        "common practice, no published source",
        "the lowest PWM frequency whose ripple lies above the audible band",
        "Examples (overlays on the base spec 'dc-axis'):",
        "frequency: 6 kHz",
    ]:
        assert part in out, part


def test_explain_accepts_an_alias(tmp_path, capsys):
    from .helpers import rule_text, write_rule

    write_rule(
        tmp_path,
        rule_text(id="test-new-name").replace("remedies: []", "remedies: []\naliases: [test-old-name]"),
    )
    assert main(["explain", "test-old-name", "--rules-dir", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("test-new-name: test rule") and "formerly: test-old-name" in out


def test_explain_unknown_rule_is_exit_2_with_suggestion(capsys):
    assert main(["explain", "pwm-audibel"]) == 2
    err = capsys.readouterr().err
    assert "unknown rule 'pwm-audibel'" in err and "did you mean 'pwm-audible'?" in err


def test_explain_builtin_finding(capsys):
    assert main(["explain", "rule-not-applicable"]) == 0
    assert "built-in finding" in capsys.readouterr().out


def test_bad_team_rule_dir_is_exit_2(tmp_path, capsys):
    (tmp_path / "x-y.yaml").write_text("id: [\n", encoding="utf-8")
    assert main(["rules", "--rules-dir", str(tmp_path)]) == 2
    assert "x-y.yaml:" in capsys.readouterr().err
