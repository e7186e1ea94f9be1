"""Figures: the one adapter between the model and the physics.

:func:`compute` takes a :class:`~specguard.model.Spec` and returns a
:class:`FigureSet`: named derived quantities per axis and per operating point,
in SI, each with a stable name, unit, meaning and the spec paths it came from
(:mod:`specguard.figures.registry`). When the spec lacks what a figure needs,
the figure is absent and :attr:`FigureSet.missing` says why; no physical value
is ever guessed.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

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


# Bound eagerly, after FigureSet and Remedy exist: the submodule ``compute`` would
# otherwise shadow the function of the same name once imported.
from .compute import FigureSettings, compute, remedy  # noqa: E402

__all__ += ["FigureSettings"]
