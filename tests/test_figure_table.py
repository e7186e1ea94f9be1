"""The figure and remedy tables: each name written once.

A figure is one entry of ``specguard.figures.registry.Fig`` (its attribute name is
the figure's name); a remedy one entry of ``Rem`` and one function registered under it.
Code names them through the tables, so a misspelt name fails at import and in the
type check instead of leaving a figure silently absent. These tests keep it so: no
module spells a figure's or a remedy's name as a string, every remedy has its
function, and every figure of the table is, on every rule example, either computed or
absent with its reason.

The check values are the tables themselves and the rule pack's own examples; the
property (a figure is present or says why not) is the figure layer's contract
(specguard/figures/__init__.py).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from specguard.engine.evaluate import example_data, load_pack
from specguard.figures import compute
from specguard.figures.levers import COST_WEIGHT, lever_for
from specguard.figures.registry import FIGURE_DEFS, FIGURES, REMEDIES, Fig, Rem
from specguard.figures.remedies import solver_names
from specguard.findings import Location
from specguard.model import build

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "specguard"

# Strings that equal a table name but mean something else, each with what it means.
# A lever's name (specguard.figures.levers.COST_WEIGHT, the policy's fix_costs keys)
# may equal a figure or a remedy: it is the lever's own name, not the figure's.
LEVER_NAMES = frozenset(COST_WEIGHT)
NOT_A_FIGURE: dict[tuple[str, str], str] = {
    ("figures/curves.py", "ripple_frequency"): "a plot of the report (the ripple against the PWM frequency)",
    ("report/html.py", "ripple_frequency"): "the same plot's key",
    ("report/html.py", "duty"): "a plot's CSS class (the duty plot)",
}
# the tables themselves; physics names its functions like the figures they compute
EXEMPT = ("figures/registry.py", "physics/")


def _literals() -> list[tuple[str, int, str]]:
    names = set(FIGURE_DEFS) | set(REMEDIES)
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE).as_posix()
        if rel.startswith(EXEMPT):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        docstrings = {
            id(node.body[0].value)
            for node in ast.walk(tree)
            if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef))
            and node.body
            and isinstance(node.body[0], ast.Expr)
        }
        for node in ast.walk(tree):
            if isinstance(node, ast.Constant) and isinstance(node.value, str) and node.value in names:
                if id(node) not in docstrings:
                    found.append((rel, node.lineno, node.value))
    return found


def test_no_module_spells_a_table_name():
    spelt = [
        f"specguard/{rel}:{line}: {value!r}"
        for rel, line, value in _literals()
        if value not in LEVER_NAMES and (rel, value) not in NOT_A_FIGURE
    ]
    assert spelt == [], "name these through Fig or Rem:\n" + "\n".join(spelt)


def test_every_exception_is_still_used():
    used = {(rel, value) for rel, _line, value in _literals()}
    assert set(NOT_A_FIGURE) <= used


def test_the_table_reads_as_its_names():
    assert len({f.name for f in FIGURES}) == len(FIGURES) == len(FIGURE_DEFS)
    for fdef in FIGURES:
        assert getattr(Fig, fdef.name) == fdef.name
    assert Fig.ripple_ratio == "ripple_ratio"
    # the message forms live in the table: a margin reads "below"/"above" its limit
    assert FIGURE_DEFS[Fig.winding_margin].form == "under"
    assert FIGURE_DEFS[Fig.ripple_ratio].form is None


def test_every_remedy_has_its_function_and_a_lever():
    assert solver_names() == set(REMEDIES)
    assert {getattr(Rem, name) for name in REMEDIES} == set(REMEDIES)
    spec = _spec(example_data(_pack_rule("ripple-over-rated-current"), "fail"))
    for name in REMEDIES:
        lever = lever_for(name, spec, 250e3)
        assert lever is not None, name
        assert lever.name in LEVER_NAMES, (name, lever.name)


def _pack_rule(rule_id):
    return next(p for p in load_pack().rules if p.rule.id == rule_id)


def _spec(data):
    spec, findings = build(data, lambda p, key=False: (Location("x", 1, 1, path=tuple(p)), ()))
    assert spec is not None, findings
    return spec


# optional parts of a spec, removed together to reach the figures' "absent" branches
OPTIONAL = {
    (): ("chokes", "cable", "load", "profile"),
    ("stage",): ("current_limit", "current_loop", "brake_resistor", "max_supply_voltage", "overvoltage_trip"),
    ("stage", "pwm"): ("dead_time", "min_pulse", "timer_clock", "freewheeling"),
    ("stage", "supply"): ("range",),
    ("motor",): ("thermal", "peak_current", "max_speed", "rotor_inertia"),
}


def _stripped(data: dict) -> dict:
    import copy

    out = copy.deepcopy(data)
    for where, keys in OPTIONAL.items():
        node = out
        for key in where:
            node = node.get(key) or {}
        for key in keys:
            node.pop(key, None)
    return out


@pytest.mark.parametrize("which", ["pass", "fail", "stripped"])
def test_every_figure_is_computed_or_says_why_not(which):
    """On every rule's example spec (and each failing example with its optional parts
    removed), each figure of the table has a value (at every operating point, for a
    point figure) or a reason in ``missing``."""
    silent, built = set(), 0
    for prule in load_pack().rules:
        data = example_data(prule, "fail" if which == "stripped" else which)
        try:
            spec = _spec(_stripped(data) if which == "stripped" else data)
        except AssertionError:
            continue  # an example that fails to build is the model's test, not this one's
        built += 1
        fs = compute(spec)
        for fdef in FIGURES:
            if fdef.name in fs.missing:
                continue
            if fdef.scope == "axis":
                present = fdef.name in fs.axis
            else:
                present = all(fdef.name in values for _, values in fs.points)
            if not present:
                silent.add((prule.rule.id, fdef.name))
    # the built-in pack has 85 rules, each with examples (docs/rules.md); all 85 build
    # today, also stripped; 60 is a floor that leaves room for new rules' examples
    assert built >= 60
    assert sorted(silent) == []
