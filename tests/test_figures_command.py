"""`specguard figures`: the numbers behind the findings, as text and as JSON (SI)."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
LIFT = "examples/robot/axes/sample-lift.axis.yaml"
PIPETTE = "examples/robot/axes/pipette-x.axis.yaml"


def run(*args):
    return subprocess.run(
        [sys.executable, "-m", "specguard", "figures", *args],
        cwd=ROOT,
        capture_output=True,
        text=True,
        check=False,
    )


def test_text_table_shows_units_and_points():
    out = run(LIFT)
    assert out.returncode == 0, out.stderr
    assert out.stdout.startswith(f"== {LIFT}\n")
    # the spec's own values come back in readable units (conversion round trip)
    import re

    assert re.search(r"^   supply_voltage +24 V$", out.stdout, re.M)
    assert "5200 rpm" in out.stdout and "40 degC" in out.stdout
    header = next(line for line in out.stdout.splitlines() if "point figure" in line)
    assert header.split()[2:] == ["hold", "lift", "sprint"]


def test_json_is_si_and_matches_definitions():
    out = run("--format", "json", LIFT)
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    assert doc["figures_format"] == 1
    names = {d["name"] for d in doc["definitions"]}
    figures = doc["files"][0]["figures"]
    axis = {f["name"]: f for f in figures["axis"]}
    assert set(axis) <= names
    # 24 V and 25 kHz (leg) from the spec, in SI; phase-shifted: ripple at 2 x leg
    # (docs/physics.md §1.2)
    assert axis["supply_voltage"]["value"] == 24.0 and axis["supply_voltage"]["unit"] == "V"
    assert axis["pwm_frequency_leg"]["value"] == 25e3
    assert axis["ripple_frequency"]["value"] == 50e3
    lift = next(p for p in figures["points"] if p["name"] == "lift")
    speed = next(f for f in lift["figures"] if f["name"] == "point_speed")
    assert math.isclose(speed["value"], 5200 * 2 * math.pi / 60, rel_tol=1e-12)


def test_missing_inputs_are_listed_with_a_reason():
    doc = json.loads(run("--format", "json", PIPETTE).stdout)
    missing = {m["name"]: m["reason"] for m in doc["files"][0]["figures"]["missing"]}
    assert "stage.current_loop" in missing["loop_bandwidth_ratio"]


def test_findings_do_not_fail_the_command_but_bad_paths_do():
    assert run(PIPETTE).returncode == 0  # the pipette axis has errors; figures still print
    missing = run("examples/no-such.axis.yaml")
    assert missing.returncode == 2


def test_invalid_spec_says_why_there_are_no_figures():
    out = run("examples/robot/broken/door-latch.axis.yaml")
    assert "no figures: the spec did not validate" in out.stdout
