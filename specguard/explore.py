"""The design space of one axis: which changes of the levers clear every rule.

For one spec, the levers a designer has (a higher PWM frequency, added series
inductance, another supply voltage of the same tolerance) are moved one at a time
and two at a time (PWM frequency with added inductance), and each variant is judged
by the whole rule pack, exactly as a check judges the spec. The answer is a small
table of the cheapest changes that leave no finding at the fail level, and the
cheapest that leave no warning either, with the figures that matter for each.

First a screen: PWM frequency x added inductance on a geometric grid (100 x 100 by
default, no added inductance in the first row) and the supply voltage alone, every
variant judged by the whole rule pack at once by the batch evaluator
(specguard.figures.batch). The screen shows where the region that passes lies,
islands included. Then each option is refined on the full model the way the verified
fixes are: the edit is applied as printed and the whole pack judges it, bisecting
between the last failing and the first passing amount of the screen (stepping on
where rounding or a coupling moves the boundary). The table never holds an amount
that was not judged as printed.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .figures.registry import Fig
from .findings import SEVERITY_ORDER, Finding

# Outward steps along a lever (relative change) and the bisection's resolution.
_GRID = (0.01, 0.03, 0.1, 0.2, 0.35, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 5.0, 8.0, 15.0, 30.0, 60.0, 120.0, 250.0, 500.0)
_RESOLUTION = 2e-3
# Amounts per lever on the screening grid: GRID_SIZE x GRID_SIZE variants of PWM
# frequency and added inductance (10^4 by default), judged at once by the batch evaluator.
GRID_SIZE = 100
# Two-lever options per band, and how far apart their PWM frequencies lie at least.
_PAIRS = 3
_PAIR_SPREAD = 0.15


@dataclass(frozen=True)
class Option:
    """One change that clears every rule at ``level``."""

    level: str  # "error" (the fail level) or "warning"
    levers: tuple[str, ...]
    text: str
    changes: tuple[tuple[str, Any], ...]
    cost: float
    figures: dict[str, float | None]


@dataclass(frozen=True)
class Exploration:
    file: str
    fail_level: str
    now: dict[str, float | None]
    failing_now: tuple[str, ...]  # rule ids at or above the fail level as written
    options: tuple[Option, ...]
    variants: int  # variants judged
    # per band: the rules failing as written that no lever here clears
    beyond: dict[str, frozenset] = field(default_factory=dict)
    passing: frozenset = frozenset()  # the bands the spec already meets (apart from ``beyond``)
    screen: Screen | None = None


@dataclass(frozen=True)
class Screen:
    """The screening grid: (first, last, count) per lever (SI; the added inductance's
    first value after none), and per band how many grid variants pass."""

    pwm_frequency: tuple[float, float, int]
    added_inductance: tuple[float, float, int]
    supply_voltage: tuple[float, float, int]
    passing: dict[str, int]


_SHOWN = (Fig.ripple_ratio_worst, "winding_margin_min", "modulation_ratio_max", Fig.ripple_frequency)


def _summary(figures) -> dict[str, float | None]:
    def points(name: str) -> list[float]:
        out = []
        for _point, values in figures.points:
            v = values.get(name)
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                out.append(float(v))
        return out

    margins, ratios = points(Fig.winding_margin), points(Fig.modulation_ratio)
    worst = figures.axis.get(Fig.ripple_ratio_worst)
    return {
        Fig.ripple_ratio_worst: float(worst) if isinstance(worst, (int, float)) else None,
        "winding_margin_min": min(margins) if margins else None,
        "modulation_ratio_max": max(ratios) if ratios else None,
        Fig.ripple_frequency: float(figures.axis.get(Fig.ripple_frequency) or 0.0) or None,
    }


class _Judge:
    """Judges variants of one spec's data with the whole pack (memoised)."""

    def __init__(self, spec, locate, pack, overrides, settings) -> None:
        self.spec, self.locate, self.pack, self.overrides, self.settings = spec, locate, pack, overrides, settings
        self.memo: dict[str, tuple[list[Finding], Any] | None] = {}

    def __call__(self, data: dict):
        from .engine.evaluate import evaluate
        from .figures import compute
        from .model import build

        key = json.dumps(data, sort_keys=True, default=str)
        if key not in self.memo:
            variant, built = build(data, self.locate)
            result = None
            if variant is not None:
                try:
                    figures = compute(variant, self.settings)
                    found = built + evaluate(
                        variant, figures, self.locate, self.pack, self.overrides, remedy=_none, lean=True
                    )
                    result = (found, figures)
                except Exception:  # a variant the figures cannot take is not an option
                    from .debugging import went_on_without

                    went_on_without("an explore variant")
                    result = None
            self.memo[key] = result
        return self.memo[key]


