"""Unit-confusion mutation test: how many unit slips the check catches
(the measure is described in docs/reliability.md, row G13).

For every numeric field of three reference specs (every dimensional value and
every plain number such as ``max_duty``, ``pole_pairs``, ``chokes.count``), the
value is multiplied by a factor that a unit slip produces, keeping its unit
text ("85 uH" -> "85000 uH"):

    1e3, 1e-3   prefix slips (mH written as uH, ms as s, ...)
    9.549       rpm read as rad/s (60 / 2 pi)
    0.1047      rad/s read as rpm (2 pi / 60)
    sqrt(2)     peak versus RMS
    sqrt(3)     line-to-line versus phase

A mutant is *killed* when the check raises at least one finding the unmutated
spec does not raise: a new rule id, or a known rule at a new severity, a new
location or a new operating point. The requirement: at least 90 % of the 1e3
and 1e-3 mutants and at least 70 % of the rpm/rad-s mutants are killed over every numeric
field, and at least 60 % of the peak-for-RMS (sqrt 2) and line-for-phase (sqrt 3)
mutants over the fields where those slips occur (currents, voltages and the two
motor constants). Over every field the sqrt 2 / sqrt 3 rates stay near 50 %: about
half of those mutants move a value towards more margin (a larger rating, a longer
time constant), which no limit can flag; their all-field rates are regression
floors.

Speed: each reference spec is assembled once (library files resolved, so the
library values are mutated too, at the locations of the library files); each
mutant is the assembled in-memory data with one value replaced, run through the
model, the figures and the rule pack in this process.

Not counted (reported as "equivalent"): a zero value (0 rpm stays 0 rpm under
every factor) and an integer field whose rounded mutant equals the original.
Integer fields (pole_pairs, chokes.count) are rounded to the nearest whole
number, since a person writes whole numbers there; a factor that leaves the
field valid but wrong must be caught by the physics, not by a type error.
``format: 1`` is the format version, not a quantity, and is left alone.

The kill rates per factor are printed (visible with ``pytest -s``) and written to
a summary file in the temp directory whose path is printed too.
"""

from __future__ import annotations

import copy
import json
import math
import re
import tempfile
import time
from collections import defaultdict
from pathlib import Path

import pytest

from specguard.engine.evaluate import evaluate, load_pack
from specguard.figures import compute
from specguard.model import build, units
from specguard.source import Limits
from specguard.source.library import LibraryCache, assemble

ROOT = Path(__file__).resolve().parents[1]
SPECS = (
    "examples/robot/axes/sample-lift.axis.yaml",  # brushed DC, three library files
    "examples/robot/axes/carousel.axis.yaml",  # three-phase SVPWM, two library files
    "tests/mutation/belt-drive.axis.yaml",  # three-phase six-step, self-contained
)
FACTORS = {
    "x1000": 1e3,
    "x0.001": 1e-3,
    "x9.549": 30.0 / math.pi,
    "x0.1047": math.pi / 30.0,
    "xsqrt2": math.sqrt(2.0),
    "xsqrt3": math.sqrt(3.0),
}
PREFIX_FACTORS = ("x1000", "x0.001")
# Where each non-prefix slip can actually happen (docs/reliability.md G04): rpm against
# rad/s in speeds and in back-EMF constants per speed; peak against RMS in
# currents, voltages and the constants; line-to-line against phase (sqrt 3) in
# voltages, currents (delta windings) and the constants. (Resistance and inductance
# differ by 2 between terminals and a star phase, not by sqrt 3.) The kill rate over
# these fields is printed beside the rate over every field; for sqrt 2 and sqrt 3
# it is the measure with a required share (SLIP_PRONE_REQUIRED).
SLIP_PRONE = {
    "x9.549": {"speed", "back_emf_constant"},
    "x0.1047": {"speed", "back_emf_constant"},
    "xsqrt2": {"current", "voltage", "torque_constant", "back_emf_constant"},
    "xsqrt3": {"current", "voltage", "torque_constant", "back_emf_constant"},
}
PREFIX_REQUIRED = 0.90
OTHER_REQUIRED = 0.70
# peak-for-RMS and line-for-phase slips, over the fields where they occur
SLIP_PRONE_REQUIRED = 0.60
SLIP_PRONE_MEASURED = ("xsqrt2", "xsqrt3")
# Plain names of the factors for the test ids and the printed summary.
FACTOR_WORDS = {
    "x1000": "prefix-slip-x1000",
    "x0.001": "prefix-slip-x0.001",
    "x9.549": "rpm-read-as-rad-per-s",
    "x0.1047": "rad-per-s-read-as-rpm",
    "xsqrt2": "peak-for-rms",
    "xsqrt3": "line-for-phase",
}
NOT_MUTATED = {("format",)}

