"""Shared helpers of the policy and output tests: synthetic findings, a fake
locate, a copy of the demo robot in a temporary repository, and running the CLI
in a subprocess (the exit status and the bytes on stdout are what a CI gate sees)."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path
from types import SimpleNamespace

from specguard.findings import Finding, Location
from specguard.model.spec import Waiver

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = ROOT / "examples"


def loc(file="axes/a.axis.yaml", line=10, column=3, path=()):
    return Location(file, line, column, line, column + 5, tuple(path))


def finding(
    rule="ripple-over-rated-current",
    severity="error",
    point="hold",
    path=("stage", "pwm", "frequency"),
    file="axes/a.axis.yaml",
    line=10,
    figures=(("ripple_ratio", 0.87, "1"),),
    message=None,
):
    return Finding(
        rule,
        severity,
        message or f"{rule} at {point}",
        loc(file, line, 3, path),
        operating_point=point,
        figures=tuple(figures),
    )


def spec_with(*waivers: dict):
    """A stand-in for a Spec holding real, validated Waiver models."""
    base = {
        "reason": "accepted in the lift review",
        "approved_by": "design review 12",
        "expires": "2027-06-30",
    }
    return SimpleNamespace(waivers=tuple(Waiver.model_validate({**base, **w}) for w in waivers))


def fake_locate(file="axes/a.axis.yaml"):
    """Waiver i sits at line 40 + 10 i; its fields one line per key below."""
    fields = ["rule", "at", "path", "reason", "approved_by", "expires"]

    def locate(path, key=False):
        path = tuple(path)
        if path[:1] == ("waivers",) and len(path) >= 2:
            line = 40 + 10 * path[1]
            if len(path) >= 3:
                line += 1 + fields.index(path[2])
            return Location(file, line, 5, path=path), ()
        return Location(file, 1, 1, path=path), ()

    return locate


def demo_repo(tmp: Path) -> Path:
    """A copy of the demo robot as a repository of its own (root has .git)."""
    repo = tmp / "repo"
    shutil.copytree(EXAMPLES / "robot", repo / "robot")
    (repo / ".git").mkdir()
    return repo


def run_cli(*args: str, cwd: Path, env: dict | None = None, timeout: float = 120):
    full = dict(os.environ)
    full["PYTHONPATH"] = str(ROOT) + os.pathsep + full.get("PYTHONPATH", "")
    full.pop("SOURCE_DATE_EPOCH", None)
    full["NO_COLOR"] = "1"
    if env:
        full.update(env)
    return subprocess.run(
        [sys.executable, "-m", "specguard", *args],
        cwd=cwd,
        env=full,
        capture_output=True,
        timeout=timeout,
    )


def have_figures() -> bool:
    """The end-to-end parts need the figures (specguard/figures/compute.py)."""
    import importlib.util

    return importlib.util.find_spec("specguard.figures.compute") is not None
