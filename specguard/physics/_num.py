"""Float / array dispatch shared by the physics modules (private).

Every public function accepts Python floats or numpy arrays.  numpy's ufuncs cost
about a microsecond each on a scalar, while ``math`` costs tens of nanoseconds, and a
spec with ten operating points calls the physics a few hundred times.  So each
function picks one of two namespaces with the same attribute names: ``SCALAR``
(``math`` plus a few helpers) when every argument is a real number, ``VECTOR``
(numpy) otherwise.  The formulas are written once against that namespace.

Rules the formulas follow so that both paths behave alike:

* ``where`` evaluates both branches (numpy does), so every branch must be finite for
  every input: clamp the argument of the branch that would divide by zero instead of
  relying on the mask.
* No operation may overflow ``math.exp`` (it raises); arguments of ``exp`` are kept
  non-positive where the physics allows it.
"""

from __future__ import annotations

import functools
import math
from typing import Any

__all__ = ["SCALAR", "VECTOR", "namespace", "is_scalar", "np", "memo_scalars"]


def memo_scalars(maxsize: int):
    """Keep the last ``maxsize`` results of a function for calls whose arguments are all
    Python numbers or texts; arrays pass straight through. A check judges many variants
    of one design, and those that leave a solve's inputs alone (a brake resistor, a
    rating) reuse it."""

    def wrap(func):
        kept = functools.lru_cache(maxsize=maxsize)(func)

        @functools.wraps(func)
        def call(*args, **kwargs):
            if all(isinstance(v, (float, int, str)) for v in (*args, *kwargs.values())):
                return kept(*args, **kwargs)
            return func(*args, **kwargs)

        return call

    return wrap


class _LazyNumpy:
    """numpy, imported on first use.

    A check of one spec runs on Python floats only (the ``math`` path below), so
    numpy's ~130 ms import stays off the start-up of a pre-commit run; the first
    array argument imports it.
    """

    _module: Any = None

    def __getattr__(self, name: str):
        module = _LazyNumpy._module
        if module is None:
            import numpy

            module = _LazyNumpy._module = numpy
        return getattr(module, name)


np = _LazyNumpy()


def is_scalar(*values: object) -> bool:
    """True when every value is a real Python/numpy scalar (not an array)."""
    for value in values:
        if not isinstance(value, (float, int)):
            return False
    return True


class _Scalar:
    """``math``-backed namespace for real scalars."""

    vector = False
    pi = math.pi
    inf = math.inf
    nan = math.nan
    exp = staticmethod(math.exp)
    expm1 = staticmethod(math.expm1)
    log = staticmethod(math.log)
    log1p = staticmethod(math.log1p)
    sqrt = staticmethod(math.sqrt)
    tanh = staticmethod(math.tanh)
    atanh = staticmethod(math.atanh)
    sin = staticmethod(math.sin)
    cos = staticmethod(math.cos)
    abs = staticmethod(abs)
    minimum = staticmethod(min)
    maximum = staticmethod(max)
    isfinite = staticmethod(math.isfinite)
    isnan = staticmethod(math.isnan)

    @staticmethod
    def where(condition, if_true, if_false):
        return if_true if condition else if_false

    @staticmethod
    def asarray(value):
        return float(value)

    @staticmethod
    def logical_and(a, b):
        return bool(a and b)

    @staticmethod
    def logical_or(a, b):
        return bool(a or b)

    @staticmethod
    def logical_not(a):
        return not a

    @staticmethod
    def sign(value):
        return (value > 0) - (value < 0)


_VECTOR_ALIASES = {"atanh": "arctanh"}


class _Vector:
    """numpy-backed namespace for arrays (broadcasting); numpy loads on first use."""

    vector = True

    def __getattr__(self, name: str):
        return getattr(np, _VECTOR_ALIASES.get(name, name))

    @staticmethod
    def asarray(value):
        return np.asarray(value, dtype=float)


SCALAR = _Scalar()
VECTOR = _Vector()


def namespace(*values: object):
    """``SCALAR`` if all values are real scalars, else ``VECTOR``."""
    return SCALAR if is_scalar(*values) else VECTOR
