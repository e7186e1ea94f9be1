"""The batch evaluator: every figure and every rule for many variants of one axis at once.

A variant is the spec with some levers moved (specguard.figures.levers): another PWM
frequency, chokes added, another supply voltage. The batch evaluator takes one spec
and arrays of lever amounts, writes the values the edits would write into the spec
as numpy arrays (one element per variant, unrounded), computes the figures with the
same code a check uses (specguard.figures.compute, written against float-or-array
helpers) and judges the whole rule pack on the arrays
(specguard.engine.evaluate.evaluate_batch). A check is the case of one variant on
floats; nothing here is a second copy of a formula.

Variants whose edits change the shape of the spec (chokes fitted where there were
none) are judged in groups that share a shape; a group whose variants fall in
different PWM eddy-loss regimes is split until each shares one.

What it answers is a screen: explore and the HTML feasibility map use it to find
where the boundary lies, and then confirm what they print by judging the spec as
edited and printed, one variant at a time.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from ..findings import SEVERITY_ORDER
from .registry import Fig

__all__ = ["BatchVerdict", "compute_batch", "judge_batch", "with_values"]


def with_values(model: Any, values: Mapping[tuple[str, ...], Any]) -> Any:
    """A copy of the (frozen) model with the values at the given paths replaced,
    without validation (arrays stand where floats would)."""
    nested: dict[str, Any] = {}
    for path, value in values.items():
        node = nested
        for key in path[:-1]:
            node = node.setdefault(key, {})
        node[path[-1]] = value

    def apply(obj: Any, updates: dict[str, Any]) -> Any:
        changed = {}
        for key, value in updates.items():
            changed[key] = apply(getattr(obj, key), value) if isinstance(value, dict) else value
        return obj.model_copy(update=changed)

    return apply(model, nested)


@dataclass(frozen=True)
class BatchVerdict:
    """Verdicts of a batch: per variant, the rank of the most severe finding per rule."""

    size: int
    valid: Any  # bool array: the amounts are edits at all (within the levers' bounds)
    ranks: dict[str, Any]  # rule id -> int array (SEVERITY_ORDER rank, -1 for none)
    figures: dict[str, Any]  # summary figures per variant (NaN where not computed)

    def passes(self, level: str, ignored: frozenset = frozenset()) -> Any:
        """Bool array: no finding at or above ``level`` (rules in ``ignored`` aside)."""
        import numpy as np

        threshold = SEVERITY_ORDER[level]
        ok = np.array(self.valid, dtype=bool, copy=True)
        for rule, rank in self.ranks.items():
            if rule not in ignored:
                ok &= rank < threshold
        return ok

    def failing(self, level: str) -> list[frozenset]:
        """Per variant, the rules with a finding at or above ``level``."""
        threshold = SEVERITY_ORDER[level]
        rows: list[set[str]] = [set() for _ in range(self.size)]
        for rule, rank in self.ranks.items():
            for j in (rank >= threshold).nonzero()[0]:
                rows[int(j)].add(rule)
        return [frozenset(r) for r in rows]


_SUMMARY = (Fig.ripple_ratio_worst, "winding_margin_min", "modulation_ratio_max")


def _summary(figures, size: int) -> dict[str, Any]:
    import numpy as np

    def column(value: Any) -> Any:
        if value is None or isinstance(value, bool):
            return np.full(size, np.nan)
        return np.broadcast_to(np.asarray(value, dtype=float), (size,)).copy()

    def over_points(name: str, reduce) -> Any:
        cols = [column(values.get(name)) for _p, values in figures.points if values.get(name) is not None]
        if not cols:
            return np.full(size, np.nan)
        with np.errstate(all="ignore"):
            return reduce(np.stack(cols), axis=0)

    return {
        Fig.ripple_ratio_worst: column(figures.axis.get(Fig.ripple_ratio_worst)),
        "winding_margin_min": over_points(Fig.winding_margin, np.min),
        "modulation_ratio_max": over_points(Fig.modulation_ratio, np.max),
    }


def compute_batch(variant: Any, settings: Any):
    """The figures of a spec whose lever values are arrays (see :func:`with_values`):
    arrays of one value per variant, NaN where a variant lacks the figure."""
    import numpy as np

    from .compute import compute

    # inf and NaN stand where a variant lacks a figure (masked, as a check leaves it out)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        return compute(variant, settings)


def judge_batch(
    data: Mapping,
    spec: Any,
    locate: Any,
    pack: Any,
    overrides: Mapping,
    settings: Any,
    levers: Sequence[tuple[Any, Any]],
) -> BatchVerdict:
    """Judge the variants ``(lever, amounts)`` of the spec (``data`` as assembled,
    ``spec`` its model): all arrays of amounts have one length, the variant count."""
    import numpy as np

    arrays = [np.asarray(a, dtype=float).ravel() for _lever, a in levers]
    size = int(arrays[0].size) if arrays else 1
    if any(a.size != size for a in arrays):
        raise ValueError("every lever needs one amount per variant")
    verdict = BatchVerdict(size, np.ones(size, dtype=bool), {}, {name: np.full(size, np.nan) for name in _SUMMARY})
    # groups of one shape: a lever that adds a section (chokes where there were none)
    # splits the batch into the variants without it and those with it
    reshaping = [i for i, (lever, _a) in enumerate(levers) if lever.reshapes(spec)]
    key = np.zeros(size, dtype=int)
    for bit, i in enumerate(reshaping):
        key |= (arrays[i] > 0).astype(int) << bit
    for shape in np.unique(key):
        index = np.nonzero(key == shape)[0]
        adds = [i for bit, i in enumerate(reshaping) if shape >> bit & 1]
        _judge_group(data, spec, locate, pack, overrides, settings, levers, arrays, index, adds, verdict)
    return verdict


def _judge_group(data, spec, locate, pack, overrides, settings, levers, arrays, index, adds, verdict) -> None:
    """Judge the variants ``index`` that share one shape (the reshaping levers ``adds``
    are fitted; the other reshaping levers stay at zero and out of the spec)."""
    import numpy as np

    from ..engine.evaluate import evaluate_batch
    from ..model import build
    from .compute import MixedRegimes

    shaped = data
    for i in adds:
        lever = levers[i][0]
        edit = lever.edit(shaped, spec, float(arrays[i][index[0]]))
        if edit is None:
            verdict.valid[index] = False
            return
        shaped = edit.data
    base, built = build(shaped, locate) if adds else (spec, [])
    if base is None:
        verdict.valid[index] = False
        return
    values: dict[tuple[str, ...], Any] = {}
    for i, (lever, _a) in enumerate(levers):
        if lever.reshapes(spec) and i not in adds:
            continue  # at zero: not fitted
        fields, edits = lever.fields(spec, arrays[i][index])
        values.update(fields)
        verdict.valid[index] &= edits
    variant = with_values(base, values) if values else base
    try:
        found = compute_batch(variant, settings)
    except MixedRegimes:  # the variants span two eddy-loss regimes: judge the halves apart
        if index.size < 2:
            verdict.valid[index] = False
            return
        half = index.size // 2
        for sub in (index[:half], index[half:]):
            _judge_group(data, spec, locate, pack, overrides, settings, levers, arrays, sub, adds, verdict)
        return
    ranks = evaluate_batch(variant, found, pack, overrides, index.size)
    for f in built:  # what building the reshaped spec found (a check counts it too)
        ranks.setdefault(f.rule, np.full(index.size, -1, dtype=int))
        ranks[f.rule] = np.maximum(ranks[f.rule], SEVERITY_ORDER[f.severity])
    for rule, rank in ranks.items():
        verdict.ranks.setdefault(rule, np.full(verdict.size, -1, dtype=int))[index] = rank
    for name, column in _summary(found, index.size).items():
        verdict.figures[name][index] = column
