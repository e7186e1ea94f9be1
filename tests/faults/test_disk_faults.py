"""Writes that fail (docs/reliability.md FI01, FI03, FI04, FI13, FI14, FI22, FI23; G10).

Every report and the baseline go through ``specguard.atomic.write_atomic``: a temp
file in the target's directory, flushed, fsynced, given the final mode, then
replaced. These tests break each step and check the contract: exit 2 with the
path and the reason, the previous file byte-identical, no temp file left.
The tmpfs cases need root (mount) and are skipped with the reason otherwise.
"""

from __future__ import annotations

import errno
import json
import os
import stat
import tempfile
import time
from pathlib import Path

import pytest

from specguard import atomic, cli

from ._helpers import (
    assert_no_traceback,
    fill,
    make_repo,
    no_cache,
    out,
    remount,
    sha256,
    temps,
    tmpfs,
)
from ._helpers import cli as run_cli

OLD_REPORT = b'{"previous": "report"}\n'
NO_SPACE = "No space left on device"


@pytest.fixture()
def repo(tmp_path) -> Path:
    return make_repo(tmp_path / "repo")


# ------------------------------------------------------------------ FI01 / FI03
REPORTS = {
    "json": ["check", "axes/carousel.axis.yaml", "--format", "json", "--output"],
    "sarif": ["check", "axes/carousel.axis.yaml", "--format", "sarif", "--output"],
    "html": ["report", "axes/carousel.axis.yaml", "--html"],
    "markdown": ["report", "axes/carousel.axis.yaml", "--markdown"],
}


@pytest.mark.parametrize("kind", sorted(REPORTS))
def test_fi01_no_space_for_a_report(repo, tmp_path, kind):
    full = tmp_path / "full"
    with tmpfs(full):
        target = full / f"report.{kind}"
        target.write_bytes(OLD_REPORT)
        before = sha256(target)
        fill(full)
        proc = run_cli(*REPORTS[kind], str(target), cwd=repo)
        stdout, stderr = out(proc)
        assert proc.returncode == 2, (stdout, stderr)
        assert str(target) in stderr and NO_SPACE in stderr, stderr
        assert_no_traceback(stderr)
        assert sha256(target) == before
        assert temps(full) == []


def test_fi01_no_space_is_not_a_false_pass(tmp_path):
    """A clean spec (exit 0 otherwise) with a report that cannot be written: still 2."""
    repo = make_repo(tmp_path / "repo")
    clean = repo / "axes" / "carousel.axis.yaml"
    assert run_cli("check", str(clean.relative_to(repo)), "--fail-level", "error", cwd=repo).returncode in (0, 1)
    full = tmp_path / "full"
    with tmpfs(full):
        fill(full)
        proc = run_cli(
            "check",
            "axes/carousel.axis.yaml",
            "--fail-level",
            "error",
            "--format",
            "json",
            "--output",
            str(full / "new.json"),
            cwd=repo,
        )
        assert proc.returncode == 2, out(proc)
        assert not (full / "new.json").exists() and temps(full) == []


def test_fi03_no_space_for_the_baseline(repo, tmp_path):
    full = tmp_path / "full"
    with tmpfs(full):
        baseline = full / "baseline.json"
        first = run_cli("check", "axes/sample-lift.axis.yaml", "--write-baseline", str(baseline), cwd=repo)
        assert first.returncode in (0, 1), out(first)
        before = baseline.read_bytes()
        assert json.loads(before)["entries"], "the demo axis should give baseline entries"
        fill(full)
        # more files than before, so the baseline would grow
        proc = run_cli("check", "axes", "--write-baseline", str(baseline), cwd=repo)
        stdout, stderr = out(proc)
        assert proc.returncode == 2, (stdout, stderr)
        assert str(baseline) in stderr and NO_SPACE in stderr, stderr
        assert_no_traceback(stderr)
        assert baseline.read_bytes() == before
        assert temps(full) == []


