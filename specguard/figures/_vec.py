"""Float-or-array helpers for the figure layer (private).

A check computes its figures on Python floats (the fast ``math`` path of the
physics). The batch evaluator (:mod:`specguard.figures.batch`) computes the same
figures for many variants of one axis at once: the values a lever changes (PWM
frequency, chokes, supply) are then numpy arrays with one element per variant, and
every figure that depends on them is an array of the same shape. The figure code
is written once against these helpers, which keep the float path exactly as it
was (same operations, same order) and broadcast on arrays.

A figure that cannot be computed for some variants only (the dead times leave no
duty at that frequency, the winding runs away) is NaN there; a figure that cannot
be computed for any variant is missing, as in a check.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

from ..physics._num import np


def is_vector(*values: Any) -> bool:
    """True when any value is an array with at least one dimension."""
    for v in values:
        shape = getattr(v, "shape", None)
        if shape is not None and shape != ():
            return True
    return False


def real(value: Any) -> Any:
    """``float(value)`` for a scalar (a 0-d array included); an array unchanged."""
    return value if is_vector(value) else float(value)


def maximum(a: Any, b: Any) -> Any:
    return np.maximum(a, b) if is_vector(a, b) else max(a, b)


def minimum(a: Any, b: Any) -> Any:
    return np.minimum(a, b) if is_vector(a, b) else min(a, b)


def largest(values: Iterable[Any]) -> Any:
    """``max`` of a sequence whose items may be arrays (elementwise)."""
    items = list(values)
    if not is_vector(*items):
        return max(items)
    out = items[0]
    for v in items[1:]:
        out = np.fmax(out, v)  # NaN (a value not defined) is passed over, as max() passes it
    return out


def smallest(values: Iterable[Any]) -> Any:
    items = list(values)
    if not is_vector(*items):
        return min(items)
    out = items[0]
    for v in items[1:]:
        out = np.fmin(out, v)
    return out


def clip(value: Any, low: float, high: float) -> Any:
    if is_vector(value):
        return np.clip(value, low, high)
    return low if value < low else high if value > high else value


def hypot(a: Any, b: Any) -> Any:
    return np.hypot(a, b) if is_vector(a, b) else math.hypot(a, b)


def all_of(condition: Any) -> bool:
    """A condition holds for every variant (a float condition: itself)."""
    return bool(np.all(condition)) if is_vector(condition) else bool(condition)


def any_of(condition: Any) -> bool:
    return bool(np.any(condition)) if is_vector(condition) else bool(condition)


def masked(value: Any, keep: Any) -> Any:
    """``value`` where ``keep`` holds, NaN elsewhere (arrays; a scalar is returned as is
    when ``keep`` holds; the caller treats a scalar that does not as missing)."""
    if is_vector(value, keep):
        return np.where(keep, value, np.nan)
    return value


def finite(value):
    if is_vector(value):
        import numpy as np

        return np.isfinite(value)
    return math.isfinite(value)


def per_variant(fn, *args):
    """A physics function that takes scalars only, applied per variant of a batch."""
    if not is_vector(*args):
        return fn(*args)
    import numpy as np

    shape = next(a.shape for a in args if is_vector(a))
    columns = [np.broadcast_to(a, shape).ravel() if is_vector(a) else None for a in args]
    out = np.empty(int(np.prod(shape)))
    for j in range(out.size):
        out[j] = fn(*(c[j] if c is not None else a for c, a in zip(columns, args, strict=True)))
    return out.reshape(shape)