def _none(*_a, **_k):
    return None


def _passes(found: list[Finding], level: str, ignored: frozenset = frozenset()) -> bool:
    threshold = SEVERITY_ORDER[level]
    return not any(SEVERITY_ORDER[f.severity] >= threshold and f.rule not in ignored for f in found)


def _grid(start: float, stop: float, count: int):
    """``count`` amounts from ``start`` to ``stop`` on a geometric scale (``start`` first)."""
    import numpy as np

    if stop <= start * (1.0 + _RESOLUTION):
        return np.array([start])
    return np.geomspace(start, stop, count)


def _first(passes) -> int | None:
    """Index of the first passing amount along a lever, or None."""
    hits = passes.nonzero()[0]
    return int(hits[0]) if hits.size else None


def _refined(lever, low: float, high: float, judge, data, spec, level, ignored):
    """The least amount between ``low`` (fails on the grid, or where the lever starts)
    and ``high`` (passes on the grid) that passes when the edit is applied as printed and
    the whole pack judges it; beyond ``high`` when rounding or the grid missed a coupling.
    (Edit, figures) or None."""
    ratio = (high / low) if lever.at_least else (low / high)
    steps = (max(ratio - 1.0, _RESOLUTION), *(s for s in _GRID if s > ratio - 1.0))

    def attempt(amount: float):
        edit = lever.edit(data, spec, amount)
        if edit is None:
            return None, None
        judged = judge(edit.data)
        if judged is None or not _passes(judged[0], level, ignored):
            return edit, None
        return edit, judged[1]

    from .engine.fixes import step_and_bisect

    return step_and_bisect(low, lever.at_least, attempt, steps)


