"""Dimensional fields for the pydantic model.

A dimensional field takes a string ``"value unit"`` and holds its SI value as a
float once the model is built. Each field declares its dimension; the unit table
is :mod:`specguard.model.units`. The JSON Schema of such a field is a string
with a pattern built from the accepted units, plus ``x-dimension`` and
``x-si-unit`` so that editors and readers see what is expected.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from functools import cache
from typing import Any

from annotated_types import GroupedMetadata
from pydantic import AfterValidator, BeforeValidator, WithJsonSchema
from pydantic_core import PydanticCustomError

from . import units

_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"

# Magnitudes far outside any electric drive, in SI: a nonzero value below 1e-12 or
# above 1e12 (a femtoampere, a terahertz, a 5e-324 that is a float's last bit) is a
# slip or a probe, and it would only drive the figures into overflow and 0 / 0.
SI_MAGNITUDE = (1e-12, 1e12)  # (the message below spells these two numbers out)


@cache
def unit_pattern(dimension: str) -> str:
    """An anchored regular expression for the accepted spellings (both micro signs)."""
    spellings: set[str] = set()
    for unit in units.accepted_units(dimension):
        spellings.add(unit)
        if unit.startswith("u") and len(unit) > 1:
            spellings.add("\u00b5" + unit[1:])
            spellings.add("\u03bc" + unit[1:])
    alternatives = "|".join(re.escape(s) for s in sorted(spellings, key=lambda s: (-len(s), s)))
    return f"^{_NUMBER} ?(?:{alternatives})$"


def _parser(dimension: str):
    def parse(value: Any) -> float:
        try:
            result = units.parse_quantity(value, dimension)
        except units.UnitError as exc:
            raise PydanticCustomError("unit_invalid", "{message}", {"message": exc.message}) from None
        # "1e-400 A" reads as 0.0 and "1e-400 degC" as 273.15 K: a nonzero value the
        # reviewer sees, a zero the figures would use (docs/reliability.md F02)
        underflow = units.underflow_message(value, dimension)
        if underflow is not None:
            raise PydanticCustomError("number_invalid", "{message}", {"message": underflow})
        return result

    return parse


def _range_check(dimension: str, gt: float | None, ge: float | None, le: float | None):
    si_unit = units.DIMENSIONS[dimension].si_unit
    low, high = SI_MAGNITUDE

    def check(value: float) -> float:
        def shown(limit: float) -> str:
            return units.format_si(limit, dimension)

        if value != 0.0 and not low <= abs(value) <= high:
            raise PydanticCustomError(
                "value_range",
                "{message}",
                {"message": f"must be between 1e-12 and 1e12 {si_unit} in size (far outside any drive)"},
            )

        if gt is not None and not value > gt:
            raise PydanticCustomError("value_range", "{message}", {"message": f"must be greater than {shown(gt)}"})
        if ge is not None and not value >= ge:
            raise PydanticCustomError("value_range", "{message}", {"message": f"must be at least {shown(ge)}"})
        if le is not None and not value <= le:
            raise PydanticCustomError("value_range", "{message}", {"message": f"must be at most {shown(le)}"})
        return value

    return check


class Quantity(GroupedMetadata):
    """The metadata of a dimensional field: ``Annotated[float, Quantity(...)]``.

    The field takes a string ``"value unit"`` of ``dimension`` and holds its SI value.
    ``gt``/``ge``/``le`` are SI bounds checked after conversion (the schema cannot
    express them on a string; they appear as ``x-si-minimum`` etc.). Pydantic
    unpacks the group into its validators and JSON Schema; to a type checker the
    field is a plain float.
    """

    def __init__(
        self,
        dimension: str,
        description: str,
        *,
        gt: float | None = None,
        ge: float | None = None,
        le: float | None = None,
    ) -> None:
        dim = units.DIMENSIONS[dimension]
        schema: dict[str, Any] = {
            "type": "string",
            "pattern": unit_pattern(dimension),
            "x-dimension": dimension,
            "x-si-unit": dim.si_unit,
            "examples": [dim.example],
        }
        schema["x-si-magnitude"] = list(SI_MAGNITUDE)
        if gt is not None:
            schema["x-si-exclusive-minimum"] = gt
        if ge is not None:
            schema["x-si-minimum"] = ge
        if le is not None:
            schema["x-si-maximum"] = le
        self.dimension = dimension
        self.description = description
        self._items = (
            BeforeValidator(_parser(dimension)),
            AfterValidator(_range_check(dimension, gt, ge, le)),
            WithJsonSchema(schema),
        )

    def __iter__(self) -> Iterator[Any]:
        return iter(self._items)
