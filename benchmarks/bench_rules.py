"""Benchmark: figures and the whole rule pack on one realistic spec, in a warm process.

Run: ``python benchmarks/bench_rules.py``. Public tools only (time.perf_counter).
Uses the ~5 KB, 10-operating-point spec of bench_check.py. Prints medians of:
- figures.compute (budget 2 ms),
- evaluate() of the whole pack with the real figures and remedies (budget 5 ms),
- the floor of the same stack: C parse + JSON-Schema validation of the same file;
- figures.compute of a brushed-DC spec (the demo's sample lift) with 10 and with 500
  operating points, the most a spec may hold: the DC supply window solves the exact
  ripple bound point by point (bisection), the costliest per-point step.
"""

from __future__ import annotations

import json
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_check import ROOT, big_spec  # noqa: E402


def median_ms(fn, runs: int = 300) -> float:
    fn()
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times) * 1e3


def _dc_spec(points: int):
    """The demo's brushed-DC sample lift with ``points`` operating points spread over
    its speed and torque range."""
    from specguard.model import build
    from specguard.source import Limits
    from specguard.source.library import LibraryCache, assemble

    root = ROOT / "examples"
    path = root / "robot" / "axes" / "sample-lift.axis.yaml"
    raw = path.read_bytes()
    doc = assemble(raw, len(raw), path, root, Limits(), LibraryCache(Limits()))
    data = dict(doc.data)
    data["operating_points"] = [
        {
            "name": f"p{i}",
            "speed": f"{(i * 7919) % 7800} rpm",
            "torque": f"{5 + (i * 31) % 20} mN*m",
            "ambient": "40 degC",
        }
        for i in range(points)
    ]
    spec, findings = build(data, doc.locate)
    assert spec is not None, findings
    return spec


def main() -> None:
    from jsonschema import Draft202012Validator
    from ruamel.yaml import YAML

    from specguard.engine.evaluate import evaluate, load_pack
    from specguard.figures import compute
    from specguard.model import build
    from specguard.source import load_bytes
    from specguard.source.library import Document

    with tempfile.TemporaryDirectory() as tmp:
        path = big_spec(Path(tmp), points=10)
        raw = path.read_bytes()
    loaded = load_bytes(raw, "bench.axis.yaml")
    doc = Document("bench.axis.yaml", loaded.data, [])
    spec, findings = build(loaded.data, doc.locate)
    assert spec is not None, findings
    pack = load_pack()
    figures = compute(spec)
    out = evaluate(spec, figures, doc.locate, pack)
    schema = json.loads((ROOT / "schemas" / "spec-v1.schema.json").read_text())
    validator = Draft202012Validator(schema)
    text = raw.decode()
    yaml = YAML(typ="safe")

    dc_specs = {n: _dc_spec(n) for n in (10, 500)}
    rows = {
        "figures.compute, 10 points [ms]": median_ms(lambda: compute(spec)),
        f"evaluate, {len(pack.rules)} rules, 10 points [ms]": median_ms(
            lambda: evaluate(spec, figures, doc.locate, pack)
        ),
        "floor: C parse + jsonschema, same file [ms]": median_ms(lambda: list(validator.iter_errors(yaml.load(text)))),
        "figures.compute, brushed DC, 10 points [ms]": median_ms(lambda: compute(dc_specs[10])),
        "figures.compute, brushed DC, 500 points [ms]": median_ms(lambda: compute(dc_specs[500]), runs=30),
    }
    print(f"# figures and rules, warm ({len(raw)} B spec, {len(out)} findings)")
    width = max(map(len, rows))
    for key, value in rows.items():
        print(f"{key:<{width}}  {value:8.3f}")


if __name__ == "__main__":
    main()