def explore(path: Path, root: Path, options=None, grid: int = GRID_SIZE) -> Exploration:
    """Explore the levers of the spec at ``path`` (raises ValueError when the spec
    cannot be read or built: ``specguard check`` says why). ``grid``: amounts per lever
    on the screening grid (``grid`` x ``grid`` variants of PWM frequency and added
    inductance, and ``2 grid`` supply voltages)."""
    import numpy as np

    from .engine.evaluate import load_pack
    from .figures.batch import judge_batch
    from .figures.levers import AddedInductance, PwmFrequency, SupplyVoltage, cost_weights, topology
    from .model import build
    from .pipeline import _overrides, figure_settings, read_spec, relpath
    from .source import Limits
    from .source.library import LibraryCache, assemble

    rel = relpath(path, root)
    read = read_spec(path, root, rel, True)
    if not isinstance(read, tuple):
        raise ValueError(read.input_error or "cannot be read")
    raw, size = read
    doc = assemble(raw, size, path, root, Limits(), LibraryCache(Limits()))
    if doc.data is None:
        raise ValueError("does not load; 'specguard check' says why")
    spec, problems = build(doc.data, doc.locate)
    if spec is None:
        raise ValueError("is not a valid spec; 'specguard check' says why")
    pack = options.pack if options is not None and options.pack is not None else load_pack()
    overrides = _overrides(rel, options)
    settings = figure_settings(pack, overrides, options.config if options is not None else None)
    level = "error"
    if options is not None and options.config is not None:
        level = str(options.config.fail_level.value)
    judge = _Judge(spec, doc.locate, pack, overrides, settings)
    data = doc.data
    now = judge(data)
    if now is None:
        raise ValueError("its figures cannot be computed; 'specguard check' says why")
    findings_now, figures_now = now
    failing = tuple(sorted({f.rule for f in findings_now if SEVERITY_ORDER[f.severity] >= SEVERITY_ORDER[level]}))
    pwm = spec.stage.pwm
    per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
    f_leg = float(figures_now.axis[Fig.pwm_frequency_leg])
    costs = cost_weights(settings)
    choke = AddedInductance(topology(spec)).costed(costs)
    freq = PwmFrequency(per_leg, maximum=settings.pwm_frequency_max).costed(costs)
    motor_l = float(figures_now.axis.get(Fig.loop_inductance_catalogue) or figures_now.axis[Fig.loop_inductance])
    l_start = max(motor_l * 0.01, 1e-7)
    # rules failing as written that these levers cannot clear: still failing with the
    # PWM frequency at its bound, and with three and with thirty times the motor's
    # inductance added (reported, not searched for)
    trials = (
        freq.edit(data, spec, settings.pwm_frequency_max),
        choke.edit(data, spec, 3.0 * motor_l),
        choke.edit(data, spec, 30.0 * motor_l),
    )
    extremes = [e for e in trials if e is not None]
    stuck: dict[str, frozenset] = {}
    for band in dict.fromkeys((level, "warning")):
        threshold = SEVERITY_ORDER[band]
        rules = {f.rule for f in findings_now if SEVERITY_ORDER[f.severity] >= threshold}
        for edit in extremes:
            judged = judge(edit.data)
            if judged is not None:
                rules &= {f.rule for f in judged[0] if SEVERITY_ORDER[f.severity] >= threshold}
        stuck[band] = frozenset(rules)

    # the screen: PWM frequency x added inductance (none first), and the supply alone,
    # every variant judged by the whole pack at once (specguard.figures.batch)
    freqs = _grid(f_leg, settings.pwm_frequency_max, grid)
    henries = np.concatenate([[0.0], _grid(l_start, 30.0 * motor_l, grid - 1)])
    f_col, l_row = np.meshgrid(freqs, henries)  # [inductance row, frequency column]
    plane = judge_batch(data, spec, doc.locate, pack, overrides, settings, [(freq, f_col), (choke, l_row)])
    volts_now = float(spec.stage.supply.voltage)
    up, down = SupplyVoltage(at_least=True).costed(costs), SupplyVoltage(at_least=False).costed(costs)
    volts = np.concatenate([_grid(volts_now, volts_now * 4.0, grid), volts_now / _grid(1.0, 4.0, grid)])
    line = judge_batch(data, spec, doc.locate, pack, overrides, settings, [(up, volts)])
    screened = plane.size + line.size

    out: list[Option] = []
    passing: set[str] = set()
    region: dict[str, int] = {}
    for band in dict.fromkeys((level, "warning")):
        ignored = stuck[band]
        ok = plane.passes(band, ignored).reshape(l_row.shape)
        region[band] = int(ok.sum())
        if _passes(findings_now, band, ignored):
            passing.add(band)  # nothing to change for this band
            continue
        searches: list[tuple[Any, float, float]] = []
        k = _first(ok[0, :])  # the frequency alone
        if k is not None and k > 0:
            searches.append((freq, float(freqs[k - 1]), float(freqs[k])))
        k = _first(ok[:, 0])  # the chokes alone
        if k is not None and k > 0:
            searches.append((choke, float(henries[k - 1]) if k > 1 else l_start / 1.5, float(henries[k])))
        ok_line = line.passes(band, ignored)
        half = volts.size // 2
        for supply, part, amounts in ((up, ok_line[:half], volts[:half]), (down, ok_line[half:], volts[half:])):
            k = _first(part)
            if k is not None and k > 0:
                searches.append((supply, float(amounts[k - 1]), float(amounts[k])))
        for lever, low, high in searches:
            found = _refined(lever, low, high, judge, data, spec, band, ignored)
            if found is not None:
                edit, figures = found
                out.append(Option(band, (lever.name,), edit.text, edit.changes, edit.cost, _summary(figures)))
        # two levers: among the higher frequencies below the one that clears alone, the
        # cheapest pairs the screen found (the least inductance at each frequency; the
        # frequencies at least _PAIR_SPREAD apart), each refined and judged as printed
        alone = _first(ok[0, :])
        candidates = []
        for j in range(1, freqs.size if alone is None else alone):
            i = _first(ok[:, j])
            f_edit = freq.edit(data, spec, float(freqs[j])) if i else None
            if f_edit is not None and i:
                candidates.append((f_edit.cost + choke._cost(spec, float(henries[i])), j, i, f_edit))
        chosen: list[float] = []
        for _cost, j, i, f_edit in sorted(candidates, key=lambda c: c[0]):
            if len(chosen) >= _PAIRS or any(abs(freqs[j] / f - 1.0) < _PAIR_SPREAD for f in chosen):
                continue
            low = float(henries[i - 1]) if i > 1 else l_start / 1.5
            found = _refined(choke, low, float(henries[i]), judge, f_edit.data, spec, band, ignored)
            if found is None:
                continue
            chosen.append(float(freqs[j]))
            edit, figures = found
            out.append(
                Option(
                    band,
                    (freq.name, choke.name),
                    f"{f_edit.text}, and {edit.text}",
                    f_edit.changes + edit.changes,
                    f_edit.cost + edit.cost,
                    _summary(figures),
                )
            )
    # the cheapest few per band and kind
    best: list[Option] = []
    for band in dict.fromkeys((level, "warning")):
        for kind in (1, 2):
            pool = sorted((o for o in out if o.level == band and len(o.levers) == kind), key=lambda o: o.cost)
            seen: set[tuple[str, ...]] = set()
            for option in pool:
                if kind == 1 and option.levers in seen:
                    continue
                seen.add(option.levers)
                best.append(option)
                if kind == 2 and len([o for o in best if o.level == band and len(o.levers) == 2]) >= 3:
                    break
    screen = Screen(
        pwm_frequency=(float(freqs[0]), float(freqs[-1]), int(freqs.size)),
        added_inductance=(float(henries[1]) if henries.size > 1 else 0.0, float(henries[-1]), int(henries.size)),
        supply_voltage=(float(volts.min()), float(volts.max()), int(volts.size)),
        passing=region,
    )
    return Exploration(
        rel,
        level,
        _summary(figures_now),
        failing,
        tuple(best),
        screened + len(judge.memo),
        stuck,
        frozenset(passing),
        screen,
    )


