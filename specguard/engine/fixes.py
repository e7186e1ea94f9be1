"""Verified fixes: every fix printed under a finding has been applied to the spec and
the whole rule pack evaluated again on the changed spec.

A fix is kept only when, applied exactly as printed, it clears its finding at the
finding's band (the same rule at the same operating point is gone, or fires only at
a lower band) and creates no finding at or above the fail level that the spec did
not have. The closed-form remedy of the figures layer gives the first candidate;
where the coupled model (dead time, control headroom, inductance table, the
chokes' resistance, the scheme's frequency) moves the answer, the amount is
searched on the full model: stepped outwards until the finding clears, then
bisected back, always on printed (rounded) values. A lever that cannot help is said
once in the finding's message, never listed as a fix.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

from ..findings import SEVERITY_ORDER, Change, Finding, Fix

# Outward steps of the search when the closed form falls short (relative change),
# then bisection steps between the last failing and the first passing amount.
_STEPS = (0.002, 0.01, 0.05, 0.2, 1.0, 4.0, 16.0)
# The bisection stops when the bracket is narrower than the printed precision can
# resolve (4 significant digits: a relative step of about 1e-3).
_RESOLUTION = 2e-3

# (findings of the whole pack, figures) of changed data; None: the data does not build
Variant = Callable[[dict], "tuple[list[Finding], Any] | None"]


@dataclass
class FixContext:
    """What verifying the fixes of one spec needs."""

    data: dict  # the assembled spec data (library values merged in)
    spec: Any
    figures: Any
    fail_level: str
    run_variant: Variant  # findings and figures of changed data (None: the data does not build)
    candidate: Callable[..., Any]  # (remedy name, point, threshold) -> Remedy or None
    # (document path) -> (file, line, column, end line, end column) of a value written
    # in the axis file itself, else None
    region: Callable[[tuple], tuple | None] = lambda _path: None
    pwm_frequency_max: float = 0.0  # the policy's bound on the PWM-frequency lever (0: default)
    memo: dict | None = None
    rule_figure: Callable[[str], str | None] = lambda _rule: None  # the figure a rule judges


def _key(f: Finding) -> tuple[str, str | None]:
    return (f.rule, f.operating_point)


def _failing(findings: list[Finding], level: str) -> set[tuple[str, str | None]]:
    threshold = SEVERITY_ORDER[level]
    return {_key(f) for f in findings if SEVERITY_ORDER[f.severity] >= threshold and not f.suppressed}


def _judged(ctx: FixContext, data: dict):
    memo = ctx.memo if ctx.memo is not None else {}
    ctx.memo = memo
    key = json.dumps(data, sort_keys=True, default=str)
    if key not in memo:
        memo[key] = ctx.run_variant(data)
    return memo[key]


def _variant(ctx: FixContext, data: dict) -> list[Finding] | None:
    judged = _judged(ctx, data)
    return None if judged is None else judged[0]


def _figure(ctx: FixContext, figures, finding: Finding) -> float | None:
    """The value of the figure the finding's rule judges, at its point."""
    name = ctx.rule_figure(finding.rule)
    if name is None or figures is None:
        return None
    value = figures.value(name, finding.operating_point) if finding.operating_point else figures.value(name)
    if value is None:
        value = figures.value(name)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        return None
    return float(value)


def _outcome(finding: Finding, after: list[Finding]) -> str | None:
    """The band the finding's rule still reaches at its point after a change ("clear"
    when it is gone), or None when it still fires at its band or above."""
    same = [f for f in after if _key(f) == _key(finding)]
    if not same:
        return "clear"
    top = max(SEVERITY_ORDER[f.severity] for f in same)
    if top >= SEVERITY_ORDER[finding.severity]:
        return None
    return next(s for s, rank in SEVERITY_ORDER.items() if rank == top)


def _acceptable(ctx: FixContext, finding: Finding, before_failing: set, after: list[Finding] | None):
    if after is None:
        return None
    reached = _outcome(finding, after)
    if reached is None:
        return None
    if _failing(after, ctx.fail_level) - before_failing:
        return None  # trades this finding for a new one at the fail level
    return reached


