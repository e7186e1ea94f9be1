"""`specguard compare REV`: figures changed, findings new/resolved/unchanged, specs
added and removed, exit statuses, JSON against its schema, text and Markdown."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from .conftest import REPO, git, specguard

SCHEMA = REPO / "schemas" / "compare-v1.schema.json"


@pytest.fixture()
def changed(demo_repo):
    """HEAD: the demo. Work tree: sample-lift with a larger rated current (2.2 A
    instead of 1.9 A) and its 'lift' point in a cooler enclosure (30 degC instead of
    40 degC), carousel removed, a new spec with a missing-unit error."""
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text(
        spec.read_text(encoding="utf-8")
        .replace("rated_current: 1.9 A", "rated_current: 2.2 A")
        .replace("torque: 22 mN*m, ambient: 40 degC }", "torque: 22 mN*m, ambient: 30 degC }", 1),
        encoding="utf-8",
    )
    (demo_repo / "axes" / "carousel.axis.yaml").unlink()
    new = (demo_repo / "axes" / "pipette-x.axis.yaml").read_text(encoding="utf-8")
    (demo_repo / "axes" / "pipette-y.axis.yaml").write_text(new, encoding="utf-8")
    return demo_repo


def _json(repo: Path, *paths: str) -> tuple[int, dict]:
    done = specguard(repo, "compare", "--format", "json", "HEAD", *paths)
    return done.returncode, json.loads(done.stdout)


def test_figure_change_with_percent(changed):
    code, doc = _json(changed)
    files = {f["file"]: f for f in doc["files"]}
    lift = files["axes/sample-lift.axis.yaml"]
    assert lift["status"] == "changed"
    rated = [f for f in lift["figures"] if f["name"] == "motor_rated_current"]
    assert len(rated) == 1 and rated[0]["point"] is None
    assert rated[0]["old"] == pytest.approx(1.9) and rated[0]["new"] == pytest.approx(2.2)
    assert rated[0]["change_percent"] == pytest.approx((2.2 - 1.9) / 1.9 * 100)
    assert rated[0]["old_text"] == "1.9 A" and rated[0]["new_text"] == "2.2 A"
    # the ripple ratio scales with 1/rated current: 1.9/2.2 - 1 = -13.6 %
    ratio = [f for f in lift["figures"] if f["name"] == "ripple_ratio" and f["point"] == "lift"][0]
    assert ratio["change_percent"] == pytest.approx((1.9 / 2.2 - 1) * 100, rel=1e-6)


def test_findings_new_resolved_unchanged_and_files(changed):
    code, doc = _json(changed)
    files = {f["file"]: f for f in doc["files"]}
    lift = files["axes/sample-lift.axis.yaml"]["findings"]
    # at 40 degC the 'lift' winding kept 8.6 K of margin (under the 10 K of the rule); at 30 degC
    # it keeps more than 10 K
    resolved = [(f["rule"], f["operating_point"]) for f in lift["resolved"]]
    assert ("winding-temperature-margin", "lift") in resolved
    assert lift["new"] == []
    assert any(f["rule"] == "supply-window-empty" for f in lift["unchanged"])
    assert files["axes/carousel.axis.yaml"]["status"] == "removed"
    added = files["axes/pipette-y.axis.yaml"]
    assert added["status"] == "added" and added["findings"]["new"]
    assert files["axes/pipette-x.axis.yaml"]["status"] == "unchanged"
    assert code == 1  # the added spec brings new errors
    assert doc["exit_status"] == 1 and doc["summary"]["added"] == 1 and doc["summary"]["removed"] == 1


def test_no_new_findings_exit_zero(demo_repo):
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text(
        spec.read_text(encoding="utf-8")
        .replace("rated_current: 1.9 A", "rated_current: 2.2 A")
        .replace("torque: 22 mN*m, ambient: 40 degC }", "torque: 22 mN*m, ambient: 30 degC }", 1),
        encoding="utf-8",
    )
    done = specguard(demo_repo, "compare", "HEAD")
    assert done.returncode == 0
    assert "figure motor_rated_current (axis): 1.9 A -> 2.2 A (+15.8 %)" in done.stdout
    assert re.search(r"resolved: axes/sample-lift\.axis\.yaml:\d+:5: .*\[winding-temperature-margin\]", done.stdout)


def test_line_moves_alone_are_not_changes(demo_repo):
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text("# a comment moves every line down\n\n" + spec.read_text(encoding="utf-8"), encoding="utf-8")
    code, doc = _json(demo_repo)
    lift = [f for f in doc["files"] if f["file"] == "axes/sample-lift.axis.yaml"][0]
    assert lift["status"] == "unchanged" and lift["findings"]["unchanged"]
    assert code == 0


def test_json_validates_against_the_schema(changed):
    from jsonschema import Draft202012Validator

    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    Draft202012Validator.check_schema(schema)
    _code, doc = _json(changed)
    errors = list(Draft202012Validator(schema).iter_errors(doc))
    assert errors == []
    doc["compare_format"] = 2
    assert list(Draft202012Validator(schema).iter_errors(doc))  # the version is pinned


def test_markdown_and_output_file(changed, tmp_path):
    out = tmp_path / "compare.md"
    done = specguard(changed, "compare", "HEAD", "--format", "markdown", "--output", str(out))
    assert done.returncode == 1
    text = out.read_text(encoding="utf-8")
    assert text.startswith("## specguard: design changes since `")
    assert "| motor\\_rated\\_current | axis | 1.9 A | 2.2 A | +15.8 % |" in text
    assert "### axes/carousel.axis.yaml (removed)" in text
    assert "New findings:" in text


def test_paths_limit_the_comparison(changed):
    code, doc = _json(changed, "axes/sample-lift.axis.yaml")
    assert [f["file"] for f in doc["files"]] == ["axes/sample-lift.axis.yaml"]
    assert code == 0


def test_bad_revision_and_not_a_repository(demo_repo, tmp_path):
    done = specguard(demo_repo, "compare", "no-such-rev")
    assert done.returncode == 2 and "is not a commit" in done.stderr
    plain = tmp_path / "plain"
    plain.mkdir()
    (plain / ".specguard.yaml").write_text("format: 1\n", encoding="utf-8")
    done = specguard(plain, "compare", "HEAD")
    assert done.returncode == 2 and "not inside a git repository" in done.stderr


def test_shallow_clone_suggests_full_history(demo_repo, tmp_path):
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text(spec.read_text(encoding="utf-8") + "\n", encoding="utf-8")
    git(demo_repo, "commit", "-qam", "second")
    clone = tmp_path / "shallow"
    git(tmp_path, "clone", "-q", "--depth", "1", f"file://{demo_repo}", str(clone))
    done = specguard(clone, "compare", "HEAD~1")
    assert done.returncode == 2
    assert "shallow" in done.stderr and "fetch-depth: 0" in done.stderr


def test_small_changes_are_counted_not_listed_unless_asked(demo_repo):
    """A change of the rated current by 0.1 % moves figures by less than the 1 %
    significance threshold: they are counted, not listed; --all-changes lists them."""
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text(
        spec.read_text(encoding="utf-8").replace("rated_current: 1.9 A", "rated_current: 1.902 A"), encoding="utf-8"
    )
    quiet = specguard(demo_repo, "compare", "HEAD")
    assert "figure motor_rated_current" not in quiet.stdout
    assert re.search(r"\d+ figure changes? under 1 % not listed \(--all-changes lists them\)", quiet.stdout)
    loud = specguard(demo_repo, "compare", "HEAD", "--all-changes")
    assert "figure motor_rated_current (axis): 1.9 A -> 1.902 A (+0.105 %)" in loud.stdout


def test_percent_change_is_never_shown_across_zero():
    from specguard.compare import FigureChange

    assert FigureChange(None, "winding_margin", "K", "temperature_difference", 3.0, -2.0).percent is None
    assert FigureChange(None, "winding_margin", "K", "temperature_difference", 3.0, 6.0).percent == 100.0