# "<number>[ ]<unit>" as the unit grammar writes it (docs/units.md).
_QUANTITY = re.compile(r"^(\s*)([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)( ?)(\S.*?)(\s*)$")


def _leaves(node, path=()):
    """(document path, value) of every numeric leaf: quantities and plain numbers."""
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _leaves(value, path + (key,))
    elif isinstance(node, list):
        for index, value in enumerate(node):
            yield from _leaves(value, path + (index,))
    elif isinstance(node, bool):
        return
    elif isinstance(node, (int, float)):
        if path not in NOT_MUTATED:
            yield path, node
    elif isinstance(node, str) and _QUANTITY.match(node):
        yield path, node


def dimension_of(value) -> str:
    """The dimension whose unit table holds the value's unit text ("number" for plain numbers)."""
    if not isinstance(value, str):
        return "number"
    unit = _QUANTITY.match(value).group(4)
    for dimension in units.DIMENSIONS:
        if unit in units.accepted_units(dimension):
            return dimension
    return "unknown"


def _number_text(value: float) -> str:
    return f"{value:.6g}"


def mutate_value(value, factor: float):
    """The mutated value, or None when the mutant equals the original (equivalent)."""
    if isinstance(value, int):
        new = int(round(value * factor))
        return None if new == value else new
    if isinstance(value, float):
        new = value * factor
        return None if new == value else new
    m = _QUANTITY.match(value)
    lead, number, space, unit, trail = m.groups()
    x = float(number)
    if x == 0.0:
        return None
    return f"{lead}{_number_text(x * factor)}{space}{unit}{trail}"


def _set(data, path, value):
    node = data
    for part in path[:-1]:
        node = node[part]
    node[path[-1]] = value


def _key(finding):
    loc = finding.location
    return (finding.rule, finding.severity, loc.file, loc.line, loc.column, finding.operating_point)


class Checker:
    """The in-process check of one assembled spec: model, figures, rules."""

    def __init__(self, pack):
        self.pack = pack

    def findings(self, data, locate):
        spec, model_findings = build(data, locate)
        found = list(model_findings)
        if spec is not None:
            figures = compute(spec)
            found.extend(evaluate(spec, figures, locate, self.pack))
        return found


def assemble_spec(rel: str):
    path = ROOT / rel
    raw = path.read_bytes()
    limits = Limits()
    doc = assemble(raw, len(raw), path, ROOT, limits, LibraryCache(limits))
    assert doc.data is not None and not doc.findings, (rel, [f.message for f in doc.findings])
    return doc


def run_mutation(pack=None):
    """Mutate every numeric field of every reference spec by every factor.

    Returns (per-factor counts {factor: [killed, total]}, survivors, equivalents,
    internal errors, per-spec counts, per-factor counts over the slip-prone fields)."""
    checker = Checker(pack or load_pack())
    counts = {name: [0, 0] for name in FACTORS}
    per_spec = defaultdict(lambda: [0, 0])
    prone = {name: [0, 0] for name in SLIP_PRONE}
    survivors: list[tuple[str, str, str, object, object]] = []
    equivalent: list[tuple[str, str, str]] = []
    crashes: list[str] = []
    for rel in SPECS:
        doc = assemble_spec(rel)
        baseline = checker.findings(doc.data, doc.locate)
        assert not [f for f in baseline if f.rule == "internal-error"], rel
        known = {_key(f) for f in baseline}
        for path, value in list(_leaves(doc.data)):
            where = "/".join(map(str, path))
            dimension = dimension_of(value)
            for fname, factor in FACTORS.items():
                new = mutate_value(value, factor)
                if new is None:
                    equivalent.append((rel, where, fname))
                    continue
                data = copy.deepcopy(doc.data)
                _set(data, path, new)
                try:
                    found = checker.findings(data, doc.locate)
                except Exception as exc:  # a crash is a bug, never a kill
                    crashes.append(f"{rel} {where} {fname}: {type(exc).__name__}: {exc}")
                    continue
                crashes.extend(f"{rel} {where} {fname}: {f.message}" for f in found if f.rule == "internal-error")
                new_keys = {_key(f) for f in found} - known
                counts[fname][1] += 1
                per_spec[rel][1] += 1
                in_prone = dimension in SLIP_PRONE.get(fname, ())
                if in_prone:
                    prone[fname][1] += 1
                if new_keys:
                    counts[fname][0] += 1
                    per_spec[rel][0] += 1
                    if in_prone:
                        prone[fname][0] += 1
                else:
                    survivors.append((rel, where, fname, value, new))
    return counts, survivors, equivalent, crashes, dict(per_spec), prone


