"""Benchmark: the check path of one spec, cold and warm, beside the floor of the same stack.

Run: ``python benchmarks/bench_check.py [--runs N]``. Public tools only
(time.perf_counter, subprocess). Prints medians.

- cold: wall time of a whole ``specguard check`` process on one demo spec;
- floor cold: a process that only parses the same YAML with ruamel.yaml's C loader
  and validates it with jsonschema against the published schema (what a
  schema-only tool does);
- warm: in one process, load + validate + build the model (and figures and rules
  when present) for a ~5 KB spec, against the floor of parse + schema validation.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "examples"
SPEC = DEMO / "robot" / "axes" / "carousel.axis.yaml"


def big_spec(directory: Path, points: int = 10) -> Path:
    """A self-contained ~5 KB spec (no library references) with ``points`` operating points."""
    lines = [
        "# generated for the benchmark",
        "format: 1",
        "axis: {name: bench-axis, description: generated spec for timing, tags: [bench]}",
        "motor:",
        "  type: three-phase",
        "  winding: iron-core",
        "  terminal_resistance: {value: 0.8 ohm, at: 25 degC}",
        "  inductance_vs_frequency:",
        "    - {frequency: 1 kHz, inductance: 1.2 mH, series_resistance: 0.9 ohm}",
        "    - {frequency: 10 kHz, inductance: 0.85 mH, series_resistance: 2.6 ohm}",
        "    - {frequency: 50 kHz, inductance: 0.6 mH, series_resistance: 7.5 ohm}",
        "  torque_constant: {value: 0.11 N*m/A, current: phase-rms}",
        "  back_emf_constant: {value: 6.65 V/krpm, voltage: line-to-line-rms}",
        "  rated_current: 3.5 A",
        "  peak_current: 10 A",
        "  pole_pairs: 4",
        "  max_speed: 4000 rpm",
        "  rotor_inertia: 48 g*cm^2",
        "  thermal:",
        "    winding_to_housing: 1.8 K/W",
        "    housing_to_ambient: 4.5 K/W",
        "    winding_time_constant: 30 s",
        "    motor_time_constant: 900 s",
        "    max_winding_temperature: 130 degC",
        "stage:",
        "  supply: {voltage: 48 V, range: [46 V, 50 V], absorbs_braking_energy: true}",
        "  pwm:",
        "    frequency: 20 kHz",
        "    frequency_is: leg",
        "    scheme: space-vector",
        "    freewheeling: synchronous",
        "    max_duty: 0.97",
        "    dead_time: 200 ns",
        "    timer_clock: 100 MHz",
        "    alignment: center",
        "  switch_resistance: 12 mohm",
        "  current_limit: {continuous: 10 A, peak: 25 A}",
        "  current_loop: {bandwidth: 1.5 kHz, sampling: single-update}",
        "  bus_capacitance: 940 uF",
        "  overvoltage_trip: 58 V",
        "load: {inertia: 2.1 kg*cm^2}",
        "operating_points:",
    ]
    for i in range(points):
        lines.append(
            f"  - {{name: point-{i:02d}, speed: {300 * i} rpm, torque: {0.05 + 0.02 * i:.2f} N*m, "
            f"ambient: {25 + i} degC}}"
        )
    lines.append("profile:")
    lines.append("  ambient: 35 degC")
    lines.append("  segments:")
    for i in range(8):
        lines.append(f"    - {{duration: {100 + 50 * i} ms, speed: {400 * i} rpm, torque: {0.1 + 0.02 * i:.2f} N*m}}")
    lines.append("notes: |")
    while sum(len(x) + 1 for x in lines) < 5000:
        lines.append("  Generated text that pads the spec to the size of a realistic, commented spec file.")
    path = directory / "bench.axis.yaml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def wall(cmd: list[str], runs: int, cwd: Path) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(cmd, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


FLOOR_CODE = """
import json, sys
from ruamel.yaml import YAML
from jsonschema import Draft202012Validator
schema = json.load(open(sys.argv[1]))
data = YAML(typ="safe").load(open(sys.argv[2], encoding="utf-8"))
errors = list(Draft202012Validator(schema).iter_errors(data))
"""


def per_call(fn, runs: int) -> float:
    fn()
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=15)
    args = parser.parse_args()
    schema_file = ROOT / "schemas" / "spec-v1.schema.json"
    env_note = f"python {sys.version.split()[0]}, {os.cpu_count()} cores"
    with tempfile.TemporaryDirectory() as tmp:
        tmpdir = Path(tmp)
        spec5k = big_spec(tmpdir)
        (tmpdir / ".git").mkdir()  # make tmp the repository root
        results = {}
        results["cold check, one demo spec [s]"] = wall(
            [sys.executable, "-m", "specguard", "check", "--no-color", str(SPEC)], args.runs, DEMO
        )
        results["cold floor: parse + jsonschema, same spec [s]"] = wall(
            [sys.executable, "-c", FLOOR_CODE, str(schema_file), str(SPEC)], args.runs, DEMO
        )
        results["cold python -c pass [s]"] = wall([sys.executable, "-c", "pass"], args.runs, DEMO)

        # warm, in-process
        from jsonschema import Draft202012Validator
        from ruamel.yaml import YAML

        from specguard.pipeline import check_file

        raw_text = spec5k.read_text(encoding="utf-8")
        validator = Draft202012Validator(json.loads(schema_file.read_text()))
        yaml = YAML(typ="safe")

        def floor():
            data = yaml.load(raw_text)
            list(validator.iter_errors(data))

        def ours():
            result = check_file(spec5k, tmpdir)
            assert not [f for f in result.findings if f.rule in ("schema-violation", "unit-invalid")], result.findings

        results[f"warm check_file, {spec5k.stat().st_size} B spec [ms]"] = per_call(ours, 200) * 1e3
        results["warm floor: C parse + jsonschema, same spec [ms]"] = per_call(floor, 200) * 1e3

        from specguard.model import build
        from specguard.source import load_bytes
        from specguard.source.library import Document

        raw = spec5k.read_bytes()

        def load_validate_model():
            loaded = load_bytes(raw, "bench.axis.yaml")
            doc = Document("bench.axis.yaml", loaded.data, [])
            build(loaded.data, doc.locate)

        results["warm load + validate + model only [ms]"] = per_call(load_validate_model, 200) * 1e3

    print(f"# specguard check-path benchmark ({env_note})")
    width = max(len(k) for k in results)
    for key, value in results.items():
        print(f"{key:<{width}}  {value:8.4f}")


if __name__ == "__main__":
    main()
