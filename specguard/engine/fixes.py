"""Verified fixes: every fix printed under a finding has been applied to the spec and
the whole rule pack evaluated again on the changed spec.

A fix is kept only when, applied exactly as printed, it clears its finding at the
finding's band (the same rule at the same operating point is gone, or fires only at
a lower band) and creates no finding at or above the fail level that the spec did
not have. The closed-form remedy of the figures layer gives the first candidate;
where the coupled model (dead time, control headroom, inductance table, the
chokes' resistance, the scheme's frequency) moves the answer, the amount is
searched on the full model: stepped outwards until the finding clears, then moved
back with the figure the rule judges as the guide (docs/physics.md §7.7), always on
printed (rounded) values. Where no lever alone clears a finding, the cheapest pair
of levers the search finds is the fix. A lever that cannot help is said once in the
finding's message, never listed as a fix.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

from ..findings import SEVERITY_ORDER, Change, Finding, Fix

# Outward steps of the search when the closed form falls short (relative change);
# the bracket between the last failing and the first passing amount is then narrowed.
_STEPS = (0.002, 0.01, 0.05, 0.2, 1.0, 4.0, 16.0)
# The search stops when the bracket is narrower than the printed precision can
# resolve (4 significant digits: a relative step of about 1e-3).
_RESOLUTION = 2e-3

# (findings of the whole pack, figures, spec model) of changed data; None: the data does
# not build
Variant = Callable[[dict], "tuple[list[Finding], Any, Any] | None"]


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
    cost_weights: Any = None  # the policy's lever cost weights (None: the defaults)
    # (rule id, severity) -> the threshold of that band in force (for a pair's second lever)
    threshold: Callable[[str, str], float | None] = lambda _rule, _severity: None
    remedy_names: Callable[[str], tuple[str, ...]] = lambda _rule: ()  # set by verify()
    # rule id -> True when a larger figure is worse, False when a smaller one is, None (a flag)
    worse_when_higher: Callable[[str], bool | None] = lambda _rule: None
    # (finding, its figure's value) of the findings the check shows one band lower than
    # judged (the verdict rests on the inductance estimate) while judged at the fail level
    softened: tuple = ()


def _key(f: Finding) -> tuple[str, str | None]:
    return (f.rule, f.operating_point)


def _failing(findings: list[Finding], level: str) -> set[tuple[str, str | None]]:
    threshold = SEVERITY_ORDER[level]
    return {_key(f) for f in findings if SEVERITY_ORDER[f.severity] >= threshold and not f.suppressed}


def _judged(ctx: FixContext, edit):
    """(findings, figures) of the spec with ``edit`` applied, judged once per distinct
    edit (its changes say everything it writes)."""
    memo = ctx.memo if ctx.memo is not None else {}
    ctx.memo = memo
    key = repr(edit.changes)
    if key not in memo:
        memo[key] = ctx.run_variant(edit.data)
    return memo[key]


def _variant(ctx: FixContext, edit) -> list[Finding] | None:
    judged = _judged(ctx, edit)
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


def _acceptable(ctx: FixContext, finding: Finding, before_failing: set, edit, new_ok: bool = False):
    judged = _judged(ctx, edit)
    if judged is None:
        return None
    after = judged[0]
    reached = _outcome(finding, after)
    if reached is None:
        return None
    if new_ok:
        return reached
    failing = _failing(after, ctx.fail_level)
    if failing - before_failing:
        return None  # trades this finding for a new one at the fail level
    shown_lower = [held for held in ctx.softened if _key(held[0]) in failing and held[0] is not finding]
    if any(_worse(ctx, held, judged[1]) for held in shown_lower):
        return None  # a finding shown below the fail level (it rests on the estimate) gets worse
    return reached


def _worse(ctx: FixContext, held, figures) -> bool:
    """Whether the figure of a finding the check shows one band lower (its verdict rests
    on the inductance estimate) moves towards its failing side in a variant: the band
    it would be shown at may then be the fail level (the catalogue value fails too),
    which judging the variant without the softening cannot see. Kept on the safe side:
    a change that makes such a figure worse is no fix."""
    finding, value = held
    after = _figure(ctx, figures, finding)
    higher = ctx.worse_when_higher(finding.rule)
    if after is None or higher is None:
        return False
    slack = 1e-9 * abs(value)
    return after > value + slack if higher else after < value - slack


def _search(
    ctx: FixContext,
    lever,
    finding: Finding,
    start: float,
    before_failing: set,
    aim_clear: bool,
    steps=None,
    target: float | None = None,
    guide: Finding | None = None,
    new_ok: bool = False,
):
    """The least change of ``lever`` from ``start`` (SI) that clears ``finding`` (at
    its band, or entirely with ``aim_clear``): (Edit, band reached) or None.
    ``steps``: the outward steps to try when ``start`` falls short (default all).
    ``target``: the threshold the figure of ``guide`` (default the finding) must reach
    (it guides the search). ``new_ok``: a new finding at the fail level does not count
    against the change (the first lever of a pair, whose partner takes it)."""
    guide = finding if guide is None else guide

    def attempt(amount: float):
        if not math.isfinite(amount) or amount <= 0:
            return None, None
        edit = lever.edit(ctx.data, ctx.spec, amount)
        if edit is None:
            return None, None
        reached = _acceptable(ctx, finding, before_failing, edit, new_ok)
        if reached is not None and aim_clear and reached != "clear":
            reached = None
        return edit, reached

    edit, reached = attempt(start)
    if reached is not None:
        if getattr(lever, "categorical", False) or edit is None:
            return edit, reached
        return _tightened(ctx, lever, guide, target, attempt, (edit, reached))
    if getattr(lever, "categorical", False):
        return None  # one edit, no amount to move
    if edit is None and lever.at_least:
        return None  # beyond the lever's bound already: larger steps are too
    figure = (lambda e: _edit_figure(ctx, e, guide)) if target is not None else None
    return step_and_bisect(
        start, lever.at_least, attempt, _STEPS if steps is None else steps, figure=figure, target=target
    )


def _edit_figure(ctx: FixContext, edit, finding: Finding) -> float | None:
    judged = _judged(ctx, edit)
    return _figure(ctx, judged[1] if judged is not None else None, finding)


def _coordinates(lever, spec):
    """(to, back, the spec's place) of the coordinate the search interpolates in: the
    added inductance linearly from none; an absent at-most lever (a brake resistor) as
    its reciprocal, the spec at zero (no resistor: no conductance); otherwise the
    logarithm of the amount (the spec's place None when it has none of this lever)."""
    if lever.name == "added_inductance":
        return (lambda x: x), (lambda u: u), 0.0
    now = lever.current(spec)
    if now is None or not now > 0:
        if not lever.at_least:
            return (lambda x: 1.0 / x), (lambda u: 1.0 / u if u > 0 else math.inf), 0.0
        return math.log, math.exp, None
    return math.log, math.exp, math.log(now)


def _tightened(ctx: FixContext, lever, finding: Finding, target: float | None, attempt, passing):
    """A passing closed-form amount moved back towards the spec until the coupled model
    says no: the closed form holds what the change also moves (an inductance that falls
    with the ripple frequency, the dead time's share) at their present values, so it can
    ask for more than the full model needs.

    When the secant through the spec as written and the candidate (the finding's figure
    against the lever, in :func:`_coordinates`) puts the threshold within the resolution
    of the candidate, the candidate is kept: the closed form was exact. Otherwise the
    spec is the failing end of a bracket and the search continues in
    :func:`_bracketed`. Returns (edit, outcome)."""
    to, back, here = _coordinates(lever, ctx.spec)
    edit = passing[0]
    g_pass = _edit_figure(ctx, edit, finding) if target is not None else None
    g_spec = _figure(ctx, ctx.figures, finding) if target is not None else None
    if here is not None and g_pass is not None and g_spec is not None and target is not None:
        u_pass = to(edit.amount)
        if (g_pass - target) * (g_spec - target) < 0:
            u = u_pass + (g_pass - target) * (here - u_pass) / (g_pass - g_spec)
            guess = back(u)
            if math.isfinite(guess) and guess > 0 and abs(guess / edit.amount - 1.0) <= _RESOLUTION:
                return passing  # the closed form is at the root of the full model already
    failing = None
    if here is None:  # no failing amount known: step back towards the spec until one fails
        best, high = passing, edit.amount
        for step in (_RESOLUTION, 0.01, 0.05, 0.2, 0.5):
            amount = high / (1.0 + step) if lever.at_least else high * (1.0 + step)
            e, outcome = attempt(amount)
            if e is None:
                return best
            if outcome is None:
                failing = e
                break
            best, high = (e, outcome), e.amount
        if failing is None:
            return best
        passing = best
    figure = (lambda e: _edit_figure(ctx, e, finding)) if target is not None else None
    return _bracketed(lever.at_least, attempt, passing, failing, figure, target, (to, back, here, g_spec))


def _bracketed(at_least: bool, attempt, passing, failing, figure, target, spec_end=None):
    """The least passing amount between a failing end and ``passing`` (edit, outcome):
    the secant through the two points judged last where it falls inside the bracket,
    else regula falsi on the bracket (Illinois: an end kept twice counts half), each amount
    nudged half a resolution to the safe side and at least one resolution from the
    passing end, until the bracket is narrower than the resolution or the printed amount
    stops moving; bisection where the figure does not say (none, or a variant failing for
    another finding). ``failing``: the failing end's edit, its amount (not judged), or
    None for the spec itself (``spec_end`` = (to, back, place, figure) of the spec).
    Returns (edit, outcome)."""
    if spec_end is not None:
        to, back = spec_end[0], spec_end[1]
    else:
        to, back = math.log, math.exp
    res = _RESOLUTION
    best = passing
    u_p = to(best[0].amount)
    g_p = figure(best[0]) if figure is not None else None
    if isinstance(failing, float):
        u_f, x_f, g_f = to(failing), failing, None
    elif failing is not None:
        u_f, x_f = to(failing.amount), failing.amount
        g_f = figure(failing) if figure is not None else None
    else:
        assert spec_end is not None
        u_f, x_f, g_f = spec_end[2], None, spec_end[3]
    w_p = None if g_p is None or target is None else g_p - target
    w_f = None if g_f is None or target is None else g_f - target
    kept = None
    # the two points judged last, (coordinate, figure - target): the secant through them
    # (superlinear near the root) where it falls inside the bracket
    recent = [(u_f, w_f), (u_p, w_p)]
    for _ in range(16):
        x_p = best[0].amount
        if x_f is not None and max(x_p, x_f) / min(x_p, x_f) - 1.0 <= res * (1.0 + 1e-9):
            break
        u = None
        guided = w_p is not None and w_f is not None and w_p * w_f < 0
        (u_a, w_a), (u_b, w_b) = recent
        if guided and w_a is not None and w_b is not None and w_a != w_b:
            u = u_b + w_b * (u_a - u_b) / (w_b - w_a)
            if not (math.isfinite(u) and min(u_p, u_f) < u < max(u_p, u_f)):
                u = None
        if u is None and w_p is not None and w_f is not None and w_p * w_f < 0:
            u = u_p + w_p * (u_f - u_p) / (w_p - w_f)  # regula falsi on the bracket
        if u is None or not math.isfinite(u):
            u = 0.5 * (u_p + u_f)
        x = back(u)
        x = x * (1.0 + res / 2.0) if at_least else x / (1.0 + res / 2.0)
        probe = x_p / (1.0 + res) if at_least else x_p * (1.0 + res)
        if not math.isfinite(x) or (x > probe if at_least else x < probe):
            x = probe
        if x_f is not None and (x <= x_f if at_least else x >= x_f):
            x = back(0.5 * (u_p + u_f))
        edit, outcome = attempt(x)
        if edit is None or edit.amount == best[0].amount:
            break  # past the lever's bound, or the printed value no longer moves
        g = figure(edit) if figure is not None else None
        w = None if g is None or target is None else g - target
        recent = [recent[1], (to(edit.amount), w)]
        if outcome is not None:
            best, u_p, w_p = (edit, outcome), to(edit.amount), w
            if kept == "failing" and w_f is not None:
                w_f /= 2.0  # Illinois: the failing end kept twice
            kept = "failing"
        else:
            u_f, x_f = to(edit.amount), edit.amount
            if w is None or w_p is None or w * w_p >= 0:
                w_p = w_f = None  # fails for another reason: bisect from here on
            else:
                w_f = w
                if kept == "passing":
                    w_p /= 2.0
                kept = "passing"
    return best


def step_and_bisect(start: float, at_least: bool, attempt, steps=_STEPS, figure=None, target=None):
    """The least passing amount of a lever beyond ``start``: step outwards by the relative
    ``steps`` until ``attempt(amount)`` passes, then narrow the bracket back
    (:func:`_bracketed`, guided by ``figure`` of an edit against ``target`` when given)
    until it is narrower than the resolution or the printed amount stops moving.
    ``attempt(amount)`` returns (edit, outcome): edit None past the lever's bound,
    outcome None when the variant does not pass. Returns (edit, outcome) or None."""
    low: Any = float(start)  # the amount known to fail
    for step in steps:
        amount = start * (1.0 + step) if at_least else start / (1.0 + step)
        edit, outcome = attempt(amount)
        if outcome is not None:
            break
        if edit is None:
            return None  # past the lever's bound
        low = edit
    else:
        return None
    return _bracketed(at_least, attempt, (edit, outcome), low, figure, target)


def _as_fix(ctx: FixContext, text: str, changes, after, findings: list[Finding], reached: str, cost: float) -> Fix:
    """A verified change as the outputs give it: its edits located in the axis file,
    the findings it clears, the band it reaches, the rules it also clears, its cost."""
    gone = sorted({f.rule for f in findings} - {f.rule for f in after or []})
    return Fix(
        text=text,
        changes=tuple(Change(p, v, ctx.region(_path(p))) for p, v in changes),
        clears=tuple(sorted({f.rule for f in findings if _key(f) not in _keys(after)})),
        reaches=reached,
        side_effects=("also clears " + ", ".join(gone),) if gone else (),
        cost=cost,
    )


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

    ctx.remedy_names = remedy_names  # a pair's second lever comes from another rule
    before_failing = _failing(findings if before is None else before, ctx.fail_level)
    if before is not None:
        judged_top: dict = {}
        for f in before:
            judged_top[_key(f)] = max(judged_top.get(_key(f), -1), SEVERITY_ORDER[f.severity])
        gate = SEVERITY_ORDER[ctx.fail_level]
        ctx.softened = tuple(
            (f, value)
            for f in findings
            if judged_top.get(_key(f), -1) >= gate > SEVERITY_ORDER[f.severity]
            and (value := _figure(ctx, ctx.figures, f)) is not None
        )
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
            lever = lever_for(name, ctx.spec, ctx.pwm_frequency_max, ctx.cost_weights)
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
            after = _variant(ctx, edit)
            text = edit.text
            if reached != "clear" and lowest_threshold != band_threshold and not getattr(lever, "categorical", False):
                text += _also_clears(ctx, lever, name, finding, lowest_threshold, lowest_band, edit, before_failing)
            fixes.append(_as_fix(ctx, text, edit.changes, after, findings, reached, edit.cost))
        paired = False
        if not fixes and finding.severity != "info":
            pair = _pair(ctx, finding, names, before_failing, band_threshold)
            if pair is not None:
                edit_a, edit_b, reached, sub = pair
                after = _variant(sub, edit_b)
                paired = True
                text = f"{edit_a.text}, and {edit_b.text}"
                changes = edit_a.changes + edit_b.changes
                fixes.append(_as_fix(ctx, text, changes, after, findings, reached, edit_a.cost + edit_b.cost))
        fixes.sort(key=lambda f: (f.cost, f.text))
        message = finding.message
        if unhelpful:
            message += "; " + "; ".join(_clause(u) for u in unhelpful)
        if paired:
            message += "; no single change clears it without a new finding at the fail level, two together do"
        elif not fixes and not unhelpful and finding.severity != "info":
            message += "; no single change of the levers checked clears it without a new finding at the fail level"
        out.append(replace(finding, message=message, remedies=tuple(f.text for f in fixes), fixes=tuple(fixes)))
    return out


def _pair(ctx: FixContext, finding: Finding, names: tuple[str, ...], before_failing: set, band_threshold: float):
    """The cheapest two-lever fix where no lever alone clears ``finding``.

    A lever of the finding that clears it but raises a new finding at the fail level
    (the least amount that clears the finding, whatever else fires) is paired with a
    lever of that new finding: first searched on top of it until the pair clears the
    finding and leaves nothing new at the fail level; where the second lever undoes
    some of the first (a higher supply for the headroom a choke takes also raises the
    ripple the choke was for), the second lever's amount that clears the new finding is
    set first and the first lever searched again on top of it.
    Returns (first edit, second edit made on the first, band reached, the context of
    the first edit) or None."""
    from ..figures.levers import lever_for

    def lever(name, spec):
        return lever_for(name, spec, ctx.pwm_frequency_max, ctx.cost_weights)

    def on(edit):  # the context of the spec with ``edit`` applied
        judged = _judged(ctx, edit)
        if judged is None:
            return None
        return replace(ctx, data=edit.data, spec=judged[2], figures=judged[1], memo={})

    point = finding.operating_point
    best = None
    for name_a in names:
        lever_a = lever(name_a, ctx.spec)
        remedy_a = ctx.candidate(name_a, ctx.spec, ctx.figures, point=point, limit=band_threshold)
        if lever_a is None or remedy_a is None or remedy_a.value is None or lever_a.categorical:
            continue
        first = _search(
            ctx, lever_a, finding, float(remedy_a.value), before_failing, False, target=band_threshold, new_ok=True
        )
        sub = on(first[0]) if first is not None else None
        if first is None or sub is None:
            continue
        edit_a = first[0]
        after_a = _variant(ctx, edit_a) or []
        raised = _failing(after_a, ctx.fail_level) - before_failing
        new = sorted(
            (f for f in after_a if _key(f) in raised),
            key=lambda f: (-SEVERITY_ORDER[f.severity], f.rule, f.operating_point or ""),
        )
        for other in new[:3]:
            limit = ctx.threshold(other.rule, other.severity)
            if limit is None:
                continue
            for name_b in ctx.remedy_names(other.rule):
                lever_b = lever(name_b, sub.spec)
                if lever_b is None or lever_b.name == lever_a.name:
                    continue
                pair = _alternate(
                    ctx, finding, before_failing, band_threshold, (name_a, edit_a), (name_b, other, limit), lever, on
                )
                if pair is not None and (best is None or pair[0].cost + pair[1].cost < best[0].cost + best[1].cost):
                    best = pair
    return best


_ROUNDS = 4  # rounds of a pair's alternating search


def _alternate(ctx, finding, before_failing, band_threshold, first, second, lever, on):
    """A pair of levers, each searched on top of the other in turn: the second lever on
    the first edit until the pair passes (or, failing that, until the new finding alone
    clears), then the first lever on that second amount, for a few rounds.
    (edit made first, edit made on it, band reached, the context of the first) or None."""
    name_a, edit_a = first
    name_b, other, limit = second
    point = finding.operating_point
    seen = [edit_a.amount]  # the first lever's amount each round

    def start(name, sub, at, threshold):
        remedy = ctx.candidate(name, sub.spec, sub.figures, point=at, limit=threshold)
        return None if remedy is None or remedy.value is None else float(remedy.value)

    for _ in range(_ROUNDS):
        sub_a = on(edit_a)
        lever_b = lever(name_b, sub_a.spec) if sub_a is not None else None
        amount = start(name_b, sub_a, other.operating_point, limit) if lever_b is not None else None
        if lever_b is None or amount is None:
            return None
        found = _search(sub_a, lever_b, finding, amount, before_failing, False, target=limit, guide=other)
        if found is not None:
            return edit_a, found[0], found[1], sub_a
        loose = _search(sub_a, lever_b, other, amount, before_failing, False, target=limit, new_ok=True)
        edit_b = lever(name_b, ctx.spec).edit(ctx.data, ctx.spec, loose[0].amount) if loose else None
        sub_b = on(edit_b) if edit_b is not None else None
        lever_a = lever(name_a, sub_b.spec) if sub_b is not None else None
        amount = start(name_a, sub_b, point, band_threshold) if lever_a is not None else None
        if edit_b is None or lever_a is None or amount is None:
            return None
        found = _search(sub_b, lever_a, finding, amount, before_failing, False, target=band_threshold)
        if found is not None:
            return edit_b, found[0], found[1], sub_b
        loose = _search(sub_b, lever_a, finding, amount, before_failing, False, target=band_threshold, new_ok=True)
        if not loose:
            return None
        seen.append(loose[0].amount)
        next_a = seen[-1]
        if len(seen) >= 3:
            # the amounts of the rounds converge geometrically: Aitken's extrapolation of
            # the last three, a little past it, so the next round can close
            a0, a1, a2 = seen[-3:]
            bend = a2 - 2.0 * a1 + a0
            if bend != 0.0 and (a2 - a1) * (a1 - a0) > 0.0:
                limit_a = a2 - (a2 - a1) ** 2 / bend
                step = 1.0 + 2.0 * _RESOLUTION
                next_a = limit_a * step if limit_a > a2 else limit_a / step
        edit_a = lever(name_a, ctx.spec).edit(ctx.data, ctx.spec, next_a)
        if edit_a is None:
            return None
    return None


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
