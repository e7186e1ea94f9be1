"""Result cache: warm output equals --no-cache byte for byte; content, library, policy,
rule-pack and version changes invalidate; damaged entries are ignored with one
warning; concurrent runs never tear an entry; the default location is outside the
repository (docs/reliability.md FI19-FI21, FI09, I06, I11)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from specguard.cache import CACHE_FORMAT

from .conftest import git, specguard

FORMATS = ("text", "json", "sarif")


def entries(cache: Path) -> list[Path]:
    """Result entries (the parsed rule pack kept beside them under pack-v*/ is not one)."""
    return sorted(p for p in cache.rglob("*.json") if not p.relative_to(cache).parts[0].startswith("pack-v"))


def outputs(repo: Path, *extra: str) -> dict[str, tuple[int, str]]:
    out = {}
    for fmt in FORMATS:
        done = specguard(repo, "check", ".", "--format", fmt, *extra)
        out[fmt] = (done.returncode, done.stdout)
    return out


def test_warm_equals_no_cache_on_every_format(demo_repo, cache_env):
    cold = outputs(demo_repo, "--no-cache")
    assert not cache_env.exists()  # --no-cache writes nothing
    first = outputs(demo_repo)  # fills the cache
    assert len(entries(cache_env)) == 3  # the three demo axes
    warm = outputs(demo_repo)
    assert cold == first == warm
    assert cold["text"][0] == 1 and "ripple-over-rated-current" in cold["text"][1]


def test_cached_result_round_trips_exactly(demo_repo, cache_env):
    """The FileResult from an entry equals the analysed one: findings, figures, closure."""
    from specguard import cache as rc
    from specguard.engine.config import load_policy
    from specguard.pipeline import RunOptions, check_paths

    config, pack = load_policy(None, demo_repo)
    options = RunOptions(config=config, pack=pack)
    salt = rc.run_salt({"t": 1}, [])
    fresh = check_paths(
        [str(demo_repo)],
        root=demo_repo,
        options=options,
        result_cache=rc.ResultCache(str(cache_env), salt, str(demo_repo)),
    )
    again_cache = rc.ResultCache(str(cache_env), salt, str(demo_repo))
    again = check_paths([str(demo_repo)], root=demo_repo, options=options, result_cache=again_cache)
    assert again_cache.hits == 3 and again_cache.misses == 0
    for a, b in zip(fresh.files, again.files, strict=True):
        assert a.findings == b.findings
        assert a.closure == b.closure
        assert a.figures.axis == b.figures.axis and a.figures.points == b.figures.points
        assert dict(a.figures.missing) == dict(b.figures.missing)
        for name, value in a.figures.axis.items():  # floats survive exactly (repr round trip)
            assert type(value) is type(b.figures.axis[name])
        assert b.spec is None  # the model object is never cached


def _sample_lift(repo: Path) -> Path:
    return repo / "axes" / "sample-lift.axis.yaml"


def test_content_change_with_old_mtime_is_analysed_again(demo_repo, cache_env):
    spec = _sample_lift(demo_repo)
    first = specguard(demo_repo, "check", ".", "--format", "json").stdout
    before = os.stat(spec)
    text = spec.read_text(encoding="utf-8").replace("rated_current: 1.9 A", "rated_current: 2.9 A")
    spec.write_text(text, encoding="utf-8")
    os.utime(spec, ns=(before.st_atime_ns, before.st_mtime_ns))  # FI19: mtime put back
    assert os.stat(spec).st_mtime_ns == before.st_mtime_ns
    warm = specguard(demo_repo, "check", ".", "--format", "json")
    cold = specguard(demo_repo, "check", ".", "--format", "json", "--no-cache")
    assert warm.stdout == cold.stdout
    assert warm.stdout != first  # the rated current changed the figures


def test_library_change_invalidates_the_specs_using_it(demo_repo, cache_env):
    first = specguard(demo_repo, "check", ".", "--format", "json").stdout
    choke = demo_repo / "library" / "chokes" / "choke-47uh-6a.yaml"
    text = choke.read_text(encoding="utf-8")
    assert "47 uH" in text
    choke.write_text(text.replace("47 uH", "470 uH"), encoding="utf-8")  # FI20
    warm = specguard(demo_repo, "check", ".", "--format", "json")
    cold = specguard(demo_repo, "check", ".", "--format", "json", "--no-cache")
    assert warm.stdout == cold.stdout
    assert warm.stdout != first  # ten times the choke inductance: other ripple figures


@pytest.mark.skipif(not hasattr(os, "symlink") or sys.platform == "win32", reason="needs symbolic links")
@pytest.mark.parametrize("link", ["file", "directory"])
def test_repointed_symbolic_link_invalidates(demo_repo, cache_env, link):
    """A library file or folder reached through a symbolic link and then repointed:
    no file's content changes, yet the spec now reads other data."""
    chokes = demo_repo / "library" / "chokes"
    original = chokes / "choke-47uh-6a.yaml"
    bigger = chokes / "choke-470uh.yaml"
    bigger.write_text(original.read_text(encoding="utf-8").replace("47 uH", "470 uH"), encoding="utf-8")
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    if link == "file":
        pointer = chokes / "current.yaml"
        os.symlink("choke-47uh-6a.yaml", pointer)
        ref = "../library/chokes/current.yaml"
        swap = lambda: (pointer.unlink(), os.symlink("choke-470uh.yaml", pointer))  # noqa: E731
    else:
        (demo_repo / "variants" / "a").mkdir(parents=True)
        (demo_repo / "variants" / "b").mkdir()
        (demo_repo / "variants" / "a" / "choke.yaml").write_text(original.read_text(encoding="utf-8"), encoding="utf-8")
        (demo_repo / "variants" / "b" / "choke.yaml").write_text(bigger.read_text(encoding="utf-8"), encoding="utf-8")
        pointer = demo_repo / "variants" / "current"
        os.symlink("a", pointer)
        ref = "../variants/current/choke.yaml"
        swap = lambda: (pointer.unlink(), os.symlink("b", pointer))  # noqa: E731
    text = spec.read_text(encoding="utf-8")
    spec.write_text(text.replace("../library/chokes/choke-47uh-6a.yaml", ref), encoding="utf-8")
    first = specguard(demo_repo, "check", ".", "--format", "json")
    assert "choke-saturation" in first.stdout
    swap()
    warm = specguard(demo_repo, "check", ".", "--format", "json")
    cold = specguard(demo_repo, "check", ".", "--format", "json", "--no-cache")
    assert warm.stdout == cold.stdout
    assert warm.stdout != first.stdout  # ten times the choke inductance