def _search(
    ctx: FixContext,
    lever,
    finding: Finding,
    start: float,
    before_failing: set,
    aim_clear: bool,
    steps=None,
    target: float | None = None,
):
    """The least change of ``lever`` from ``start`` (SI) that clears ``finding`` (at
    its band, or entirely with ``aim_clear``): (Edit, band reached) or None.
    ``steps``: the outward steps to try when ``start`` falls short (default all).
    ``target``: the threshold the finding's figure must reach (for the secant)."""

    def attempt(amount: float):
        if not math.isfinite(amount) or amount <= 0:
            return None, None
        edit = lever.edit(ctx.data, ctx.spec, amount)
        if edit is None:
            return None, None
        reached = _acceptable(ctx, finding, before_failing, _variant(ctx, edit.data))
        if reached is not None and aim_clear and reached != "clear":
            reached = None
        return edit, reached

    edit, reached = attempt(start)
    if reached is not None:
        if getattr(lever, "categorical", False) or edit is None:
            return edit, reached
        guess = _secant_root(ctx, lever, finding, edit, target)
        if guess is not None and abs(guess / edit.amount - 1.0) <= _RESOLUTION:
            return edit, reached  # the closed form is at the root of the full model already
        return _tightened(start, lever.at_least, attempt, (edit, reached), guess)
    if getattr(lever, "categorical", False):
        return None  # one edit, no amount to move
    if edit is None and lever.at_least:
        return None  # beyond the lever's bound already: larger steps are too
    return step_and_bisect(start, lever.at_least, attempt, _STEPS if steps is None else steps)


def _secant_root(ctx: FixContext, lever, finding: Finding, edit, threshold: float | None) -> float | None:
    """Where the finding's figure meets ``threshold``, by the secant through the spec as
    written and the passing candidate (amounts on a log scale where both are positive);
    None when the figures do not say."""
    if threshold is None:
        return None
    before = _figure(ctx, ctx.figures, finding)
    judged = _judged(ctx, edit.data)
    after = _figure(ctx, judged[1] if judged is not None else None, finding)
    now = 0.0 if lever.name == "added_inductance" else lever.current(ctx.spec)
    if before is None or after is None or now is None or after == before or edit.amount <= 0:
        return None
    share = (threshold - before) / (after - before)
    if not 0.0 < share <= 1.0:
        return None
    if now > 0:
        return math.exp(math.log(now) + share * (math.log(edit.amount) - math.log(now)))
    return share * edit.amount


def _tightened(start: float, at_least: bool, attempt, passing, guess: float | None = None):
    """A passing closed-form amount moved back towards the spec until the coupled model
    says no: the closed form holds what the change also moves (an inductance that falls
    with the ripple frequency, the dead time's share) at their present values, so it can
    ask for more than the full model needs. The secant's ``guess`` first (just on its
    safe side), else one step of the resolution back, then 1 %, 5 %, 20 % and 50 % (each
    from the last passing amount), then bisection.
    Returns (edit, outcome)."""
    resolution = _RESOLUTION
    best, high = passing, start
    low = None
    if guess is not None and (guess < start if at_least else guess > start):
        amount = guess * (1.0 + resolution / 2.0) if at_least else guess / (1.0 + resolution / 2.0)
        edit, outcome = attempt(amount)
        if outcome is None:
            low = amount
        else:
            best, high = (edit, outcome), amount
    for step in (resolution, 0.01, 0.05, 0.2, 0.5) if low is None else ():
        amount = high / (1.0 + step) if at_least else high * (1.0 + step)
        edit, outcome = attempt(amount)
        if outcome is None:
            low = amount
            break
        best, high = (edit, outcome), amount
    if low is None:
        return best
    while max(high, low) / min(high, low) - 1.0 > resolution:
        mid = math.sqrt(low * high)
        edit, outcome = attempt(mid)
        if edit is not None and edit.amount == best[0].amount:
            break  # the printed value no longer moves
        if outcome is not None:
            best, high = (edit, outcome), mid
        else:
            low = mid
    return best


def step_and_bisect(start: float, at_least: bool, attempt, steps=_STEPS, resolution: float = _RESOLUTION):
    """The least passing amount of a lever beyond ``start``: step outwards by the relative
    ``steps`` until ``attempt(amount)`` passes, then bisect (geometric mean) back until
    the bracket is narrower than ``resolution`` or the printed amount stops moving.
    ``attempt(amount)`` returns (edit, outcome): edit None past the lever's bound,
    outcome None when the variant does not pass. Returns (edit, outcome) or None."""
    low = start
    found = None
    for step in steps:
        amount = start * (1.0 + step) if at_least else start / (1.0 + step)
        edit, outcome = attempt(amount)
        if outcome is not None:
            found = (amount, edit, outcome)
            break
        if edit is None:
            return None  # past the lever's bound
        low = amount
    if found is None:
        return None
    high, best_edit, best = found
    while max(high, low) / min(high, low) - 1.0 > resolution:
        mid = math.sqrt(low * high)
        edit, outcome = attempt(mid)
        if edit is not None and best_edit is not None and edit.amount == best_edit.amount:
            break  # the printed value no longer moves
        if outcome is not None:
            high, best_edit, best = mid, edit, outcome
        else:
            low = mid
    return best_edit, best


