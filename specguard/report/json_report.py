"""JSON output: the whole report, findings and figures, in a published shape.

The shape is ``schemas/report-v1.schema.json`` (``$id``
``urn:specguard:schema:report:v1``); ``report_format`` is its version and only
grows compatible fields within a version. A pure function of the Report: the
same report gives the same bytes, whatever the hash seed, with no timestamps and
only repo-relative paths.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import json
import math
import re
from typing import Any

REPORT_FORMAT = 1

# json.dumps(ensure_ascii=False) escapes C0 controls itself but writes DEL, C1
# controls, bidi controls, the line/paragraph separators and lone surrogates raw.
# Escaping them as \uXXXX keeps the same JSON value and keeps them off terminals
# and out of UTF-8 encoders (docs/reliability.md G16). They can only occur inside
# strings, so a substitution over the whole text is safe.
_RAW_UNSAFE = re.compile(
    "[\x7f-\x9f\u00ad\u061c\u180e\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069\u2028\u2029\ufeff\ud800-\udfff]"
)


def dumps(document: Any, indent: int | None = 2) -> str:
    """Deterministic JSON text: sorted keys, UTF-8 characters kept, unsafe ones escaped."""
    text = json.dumps(
        document,
        indent=indent,
        sort_keys=True,
        ensure_ascii=False,
        allow_nan=False,
        separators=(",", ": ") if indent else (",", ":"),
    )
    return _RAW_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text) + "\n"


def _number(value: object) -> float | bool | None:
    if isinstance(value, bool):
        return value
    if isinstance(value, (int, float)):
        v = float(value)
        return v if math.isfinite(v) else None
    return None


def location(loc) -> dict:
    out = {
        "file": loc.file,
        "line": loc.line,
        "column": loc.column,
        "end_line": loc.end_line,
        "end_column": loc.end_column,
        "pointer": loc.pointer,
    }
    if getattr(loc, "label", ""):
        out["label"] = loc.label  # what a related location is: path and value
    return out


def finding(f) -> dict:
    return {
        "rule": f.rule,
        "severity": f.severity,
        "message": f.message,
        "location": location(f.location),
        "related": [location(r) for r in f.related],
        "operating_point": f.operating_point,
        "figures": [{"name": n, "value": _number(v), "unit": u} for n, v, u in f.figures],
        "remedies": list(f.remedies),
        "fixes": [fix(x) for x in f.fixes],
        "explained_by": f.explained_by,
        "help": f.help,
        "waived": f.waived,
        "baselined": bool(getattr(f, "baselined", False)),
    }


def change_value(value: object) -> object:
    """A change's value as JSON: a text with its unit, a list of them, or a whole
    section (added where the spec has none) as a mapping."""
    if isinstance(value, tuple):
        return {k: change_value(v) for k, v in value}
    if isinstance(value, list):
        return [change_value(v) for v in value]
    return value


def fix(x) -> dict:
    """A verified fix with its machine-applicable edit: JSON pointers into the axis
    file as written (an override there for a value that comes from a library file)."""
    return {
        "text": x.text,
        "changes": [{"pointer": c.pointer, "value": change_value(c.value)} for c in x.changes],
        "clears": list(x.clears),
        "reaches": x.reaches,
        "side_effects": list(x.side_effects),
        "cost": round(float(x.cost), 6),
    }


def figures(fs) -> dict | None:
    """Axis and per-point figures of one file: names, SI values, units."""
    if fs is None:
        return None
    from ..figures.registry import FIGURE_DEFS

    def values(mapping) -> list[dict]:
        out = []
        for name in sorted(mapping):
            fdef = FIGURE_DEFS.get(name)
            out.append(
                {
                    "name": name,
                    "value": _number(mapping[name]),
                    "unit": fdef.unit if fdef is not None else "",
                }
            )
        return out

    return {
        "axis": values(fs.axis),
        "points": [{"name": name, "figures": values(vals)} for name, vals in fs.points],
        "missing": [{"name": n, "reason": fs.missing[n]} for n in sorted(fs.missing)],
        "notes": [{"name": n, "note": fs.notes[n]} for n in sorted(fs.notes)],
    }


def document(report: Report) -> dict:
    from .. import __version__

    files = []
    all_findings = report.findings
    for result in report.files:
        files.append(
            {
                "file": result.file,
                "fail_level": report.fail_level_of(result),
                "input_error": result.input_error,
                "closure": [{"file": p, "sha256": h} for p, h in result.closure],
                "findings": [finding(f) for f in sorted(result.findings, key=lambda f: f.sort_key())],
                "figures": figures(getattr(result, "figures", None)),
            }
        )
    counts = report.counts()
    waived = sum(1 for f in all_findings if f.waived is not None)
    baselined = sum(1 for f in all_findings if getattr(f, "baselined", False))
    outcome = getattr(report, "baseline", None)
    baseline = None
    if outcome is not None:
        baseline = {
            "file": outcome.file,
            "suppressed": outcome.suppressed,
            "stale": outcome.stale_count,
            "strict": outcome.strict,
            "stale_entries": [
                {
                    "rule": e.rule,
                    "file": e.file,
                    "pointer": e.pointer,
                    "operating_point": e.operating_point,
                    "count": e.count,
                    "message": e.message,
                }
                for e in outcome.stale
            ],
        }
    return {
        "report_format": REPORT_FORMAT,
        "tool": {"name": "specguard", "version": __version__},
        "fail_level": report.fail_level,
        "exit_status": report.exit_status(),
        "files": files,
        "baseline": baseline,
        "summary": {
            "files": report.file_count,
            "unreadable": len(report.input_errors),
            "error": counts["error"],
            "warning": counts["warning"],
            "info": counts["info"],
            "waived": waived,
            "baselined": baselined,
        },
    }


def render(report: Report) -> str:
    return dumps(document(report))
