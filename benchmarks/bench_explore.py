"""Benchmark: the verified fixes and the explorer on the demo axes, in a warm process.

Run: ``python benchmarks/bench_explore.py``. Public tools only (time.perf_counter).
Prints, per demo axis, the median of:
- the whole check of the file (figures, rules, verified fixes),
- the same check with the fixes left unverified (the floor the verification adds to),
- the batch evaluator on 10^4 variants (100 PWM frequencies x 100 added inductances:
  every figure and the whole rule pack at once), and the time per variant,
- ``explore`` of the axis (the 10^4-variant screen, the supply line, and the options
  refined and judged one at a time as printed), with the number of variants judged.

The verified fixes of a check still judge one variant at a time: a check must not
import numpy (about 130 ms of a cold start, `python -X importtime`), and a few dozen variants per
finding cost less than that import.
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


def batch_ms(path: Path) -> float:
    """Median time of the batch evaluator on 100 x 100 variants of the axis."""
    import numpy as np

    from specguard.engine.evaluate import load_pack
    from specguard.figures.batch import judge_batch
    from specguard.figures.compute import FigureSettings
    from specguard.figures.levers import AddedInductance, PwmFrequency, topology
    from specguard.model import build
    from specguard.source import Limits
    from specguard.source.library import LibraryCache, assemble

    doc = assemble(path.read_bytes(), path.stat().st_size, path, ROOT, Limits(), LibraryCache(Limits()))
    spec, _ = build(doc.data, doc.locate)
    pack = load_pack()
    f_leg = spec.stage.pwm.frequency
    motor_l = spec.motor.terminal_inductance.value if spec.motor.terminal_inductance else 1e-4
    f, henries = np.meshgrid(
        np.geomspace(f_leg, 10 * f_leg, 100), np.concatenate([[0.0], np.geomspace(motor_l / 100, 30 * motor_l, 99)])
    )
    levers = [(PwmFrequency(1.0, maximum=1e12), f.ravel()), (AddedInductance(topology(spec)), henries.ravel())]
    return median_ms(lambda: judge_batch(doc.data, spec, doc.locate, pack, {}, FigureSettings(), levers), 7)


def main() -> None:
    import specguard.pipeline as pipeline
    from specguard.explore import explore

    verified = pipeline._verified_fixes
    print(
        f"{'axis':48s} {'check':>9s} {'no fixes':>9s} {'10^4 batch':>11s} {'per variant':>12s} "
        f"{'explore':>9s} {'variants':>9s}"
    )
    for rel in AXES:
        path = ROOT / rel
        check = median_ms(lambda path=path: pipeline.check_paths([str(path)], root=ROOT), 15)
        pipeline._verified_fixes = lambda findings, *args, **kwargs: findings
        try:
            bare = median_ms(lambda path=path: pipeline.check_paths([str(path)], root=ROOT), 15)
        finally:
            pipeline._verified_fixes = verified
        batch = batch_ms(path)
        result = explore(path, ROOT)
        spent = median_ms(lambda path=path: explore(path, ROOT), 5)
        print(
            f"{rel:48s} {check:7.1f}ms {bare:7.1f}ms {batch:9.1f}ms {batch * 1e3 / 1e4:9.2f} us "
            f"{spent:7.1f}ms {result.variants:9d}"
        )


if __name__ == "__main__":
    main()
