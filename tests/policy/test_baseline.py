"""The baseline file: matching key, stale entries, damaged files, atomic and locked writes.

Required behaviour from docs/reliability.md: I07 (a corrupt baseline is exit 2, never
read as empty), I08 (stale entries are an info count; --strict-baseline makes
them exit 1), G17 (a line shift keeps a finding baselined, a changed value
un-baselines it), FI03/FI14 (a failed write keeps the previous file), FI10 (two
writers serialised by a lock, the waiter gives up with exit 2).
"""

from __future__ import annotations

import json
import os
import threading
import time
from pathlib import Path

import pytest

from specguard import atomic
from specguard.engine import baseline as bl
from specguard.pipeline import FileResult, Report, apply_baseline

from .helpers import finding

SPEC = "axes/a.axis.yaml"


def results(*findings, file=SPEC):
    return {file: tuple(sorted(findings, key=lambda f: f.sort_key()))}


def roundtrip(findings_by_file) -> bl.Baseline:
    text = bl.dumps(bl.compose(findings_by_file))
    return bl.parse(text.encode("utf-8"), "baseline.json")


def test_write_then_check_suppresses_everything():
    items = (
        finding(point="hold"),
        finding(point="lift", line=11),
        finding(rule="pwm-audible", severity="warning", point=None, line=20),
    )
    base = roundtrip(results(*items))
    marked, outcome = bl.apply(results(*items), base)
    assert all(f.baselined for f in marked[SPEC])
    assert outcome.suppressed == 3 and outcome.stale == ()
    report = Report((FileResult(SPEC, marked[SPEC]),), baseline=outcome)
    assert report.exit_status() == 0 and report.counts() == {"error": 0, "warning": 0, "info": 0}


def test_line_shift_keeps_the_match():
    base = roundtrip(results(finding(line=10)))
    shifted = finding(line=57)  # same rule, file, pointer, point and numbers
    marked, outcome = bl.apply(results(shifted), base)
    assert marked[SPEC][0].baselined and outcome.suppressed == 1


def test_changed_value_breaks_the_match_and_leaves_a_stale_entry():
    base = roundtrip(results(finding(figures=(("ripple_ratio", 0.87, "1"),))))
    worse = finding(figures=(("ripple_ratio", 1.31, "1"),))
    marked, outcome = bl.apply(results(worse), base)
    assert not marked[SPEC][0].baselined
    assert outcome.suppressed == 0 and outcome.stale_count == 1


def test_rounding_noise_below_three_digits_keeps_the_match():
    base = roundtrip(results(finding(figures=(("ripple_ratio", 0.8701, "1"),))))
    marked, _ = bl.apply(results(finding(figures=(("ripple_ratio", 0.87012, "1"),))), base)
    assert marked[SPEC][0].baselined


@pytest.mark.parametrize(
    "change",
    [
        {"path": ("stage", "supply", "voltage")},  # a different document path
        {"rule": "pwm-audible"},  # a different rule
        {"point": "lift"},  # a different operating point
    ],
)
def test_changed_key_field_breaks_the_match(change):
    base = roundtrip(results(finding()))
    marked, outcome = bl.apply(results(finding(**change)), base)
    assert not marked[SPEC][0].baselined and outcome.stale_count == 1


def test_changed_file_breaks_the_match():
    base = roundtrip(results(finding()))
    moved = results(finding(file="axes/b.axis.yaml"), file="axes/b.axis.yaml")
    marked, outcome = bl.apply({SPEC: (), **moved}, base)
    assert not marked["axes/b.axis.yaml"][0].baselined and outcome.stale_count == 1


def test_duplicate_findings_are_counted_not_duplicated():
    twice = (finding(message="first"), finding(message="second", line=11))
    base = roundtrip(results(*twice))
    assert len(base.entries) == 1 and base.entries[0].count == 2
    marked, outcome = bl.apply(results(*twice, finding(message="third", line=12)), base)
    assert [f.baselined for f in marked[SPEC]] == [True, True, False]
    assert outcome.suppressed == 2


def test_built_in_and_waived_findings_are_never_baselined():
    schema = finding(rule="schema-violation")
    from dataclasses import replace

    waived = replace(finding(point="lift"), waived="accepted")
    entries = bl.compose(results(schema, waived))
    assert entries == ()


def test_entries_of_files_not_checked_are_neither_used_nor_stale(tmp_path):
    (tmp_path / "axes").mkdir()
    (tmp_path / "axes" / "other.axis.yaml").write_text("x")
    base = roundtrip({SPEC: (finding(),), "axes/other.axis.yaml": (finding(file="axes/other.axis.yaml"),)})
    _, outcome = bl.apply(results(finding()), base, root=tmp_path)
    assert outcome.suppressed == 1 and outcome.stale == ()


