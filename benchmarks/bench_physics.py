"""Benchmark of specguard.physics (a script, not a test).

Run: PYTHONPATH=. python benchmarks/bench_physics.py
(a) a typical per-axis set of physics calls for 10 operating points (scalar path),
(b) the same calls on 100,000 operating points of one axis (vectorised),
(c) the ngspice comparison cases of tests/physics (if ngspice is installed).
Prints medians of repeated runs (time.perf_counter).
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from specguard import physics as p  # noqa: E402


def axis_figures(v_term, current, speed_scale):
    """Physics of one operating point of a DC axis plus a three-phase variant."""
    r_hot = p.resistance_at_temperature(1.0, 298.15, 353.15)
    m = p.modulation_required(v_term, 24.0, current, 0.05, 200e-9, 20e3, "bipolar")
    ripple = p.ripple_exact(24.0, 0.2e-3, r_hot + 0.05, 20e3, m, "bipolar", v_term - r_hot * current)
    window = p.supply_voltage_window(
        v_term * speed_scale,
        v_term,
        current,
        current,
        0.97,
        "bipolar",
        0.2e-3,
        r_hot + 0.05,
        20e3,
        0.4,
        0.05,
        1.0,
        0.1,
        0.2,
        200e-9,
    )
    rms3 = p.phase_ripple_rms(48.0, 100e-6, 20e3, 0.3 + 0.07 * current, "svpwm")
    pp3 = p.phase_ripple_peak_to_peak_max(48.0, 100e-6, 20e3, 0.3 + 0.07 * current, "svpwm")
    t_w = p.winding_temperature_steady(ripple.rms, 0.98, 2.0, 6.0, 313.15)
    return ripple, window, rms3, pp3, t_w


def bench_small(repeats=200):
    points = [(8.0 + 1.2 * k, 0.5 + 0.3 * k, 1.1) for k in range(10)]
    for args in points:  # warm-up
        axis_figures(*args)
    samples = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        for args in points:
            axis_figures(*args)
        samples.append(time.perf_counter() - t0)
    return statistics.median(samples)


def bench_large(n=100_000, repeats=7):
    rng = np.random.default_rng(1)
    v_term = rng.uniform(5.0, 18.0, n)
    current = rng.uniform(0.2, 3.0, n)
    axis_figures(v_term[:10], current[:10], 1.1)
    samples = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        axis_figures(v_term, current, 1.1)
        samples.append(time.perf_counter() - t0)
    return statistics.median(samples)


def bench_ngspice():
    sys.path.insert(0, str(ROOT / "tests" / "physics"))
    import spice_cases as sc  # test helper: netlists shared with the tests

    if sc.NGSPICE is None:
        return None
    worst = 0.0
    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        for case in sc.HBRIDGE_CASES:
            scheme, volts, m, resistance, inductance, _, _ = case
            netlist, f_pwm, emf = sc.hbridge_netlist(*case)
            sim = sc.run(netlist, Path(tmp))
            exact = p.ripple_exact(volts, inductance, resistance, f_pwm, m, scheme, emf)
            pp = sim["imax"] - sim["imin"]
            worst = max(
                worst,
                abs(exact.peak_to_peak / pp - 1.0),
                abs(exact.average - sim["iavg"]) / max(abs(sim["iavg"]), pp),
            )
        for m in (0.6, 1.0):
            netlist, period = sc.svpwm_netlist(48.0, 100e-6, 20e3, m, 48, Path(tmp))
            sc.run(netlist, Path(tmp))
            rms_sim, _ = sc.phase_ripple_from_trace(Path(tmp) / "phase_a.dat", period, 48)
            worst = max(worst, abs(p.phase_ripple_rms(48.0, 100e-6, 20e3, m, "svpwm") / rms_sim - 1.0))
    return worst, time.perf_counter() - t0, len(sc.HBRIDGE_CASES) + 2


def main():
    small = bench_small()
    print(f"(a) 10 operating points, scalar path: median {small * 1e3:.3f} ms ({small * 1e5:.1f} us per point)")
    large = bench_large()
    print(f"(b) 100,000 operating points, vectorised: median {large * 1e3:.1f} ms")
    result = bench_ngspice()
    if result is None:
        print("(c) ngspice not installed: skipped")
    else:
        worst, elapsed, count = result
        print(f"(c) {count} ngspice cases in {elapsed:.2f} s; worst relative error {worst:.2e}")


if __name__ == "__main__":
    main()
