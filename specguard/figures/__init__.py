"""Figures: the one adapter between the model and the physics.

:func:`compute` takes a :class:`~specguard.model.Spec` and returns a
:class:`FigureSet`: named derived quantities per axis and per operating point,
in SI, each with a stable name, unit, meaning and the spec paths it came from
(:mod:`specguard.figures.registry`). When the spec lacks what a figure needs,
the figure is absent and :attr:`FigureSet.missing` says why; no physical value
is ever guessed.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

from .registry import FIGURE_DEFS, REMEDIES, FigureDef

Value = float | bool


@dataclass(frozen=True)
class FigureSet:
    axis: Mapping[str, Value]
    # (operating point name, values) in spec order
    points: tuple[tuple[str, Mapping[str, Value]], ...]
    # figure name -> why it could not be computed (what the spec lacks)
    missing: Mapping[str, str] = field(default_factory=dict)
    # figure name -> a note on how it was obtained (e.g. "estimate: catalogue value x 1/3")
    notes: Mapping[str, str] = field(default_factory=dict)

    def value(self, name: str, point: str | None = None) -> Value | None:
        if point is None:
            return self.axis.get(name)
        for point_name, values in self.points:
            if point_name == point:
                return values.get(name)
        return None

    def point_names(self) -> tuple[str, ...]:
        return tuple(name for name, _ in self.points)


@dataclass(frozen=True)
class Remedy:
    name: str  # a key of REMEDIES
    text: str  # e.g. "add at least 68 uH per lead"
    value: float | None  # SI value, None when not reachable
    unit: str


__all__ = ["FIGURE_DEFS", "REMEDIES", "FigureDef", "FigureSet", "Remedy", "compute", "remedy"]


def compute(spec, settings=None) -> FigureSet:  # implemented in .compute
    from .compute import compute as _compute

    return _compute(spec, settings)


def remedy(name: str, spec, figures: FigureSet, *, point: str | None, limit: float) -> Remedy | None:
    """Compute one remedy (see REMEDIES) for ``point`` (None: the axis worst case).

    ``limit`` is the rule's threshold the remedy must bring the figure to (e.g.
    0.2 for a ripple of 20 % of rated current; a frequency in Hz for the
    audible rule). Returns None when the remedy does not apply to the spec.
    """
    from .compute import remedy as _remedy

    return _remedy(name, spec, figures, point=point, limit=limit)
