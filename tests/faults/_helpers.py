"""Shared set-up of the fault-injection tests: fixture repositories, CLI runs, tmpfs mounts."""

from __future__ import annotations

import contextlib
import errno
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "examples" / "robot"
EPOCH = "1700000000"
TEMP_NAME = re.compile(r"^\.specguard-.*\.tmp$")  # atomic.py's temporary files


def env(extra: dict | None = None, cache: Path | None = None) -> dict:
    """A clean environment for a CLI run: fixed date, no colour, a private cache."""
    out = dict(os.environ)
    for name in ("NO_COLOR", "PYTHONIOENCODING", "SPECGUARD_LOCK_TIMEOUT", "FORCE_COLOR"):
        out.pop(name, None)
    out["SOURCE_DATE_EPOCH"] = EPOCH
    out["PYTHONHASHSEED"] = "0"
    if cache is not None:
        out["SPECGUARD_CACHE_DIR"] = str(cache)
    out.update(extra or {})
    return out


def cli(
    *args: str,
    cwd: Path,
    extra_env: dict | None = None,
    cache: Path | None = None,
    timeout: float = 120,
    **kwargs,
) -> subprocess.CompletedProcess:
    """Run ``python -m specguard ARGS`` in a subprocess; text output decoded leniently."""
    return subprocess.run(
        [sys.executable, "-m", "specguard", *args],
        cwd=cwd,
        env=env(extra_env, cache),
        capture_output=True,
        timeout=timeout,
        **kwargs,
    )


def out(proc: subprocess.CompletedProcess) -> tuple[str, str]:
    return (proc.stdout.decode("utf-8", "replace"), proc.stderr.decode("utf-8", "replace"))


def assert_no_traceback(stderr: str | bytes) -> None:
    text = stderr.decode("utf-8", "replace") if isinstance(stderr, bytes) else stderr
    assert "Traceback" not in text, text
    assert "internal error" not in text, text


def temps(directory: Path) -> list[str]:
    """Our temporary files left in ``directory``."""
    return sorted(n for n in os.listdir(directory) if TEMP_NAME.match(n))


def make_repo(where: Path, copies: int = 0, broken: bool = False, history: bool = False) -> Path:
    """The demo robot repository in ``where`` (a ``.git`` folder marks the root).

    ``copies`` more copies of each demo axis go beside the originals, each with its
    own axis name (``<name>-c<k>``) and file name, so a run has
    ``3 * (copies + 1)`` specs (plus 2 with ``broken``).
    """
    repo = where
    repo.mkdir(parents=True, exist_ok=True)
    (repo / ".git").mkdir(exist_ok=True)
    shutil.copytree(DEMO / "library", repo / "library")
    shutil.copytree(DEMO / "axes", repo / "axes")
    if broken:
        shutil.copytree(DEMO / "broken", repo / "broken")
    for spec in sorted((DEMO / "axes").glob("*.axis.yaml")):
        text = spec.read_text(encoding="utf-8")
        name = re.search(r"^  name: (\S+)$", text, re.M).group(1)
        for k in range(1, copies + 1):
            copy = text.replace(f"  name: {name}\n", f"  name: {name}-c{k}\n", 1)
            (repo / "axes" / f"{name}-c{k}.axis.yaml").write_text(copy, encoding="utf-8")
    return repo


def specs(repo: Path) -> list[str]:
    return sorted(p.relative_to(repo).as_posix() for p in repo.rglob("*.axis.yaml"))


def need_root() -> None:
    if sys.platform != "linux" or os.geteuid() != 0:
        pytest.skip("needs root on Linux (tmpfs mounts)")


@contextlib.contextmanager
def tmpfs(directory: Path, size: str = "64k"):
    """A small tmpfs mounted on ``directory`` for the block; always unmounted."""
    need_root()
    directory.mkdir(parents=True, exist_ok=True)
    done = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={size},mode=0755", "tmpfs", str(directory)],
        capture_output=True,
    )
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode(errors='replace').strip()}")
    try:
        yield directory
    finally:
        subprocess.run(["umount", "-l", str(directory)], capture_output=True)


def remount(directory: Path, mode: str) -> None:
    subprocess.run(["mount", "-o", f"remount,{mode}", str(directory)], check=True, capture_output=True)


def fill(directory: Path) -> None:
    """Fill the filesystem of ``directory`` until not one more byte fits."""
    for name, size in (("filler", 4096), ("filler-tail", 1)):
        fd = os.open(directory / name, os.O_WRONLY | os.O_CREAT | os.O_APPEND, 0o600)
        try:
            while True:
                os.write(fd, b"\0" * size)
        except OSError as exc:
            assert exc.errno == errno.ENOSPC, exc
        finally:
            os.close(fd)
    fd = os.open(directory / "probe", os.O_WRONLY | os.O_CREAT, 0o600)
    try:
        with pytest.raises(OSError):
            os.write(fd, b"x")
    finally:
        os.close(fd)
        os.unlink(directory / "probe")


def sitecustomize(where: Path, code: str) -> dict:
    """An environment that runs ``code`` at interpreter start-up (a sitecustomize.py on
    PYTHONPATH, before the package's own path), as tests/test_corpus.py does."""
    where.mkdir(parents=True, exist_ok=True)
    (where / "sitecustomize.py").write_text(code, encoding="utf-8")
    paths = [str(where)] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]
    return {"PYTHONPATH": os.pathsep.join(paths)}


def sha256(path: Path) -> str:
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()


def scratch() -> Path:
    return Path(tempfile.mkdtemp(prefix="specguard-faults-"))


_HELP: dict[str, str] = {}


def command_help(command: str = "check") -> str:
    """``specguard COMMAND --help`` of the CLI the subprocesses run (options differ while
    colleagues add the cache and parallel runs)."""
    if command not in _HELP:
        _HELP[command] = subprocess.run(
            [sys.executable, "-m", "specguard", command, "--help"],
            capture_output=True,
            text=True,
            env=env(),
            cwd="/",
        ).stdout
    return _HELP[command]


def no_cache(command: str = "check") -> list[str]:
    return ["--no-cache"] if "--no-cache" in command_help(command) else []


def jobs(n: int, command: str = "check") -> list[str]:
    return ["-j", str(n)] if "--jobs" in command_help(command) else []
