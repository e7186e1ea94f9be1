"""Signals during a run (docs/reliability.md FI07, FI08; the error contract, docs/reliability.md §2; G10).

SIGINT ends a run with 130, SIGTERM (a cancelled CI job) with 143, both after the
cleanup: no partial output (the output is absent, or the previous one is intact),
no temp file, no traceback. A second signal during the cleanup does not cut it
short; the highest status wins.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from specguard import cli

from ._helpers import assert_no_traceback, env, jobs, make_repo, sitecustomize, temps

OLD = b'{"previous": "report"}\n'
STATUS = {signal.SIGINT: 130, signal.SIGTERM: 143}


@pytest.fixture(scope="module")
def big_repo(tmp_path_factory) -> Path:
    # 453 specs: about 2 s of analysis, so a signal after 0.3 s lands in it
    return make_repo(tmp_path_factory.mktemp("signals") / "repo", copies=150)


def _start(
    repo: Path, args: list[str], cache: Path, extra: dict | None = None, group: bool = False
) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "specguard", *args],
        cwd=repo,
        env=env(extra, cache),
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        start_new_session=group,
    )


def _finish(proc: subprocess.Popen) -> tuple[int, str, str]:
    try:
        stdout, stderr = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    return proc.returncode, stdout.decode("utf-8", "replace"), stderr.decode("utf-8", "replace")


@pytest.mark.parametrize(
    "signum, previous, n_jobs, group",
    [
        (signal.SIGINT, False, "1", False),
        (signal.SIGTERM, True, "1", False),
        (signal.SIGINT, True, "2", True),  # Ctrl-C reaches the whole process group
        (signal.SIGTERM, False, "2", True),  # a CI cancel too
    ],
    ids=["FI07-int", "FI08-term", "FI07-int-group-j2", "FI08-term-group-j2"],
)
def test_signal_during_analysis(big_repo, tmp_path, signum, previous, n_jobs, group):
    outdir = tmp_path / "out"
    outdir.mkdir()
    target = outdir / "report.json"
    if previous:
        target.write_bytes(OLD)
    args = ["check", "axes", "--format", "json", "--output", str(target)]
    args += jobs(int(n_jobs))
    proc = _start(big_repo, args, tmp_path / "cache", group=group)
    time.sleep(0.3)
    if proc.poll() is not None:
        pytest.fail(f"the run ended before the signal: {_finish(proc)}")
    if group:
        os.killpg(proc.pid, signum)
    else:
        proc.send_signal(signum)
    status, stdout, stderr = _finish(proc)
    assert status == STATUS[signum], (status, stdout, stderr)
    assert_no_traceback(stderr)
    if previous:
        assert target.read_bytes() == OLD
    else:
        assert not target.exists()
    assert temps(outdir) == []


_SLOW_WRITE = """\
import os, time
MARKER = {marker!r}
WATCHED = {watched!r}
_fsync = os.fsync
def fsync(fd):
    try:
        where = os.readlink("/proc/self/fd/%d" % fd)
    except OSError:
        where = ""
    if where.startswith(WATCHED + "/"):
        # the report is being written: tell the test, then take a while
        open(MARKER, "w").close()
        time.sleep(2.0)
    return _fsync(fd)
os.fsync = fsync
"""


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["FI07", "FI08"])
def test_signal_during_the_write(tmp_path, signum):
    """The signal lands between the temp file's write and the replace: the temp
    file is removed, the previous report stays, the status is the signal's."""
    repo = make_repo(tmp_path / "repo")
    outdir = tmp_path / "out"
    outdir.mkdir()
    target = outdir / "report.sarif"
    target.write_bytes(OLD)
    marker = tmp_path / "writing"
    extra = sitecustomize(tmp_path / "inject", _SLOW_WRITE.format(marker=str(marker), watched=str(outdir)))
    proc = _start(
        repo,
        ["check", "axes", "--format", "sarif", "--output", str(target)],
        tmp_path / "cache",
        extra,
    )
    deadline = time.monotonic() + 30
    while not marker.exists():
        if proc.poll() is not None or time.monotonic() > deadline:
            pytest.fail(f"the write was never reached: {_finish(proc)}")
        time.sleep(0.01)
    if not temps(outdir):
        _finish(proc)
        pytest.fail("the temp file should exist while it is fsynced")
    proc.send_signal(signum)
    status, stdout, stderr = _finish(proc)
    assert status == STATUS[signum], (status, stdout, stderr)
    assert_no_traceback(stderr)
    assert target.read_bytes() == OLD
    assert temps(outdir) == []