def test_entries_of_deleted_files_are_stale(tmp_path):
    base = roundtrip({"axes/gone.axis.yaml": (finding(file="axes/gone.axis.yaml"),)})
    _, outcome = bl.apply({}, base, root=tmp_path)
    assert outcome.stale_count == 1


def test_strict_baseline_makes_stale_entries_fail_the_run():
    base = roundtrip(results(finding(point="hold"), finding(point="lift")))
    only_hold = Report((FileResult(SPEC, (finding(point="hold"),)),))
    loose = apply_baseline(only_hold, base, Path("."), strict=False)
    strict = apply_baseline(only_hold, base, Path("."), strict=True)
    assert loose.baseline.stale_count == 1 and loose.exit_status() == 0
    assert strict.exit_status() == 1


# ------------------------------------------------------------ damaged files
def valid_text() -> str:
    return bl.dumps(bl.compose(results(finding(point="hold"), finding(point="lift"))))


def damaged(text: str):
    with pytest.raises(bl.BaselineError) as info:
        bl.parse(text.encode("utf-8") if isinstance(text, str) else text, "baseline.json")
    assert info.value.finding.rule == "baseline-invalid"
    return info.value.finding


def test_truncated_file_is_invalid_with_a_position():
    text = valid_text()
    problem = damaged(text[: len(text) // 2])
    assert "truncated" in problem.message and problem.location.line > 1


def test_empty_file_is_invalid_not_empty():
    assert "empty" in damaged("").message


def test_duplicate_fingerprints_are_invalid_and_located():
    data = json.loads(valid_text())
    data["entries"].append(dict(data["entries"][0]))
    text = json.dumps(data, indent=2)
    problem = damaged(text)
    assert "duplicate fingerprint" in problem.message
    fp = data["entries"][0]["fingerprint"]
    second_line = [i for i, line in enumerate(text.splitlines(), 1) if fp in line][1]
    assert problem.location.line == second_line


@pytest.mark.parametrize("version", [2, 0, "1", None, 1.0, True])
def test_wrong_or_unknown_version_is_invalid(version):
    data = json.loads(valid_text())
    data["baseline_format"] = version
    assert "unknown baseline format" in damaged(json.dumps(data)).message


def test_missing_version_is_not_a_baseline():
    data = json.loads(valid_text())
    del data["baseline_format"]
    assert "not a specguard baseline" in damaged(json.dumps(data)).message


def test_hand_edited_entry_no_longer_matches_its_fingerprint():
    data = json.loads(valid_text())
    data["entries"][0]["pointer"] = "/stage/supply/voltage"
    assert "does not match" in damaged(json.dumps(data)).message


@pytest.mark.parametrize(
    "text",
    [
        '{"baseline_format": 1, "entries": [], "entries": []}',  # duplicate key
        '{"baseline_format": 1, "entries": {}}',
        '{"baseline_format": 1, "entries": [], "extra": 1}',
        "[1, 2]",
        '{"baseline_format": 1, "entries": [{"fingerprint": NaN}]}',
    ],
)
def test_other_damage_is_invalid(text):
    damaged(text)


def test_not_utf8_is_invalid():
    assert "UTF-8" in damaged(b'{"baseline_format": 1, "entries": ["\xff"]}').message


def test_missing_file_is_an_error_not_an_empty_baseline(tmp_path):
    with pytest.raises(bl.BaselineError):
        bl.load(tmp_path / "nope.json", "nope.json")


# ------------------------------------------------------------ writing
def test_written_file_is_sorted_deterministic_and_loads(tmp_path):
    items = results(finding(point="lift", line=11), finding(point="hold"))
    path = tmp_path / "baseline.json"
    bl.write(path, "baseline.json", items, tmp_path)
    first = path.read_bytes()
    bl.write(path, "baseline.json", items, tmp_path)
    assert path.read_bytes() == first
    assert first.endswith(b"\n") and b"\r" not in first
    loaded = bl.load(path, "baseline.json")
    assert [e.operating_point for e in loaded.entries] == ["hold", "lift"]


def test_writing_a_subset_keeps_the_entries_of_other_files(tmp_path):
    (tmp_path / "axes").mkdir()
    (tmp_path / "axes" / "b.axis.yaml").write_text("x")
    path = tmp_path / "baseline.json"
    b_file = "axes/b.axis.yaml"
    bl.write(path, "baseline.json", {SPEC: (finding(),), b_file: (finding(file=b_file),)}, tmp_path)
    bl.write(path, "baseline.json", {SPEC: ()}, tmp_path)  # a.axis.yaml is clean now
    files = [e.file for e in bl.load(path, "baseline.json").entries]
    assert files == [b_file]


def test_damaged_existing_baseline_is_not_overwritten(tmp_path):
    path = tmp_path / "baseline.json"
    path.write_text('{"baseline_format": 1, "entr')
    with pytest.raises(bl.BaselineError):
        bl.write(path, "baseline.json", results(finding()), tmp_path)
    assert path.read_text() == '{"baseline_format": 1, "entr'


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


def test_failed_fsync_keeps_the_previous_file_and_no_temp(tmp_path, monkeypatch):
    path = tmp_path / "baseline.json"
    bl.write(path, "baseline.json", results(finding()), tmp_path)
    before = path.read_bytes()

    def broken_fsync(fd):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(os, "fsync", broken_fsync)
    with pytest.raises(atomic.WriteError) as info:
        bl.write(path, "baseline.json", results(finding(point="lift")), tmp_path)
    assert "Input/output error" in str(info.value) and "baseline.json" in str(info.value)
    assert path.read_bytes() == before
    assert leftovers(tmp_path) == []


def test_new_file_gets_0666_minus_umask_and_an_existing_file_keeps_its_mode(tmp_path):
    old = os.umask(0o027)
    try:
        new = tmp_path / "new.json"
        atomic.write_atomic(new, "{}\n")
        assert (new.stat().st_mode & 0o777) == 0o640  # 0666 & ~0027 (mkstemp alone gives 0600)
        kept = tmp_path / "kept.json"
        kept.write_text("old")
        kept.chmod(0o604)
        atomic.write_atomic(kept, "new")
        assert (kept.stat().st_mode & 0o777) == 0o604 and kept.read_text() == "new"
    finally:
        os.umask(old)


def test_interrupted_replace_removes_the_temp_file(tmp_path, monkeypatch):
    target = tmp_path / "report.json"
    target.write_text("previous")

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises(atomic.WriteError) as info:
        atomic.write_atomic(target, "next")
    assert "No space left on device" in str(info.value)
    assert target.read_text() == "previous" and leftovers(tmp_path) == []


def test_replace_is_retried_on_a_transient_permission_error(tmp_path, monkeypatch):
    # docs/reliability.md FI13: Windows refuses a replace while a reader has the file open.
    real = os.replace
    calls = []

    def flaky(src, dst):
        calls.append(1)
        if len(calls) <= 2:
            raise PermissionError(13, "Permission denied")
        return real(src, dst)

    monkeypatch.setattr(os, "replace", flaky)
    monkeypatch.setattr(atomic, "REPLACE_DELAY", 0.001)
    atomic.write_atomic(tmp_path / "x.json", "ok")
    assert (tmp_path / "x.json").read_text() == "ok" and len(calls) == 3


def test_stale_temp_files_of_ours_are_swept(tmp_path):
    old_temp = tmp_path / ".specguard-abc.tmp"
    old_temp.write_text("left by a killed run")
    two_hours_ago = time.time() - 7200
    os.utime(old_temp, (two_hours_ago, two_hours_ago))
    fresh_temp = tmp_path / ".specguard-def.tmp"  # maybe another run's, in flight
    fresh_temp.write_text("")
    atomic.write_atomic(tmp_path / "x.json", "ok")
    assert not old_temp.exists() and fresh_temp.exists()


def test_two_writers_are_serialised_by_the_lock(tmp_path):
    lock = tmp_path / "baseline.json.lock"
    order: list[str] = []
    held = threading.Event()

    def first():
        with atomic.locked(lock):
            held.set()
            order.append("first in")
            time.sleep(0.3)
            order.append("first out")

    def second():
        held.wait()
        with atomic.locked(lock, timeout=5):
            order.append("second in")

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert order == ["first in", "first out", "second in"]


def test_concurrent_baseline_writers_lose_no_entries(tmp_path):
    (tmp_path / "axes").mkdir()
    files = [f"axes/s{i}.axis.yaml" for i in range(4)]
    for name in files:
        (tmp_path / name).write_text("x")
    path = tmp_path / "baseline.json"
    errors: list[BaseException] = []

    def writer(name):
        try:
            bl.write(path, "baseline.json", {name: (finding(file=name),)}, tmp_path)
        except BaseException as exc:  # noqa: BLE001 - reported below
            errors.append(exc)

    threads = [threading.Thread(target=writer, args=(n,)) for n in files]
    for t in threads:
        t.start()
    for t in threads:
        t.join(30)
    assert errors == []
    # each writer read the previous file under the lock and kept the other files' entries
    assert sorted(e.file for e in bl.load(path, "baseline.json").entries) == files
    assert leftovers(tmp_path) == []


def test_waiter_gives_up_and_names_the_holder(tmp_path):
    lock = tmp_path / "baseline.json.lock"
    with atomic.locked(lock):
        start = time.monotonic()
        with pytest.raises(atomic.LockTimeout) as info:
            with atomic.locked(lock, timeout=0.3):
                pass
        assert 0.25 <= time.monotonic() - start < 3
    assert f"PID {os.getpid()}" in str(info.value)
