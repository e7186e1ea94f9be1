"""Parallel runs: -j1 and -j2 give the same bytes; argument order does not matter
(docs/reliability.md G9)."""

from __future__ import annotations

import random

import pytest

from .conftest import many_specs, specguard


@pytest.fixture(scope="module")
def fixture30(tmp_path_factory):
    return many_specs(tmp_path_factory.mktemp("par"), 30)


@pytest.mark.parametrize("fmt", ["text", "json", "sarif"])
def test_j1_equals_j2(fixture30, fmt, monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    one = specguard(fixture30, "check", ".", "--no-cache", "-j", "1", "--format", fmt)
    two = specguard(fixture30, "check", ".", "--no-cache", "-j", "2", "--format", fmt)
    assert one.returncode == two.returncode == 1
    assert one.stdout == two.stdout
    assert one.stdout.count("gen-0") > 30  # the 30 generated files are in it


def test_shuffled_arguments_same_output(fixture30):
    files = sorted(str(p.relative_to(fixture30)) for p in (fixture30 / "axes").glob("*.axis.yaml"))
    assert len(files) == 33
    expected = specguard(fixture30, "check", "--no-cache", "-j", "2", "--format", "json", *files).stdout
    rng = random.Random(7)
    for order in (list(reversed(files)), rng.sample(files, len(files))):
        got = specguard(fixture30, "check", "--no-cache", "-j", "2", "--format", "json", *order)
        assert got.stdout == expected


def test_in_process_parallel_matches_serial(fixture30):
    from specguard.engine.config import load_policy
    from specguard.pipeline import RunOptions, check_paths
    from specguard.report import json_report

    config, pack = load_policy(None, fixture30)
    options = RunOptions(config=config, pack=pack)
    serial = check_paths([str(fixture30)], root=fixture30, options=options, jobs=1)
    parallel = check_paths([str(fixture30)], root=fixture30, options=options, jobs=2)
    assert json_report.render(serial) == json_report.render(parallel)
    assert [r.file for r in parallel.files] == sorted(r.file for r in parallel.files)
    assert all(r.spec is not None for r in parallel.files)  # the model comes back too
