"""The text output reads in one pass: numbers in the unit a reader expects, signed
differences worded by their sign, every related location labelled.

Over the demo and ~100 generated axes (``valid_spec`` of the input properties,
derandomised), no output line may hold
- a percentage in scientific notation ("7.5e+03 %"),
- a double negative ("-357.3 K below", "exceeds by -2 V", "short by -4 V"),
- a related location without a label (the bare ``path:line:col: related location``).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings

from specguard.engine.pack import factor_text, format_value, percent_text, plain_number, threshold_si
from specguard.figures.registry import FIGURE_DEFS
from specguard.pipeline import analyse
from specguard.report import text as text_report
from specguard.results import Report
from tests.test_properties_input import FILE, to_yaml, valid_spec

ROOT = Path(__file__).resolve().parents[1]

SCIENTIFIC_PERCENT = re.compile(r"\d[eE][+-]?\d+\s*%")
# a minus sign of a number (not the one of an exponent, "3.8e-09 mV") before a word of direction
DOUBLE_NEGATIVE = re.compile(
    r"(?<![\w.])-\d[\d.]*(?:[eE][+-]?\d+)?\s*\S*\s+(?:below|above its)|exceeds by -|short by -"
)
RELATED = re.compile(r"^    (?!fix: )(?P<label>.*\S)  \((?P<place>[^()]+:\d+:\d+)\)$")


def problems(output: str) -> list[str]:
    out = []
    for line in output.splitlines():
        if SCIENTIFIC_PERCENT.search(line):
            out.append(f"scientific percentage: {line}")
        if DOUBLE_NEGATIVE.search(line):
            out.append(f"double negative: {line}")
        # indented lines: a fix, a finding with the same cause as the one above, or a
        # related location (which must be labelled)
        if line.startswith("    ") and not line.startswith(("    fix: ", "    same cause: ")):
            match = RELATED.match(line)
            if match is None or "related location" in line or not match.group("label").strip():
                out.append(f"unlabelled related location: {line}")
    return out


@pytest.fixture(scope="module")
def repo(tmp_path_factory):
    root = tmp_path_factory.mktemp("repo")
    (root / ".git").mkdir()
    (root / "specs").mkdir()
    return root


def test_demo_output_reads_in_one_pass():
    done = subprocess.run(
        [sys.executable, "-m", "specguard", "demo", "--no-color", "--no-cache"],
        capture_output=True,
        timeout=300,
        env={**os.environ, "NO_COLOR": "1"},
    )
    assert done.returncode == 1, done.stderr
    output = done.stdout.decode("utf-8")
    assert problems(output) == []
    lines = output.splitlines()
    related = [line for line in lines if RELATED.match(line)]
    assert len(related) <= 0.4 * len(lines), f"{len(related)} of {len(lines)} lines are related locations"


@settings(max_examples=100, derandomize=True, deadline=None, database=None, suppress_health_check=list(HealthCheck))
@given(spec=valid_spec())
def test_generated_axes_read_in_one_pass(repo, spec):
    raw = (to_yaml(spec) + "\n").encode("utf-8")
    result, _payload = analyse(raw, len(raw), repo / FILE, FILE, repo)
    output = text_report.render(Report((result,)))
    assert problems(output) == []


# ------------------------------------------------------------ number forms
@pytest.mark.parametrize(
    ("ratio", "shown"),
    [(0.447, "44.7 %"), (75.12, "7512 %"), (0.0033, "0.33 %"), (1.0, "100 %"), (0.0, "0 %"), (12.345, "1234 %")],
)
def test_percent_never_scientific(ratio, shown):
    assert percent_text(ratio) == shown


def test_factor_and_count_forms():
    assert factor_text(43.8) == "43.8 : 1"
    assert factor_text(0.025) == "1 : 40"
    periods = format_value(7.5, "ratio", "count")
    assert periods == "7.5" and "%" not in periods
    assert plain_number(1.5e-7) == "0.00000015"


def test_signed_differences_worded_by_sign():
    assert format_value(-357.3, "temperature_difference", "under") == "357.3 K above"
    assert format_value(8.842, "temperature_difference", "under") == "8.842 K below"
    assert format_value(-4.44, "voltage", "over") == "4.44 V below"
    assert format_value(0.0, "voltage", "over") == "exactly at"


def test_thresholds_accept_percentages():
    ripple = FIGURE_DEFS["ripple_ratio"]
    assert threshold_si("30 %", ripple, "above") == pytest.approx(0.3)
    assert threshold_si("2.5%", ripple, "above") == pytest.approx(0.025)
    assert threshold_si(0.3, ripple, "above") == pytest.approx(0.3)
    with pytest.raises(ValueError):
        threshold_si("20 %", FIGURE_DEFS["pwm_periods_per_electrical_period"], "below")