def test_second_signal_during_cleanup_highest_wins(monkeypatch, capsys):
    """SIGINT, then SIGTERM while the cleanup runs: the cleanup finishes, 143 wins."""
    cleaned: list[str] = []

    def run(argv):
        try:
            os.kill(os.getpid(), signal.SIGINT)
            time.sleep(1)  # the handler raises before this ends
            raise AssertionError("SIGINT did not interrupt")
        finally:
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(0.05)
            cleaned.append("done")

    monkeypatch.setattr(cli, "_main", run)
    before = signal.getsignal(signal.SIGTERM)
    assert cli.main(["check", "x"]) == 143
    assert cleaned == ["done"]
    assert signal.getsignal(signal.SIGTERM) == before  # handlers put back after main()


def test_signal_swallowed_by_compiled_code_keeps_its_status(monkeypatch, capsys):
    """Found by a CI run (FI07 with -j2): SIGINT arrived while a validator's compiled
    code called a regular expression; the signal's exception was swallowed there
    ("Exception ignored in ...") and the validator then failed with a pattern
    error, which read as a bug (exit 3). The signal is the cause: 130, no bug report,
    no "Exception ignored" traceback."""

    class Callback:
        def __del__(self):  # Python cannot raise here: the unraisable hook gets it
            os.kill(os.getpid(), signal.SIGINT)
            time.sleep(1)

    def run(argv):
        holder = Callback()
        del holder  # the handler's exception is swallowed in __del__
        raise ValueError("String should match pattern '^[a-z][a-z0-9_]*$'")

    monkeypatch.setattr(cli, "_main", run)
    assert cli.main(["check", "x"]) == 130
    err = capsys.readouterr().err
    assert "this is a bug" not in err and "Exception ignored" not in err, err


def test_nothing_is_written_after_a_swallowed_signal(monkeypatch, capsys, tmp_path):
    """The run goes on after its signal's exception was swallowed; the next write
    (a report, a cache entry, a baseline: all go through the atomic writer) and the
    next line on stdout stop it instead, so a result computed after the signal is
    never kept."""
    from specguard.atomic import write_atomic

    target = tmp_path / "report.json"
    target.write_bytes(OLD)

    class Callback:
        def __del__(self):
            os.kill(os.getpid(), signal.SIGINT)
            time.sleep(1)

    def run(argv):
        holder = Callback()
        del holder
        write_atomic(target, "computed after the signal")
        raise AssertionError("the write went ahead")

    monkeypatch.setattr(cli, "_main", run)
    assert cli.main(["check", "x"]) == 130
    assert target.read_bytes() == OLD and temps(tmp_path) == []
    assert capsys.readouterr().out == ""
    write_atomic(target, "after the run")  # the signal belonged to that run only
    assert target.read_text(encoding="utf-8") == "after the run"


def test_unrelated_unraisable_exceptions_are_still_reported(monkeypatch, capsys):
    seen = []
    monkeypatch.setattr("sys.unraisablehook", lambda u: seen.append(type(u.exc_value).__name__))

    class Broken:
        def __del__(self):
            raise RuntimeError("not a signal")

    def run(argv):
        holder = Broken()
        del holder
        return 0

    monkeypatch.setattr(cli, "_main", run)
    assert cli.main(["check", "x"]) == 0
    assert seen == ["RuntimeError"]


def test_sigterm_alone_in_process(monkeypatch):
    def run(argv):
        os.kill(os.getpid(), signal.SIGTERM)
        time.sleep(1)
        raise AssertionError("SIGTERM did not interrupt")

    monkeypatch.setattr(cli, "_main", run)
    assert cli.main(["check", "x"]) == 143


def test_clean_run_status_unchanged_by_the_handlers(tmp_path, capsys, monkeypatch):
    repo = make_repo(tmp_path / "repo")
    monkeypatch.chdir(repo)
    assert cli.main(["check", "axes"]) == 1
    out = capsys.readouterr().out
    assert "axes/sample-lift.axis.yaml" in out