def _rate(killed: int, total: int) -> float:
    return killed / total if total else 1.0


def summary_text(counts, survivors, equivalent, per_spec, seconds, prone) -> str:
    lines = ["unit slips caught by the check (share of mutants with a new finding)", "", "  over every numeric field:"]
    for name, (killed, total) in counts.items():
        need = _required_all_fields(name)
        lines.append(
            f"  {FACTOR_WORDS[name]:22s} {killed:4d}/{total:<4d} caught  {_rate(killed, total):6.1%}  "
            + (f"(required {need:.0%})" if need is not None else f"(floor {FLOORS[name]:.0%})")
        )
    killed = sum(k for k, _ in counts.values())
    total = sum(t for _, t in counts.values())
    lines.append(f"  {'all slips':22s} {killed:4d}/{total:<4d} caught  {_rate(killed, total):6.1%}")
    lines.append("")
    lines.append("  over the fields where the slip can happen:")
    for name, (k, t) in prone.items():
        kinds = ", ".join(sorted(SLIP_PRONE[name]))
        need = f"required {SLIP_PRONE_REQUIRED:.0%}; " if name in SLIP_PRONE_MEASURED else ""
        lines.append(f"  {FACTOR_WORDS[name]:22s} {k:4d}/{t:<4d} caught  {_rate(k, t):6.1%}  ({need}{kinds})")
    lines.append("")
    for rel, (k, t) in per_spec.items():
        lines.append(f"  {rel}: {k}/{t} ({_rate(k, t):.1%})")
    lines.append(f"  equivalent mutants not counted: {len(equivalent)}; time {seconds:.1f} s")
    lines.append("")
    lines.append(f"survivors ({len(survivors)}):")
    for rel, where, fname, old, new in survivors:
        lines.append(f"  {Path(rel).name} {where} {FACTOR_WORDS[fname]}: {old!r} -> {new!r}")
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def outcome():
    start = time.perf_counter()
    counts, survivors, equivalent, crashes, per_spec, prone = run_mutation()
    seconds = time.perf_counter() - start
    text = summary_text(counts, survivors, equivalent, per_spec, seconds, prone)
    out = Path(tempfile.gettempdir()) / "specguard-unit-mutation-summary.txt"
    out.write_text(text, encoding="utf-8")
    (out.with_suffix(".json")).write_text(
        json.dumps(
            {
                "counts": counts,
                "slip_prone_counts": prone,
                "survivors": [list(map(str, s)) for s in survivors],
                "seconds": seconds,
            },
            indent=1,
        ),
        encoding="utf-8",
    )
    print("\n" + text + f"summary written to {out}")
    return counts, survivors, crashes, prone


def test_mutants_never_crash_the_check(outcome):
    _counts, _survivors, crashes, _prone = outcome
    assert not crashes, crashes[:20]


def test_every_spec_has_many_mutants(outcome):
    counts, _s, _c, _p = outcome
    # three specs with dozens of numeric fields each; a broken field walk would
    # silently shrink the test
    for name, (_killed, total) in counts.items():
        assert total >= 100, (name, total)


