"""The hook under the real pre-commit (pre-commit's documented local hooks and try-repo): a temporary git repository
whose .pre-commit-config.yaml points at a committed copy of this working tree.

pre-commit builds one virtualenv and pip-installs the hook repository into it
(about 10 s, needs the package index); the session fixture does that once."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from .conftest import REPO, copy_demo, git

pytestmark = pytest.mark.slow

_SKIP = {
    ".git",
    ".venv",
    ".pytest_cache",
    ".hypothesis",
    ".ruff_cache",
    ".benchmarks",
    "specguard.egg-info",
    "__pycache__",
    "build",
    "dist",
}


def _ignore(directory, names):
    return [n for n in names if n in _SKIP or n.endswith(".pyc")]


@pytest.fixture(scope="session")
def hook_env(tmp_path_factory):
    if shutil.which("pre-commit") is None:
        pytest.skip("pre-commit is not installed (test extra)")
    base = tmp_path_factory.mktemp("precommit")
    hook_repo = base / "hook-repo"
    shutil.copytree(REPO, hook_repo, ignore=_ignore)  # uncommitted work included
    git(hook_repo, "init", "-q")
    git(hook_repo, "add", "-A")
    git(hook_repo, "commit", "-qm", "hook repo snapshot")
    rev = git(hook_repo, "rev-parse", "HEAD").strip()
    env = dict(os.environ, PRE_COMMIT_HOME=str(base / "pre-commit-home"), SPECGUARD_CACHE_DIR=str(base / "cache"))
    env.pop("CI", None)
    env.pop("VIRTUAL_ENV", None)
    work = base / "work"
    work.mkdir()
    git(work, "init", "-q")
    (work / ".pre-commit-config.yaml").write_text(
        f"repos:\n  - repo: {hook_repo.as_posix()}\n    rev: {rev}\n    hooks:\n      - id: specguard\n",
        encoding="utf-8",
    )
    git(work, "add", ".pre-commit-config.yaml")
    git(work, "commit", "-qm", "config", "--no-verify")
    done = subprocess.run(
        ["pre-commit", "install", "--install-hooks"], cwd=work, env=env, capture_output=True, text=True, timeout=600
    )
    if done.returncode != 0 and "Could not find a version" in done.stdout + done.stderr:
        pytest.skip("the package index is not reachable for pre-commit's environment")
    assert done.returncode == 0, done.stdout + done.stderr
    return work, env


def _commit(work: Path, env: dict, message: str) -> subprocess.CompletedProcess:
    genv = dict(
        env,
        GIT_AUTHOR_NAME="t",
        GIT_AUTHOR_EMAIL="t@example.invalid",
        GIT_COMMITTER_NAME="t",
        GIT_COMMITTER_EMAIL="t@example.invalid",
    )
    return subprocess.run(
        ["git", "commit", "-qm", message], cwd=work, env=genv, capture_output=True, text=True, timeout=300
    )


def test_commits_through_the_real_hook(hook_env):
    work, env = hook_env
    copy_demo(work)
    # 1. a clean spec and its library commit
    keep = {"carousel.axis.yaml"}
    for spec in (work / "axes").iterdir():
        if spec.name not in keep:
            spec.unlink()
    subprocess.run(["git", "add", "-A"], cwd=work, check=True)
    done = _commit(work, env, "clean axis")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "specguard" in done.stdout + done.stderr  # the hook ran ...
    assert "Passed" in done.stdout + done.stderr  # ... and passed

    # 2. a spec that breaks a rule is refused, with the located finding shown
    shutil.copy(REPO / "examples" / "robot" / "axes" / "sample-lift.axis.yaml", work / "axes")
    subprocess.run(["git", "add", "axes/sample-lift.axis.yaml"], cwd=work, check=True)
    done = _commit(work, env, "lift axis")
    out = done.stdout + done.stderr
    assert done.returncode != 0
    assert "axes/sample-lift.axis.yaml:15:29: error:" in out and "[braking-energy-unabsorbed]" in out
    subprocess.run(["git", "reset", "-q", "HEAD", "axes/sample-lift.axis.yaml"], cwd=work, check=True)
    (work / "axes" / "sample-lift.axis.yaml").unlink()

    # 3. a change to a library file alone is refused when it breaks the axis using it
    stage = work / "library" / "stages" / "inverter-48v-10a.yaml"
    text = stage.read_text(encoding="utf-8")
    assert "peak: 25 A" in text
    stage.write_text(text.replace("peak: 25 A", "peak: 2 A"), encoding="utf-8")
    subprocess.run(["git", "add", str(stage.relative_to(work))], cwd=work, check=True)
    done = _commit(work, env, "smaller stage")
    out = done.stdout + done.stderr
    assert done.returncode != 0
    assert "[peak-current-over-stage-limit]" in out
    assert "axes/carousel.axis.yaml" in out  # the axis that uses the stage is named
    assert (
        subprocess.run(["git", "status", "--porcelain"], cwd=work, capture_output=True, text=True).stdout.strip()
        == "M  library/stages/inverter-48v-10a.yaml"
    )
    subprocess.run(["git", "reset", "-q", "--hard"], cwd=work, check=True)

    # 4. a policy file alone (the hook's file pattern takes it) re-checks every spec:
    # a tighter ripple threshold makes the committed clean axis fail
    (work / ".specguard.yaml").write_text(
        "format: 1\nrules:\n  ripple-over-rated-current:\n    thresholds: {error: 0.05}\n", encoding="utf-8"
    )
    subprocess.run(["git", "add", ".specguard.yaml"], cwd=work, check=True)
    done = _commit(work, env, "tighter ripple policy")
    out = done.stdout + done.stderr
    assert done.returncode != 0, out
    assert "axes/carousel.axis.yaml" in out and "[ripple-over-rated-current]" in out
