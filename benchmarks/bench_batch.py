"""Benchmark: the batch evaluator and explore on a 10-point axis, in a warm process.

Run: ``python benchmarks/bench_batch.py``. Public tools only (time.perf_counter,
tracemalloc). The axis is the demo's sample lift (profile, chokes, supply range) with
ten operating points instead of three (speeds 0 to 7800 rpm, torques 5 to 35 mN*m),
written to a temporary copy of the demo tree. Prints the medians of:

- the batch evaluator (every figure and the whole rule pack) on 10^4 and on 10^5
  variants (PWM frequency x added inductance), with the peak of memory traced while
  the 10^5 batch runs;
- ``explore`` of the axis (the 10^4-variant screen, the supply line and the options
  refined and judged as printed).
"""

from __future__ import annotations

import json
import shutil
import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))


def median_s(fn, runs: int) -> float:
    fn()
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def ten_point_axis(tree: Path) -> Path:
    """The lift axis with ten operating points, assembled (library values merged)."""
    from specguard.source import Limits
    from specguard.source.library import LibraryCache, assemble

    shutil.copytree(ROOT / "examples" / "robot", tree / "robot")
    (tree / ".git").mkdir()
    path = tree / "robot" / "axes" / "sample-lift.axis.yaml"
    doc = assemble(path.read_bytes(), path.stat().st_size, path, tree, Limits(), LibraryCache(Limits()))
    data = json.loads(json.dumps(doc.data, default=str))
    data["operating_points"] = [
        {"name": f"p{k}", "speed": f"{780 * k} rpm", "torque": f"{5 + 3 * k} mN*m", "ambient": "40 degC"}
        for k in range(10)
    ]
    out = tree / "robot" / "axes" / "ten-point.axis.yaml"
    out.write_text(json.dumps(data), encoding="utf-8")
    return out


def main() -> None:
    import numpy as np

    from specguard.engine.evaluate import load_pack
    from specguard.explore import explore
    from specguard.figures.batch import judge_batch
    from specguard.figures.compute import FigureSettings
    from specguard.figures.levers import AddedInductance, PwmFrequency, topology
    from specguard.model import build
    from specguard.source import Limits
    from specguard.source.library import LibraryCache, assemble

    with tempfile.TemporaryDirectory() as tmp:
        tree = Path(tmp)
        path = ten_point_axis(tree)
        doc = assemble(path.read_bytes(), path.stat().st_size, path, tree, Limits(), LibraryCache(Limits()))
        spec, _ = build(doc.data, doc.locate)
        assert spec is not None and len(spec.operating_points) == 10
        pack = load_pack()
        settings = FigureSettings()
        f_leg = float(spec.stage.pwm.frequency)
        motor_l = float(spec.motor.terminal_inductance.value)

        def levers(n_f: int, n_l: int):
            f, henries = np.meshgrid(
                np.geomspace(f_leg, 10 * f_leg, n_f),
                np.concatenate([[0.0], np.geomspace(motor_l / 100, 30 * motor_l, n_l - 1)]),
            )
            return [(PwmFrequency(1.0, maximum=1e12), f.ravel()), (AddedInductance(topology(spec)), henries.ravel())]

        small, large = levers(100, 100), levers(1000, 100)
        t4 = median_s(lambda: judge_batch(doc.data, spec, doc.locate, pack, {}, settings, small), 7)
        t5 = median_s(lambda: judge_batch(doc.data, spec, doc.locate, pack, {}, settings, large), 3)
        tracemalloc.start()
        judge_batch(doc.data, spec, doc.locate, pack, {}, settings, large)
        _now, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        result = explore(path, tree)
        te = median_s(lambda: explore(path, tree), 5)
        print("10-point axis (the demo's sample lift with ten operating points), warm process")
        print(f"  batch evaluator, 10^4 variants: {t4 * 1e3:8.1f} ms  ({t4 / 1e4 * 1e6:.2f} us per variant)")
        print(f"  batch evaluator, 10^5 variants: {t5 * 1e3:8.1f} ms  ({t5 / 1e5 * 1e6:.2f} us per variant)")
        print(f"  memory traced while the 10^5 batch runs: peak {peak / 2**20:.0f} MiB")
        print(f"  explore: {te * 1e3:8.1f} ms for {result.variants} variants judged")


if __name__ == "__main__":
    main()
