"""Byte-identical machine outputs (docs/reliability.md G9).

A fixture repository of 20 specs built from the demo (the robot axes, five renamed
copies of each, the two broken ones) is checked over and over with one thing
changed at a time: the hash seed, the order of the arguments, LF against CRLF
copies of every file, a cold against a warm result cache, one against two worker
processes. JSON and SARIF cover all 20 files; the HTML report (plots take most of
its time) covers four of them. ``SOURCE_DATE_EPOCH`` is fixed.
``SPECGUARD_EXTENDED=1`` runs hash seeds 0-19 instead of 0-4.
"""

from __future__ import annotations

import json
import os
import random
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from .faults._helpers import command_help, make_repo

EXTENDED = os.environ.get("SPECGUARD_EXTENDED") == "1"
SEEDS = range(20) if EXTENDED else range(5)
HTML_FILES = [
    "axes/carousel.axis.yaml",
    "axes/pipette-x-c2.axis.yaml",
    "axes/sample-lift.axis.yaml",
    "broken/door-latch.axis.yaml",
]


def _files(repo: Path) -> list[str]:
    return sorted(p.relative_to(repo).as_posix() for p in repo.rglob("*.axis.yaml"))


class Runner:
    def __init__(self, tmp: Path) -> None:
        self.tmp = tmp
        self.count = 0

    def run(
        self,
        repo: Path,
        kind: str,
        files: list[str],
        seed: int = 0,
        extra: list[str] = (),
        cache: Path | None = None,
    ) -> bytes:
        """One CLI run; the bytes of its report. ``kind`` is json, sarif or html."""
        self.count += 1
        target = self.tmp / f"out-{self.count}.{kind}"
        if kind == "html":
            args = ["report", *files, "--html", str(target)]
        else:
            args = ["check", *files, "--format", kind, "--output", str(target), *extra]
            if cache is None and "--no-cache" in command_help("check"):
                args.append("--no-cache")
        env = dict(
            os.environ,
            PYTHONHASHSEED=str(seed),
            SOURCE_DATE_EPOCH="1700000000",
            SPECGUARD_CACHE_DIR=str(cache or self.tmp / f"cache-{self.count}"),
        )
        done = subprocess.run(
            [sys.executable, "-m", "specguard", *args],
            cwd=repo,
            env=env,
            capture_output=True,
            timeout=300,
        )
        assert done.returncode == 1, done.stderr.decode(errors="replace")  # the demo has findings
        return target.read_bytes()


@pytest.fixture(scope="module")
def fixture(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("determinism")
    repo = make_repo(tmp / "repo", copies=5, broken=True)
    files = _files(repo)
    assert len(files) == 20
    runner = Runner(tmp)
    base = {kind: runner.run(repo, kind, files) for kind in ("json", "sarif")}
    base["html"] = runner.run(repo, "html", HTML_FILES)
    assert json.loads(base["json"])["summary"]["files"] == 20
    assert len(json.loads(base["sarif"])["runs"][0]["results"]) > 100
    return repo, files, runner, base


@pytest.mark.parametrize("seed", [s for s in SEEDS if s != 0])
def test_hash_seed(fixture, seed):
    repo, files, runner, base = fixture
    for kind in ("json", "sarif"):
        assert runner.run(repo, kind, files, seed=seed) == base[kind], (kind, seed)
    if seed == 3 or EXTENDED:
        assert runner.run(repo, "html", HTML_FILES, seed=seed) == base["html"], seed


@pytest.mark.parametrize("order", ["reversed", "shuffled-1", "shuffled-2", "shuffled-3"])
def test_argument_order(fixture, order):
    repo, files, runner, base = fixture
    if order == "reversed":
        shuffled = list(reversed(files))
    else:
        shuffled = list(files)
        random.Random(order).shuffle(shuffled)
    assert shuffled != files
    # directories and files mixed, one file named twice
    mixed = ["axes", *shuffled, shuffled[0]] if order == "shuffled-3" else shuffled
    for kind in ("json", "sarif"):
        assert runner.run(repo, kind, mixed) == base[kind], (kind, order)
    if order == "reversed":
        assert runner.run(repo, "html", list(reversed(HTML_FILES))) == base["html"]


def test_directory_named_after_its_files(fixture):
    repo, files, runner, base = fixture
    assert runner.run(repo, "json", [*files, "axes"]) == base["json"]


def _without_hashes(document: bytes) -> dict:
    data = json.loads(document)
    for entry in data["files"]:
        for item in entry["closure"]:
            item["sha256"] = "(bytes differ: CRLF)"
    return data


def test_crlf_copies(fixture, tmp_path):
    """CRLF copies in a second repository with the same file names: the same findings,
    locations and fingerprints; only the content hashes of the closure differ."""
    repo, files, runner, base = fixture
    crlf = tmp_path / "crlf"
    shutil.copytree(repo, crlf)
    converted = 0
    for path in crlf.rglob("*.yaml"):
        raw = path.read_bytes()
        assert b"\r" not in raw
        path.write_bytes(raw.replace(b"\n", b"\r\n"))
        converted += 1
    assert converted >= 20 + 6
    assert _files(crlf) == files
    got = runner.run(crlf, "json", files)
    assert got != base["json"]  # the hashes of the bytes do differ ...
    assert _without_hashes(got) == _without_hashes(base["json"])  # ... nothing else
    assert runner.run(crlf, "sarif", files) == base["sarif"]  # fingerprints included
    assert runner.run(crlf, "html", HTML_FILES) == base["html"]


def _needs(option: str) -> None:
    if option not in command_help("check"):
        pytest.skip("cache/-j not available")


def test_cold_and_warm_cache(fixture, tmp_path):
    _needs("--no-cache")
    repo, files, runner, base = fixture
    cache = tmp_path / "cache"
    for kind in ("json", "sarif"):
        cold = runner.run(repo, kind, files, cache=cache)
        assert any(cache.rglob("*")), "the cold run should have filled the cache"
        warm = runner.run(repo, kind, files, cache=cache)
        assert cold == warm == base[kind], kind


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_one_or_two_workers(fixture, jobs):
    _needs("--jobs")
    repo, files, runner, base = fixture
    for kind in ("json", "sarif"):
        assert runner.run(repo, kind, files, extra=["-j", jobs]) == base[kind], (kind, jobs)
