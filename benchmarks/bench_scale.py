"""Benchmark: specguard at repository scale, beside the floor of the same stack.

Run: ``python benchmarks/bench_scale.py [--runs N] [--sizes 1,100,1000]``. Public
tools only (time.perf_counter, subprocess); prints medians in a table. Not a test:
nothing is asserted.

A temporary git repository gets N generated axis specs (variants of the three demo
axes) that share the demo's library files (motors, stages, a choke). Timings:

- one file, cold: a whole ``specguard check --no-cache`` process on one spec;
- warm, per file: in one process, the full check of one spec (loader, references,
  model, figures, rules), the policy already loaded;
- N files cold without cache: ``specguard check --no-cache -j 2`` over the repository;
- N files, warm cache: ``specguard check`` after a run that filled the cache;
- the HTML report of the demo: ``specguard report --html``.

The floor, measured in the same run: ruamel.yaml's C loader plus jsonschema
(Draft 2020-12) against ``schemas/spec-v1.schema.json``: parse and validate only,
per file in process, and as a process over the same N files.
"""

from __future__ import annotations

import argparse
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "examples"  # the tree `specguard demo` checks: the robot and the pump
SCHEMA = ROOT / "schemas" / "spec-v1.schema.json"
TEMPLATES = ("sample-lift", "pipette-x", "carousel")


def make_repo(base: Path, n: int) -> Path:
    """A git repository with ``n`` generated specs in ``axes/`` and the demo library."""
    repo = base / f"repo-{n}"
    (repo / "axes").mkdir(parents=True)
    for sub in ("motors", "stages", "chokes"):
        (repo / "library" / sub).mkdir(parents=True)
        for f in (DEMO / "robot" / "library" / sub).iterdir():
            (repo / "library" / sub / f.name).write_bytes(f.read_bytes())
    texts = [(DEMO / "robot" / "axes" / f"{t}.axis.yaml").read_text(encoding="utf-8") for t in TEMPLATES]
    for i in range(n):
        text = texts[i % len(texts)]
        text = re.sub(r"(?m)^(  name: ).*$", rf"\g<1>axis-{i:04d}", text, count=1)
        ambient = 25 + (i % 17)  # vary the thermal figures a little
        text = re.sub(r"ambient: \d+ degC", f"ambient: {ambient} degC", text)
        (repo / "axes" / f"axis-{i:04d}.axis.yaml").write_text(text, encoding="utf-8")
    subprocess.run(["git", "init", "-q"], cwd=repo, check=True)
    return repo


def _median_wall(cmd: list[str], runs: int, cwd: Path, env: dict, before=None) -> float:
    times = []
    for _ in range(runs):
        if before is not None:
            before()
        t = time.perf_counter()
        subprocess.run(cmd, cwd=cwd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


_FLOOR = r"""
import json, sys, time
from ruamel.yaml import YAML
from jsonschema import Draft202012Validator
schema = json.load(open(sys.argv[1], encoding="utf-8"))
validator = Draft202012Validator(schema)
yaml = YAML(typ="safe")  # the C loader when ruamel.yaml.clib is installed
for name in sys.argv[2:]:
    with open(name, encoding="utf-8") as fh:
        data = yaml.load(fh)
    list(validator.iter_errors(json.loads(json.dumps(data, default=str))))
"""


def floor_warm(files: list[Path], runs: int) -> float:
    import json

    from jsonschema import Draft202012Validator
    from ruamel.yaml import YAML

    validator = Draft202012Validator(json.loads(SCHEMA.read_text(encoding="utf-8")))
    yaml = YAML(typ="safe")
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        for f in files:
            data = yaml.load(f.read_text(encoding="utf-8"))
            list(validator.iter_errors(json.loads(json.dumps(data, default=str))))
        times.append((time.perf_counter() - t) / len(files))
    return statistics.median(times)


def specguard_warm(files: list[Path], root: Path, runs: int) -> float:
    from specguard.engine.config import load_policy
    from specguard.pipeline import RunOptions, check_file
    from specguard.source import Limits
    from specguard.source.library import LibraryCache

    config, pack = load_policy(None, root)
    options = RunOptions(config=config, pack=pack)
    libs = LibraryCache(Limits())
    for f in files:
        check_file(f, root, libs, options)  # imports and lazy tables out of the way
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        for f in files:
            check_file(f, root, libs, options)
        times.append((time.perf_counter() - t) / len(files))
    return statistics.median(times)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--sizes", default="1,100,1000")
    args = ap.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    exe = [sys.executable, "-m", "specguard"]
    rows: list[tuple[str, float, str, float | None]] = []
    with tempfile.TemporaryDirectory(prefix="specguard-bench-") as tmp:
        base = Path(tmp)
        cache = base / "cache"
        env = dict(os.environ, SPECGUARD_CACHE_DIR=str(cache))
        env.pop("CI", None)
        floor_proc = [sys.executable, "-c", _FLOOR, str(SCHEMA)]
        warm_done = False
        for n in sizes:
            repo = make_repo(base, n)
            files = sorted((repo / "axes").glob("*.axis.yaml"))
            if n == 1:
                one = str(files[0])
                rows.append(
                    (
                        "1 file, cold process (--no-cache)",
                        _median_wall([*exe, "check", "--no-cache", one], args.runs, repo, env),
                        "floor: parse+validate process",
                        _median_wall([*floor_proc, one], args.runs, repo, env),
                    )
                )
                continue
            if not warm_done:
                warm_done = True
                sample = files[: min(30, len(files))]
                rows.append(
                    (
                        "warm, per file (in process)",
                        specguard_warm(sample, repo, args.runs),
                        "floor: parse+validate per file",
                        floor_warm(sample, args.runs),
                    )
                )
            floor_n = _median_wall([*floor_proc, *map(str, files)], args.runs, repo, env)
            rows.append(
                (
                    f"{n} files cold, --no-cache -j 2",
                    _median_wall([*exe, "check", "--no-cache", "-j", "2", "."], args.runs, repo, env),
                    f"floor: {n} files, one process",
                    floor_n,
                )
            )
            subprocess.run(
                [*exe, "check", "."], cwd=repo, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
            )  # fill the cache
            rows.append(
                (
                    f"{n} files, warm cache",
                    _median_wall([*exe, "check", "."], args.runs, repo, env),
                    f"floor: {n} files, one process",
                    floor_n,
                )
            )
        html = base / "demo.html"
        rows.append(
            (
                "report --html, demo (6 specs)",
                _median_wall([*exe, "report", str(DEMO), "--html", str(html)], args.runs, ROOT, env),
                "",
                None,
            )
        )
    width = max(len(r[0]) for r in rows)
    fwidth = max(len(r[2]) for r in rows)
    print(f"{'measure':<{width}}  {'median':>9}  {'floor (same stack)':<{fwidth}}  {'median':>9}")
    for name, value, fname, fvalue in rows:

        def show(v):
            return f"{v * 1000:8.2f} ms" if v < 1 else f"{v:8.3f} s "

        print(f"{name:<{width}}  {show(value)}  {fname:<{fwidth}}  {show(fvalue) if fvalue is not None else '':>9}")
    print(f"(medians of {args.runs} runs; Python {sys.version.split()[0]}, {os.cpu_count()} CPUs)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