def _side_effects(ctx: FixContext, edit, after: list[Finding] | None, before: list[Finding]) -> tuple[str, ...]:
    out = []
    gone = sorted({f.rule for f in before} - {f.rule for f in after or []})
    if gone:
        out.append("also clears " + ", ".join(gone))
    return tuple(out)


def verify(
    findings: list[Finding],
    ctx: FixContext,
    remedy_names: Callable[[str], tuple[str, ...]],
    before: list[Finding] | None = None,
) -> list[Finding]:
    """The findings with their fixes verified (``remedies`` = the fixes' texts,
    ``fixes`` = the structured edits), cheapest first; non-fixes moved into the
    message as one clause."""
    from ..figures.levers import lever_for

    before_failing = _failing(findings if before is None else before, ctx.fail_level)
    out: list[Finding] = []
    for finding in findings:
        names = remedy_names(finding.rule) if finding.aim is not None else ()
        if not names:
            out.append(finding)
            continue
        assert finding.aim is not None
        band_threshold, lowest_threshold, lowest_band = finding.aim
        fixes: list[Fix] = []
        unhelpful: list[str] = []
        for name in names:
            lever = lever_for(name, ctx.spec, ctx.pwm_frequency_max)
            remedy = ctx.candidate(name, ctx.spec, ctx.figures, point=finding.operating_point, limit=band_threshold)
            if remedy is None or lever is None:
                continue
            if remedy.value is None:
                unhelpful.append(remedy.text)
                continue
            # an info finding gates nothing: its fix is the closed form, checked once,
            # or a step past it; the search on the full model is for warnings and errors
            steps = _STEPS[:1] if finding.severity == "info" else None
            found = _search(
                ctx, lever, finding, float(remedy.value), before_failing, False, steps, target=band_threshold
            )
            if found is None:
                continue
            edit, reached = found
            after = _variant(ctx, edit.data)
            text = edit.text
            if reached != "clear" and lowest_threshold != band_threshold and not getattr(lever, "categorical", False):
                text += _also_clears(ctx, lever, name, finding, lowest_threshold, lowest_band, edit, before_failing)
            fixes.append(
                Fix(
                    text=text,
                    changes=tuple(Change(p, v, ctx.region(_path(p))) for p, v in edit.changes),
                    clears=tuple(sorted({f.rule for f in findings if _key(f) not in _keys(after)})),
                    reaches=reached,
                    side_effects=_side_effects(ctx, edit, after, findings),
                    cost=edit.cost,
                )
            )
        fixes.sort(key=lambda f: (f.cost, f.text))
        message = finding.message
        if unhelpful:
            message += "; " + "; ".join(_clause(u) for u in unhelpful)
        if not fixes and not unhelpful and finding.severity != "info":
            message += "; no single change of the levers checked clears it without a new finding at the fail level"
        out.append(replace(finding, message=message, remedies=tuple(f.text for f in fixes), fixes=tuple(fixes)))
    return out


def _path(pointer: str) -> tuple[str, ...]:
    return tuple(p.replace("~1", "/").replace("~0", "~") for p in pointer.split("/")[1:])


def _keys(findings: list[Finding] | None) -> set:
    return {_key(f) for f in findings or []}


def _clause(text: str) -> str:
    return text.rstrip(".")


def _also_clears(ctx, lever, name, finding, lowest_threshold, lowest_band, edit, before_failing) -> str:
    """ ", clears the error; 41 uH more also clears the warning" for a fix that leaves
    the finding's rule at a lower band."""
    remedy = ctx.candidate(name, ctx.spec, ctx.figures, point=finding.operating_point, limit=lowest_threshold)
    if remedy is None or remedy.value is None:
        return f" (clears the {finding.severity}; the {lowest_band} stays)"
    start = max(float(remedy.value), edit.amount) if lever.at_least else min(float(remedy.value), edit.amount)
    found = _search(ctx, lever, finding, start, before_failing, aim_clear=True, target=lowest_threshold)
    if found is None:
        return f" (clears the {finding.severity}; the {lowest_band} stays)"
    more, _ = found
    from ..model.units import format_si

    delta = format_si(abs(more.amount - edit.amount), lever.dimension)
    word = "more" if lever.at_least else "lower"
    return f" (clears the {finding.severity}; {delta} {word} also clears the {lowest_band})"