# ------------------------------------------------------------------------ FI04
def test_fi04_read_only_output_directory(repo, tmp_path):
    ro = tmp_path / "ro"
    with tmpfs(ro, size="1m"):
        target = ro / "report.json"
        target.write_bytes(OLD_REPORT)
        remount(ro, "ro")
        try:
            for args in (
                ["check", "axes", "--format", "json", "--output", str(target)],
                ["report", "axes", "--html", str(ro / "new.html")],
                ["check", "axes", "--write-baseline", str(ro / "baseline.json")],
            ):
                proc = run_cli(*args, cwd=repo)
                stdout, stderr = out(proc)
                assert proc.returncode == 2, (args, stdout, stderr)
                assert str(ro) in stderr and "Read-only file system" in stderr, stderr
                assert_no_traceback(stderr)
            assert target.read_bytes() == OLD_REPORT
            assert sorted(os.listdir(ro)) == ["report.json"]
        finally:
            remount(ro, "rw")


@pytest.mark.parametrize("code", [errno.EROFS, errno.EACCES])
def test_fi04_mkstemp_refused_in_process(repo, tmp_path, monkeypatch, capsys, code):
    """The same through main() in-process, the error injected into mkstemp (works without root)."""
    target = tmp_path / "report.sarif"
    target.write_bytes(OLD_REPORT)
    real = tempfile.mkstemp

    def refuse(*args, **kwargs):
        if Path(kwargs.get("dir") or ".").resolve() == tmp_path.resolve():
            raise OSError(code, os.strerror(code), str(tmp_path))
        return real(*args, **kwargs)

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    monkeypatch.chdir(repo)
    status = cli.main(["check", "axes", "--format", "sarif", "--output", str(target), *no_cache()])
    err = capsys.readouterr().err
    assert status == 2, err
    assert str(target) in err and os.strerror(code) in err, err
    assert target.read_bytes() == OLD_REPORT
    assert temps(tmp_path) == []


# ------------------------------------------------------------------------ FI13
def test_fi13_replace_refused_twice_then_succeeds(repo, tmp_path, monkeypatch, capsys):
    target = tmp_path / "report.json"
    target.write_bytes(OLD_REPORT)
    real = os.replace
    calls: list[str] = []

    def flaky(src, dst, *args, **kwargs):
        calls.append(str(dst))
        if len(calls) <= 2:
            raise PermissionError(errno.EACCES, "Permission denied (simulated sharing violation)")
        return real(src, dst, *args, **kwargs)

    monkeypatch.setattr(os, "replace", flaky)
    monkeypatch.chdir(repo)
    status = cli.main(["check", "axes", "--format", "json", "--output", str(target), *no_cache()])
    capsys.readouterr()
    assert status == 1  # the demo has findings
    assert calls == [str(target)] * 3
    assert json.loads(target.read_bytes())["summary"]["files"] == 3
    assert temps(tmp_path) == []


def test_fi13_replace_always_refused(repo, tmp_path, monkeypatch, capsys):
    target = tmp_path / "report.json"
    target.write_bytes(OLD_REPORT)
    calls: list[float] = []

    def refuse(src, dst, *args, **kwargs):
        calls.append(time.monotonic())
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(os, "replace", refuse)
    monkeypatch.chdir(repo)
    status = cli.main(["check", "axes", "--format", "json", "--output", str(target), *no_cache()])
    err = capsys.readouterr().err
    assert status == 2, err
    assert str(target) in err and "Permission denied" in err, err
    assert 2 <= len(calls) <= 10  # bounded retry
    assert calls[-1] - calls[0] <= 0.6  # within about 0.5 s in all
    assert target.read_bytes() == OLD_REPORT
    assert temps(tmp_path) == []