def render_text(x: Exploration) -> str:
    from .model.units import format_si

    def figs(d: dict) -> str:
        parts = []
        if d.get(Fig.ripple_ratio_worst) is not None:
            parts.append(f"worst ripple {d[Fig.ripple_ratio_worst] * 100:.1f} % of rated")
        if d.get("winding_margin_min") is not None:
            parts.append(f"winding margin {format_si(d['winding_margin_min'], 'temperature_difference')}")
        if d.get("modulation_ratio_max") is not None:
            parts.append(f"duty need {d['modulation_ratio_max'] * 100:.1f} % of reach")
        if d.get(Fig.ripple_frequency) is not None:
            parts.append(f"ripple at {format_si(d[Fig.ripple_frequency], 'frequency')}")
        return "; ".join(parts)

    lines = [f"{x.file}: as written: {figs(x.now)}"]
    lines.append(
        "  fails at " + x.fail_level + ": " + ", ".join(x.failing_now)
        if x.failing_now
        else f"  nothing at or above {x.fail_level}"
    )
    beyond = sorted(x.beyond.get(x.fail_level, ()))
    more = sorted(set(x.beyond.get("warning", ())) - set(beyond)) if x.fail_level != "warning" else []
    if beyond or more:
        lines.append(
            "  beyond these levers (a brake resistor, a choke or stage rating, the motor): "
            + ", ".join(beyond + [f"{r} (warning)" for r in more])
        )
    for band, title in ((x.fail_level, f"no finding at or above {x.fail_level}"), ("warning", "no warning either")):
        rows = [o for o in x.options if o.level == band]
        if band == "warning" and x.fail_level == "warning":
            continue
        lines.append(f"  to leave {title}:")
        if band in x.passing:
            lines.append("    nothing to change: the spec meets it as written")
        elif not rows:
            lines.append("    no change of one lever, or of the PWM frequency with added inductance, found")
        for o in rows:
            lines.append(f"    - {o.text}  [change {o.cost:.2f}]")
            lines.append(f"      {figs(o.figures)}")
    if x.screen is not None:
        sc = x.screen
        f0, f1, nf = sc.pwm_frequency
        l0, l1, nl = sc.added_inductance
        passing = ", ".join(f"{count} at {band}" for band, count in sc.passing.items())
        lines.append(
            f"  screen: {nf} PWM frequencies from {format_si(f0, 'frequency')} to {format_si(f1, 'frequency')} per leg "
            f"x {nl} added inductances (none, and {format_si(l0, 'inductance')} to {format_si(l1, 'inductance')}); "
            f"passing: {passing}"
        )
    lines.append(f"  ({x.variants} variants judged with the whole rule pack)")
    return "\n".join(lines) + "\n"


def render_json(x: Exploration) -> str:
    from .report.json_report import change_value, dumps

    return dumps(
        {
            "file": x.file,
            "fail_level": x.fail_level,
            "as_written": x.now,
            "failing": list(x.failing_now),
            "beyond_levers": {band: sorted(rules) for band, rules in sorted(x.beyond.items())},
            "meets_as_written": sorted(x.passing),
            "variants": x.variants,
            "screen": None
            if x.screen is None
            else {
                "pwm_frequency": {
                    "from": x.screen.pwm_frequency[0],
                    "to": x.screen.pwm_frequency[1],
                    "count": x.screen.pwm_frequency[2],
                    "unit": "Hz",
                },
                "added_inductance": {
                    "from": x.screen.added_inductance[0],
                    "to": x.screen.added_inductance[1],
                    "count": x.screen.added_inductance[2],
                    "unit": "H",
                },
                "supply_voltage": {
                    "from": x.screen.supply_voltage[0],
                    "to": x.screen.supply_voltage[1],
                    "count": x.screen.supply_voltage[2],
                    "unit": "V",
                },
                "passing": dict(x.screen.passing),
            },
            "options": [
                {
                    "clears_at": o.level,
                    "levers": list(o.levers),
                    "text": o.text,
                    "changes": [{"pointer": p, "value": change_value(v)} for p, v in o.changes],
                    "cost": round(o.cost, 6),
                    "figures": o.figures,
                }
                for o in x.options
            ],
        }
    )
