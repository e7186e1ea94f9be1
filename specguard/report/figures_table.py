"""The numbers behind the findings: every figure of each spec, as a text table or JSON.

JSON layout (``figures_format`` 1, documented in docs/figures.md): the figure
definitions once (name, unit, scope, dimension, meaning, spec paths), then per
file the axis values, the per-point values, the figures that could not be
computed with the reason, and notes on how a value was obtained. Values are SI;
the text table shows them in readable units.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import math

from .. import __version__
from ..figures.registry import FIGURE_DEFS, FIGURES
from ..model.units import format_si
from .json_report import dumps
from .json_report import figures as figures_json
from .safe import escape_controls

FIGURES_FORMAT = 1


def shown(name: str, value) -> str:
    """A figure value in readable units (ratios in percent, flags yes/no)."""
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if not math.isfinite(value):
        return str(value)
    from ..engine.pack import figure_form, format_value, plain_number

    fdef = FIGURE_DEFS.get(name)
    if fdef is None or fdef.dimension == "flag":
        return plain_number(value, 4)
    form = figure_form(name)
    if form in ("under", "over"):  # a table shows the signed value, not its words
        return format_si(value, fdef.dimension)
    return format_value(value, fdef.dimension, form)


def render_text(report: Report) -> str:
    lines: list[str] = []
    for result in report.files:
        fs = result.figures
        lines.append(f"== {escape_controls(result.file)}")
        if fs is None:
            reason = result.input_error or "the spec did not validate; see `specguard check`"
            lines.append(f"   no figures: {escape_controls(reason)}")
            lines.append("")
            continue
        names = [escape_controls(n) for n in fs.point_names()]
        width = max([len(f.name) for f in FIGURES] + [6])
        lines.append(f"   {'axis figure':<{width}}  value")
        for fdef in FIGURES:
            if fdef.scope == "axis" and fdef.name in fs.axis:
                lines.append(f"   {fdef.name:<{width}}  {shown(fdef.name, fs.axis[fdef.name])}")
        if names:
            cols = [max(12, len(n)) for n in names]
            head = "  ".join(f"{n:>{c}}" for n, c in zip(names, cols, strict=True))
            lines.append("")
            lines.append(f"   {'point figure':<{width}}  {head}")
            for fdef in FIGURES:
                if fdef.scope != "point":
                    continue
                cells = [shown(fdef.name, values.get(fdef.name)) for _, values in fs.points]
                if all(c == "-" for c in cells):
                    continue
                row = "  ".join(f"{c:>{w}}" for c, w in zip(cells, cols, strict=True))
                lines.append(f"   {fdef.name:<{width}}  {row}")
        if fs.missing:
            lines.append("")
            lines.append("   not computed:")
            for name in sorted(fs.missing):
                lines.append(f"   - {name}: {escape_controls(fs.missing[name])}")
        if fs.notes:
            lines.append("   notes:")
            for name in sorted(fs.notes):
                lines.append(f"   - {name}: {escape_controls(fs.notes[name])}")
        lines.append("")
    return "\n".join(lines)


def definitions() -> list[dict]:
    return [
        {
            "name": f.name,
            "unit": f.unit,
            "dimension": f.dimension,
            "scope": f.scope,
            "meaning": f.meaning,
            "paths": ["/" + "/".join(str(p) for p in path) for path in f.paths],
        }
        for f in FIGURES
    ]


def render_json(report: Report) -> str:
    document = {
        "figures_format": FIGURES_FORMAT,
        "tool": {"name": "specguard", "version": __version__},
        "definitions": definitions(),
        "files": [
            {
                "file": result.file,
                "input_error": result.input_error,
                "figures": figures_json(result.figures),
            }
            for result in report.files
        ],
    }
    return dumps(document)
