"""Benchmark: the verified fixes and the explorer on the demo axes, in a warm process.

Run: ``python benchmarks/bench_explore.py``. Public tools only (time.perf_counter).
Prints, per demo axis, the median of:
- the whole check of the file (figures, rules, verified fixes),
- the same check with the fixes left unverified (the floor the verification adds to),
- ``explore`` of the axis (one and two levers, every variant judged by the whole pack),
  with the number of variants it judged and the time per variant.

The fixes and the explorer judge one variant at a time (figures and rules of the
whole spec per variant, about 1-3 ms each); the table of the fixes issue asks for a
vectorised evaluator (10^4 variants in 0.5 s), which this scalar path does not reach.
"""

from __future__ import annotations

import statistics
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
AXES = (
    "examples/robot/axes/sample-lift.axis.yaml",
    "examples/robot/axes/pipette-x.axis.yaml",
    "examples/robot/axes/carousel.axis.yaml",
    "examples/medical/axes/infusion-drive.axis.yaml",
)


def median_ms(fn, runs: int) -> float:
    fn()
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times) * 1000.0


def main() -> None:
    import specguard.pipeline as pipeline
    from specguard.explore import explore

    verified = pipeline._verified_fixes
    print(f"{'axis':48s} {'check':>9s} {'no fixes':>9s} {'explore':>9s} {'variants':>9s} {'per variant':>12s}")
    for rel in AXES:
        path = ROOT / rel
        check = median_ms(lambda path=path: pipeline.check_paths([str(path)], root=ROOT), 15)
        pipeline._verified_fixes = lambda findings, *args, **kwargs: findings
        try:
            bare = median_ms(lambda path=path: pipeline.check_paths([str(path)], root=ROOT), 15)
        finally:
            pipeline._verified_fixes = verified
        result = explore(path, ROOT)
        spent = median_ms(lambda path=path: explore(path, ROOT), 5)
        per = spent / max(result.variants, 1)
        print(f"{rel:48s} {check:7.1f}ms {bare:7.1f}ms {spent:7.1f}ms {result.variants:9d} {per:10.2f}ms")


if __name__ == "__main__":
    main()
