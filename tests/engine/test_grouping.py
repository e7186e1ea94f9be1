"""One problem, reported once: a rule names the rules whose findings it explains
(`explains:` in its file), and their findings name it as their cause. Counts and the
exit status still take every finding. Check values: the demo's pipette axis, whose
winding without a choke makes a ripple of about eight times its rated current (the
worst case, each point's ripple and the empty supply window are one cause)."""

from __future__ import annotations

from pathlib import Path

import pytest

from specguard.engine.evaluate import PackError, load_pack
from specguard.pipeline import check_paths

ROOT = Path(__file__).resolve().parents[2]


def test_consequences_name_their_cause_and_still_count():
    report = check_paths([str(ROOT / "examples/robot/axes/pipette-x.axis.yaml")], root=ROOT)
    by_rule = {}
    for f in report.findings:
        by_rule.setdefault(f.rule, []).append(f)
    assert all(f.explained_by is None for f in by_rule["worst-ripple-over-rated-current"])
    for name in ("ripple-over-rated-current", "supply-window-empty"):
        assert by_rule[name] and all(f.explained_by == "worst-ripple-over-rated-current" for f in by_rule[name])
    # the unrelated findings keep standing on their own
    assert all(f.explained_by is None for f in by_rule["braking-energy-unabsorbed"])
    errors = [f for f in report.findings if f.severity == "error"]
    assert report.counts()["error"] == len(errors)  # consequences are counted


def test_explains_must_name_rules_of_the_pack(tmp_path):
    source = (ROOT / "rules" / "worst-ripple-over-rated-current.yaml").read_text(encoding="utf-8")
    text = source.replace("id: worst-ripple-over-rated-current", "id: team-worst-ripple").replace(
        "explains: [ripple-over-rated-current", "explains: [no-such-rule, ripple-over-rated-current"
    )
    (tmp_path / "team-worst-ripple.yaml").write_text(text, encoding="utf-8")
    with pytest.raises(PackError, match="explains 'no-such-rule', which is no rule of the pack"):
        load_pack([tmp_path])
