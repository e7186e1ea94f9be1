"""SIGKILL during a write and concurrent baseline writers (docs/reliability.md FI06, FI10, FI11; G10).

FI06 forks the test process (warm: no interpreter start-up per iteration) into a
child that runs the CLI's ``main()`` and writes a JSON report with fsync slowed
down, so that a kill after a random 0-300 ms lands before, during or after the
replace. After each kill the target is exactly the old or the new report and at
most one temp file more exists; the next write sweeps our temp files older
than one hour, and only those.
"""

from __future__ import annotations

import json
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from specguard import atomic, cli
from specguard.engine import baseline as bl

from ._helpers import assert_no_traceback, env, jobs, make_repo, no_cache, out, sitecustomize, temps
from ._helpers import cli as run_cli

OLD = b'{"previous": "report"}\n'


def _quiet_child() -> None:
    devnull = os.open(os.devnull, os.O_RDWR)
    os.dup2(devnull, 1)
    os.dup2(devnull, 2)
    sys.stdout = open(1, "w", closefd=False)  # noqa: SIM115 - the child ends with os._exit
    sys.stderr = open(2, "w", closefd=False)  # noqa: SIM115


def _run_child(args: list[str], slow: float) -> tuple[int, int]:
    """Fork a child that runs ``cli.main(args)`` with fsync taking ``slow`` seconds;
    (pid, read end of a pipe that gets one byte when the report's write begins)."""
    ready_r, ready_w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: never returns into pytest
        status = 70
        try:
            os.close(ready_r)
            _quiet_child()
            real_fsync, real_write = os.fsync, atomic.write_atomic

            def fsync(fd):
                time.sleep(slow)
                return real_fsync(fd)

            def write_atomic(*a, **k):
                os.write(ready_w, b"w")
                return real_write(*a, **k)

            os.fsync = fsync
            atomic.write_atomic = write_atomic
            status = cli.main(args)
        finally:
            os._exit(status)
    os.close(ready_w)
    return pid, ready_r


@pytest.mark.slow
def test_fi06_sigkill_during_a_write(tmp_path, monkeypatch, capsys):
    import select

    repo = make_repo(tmp_path / "repo")  # 3 specs, a JSON report of about 0.1 MB
    monkeypatch.chdir(repo)
    outdir = tmp_path / "out"
    outdir.mkdir()
    target = outdir / "report.json"
    args = ["check", "axes", "--format", "json", "--output", str(target), *no_cache(), *jobs(1)]
    assert cli.main(args) == 1  # the demo has findings; this also warms the process up
    capsys.readouterr()
    new = target.read_bytes()
    assert len(new) > 50_000 and json.loads(new)["summary"]["files"] == 3

    rng = random.Random(6)
    seen = {"old": 0, "old+temp": 0, "new": 0}
    for _ in range(100):
        target.write_bytes(OLD)
        before = set(temps(outdir))
        pid, ready = _run_child(args, 0.1)
        try:
            assert select.select([ready], [], [], 30)[0], "the child never began to write"
            assert os.read(ready, 1) == b"w"
            # fsync takes 0.1 s for the file, then 0.1 s for the directory after the replace
            time.sleep(rng.uniform(0.0, 0.3))
        finally:
            os.kill(pid, signal.SIGKILL)
            os.waitpid(pid, 0)
            os.close(ready)
        now = target.read_bytes()
        assert now in (OLD, new)
        json.loads(now)  # always parses
        added = set(temps(outdir)) - before
        assert len(added) <= 1, added
        assert set(temps(outdir)) >= before
        seen["new" if now == new else ("old+temp" if added else "old")] += 1
    # the kills really landed before and after the replace
    assert seen["old+temp"] >= 5 and seen["new"] >= 5, seen
    leftovers = temps(outdir)
    assert len(leftovers) == seen["old+temp"]

    # The sweep: our temp files older than one hour go, a fresh one and other
    # tools' files stay.
    hour_ago = time.time() - 2 * atomic.STALE_TEMP_SECONDS
    for name in leftovers:
        os.utime(outdir / name, (hour_ago, hour_ago))
    fresh = outdir / ".specguard-fresh-writer.tmp"
    fresh.write_bytes(b"a run writing right now")
    foreign = outdir / ".editor-swap.tmp"
    foreign.write_bytes(b"not ours")
    os.utime(foreign, (hour_ago, hour_ago))
    assert cli.main(args) == 1
    capsys.readouterr()
    assert target.read_bytes() == new
    assert temps(outdir) == [fresh.name]
    assert foreign.exists()


# ----------------------------------------------------------------- FI10 / FI11
_SLOW_COMPOSE = """\
import os, time
LOG = {log!r}
try:
    import specguard.engine.baseline as _b
    _compose = _b.compose
    def compose(*args, **kwargs):
        with open(LOG, "a") as f:
            f.write("enter %d %.6f\\n" % (os.getpid(), time.time()))
        time.sleep(0.6)  # inside the lock: a second writer must wait for this
        try:
            return _compose(*args, **kwargs)
        finally:
            with open(LOG, "a") as f:
                f.write("leave %d %.6f\\n" % (os.getpid(), time.time()))
    _b.compose = compose
except Exception as exc:  # make a broken injection visible
    print("injection failed:", exc)
"""