# Over every field the sqrt(2) and sqrt(3) rates stay near 50 % (46 % and 51 % when
# this was written): a 41 % or 73 % change of a duration, a capacitance, a timer
# clock, a time constant or a rating stays inside what the physics can call
# plausible, and about half of these mutants move a value towards more margin (a
# larger rating, a longer time constant), which no limit can flag. Only redundant
# data catches those (a declared value that the spec's other values also give, like
# the mechanical time constant). So these two slips are measured where they occur
# (SLIP_PRONE_REQUIRED), and their all-field rates are regression floors.
# Floors: rates reached when the plausibility rules were added (a change which
# loses kills shows up; raise them as rules improve).
# x0.1047 was 0.77: the current-loop low-bandwidth info now fires below 20 Hz only (a loop
# bandwidth of a few hundred hertz is a plausible design, not a unit slip), so a 2 kHz
# bandwidth read as 209 Hz is no longer caught; measured 76.2 % after that change.
FLOORS = {"x1000": 0.95, "x0.001": 0.92, "x9.549": 0.88, "x0.1047": 0.75, "xsqrt2": 0.45, "xsqrt3": 0.50}


def _required_all_fields(factor: str) -> float | None:
    if factor in PREFIX_FACTORS:
        return PREFIX_REQUIRED
    return None if factor in SLIP_PRONE_MEASURED else OTHER_REQUIRED


def _survivors_of(survivors, factor: str) -> list[str]:
    return [f"{Path(r).name} {w}: {o!r} -> {n!r}" for r, w, f, o, n in survivors if f == factor]


@pytest.mark.parametrize(
    "factor", [f for f in FACTORS if _required_all_fields(f) is not None], ids=lambda f: FACTOR_WORDS[f]
)
def test_slips_caught_over_every_field(outcome, factor):
    counts, survivors, _c, _p = outcome
    killed, total = counts[factor]
    need = _required_all_fields(factor)
    assert _rate(killed, total) >= need, (
        f"{FACTOR_WORDS[factor]}: {killed}/{total} caught ({_rate(killed, total):.1%}), need {need:.0%}; "
        f"survivors: {_survivors_of(survivors, factor)}"
    )


@pytest.mark.parametrize("factor", SLIP_PRONE_MEASURED, ids=lambda f: FACTOR_WORDS[f])
def test_peak_and_line_slips_caught_where_they_occur(outcome, factor):
    """Peak-for-RMS and line-for-phase slips caught on the fields where they occur
    (currents, voltages, torque and back-EMF constants): at least 60 %."""
    _counts, survivors, _c, prone = outcome
    killed, total = prone[factor]
    assert total >= 30, (factor, total)  # the field walk found the slip-prone fields
    assert _rate(killed, total) >= SLIP_PRONE_REQUIRED, (
        f"{FACTOR_WORDS[factor]}: {killed}/{total} caught on the fields where it occurs "
        f"({_rate(killed, total):.1%}), need {SLIP_PRONE_REQUIRED:.0%}; survivors: {_survivors_of(survivors, factor)}"
    )


@pytest.mark.parametrize("factor", list(FACTORS), ids=lambda f: FACTOR_WORDS[f])
def test_catch_rate_does_not_regress(outcome, factor):
    counts, _s, _c, _p = outcome
    killed, total = counts[factor]
    assert _rate(killed, total) >= FLOORS[factor], (FACTOR_WORDS[factor], killed, total)


def test_prefix_slips_together(outcome):
    """The x1000 and x0.001 mutants together: at least 90 % caught."""
    counts, _s, _c, _p = outcome
    k = sum(counts[f][0] for f in PREFIX_FACTORS)
    t = sum(counts[f][1] for f in PREFIX_FACTORS)
    assert _rate(k, t) >= PREFIX_REQUIRED, (k, t)


def test_mutation_helpers():
    """The mutation itself: unit text kept, zero and unchanged integers equivalent."""
    assert mutate_value("85 uH", 1e3) == "85000 uH"
    assert mutate_value("1.5 s", 1e-3) == "0.0015 s"
    assert mutate_value("4200rpm", 2.0) == "8400rpm"
    assert mutate_value("0 rpm", 1e3) is None
    assert mutate_value(4, math.sqrt(2.0)) == 6
    assert mutate_value(2, 1.1) is None
    assert mutate_value(0.95, 1e-3) == pytest.approx(0.00095)
    assert dict(_leaves({"format": 1, "a": {"b": "2 V", "c": True, "d": "x"}, "e": [3]})) == {
        ("a", "b"): "2 V",
        ("e", 0): 3,
    }
