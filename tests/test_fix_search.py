"""The fix search's bracket narrowing (specguard.engine.fixes) on model functions whose
root is known, against scipy's ``brentq`` (a bracketing root finder outside the project).

The three shapes are those the levers give: the ripple against added inductance
(a / (L0 + L), convex, searched linearly from no choke), the ripple against the PWM
frequency with a dead-time share that grows with it (k / f + c f, searched on a log
scale), and the share of braking energy a resistor leaves (A - B / R, an at-most lever
searched as a conductance from no resistor). The search must end on the safe side of
the root, within its resolution (2e-3) and one printed digit (4 significant digits,
rounded to the safe side as the levers print), and take few evaluations: each one is a
whole check of a design variant.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import pytest
from scipy.optimize import brentq

from specguard.engine.fixes import _RESOLUTION, _bracketed, step_and_bisect

DIGIT = 1e-3  # one unit in the 4th significant digit, relative (at most)


@dataclass(frozen=True)
class _Edit:
    amount: float


def _printed(x: float, at_least: bool) -> float:
    """``x`` to 4 significant digits, rounded to the safe side (as the levers print)."""
    scale = 10.0 ** (math.floor(math.log10(x)) - 3)
    return (math.ceil(x / scale - 1e-9) if at_least else math.floor(x / scale + 1e-9)) * scale


class _Model:
    """attempt() and figure() of a lever whose figure is ``g(amount)``; a variant passes
    when the figure is at or below ``target``."""

    def __init__(self, g, target: float, at_least: bool) -> None:
        self.g, self.target, self.at_least = g, target, at_least
        self.calls = 0

    def attempt(self, amount: float):
        self.calls += 1
        edit = _Edit(_printed(amount, self.at_least))
        return edit, ("clear" if self.g(edit.amount) <= self.target else None)

    def figure(self, edit) -> float:
        return self.g(edit.amount)


def _check(found, root: float, at_least: bool) -> None:
    amount = found[0].amount
    assert found[1] == "clear"
    if at_least:
        assert root <= amount <= root * (1.0 + _RESOLUTION) * (1.0 + DIGIT)
    else:
        assert root / ((1.0 + _RESOLUTION) * (1.0 + DIGIT)) <= amount <= root


def test_added_inductance_from_no_choke():
    # ripple of a 100 uH winding with L added: 2 A at none, limit 0.4 A
    g = lambda L: 2.0 * 100e-6 / (100e-6 + L)  # noqa: E731
    root = brentq(lambda L: g(L) - 0.4, 0.0, 1.0, xtol=1e-15)  # 400 uH
    model = _Model(g, 0.4, at_least=True)
    start = model.attempt(root * 1.17)  # a closed form 17 % too high
    linear = (lambda x: x, lambda u: u, 0.0, g(0.0))
    found = _bracketed(True, model.attempt, start, None, model.figure, 0.4, linear)
    _check(found, root, True)
    assert model.calls <= 6


def test_pwm_frequency_with_a_growing_dead_time_share():
    g = lambda f: 3.0e4 / f + 2.0e-7 * f  # noqa: E731  ripple falls, the dead-time share rises
    now = 2.0e4
    root = brentq(lambda f: g(f) - 0.45, now, 1.0e5, xtol=1e-9)
    model = _Model(g, 0.45, at_least=True)
    start = model.attempt(root * 1.05)
    logs = (math.log, math.exp, math.log(now), g(now))
    found = _bracketed(True, model.attempt, start, None, model.figure, 0.45, logs)
    _check(found, root, True)
    assert model.calls <= 5


def test_brake_resistor_at_most_from_none():
    g = lambda R: 3.2 - 160.0 / R  # noqa: E731  share of the braking energy left to the bus
    root = brentq(lambda R: g(R) - 1.0, 1.0, 1.0e4, xtol=1e-12)  # 72.7 ohm
    model = _Model(g, 1.0, at_least=False)
    start = model.attempt(root * 0.75)  # the peak-power closed form, 25 % low
    conductance = (lambda x: 1.0 / x, lambda u: 1.0 / u if u > 0 else math.inf, 0.0, g(math.inf))
    found = _bracketed(False, model.attempt, start, None, model.figure, 1.0, conductance)
    _check(found, root, False)
    assert model.calls <= 3


@pytest.mark.parametrize("guided", [True, False])
def test_stepping_out_then_narrowing(guided):
    # the closed form falls 30 % short: five outward steps (0.2 % to 100 %) find a
    # passing amount, the bracket narrows to the root with the figure's guidance (at
    # most five more), or by bisection without it
    g = lambda f: 3.0e4 / f  # noqa: E731
    root = brentq(lambda f: g(f) - 0.45, 1.0, 1.0e6, xtol=1e-9)
    model = _Model(g, 0.45, at_least=True)
    found = step_and_bisect(
        root * 0.7, True, model.attempt, figure=model.figure if guided else None, target=0.45 if guided else None
    )
    assert found is not None
    _check(found, root, True)
    assert model.calls <= (10 if guided else 14)


def test_a_variant_failing_for_another_reason_falls_back_to_bisection():
    # past 80 kHz another rule fires at the fail level: the figure says pass there,
    # the variant does not; the search must not trust the figure across that edge
    g = lambda f: 3.0e4 / f  # noqa: E731
    model = _Model(g, 0.45, at_least=True)

    def attempt(amount):
        edit, outcome = model.attempt(amount)
        return edit, (outcome if edit.amount < 8.0e4 else None)

    root = brentq(lambda f: g(f) - 0.45, 1.0, 1.0e6, xtol=1e-9)
    start = attempt(root * 1.1)
    logs = (math.log, math.exp, math.log(2.0e4), g(2.0e4))
    found = _bracketed(True, attempt, start, None, model.figure, 0.45, logs)
    _check(found, root, True)