# ------------------------------------------------------------------------ FI14
@pytest.mark.parametrize("kind", ["report", "baseline"])
def test_fi14_fsync_fails(repo, tmp_path, monkeypatch, capsys, kind):
    target = tmp_path / ("report.json" if kind == "report" else "baseline.json")
    monkeypatch.chdir(repo)
    if kind == "baseline":
        assert cli.main(["check", "axes", "--write-baseline", str(target), *no_cache()]) in (0, 1)
    else:
        target.write_bytes(OLD_REPORT)
    before = target.read_bytes()
    capsys.readouterr()

    def broken(fd):
        raise OSError(errno.EIO, os.strerror(errno.EIO))

    monkeypatch.setattr(os, "fsync", broken)
    args = ["--format", "json", "--output"] if kind == "report" else ["--write-baseline"]
    status = cli.main(["check", "axes", *args, str(target), *no_cache()])
    err = capsys.readouterr().err
    assert status == 2, err
    assert str(target) in err and os.strerror(errno.EIO) in err, err
    assert target.read_bytes() == before
    assert temps(tmp_path) == []


# ------------------------------------------------------------------------ FI22
def test_fi22_temp_files_beside_the_target(repo, tmp_path, monkeypatch, capsys):
    """The system temp dir is elsewhere (another filesystem when root can mount one);
    every temp file is still made in the target's own directory, so no EXDEV."""
    elsewhere = tmp_path / "system-tmp"
    elsewhere.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(elsewhere))
    monkeypatch.setenv("TMPDIR", str(elsewhere))
    real = tempfile.mkstemp
    made: list[str | None] = []

    def recording(*args, **kwargs):
        made.append(kwargs.get("dir"))
        return real(*args, **kwargs)

    monkeypatch.setattr(tempfile, "mkstemp", recording)
    monkeypatch.chdir(repo)

    def run(directory: Path) -> None:
        made.clear()
        targets = [directory / "r.json", directory / "r.html", directory / "baseline.json"]
        assert cli.main(["check", "axes", "--format", "json", "--output", str(targets[0]), *no_cache()]) == 1
        assert cli.main(["report", "axes/carousel.axis.yaml", "--html", str(targets[1]), *no_cache("report")]) in (0, 1)
        assert cli.main(["check", "axes", "--write-baseline", str(targets[2]), *no_cache()]) in (
            0,
            1,
        )
        capsys.readouterr()
        ours = [d for d in made if d is not None and Path(d).resolve() == directory.resolve()]
        assert len(ours) >= 3, made
        assert all(d is not None for d in made), made  # never the system temp dir
        assert all(t.exists() for t in targets)
        assert temps(directory) == [] and os.listdir(elsewhere) == []

    local = tmp_path / "local"
    local.mkdir()
    run(local)
    if os.geteuid() == 0 and os.uname().sysname == "Linux":
        with tmpfs(tmp_path / "other-fs", size="4m") as mounted:
            assert os.stat(mounted).st_dev != os.stat(elsewhere).st_dev
            run(mounted)


# ------------------------------------------------------------------------ FI23
def test_fi23_mode_kept_on_replace(repo, tmp_path, monkeypatch, capsys):
    target = tmp_path / "report.json"
    target.write_bytes(OLD_REPORT)
    os.chmod(target, 0o640)
    monkeypatch.chdir(repo)
    assert cli.main(["check", "axes", "--format", "json", "--output", str(target), *no_cache()]) == 1
    capsys.readouterr()
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640
    assert json.loads(target.read_bytes())["report_format"] == 1


@pytest.mark.parametrize("umask, expected", [(0o022, 0o644), (0o027, 0o640), (0o077, 0o600)])
def test_fi23_new_file_mode_follows_umask(repo, tmp_path, monkeypatch, capsys, umask, expected):
    monkeypatch.chdir(repo)
    old = os.umask(umask)
    try:
        for name, args in (
            ("r.json", ["check", "axes", "--format", "json", "--output"]),
            ("b.json", ["check", "axes", "--write-baseline"]),
        ):
            target = tmp_path / name
            assert cli.main([*args, str(target), *no_cache()]) in (0, 1)
            assert stat.S_IMODE(os.stat(target).st_mode) == expected, (
                name,
                oct(os.stat(target).st_mode),
            )
    finally:
        os.umask(old)
    capsys.readouterr()


def test_atomic_write_error_names_the_path(tmp_path):
    """The unit below all of this: the WriteError message is what the CLI prints."""
    with pytest.raises(atomic.WriteError, match="does not exist"):
        atomic.write_atomic(tmp_path / "missing" / "x.json", "{}")