def test_policy_rule_pack_and_version_changes_invalidate(demo_repo, cache_env, tmp_path):
    from specguard import cache as rc

    rules = tmp_path / "rules"
    rules.mkdir()
    (rules / "a.yaml").write_text("x: 1\n", encoding="utf-8")
    base = rc.run_salt({"tool": "0.1.0"}, [str(rules)])
    assert rc.run_salt({"tool": "0.1.1"}, [str(rules)]) != base  # tool version (FI21)
    (rules / "a.yaml").write_text("x: 2\n", encoding="utf-8")
    assert rc.run_salt({"tool": "0.1.0"}, [str(rules)]) != base  # a rule file changed
    cache = rc.ResultCache(str(cache_env), base, str(demo_repo))
    assert cache.key("a.axis.yaml", "0" * 64, "p1") != cache.key("a.axis.yaml", "0" * 64, "p2")

    # A policy that changes a rule's severity must not be answered from the cache.
    specguard(demo_repo, "check", ".")
    (demo_repo / ".specguard.yaml").write_text(
        "format: 1\nrules:\n  ripple-over-rated-current: {enabled: false}\n", encoding="utf-8"
    )
    warm = specguard(demo_repo, "check", ".")
    cold = specguard(demo_repo, "check", ".", "--no-cache")
    assert warm.stdout == cold.stdout and "[ripple-over-rated-current]" not in warm.stdout


