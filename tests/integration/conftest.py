"""Fixtures for the integration tests: temporary git repositories holding copies of
the demo (an invented lab robot), and a way to run the installed command."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "examples" / "robot"


def git(cwd: Path, *args: str) -> str:
    env = dict(
        os.environ,
        GIT_AUTHOR_NAME="t",
        GIT_AUTHOR_EMAIL="t@example.invalid",
        GIT_COMMITTER_NAME="t",
        GIT_COMMITTER_EMAIL="t@example.invalid",
    )
    done = subprocess.run(["git", *args], cwd=cwd, env=env, capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    return done.stdout


def specguard(cwd: Path, *args: str, env: dict | None = None, stdin=None) -> subprocess.CompletedProcess:
    full = dict(os.environ) if env is None else dict(env)
    if env is None:
        full.pop("CI", None)
    return subprocess.run(
        [sys.executable, "-m", "specguard", *args],
        cwd=cwd,
        env=full,
        capture_output=True,
        text=True,
        stdin=subprocess.DEVNULL,
    )


def copy_demo(dest: Path, broken: bool = False) -> Path:
    """The demo axes and library in ``dest`` (without the broken specs by default)."""
    for sub in ("axes", "library") + (("broken",) if broken else ()):
        shutil.copytree(DEMO / sub, dest / sub)
    return dest


@pytest.fixture()
def cache_env(tmp_path, monkeypatch):
    """Every run of the test uses a cache of its own."""
    cache = tmp_path / "cache"
    monkeypatch.setenv("SPECGUARD_CACHE_DIR", str(cache))
    monkeypatch.delenv("CI", raising=False)
    return cache


@pytest.fixture()
def demo_repo(tmp_path, cache_env) -> Path:
    repo = tmp_path / "repo"
    repo.mkdir()
    copy_demo(repo)
    git(repo, "init", "-q")
    git(repo, "add", "-A")
    git(repo, "commit", "-qm", "demo")
    return repo


def many_specs(dest: Path, n: int = 30) -> Path:
    """``n`` generated variants of the three demo axes sharing the demo library."""
    import re

    copy_demo(dest)
    texts = [
        (DEMO / "axes" / f"{t}.axis.yaml").read_text(encoding="utf-8") for t in ("sample-lift", "pipette-x", "carousel")
    ]
    for i in range(n):
        text = re.sub(r"ambient: \d+ degC", f"ambient: {20 + i % 23} degC", texts[i % 3])
        (dest / "axes" / f"gen-{i:03d}.axis.yaml").write_text(text, encoding="utf-8")
    return dest
