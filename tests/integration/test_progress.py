"""Progress line: only on a terminal, never in CI or with --quiet, cleared at the end."""

from __future__ import annotations

import os
import pty
import subprocess
import sys

import pytest

from .conftest import many_specs


@pytest.fixture(scope="module")
def slow_repo(tmp_path_factory):
    # 400 specs analysed serially take well over the one-second delay (about 6 ms each
    # on the 2-core CI machine).
    return many_specs(tmp_path_factory.mktemp("prog"), 400)


def _on_pty(repo, *args, extra_env=None):
    master, slave = pty.openpty()
    env = dict(os.environ)
    env.pop("CI", None)
    env.update(extra_env or {})
    proc = subprocess.Popen(
        [sys.executable, "-m", "specguard", "check", ".", "--no-cache", "-j", "1", *args],
        cwd=repo,
        stdout=subprocess.PIPE,
        stderr=slave,
        stdin=subprocess.DEVNULL,
        env=env,
    )
    os.close(slave)
    chunks = []
    out = proc.stdout.read()
    proc.stdout.close()
    while True:
        try:
            data = os.read(master, 65536)
        except OSError:
            break
        if not data:
            break
        chunks.append(data)
    proc.wait()
    os.close(master)
    return proc.returncode, out.decode(), b"".join(chunks).decode()


def test_progress_shown_on_a_terminal_and_cleared(slow_repo):
    code, out, err = _on_pty(slow_repo)
    assert code == 1
    assert "specguard: " in err and "/403 files" in err
    assert "\r" in err
    last = err.rsplit("\r", 2)
    assert last[-1] == "" and last[-2].strip() == ""  # ends with the line blanked out
    assert "/403 files" not in out  # never on stdout


def test_no_progress_in_ci_or_quiet(slow_repo):
    for args, env in (((), {"CI": "true"}), (("--quiet",), {})):
        code, _out, err = _on_pty(slow_repo, *args, extra_env=env)
        assert code == 1
        assert "/403 files" not in err and "\r" not in err


def test_no_progress_when_stderr_is_not_a_terminal(slow_repo):
    env = dict(os.environ)
    env.pop("CI", None)
    done = subprocess.run(
        [sys.executable, "-m", "specguard", "check", ".", "--no-cache", "-j", "1"],
        cwd=slow_repo,
        capture_output=True,
        text=True,
        env=env,
    )
    assert done.returncode == 1
    assert done.stderr == ""