@pytest.mark.parametrize("damage", ["truncate", "garbage", "version"])
def test_damaged_entries_one_warning_same_output(demo_repo, cache_env, damage):
    cold = outputs(demo_repo, "--no-cache")
    specguard(demo_repo, "check", ".")
    found = entries(cache_env)
    assert len(found) == 3
    for entry in found:
        raw = entry.read_bytes()
        if damage == "truncate":
            entry.write_bytes(raw[: len(raw) // 2])
        elif damage == "garbage":
            entry.write_bytes(b"\x00\xffnot json at all")
        else:
            doc = json.loads(raw)
            doc["cache_format"] = 999
            entry.write_text(json.dumps(doc), encoding="utf-8")
    done = specguard(demo_repo, "check", ".")
    assert done.stdout == cold["text"][1] and done.returncode == cold["text"][0]
    warnings = [line for line in done.stderr.splitlines() if "warning" in line]
    assert len(warnings) == 1 and "damaged cache entr" in warnings[0], done.stderr
    # the entries were rewritten: the next run is clean and still identical
    again = specguard(demo_repo, "check", ".")
    assert again.stderr == "" and again.stdout == cold["text"][1]


def test_four_concurrent_runs_share_one_cache(tmp_path, cache_env):
    from .conftest import many_specs

    repo = many_specs(tmp_path / "many", 30)
    expected = specguard(repo, "check", ".", "--format", "json", "--no-cache").stdout
    procs = [
        subprocess.Popen(
            [sys.executable, "-m", "specguard", "check", ".", "--format", "json", "-j", "1"],
            cwd=repo,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for _ in range(4)
    ]
    results = [p.communicate() for p in procs]
    for out, err in results:
        assert out == expected
        assert "damaged" not in err
    found = entries(cache_env)
    assert len(found) == 33
    for entry in found:  # every entry whole
        doc = json.loads(entry.read_bytes())
        assert doc["cache_format"] == CACHE_FORMAT and doc["result"]["findings"] is not None
    assert not [p for p in cache_env.rglob("*") if p.name.endswith(".tmp")]
    assert specguard(repo, "check", ".", "--format", "json").stdout == expected


def test_default_cache_dir_is_outside_the_repository(demo_repo, tmp_path, monkeypatch):
    monkeypatch.delenv("SPECGUARD_CACHE_DIR", raising=False)
    monkeypatch.delenv("XDG_CACHE_HOME", raising=False)
    home = tmp_path / "home"
    home.mkdir()
    monkeypatch.setenv("HOME", str(home))
    done = specguard(demo_repo, "check", ".")
    assert done.returncode == 1
    assert git(demo_repo, "status", "--porcelain") == ""  # I11
    assert len(entries(home / ".cache" / "specguard")) == 3
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    specguard(demo_repo, "check", ".")
    assert len(entries(tmp_path / "xdg" / "specguard")) == 3


def test_cache_dir_inside_the_work_tree_stays_out_of_git_status(demo_repo):
    done = specguard(demo_repo, "check", ".", "--cache-dir", ".cache-here")
    assert done.returncode == 1 and (demo_repo / ".cache-here").is_dir()
    assert git(demo_repo, "status", "--porcelain") == ""


def test_waivers_are_applied_after_the_cache(demo_repo, cache_env, monkeypatch):
    """A waiver that expires between two runs takes effect on a warm cache."""
    spec = _sample_lift(demo_repo)
    spec.write_text(
        spec.read_text(encoding="utf-8")
        + (
            "waivers:\n  - rule: ripple-over-rated-current\n    at: lift\n"
            "    reason: bench test shows it is fine\n    approved_by: lead\n"
            "    expires: 2030-01-01\n"
        ),
        encoding="utf-8",
    )
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1893456000")  # 2030-01-01: still valid
    first = specguard(demo_repo, "check", ".")
    assert "(waived)" in first.stdout
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1893542400")  # 2030-01-02: expired
    warm = specguard(demo_repo, "check", ".")
    cold = specguard(demo_repo, "check", ".", "--no-cache")
    assert warm.stdout == cold.stdout and "expired on 2030-01-01" in warm.stdout
    assert (
        specguard(demo_repo, "check", ".", "--no-waivers").stdout
        == specguard(demo_repo, "check", ".", "--no-waivers", "--no-cache").stdout
    )