def _two_sets(repo: Path) -> tuple[list[str], list[str]]:
    axes = sorted(p.relative_to(repo).as_posix() for p in (repo / "axes").glob("*.axis.yaml"))
    first = [a for a in axes if "sample-lift" in a]
    second = [a for a in axes if "pipette-x" in a]
    assert first and second
    return first, second


def test_fi10_two_writers_are_serialised(tmp_path):
    repo = make_repo(tmp_path / "repo", copies=1)
    first, second = _two_sets(repo)
    log = tmp_path / "compose.log"
    extra = sitecustomize(tmp_path / "inject", _SLOW_COMPOSE.format(log=str(log)))
    baseline = repo / "baseline.json"
    procs = [
        subprocess.Popen(
            [
                sys.executable,
                "-m",
                "specguard",
                "check",
                *files,
                "--write-baseline",
                str(baseline),
                *no_cache(),
            ],
            cwd=repo,
            env=env(extra, tmp_path / f"cache{k}"),
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
        )
        for k, files in enumerate((first, second))
    ]
    results = [p.communicate(timeout=60) for p in procs]
    for p, (stdout, stderr) in zip(procs, results, strict=True):
        assert p.returncode in (0, 1), (stdout, stderr)
        assert_no_traceback(stderr)
    # serialised: one writer's compose ended before the other's began
    events = [line.split() for line in log.read_text().splitlines()]
    assert [e[0] for e in events] == ["enter", "leave", "enter", "leave"], events
    assert events[0][1] == events[1][1] and events[2][1] == events[3][1] != events[0][1]
    # no lost entries: the baseline holds the findings of both sets
    files = {e["file"] for e in json.loads(baseline.read_bytes())["entries"]}
    assert any(f in files for f in first) and any(f in files for f in second), files
    # and equals what one writer of both sets gives
    single = repo / "single.json"
    done = run_cli("check", *first, *second, "--write-baseline", str(single), *no_cache(), cwd=repo)
    assert done.returncode in (0, 1), out(done)
    assert json.loads(single.read_bytes()) == json.loads(baseline.read_bytes())


def test_fi10_waiter_gives_up_naming_the_holder(tmp_path):
    repo = make_repo(tmp_path / "repo")
    baseline = repo / "baseline.json"
    with atomic.locked(bl.lock_path(baseline)):
        start = time.monotonic()
        proc = run_cli(
            "check",
            "axes",
            "--write-baseline",
            str(baseline),
            *no_cache(),
            cwd=repo,
            extra_env={"SPECGUARD_LOCK_TIMEOUT": "0.5"},
        )
        waited = time.monotonic() - start
    stdout, stderr = out(proc)
    assert proc.returncode == 2, (stdout, stderr)
    assert f"locked by PID {os.getpid()}" in stderr, stderr
    assert "baseline.json" in stderr
    assert_no_traceback(stderr)
    assert not baseline.exists()
    assert waited < 10  # the shortened wait, not the default 10 s
    assert temps(repo) == []


@pytest.mark.parametrize("value", ["soon", "-1", "nan", "1e9"])
def test_fi10_bad_lock_timeout_is_a_tool_error(tmp_path, value):
    repo = make_repo(tmp_path / "repo")
    proc = run_cli(
        "check",
        "axes",
        "--write-baseline",
        str(repo / "b.json"),
        *no_cache(),
        cwd=repo,
        extra_env={"SPECGUARD_LOCK_TIMEOUT": value},
    )
    stdout, stderr = out(proc)
    assert proc.returncode == 2, (stdout, stderr)
    assert "SPECGUARD_LOCK_TIMEOUT" in stderr
    assert not (repo / "b.json").exists()


_HOLDER = """\
import sys, time
from specguard.atomic import locked
with locked(sys.argv[1]):
    print("held", flush=True)
    time.sleep(60)
"""


def test_fi11_lock_of_a_killed_holder_is_free(tmp_path):
    repo = make_repo(tmp_path / "repo")
    baseline = repo / "baseline.json"
    lock = bl.lock_path(baseline)
    holder = subprocess.Popen([sys.executable, "-c", _HOLDER, str(lock)], stdout=subprocess.PIPE, env=env())
    try:
        assert holder.stdout.readline().strip() == b"held"
        assert lock.read_text().strip() == str(holder.pid)
    finally:
        holder.send_signal(signal.SIGKILL)
        holder.wait()
        holder.stdout.close()
    assert lock.exists()  # the file stays; the kernel released the lock itself
    start = time.monotonic()
    proc = run_cli(
        "check",
        "axes",
        "--write-baseline",
        str(baseline),
        *no_cache(),
        cwd=repo,
        extra_env={"SPECGUARD_LOCK_TIMEOUT": "5"},
    )
    stdout, stderr = out(proc)
    assert proc.returncode in (0, 1), (stdout, stderr)
    assert time.monotonic() - start < 5
    assert json.loads(baseline.read_bytes())["entries"]
