"""Shared helpers of the engine tests: a real base spec, a locate over its real
line index, a fake FigureSet and a fake remedy function."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

from specguard.engine.evaluate import _locate_in, load_pack
from specguard.engine.pack import Pack
from specguard.figures import FigureSet, Remedy
from specguard.findings import Location
from specguard.model import build
from specguard.source import load_bytes


def base_spec(name: str = "dc-axis", overlay: dict | None = None):
    """(spec, locate) of a base example spec, optionally with an overlay merged."""
    from specguard.engine.pack import merge_overlay

    raw = (files("specguard.pack") / "examples" / f"{name}.yaml").read_bytes()
    result = load_bytes(raw, f"{name}.yaml")
    assert result.data is not None, result.findings
    data = merge_overlay(result.data, overlay or {})

    def locate(path, key=False):
        line, col = _locate_in(result, tuple(path), key=key)
        return Location(f"{name}.yaml", line, col, path=tuple(path)), ()

    spec, findings = build(data, locate)
    assert spec is not None, findings
    return spec, locate


def figures(axis=None, points=None, missing=None) -> FigureSet:
    points = points if points is not None else {"hold": {}, "run": {}}
    return FigureSet(
        axis=dict(axis or {}),
        points=tuple((k, dict(v)) for k, v in points.items()),
        missing=dict(missing or {}),
    )


def fake_remedy(calls: list | None = None):
    def remedy(name, spec, figures, *, point, limit):
        if calls is not None:
            calls.append((name, point, limit))
        if name == "pwm_frequency":
            return None  # "does not apply": must be skipped
        return Remedy(name, f"{name} for limit {limit:g}", limit, "")

    return remedy


def write_rule(folder: Path, text: str) -> Path:
    import re

    rule_id = re.search(r"^id: (\S+)", text, re.M).group(1)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{rule_id}.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def single(folder: Path, text: str) -> Pack:
    """A pack holding only the rule written from ``text`` (validated like a team rule)."""
    write_rule(folder, text)
    full = load_pack([folder])
    rule_id = text.split("id: ", 1)[1].split()[0]
    prule = full.get(rule_id)
    return Pack((prule,), {prule.id: prule}, {a: prule.id for a in prule.rule.aliases})


RULE = """\
id: {id}
title: test rule
figure: {figure}
scope: {scope}
bands:
{bands}
{applies}
at: {at}
related: {related}
message: "{message}"
checks: checks something
why: it matters
formula: x = y
sources: ["common practice, no published source"]
remedies: {remedies}
examples: {{base: dc-axis, pass: {{}}, fail: {{}}}}
"""


def rule_text(
    id="test-ripple-share",
    figure="ripple_ratio",
    scope="point",
    bands=("- {severity: warning, above: 0.2}", "- {severity: error, above: 0.5}"),
    applies="",
    at="operating_points/{point}",
    related="[motor/rated_current]",
    message="ripple {ripple_pp} at '{point}' is {ripple_ratio} of {motor_rated_current} (limit {limit})",
    remedies="[]",
):
    return RULE.format(
        id=id,
        figure=figure,
        scope=scope,
        bands="\n".join("  " + b for b in bands),
        applies=applies,
        at=at,
        related=related,
        message=message,
        remedies=remedies,
    )
