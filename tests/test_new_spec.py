"""`specguard new`: the starter specs, as written and once filled.

The filled values are invented (a lab dosing pump on an H-bridge, a camera-gimbal pan
axis, a six-step pump rotor), chosen to be physically plausible and mutually
consistent: the torque and back-EMF constants agree under their declared conventions
(23.5 mN*m/A = 2.46 mV/rpm for the DC motor; 0.11 N*m/A per phase-rms ampere with
6.65 V/krpm line-to-line rms for the sinusoidal motor; 0.11 N*m/A per block ampere with
0.11 V*s/rad line-to-line peak for the six-step motor), and the inductances keep the
ripple below a fifth of the rated current.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from specguard.cli import main
from specguard.model import units
from specguard.starter import KINDS, starter_text

ROOT = Path(__file__).resolve().parents[1]

# dotted path (list indices left out) -> the value a user writes over the placeholder
FILLS: dict[str, dict[str, str]] = {
    "dc-h-bridge": {
        "axis.name": "dose-pump",
        "motor.winding": "iron-core",
        "motor.terminal_resistance.value": "2.1 ohm",
        "motor.terminal_resistance.at": "25 degC",
        "motor.terminal_inductance.value": "3.3 mH",
        "motor.terminal_inductance.measured_at": "1 kHz",
        "motor.torque_constant.value": "23.5 mN*m/A",
        "motor.back_emf_constant.value": "2.46 mV/rpm",
        "motor.rated_current": "1.5 A",
        "stage.supply.voltage": "24 V",
        "stage.pwm.frequency": "25 kHz",
        "stage.pwm.scheme": "unipolar-single",
        "stage.pwm.max_duty": "0.95",
        "operating_points.name": "dose",
        "operating_points.speed": "4000 rpm",
        "operating_points.torque": "20 mN*m",
        "operating_points.ambient": "35 degC",
    },
    "three-phase-sinusoidal": {
        "axis.name": "gimbal-pan",
        "motor.winding": "iron-core",
        "motor.terminal_resistance.value": "0.8 ohm",
        "motor.terminal_resistance.at": "25 degC",
        "motor.terminal_inductance.value": "3.2 mH",
        "motor.terminal_inductance.measured_at": "1 kHz",
        "motor.torque_constant.value": "0.11 N*m/A",
        "motor.torque_constant.current": "phase-rms",
        "motor.back_emf_constant.value": "6.65 V/krpm",
        "motor.back_emf_constant.voltage": "line-to-line-rms",
        "motor.rated_current": "3.5 A",
        "motor.pole_pairs": "4",
        "stage.supply.voltage": "36 V",
        "stage.pwm.frequency": "25 kHz",
        "stage.pwm.scheme": "space-vector",
        "stage.pwm.max_duty": "0.97",
        "operating_points.name": "pan",
        "operating_points.speed": "2400 rpm",
        "operating_points.torque": "0.2 N*m",
        "operating_points.ambient": "35 degC",
    },
    "three-phase-six-step": {
        "axis.name": "pump-rotor",
        "motor.winding": "iron-core",
        "motor.terminal_resistance.value": "0.8 ohm",
        "motor.terminal_resistance.at": "25 degC",
        "motor.terminal_inductance.value": "3.2 mH",
        "motor.terminal_inductance.measured_at": "1 kHz",
        "motor.torque_constant.value": "0.11 N*m/A",
        "motor.torque_constant.current": "block",
        "motor.back_emf_constant.value": "0.11 V*s/rad",
        "motor.back_emf_constant.voltage": "line-to-line-peak",
        "motor.rated_current": "3.5 A",
        "motor.pole_pairs": "4",
        "stage.supply.voltage": "48 V",
        "stage.pwm.frequency": "30 kHz",
        "stage.pwm.scheme": "six-step-chop-one",
        "stage.pwm.max_duty": "0.97",
        "operating_points.name": "pump",
        "operating_points.speed": "3000 rpm",
        "operating_points.torque": "0.25 N*m",
        "operating_points.ambient": "35 degC",
    },
}

_KEY_LINE = re.compile(r"^( *)(- )?([A-Za-z_]+):(?: (.*))?$")


def placeholders(text: str) -> list[tuple[int, int, str]]:
    """(line, column of the value, dotted path) of every active placeholder line."""
    out, stack = [], []
    for number, line in enumerate(text.splitlines(), start=1):
        m = _KEY_LINE.match(line)
        if not m:
            continue
        indent, dash, key, value = m.groups()
        col = len(indent) + (2 if dash else 0)
        while stack and stack[-1][0] >= col:
            stack.pop()
        path = ".".join([k for _, k in stack] + [key])
        if value is None:
            stack.append((col, key))
        elif value.startswith(("<", "[<")):
            out.append((number, col + len(key) + 3, path))
    return out


def fill(text: str, values: dict[str, str]) -> str:
    """Write each value over its placeholder, in place (comments and layout kept)."""
    lines = text.splitlines()
    todo = dict(values)
    for number, column, path in placeholders(text):
        lines[number - 1] = lines[number - 1][: column - 1] + todo.pop(path)
    assert not todo, f"no placeholder for {sorted(todo)}"
    return "\n".join(lines) + "\n"


def write_starter(tmp_path: Path, kind: str, filled: bool) -> Path:
    target = tmp_path / f"{kind}.axis.yaml"
    assert main(["new", "--kind", kind, str(target)]) == 0
    if filled:
        target.write_text(fill(target.read_text(encoding="utf-8"), FILLS[kind]), encoding="utf-8")
    return target


def check(path: Path, capsys, *extra: str) -> tuple[int, str]:
    capsys.readouterr()
    status = main(["check", "--no-cache", "--root", str(path.parent), *extra, str(path)])
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err
    return status, captured.out


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_unfilled_starter_fails_at_each_placeholder(tmp_path, capsys, kind):
    """A forgotten placeholder is a located schema error naming the field (exit 1, as for
    every schema violation: a finding at error level), never a traceback."""
    target = write_starter(tmp_path, kind, filled=False)
    status, out = check(target, capsys)
    assert status == 1
    found = {
        (int(m.group(1)), int(m.group(2))): m.group(3)
        for m in re.finditer(r"^[^\s:]+:(\d+):(\d+): error: (\S+?):", out, re.MULTILINE)
    }
    expected = placeholders(target.read_text(encoding="utf-8"))
    assert expected and len(found) == len(expected)
    for line, column, path in expected:
        assert (line, column) in found, (path, out)
        assert re.sub(r"\[\d+\]", "", found[(line, column)]) == path


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_filled_starter_passes_check(tmp_path, capsys, kind):
    """No error and no warning once filled. Info findings remain: the starter leaves
    optional data out (rule-not-applicable for the thermal, braking and current-loop
    rules) and gives a catalogue inductance rather than a measured table
    (inductance-estimated)."""
    target = write_starter(tmp_path, kind, filled=True)
    status, out = check(target, capsys)
    assert status == 0, out
    assert "0 errors, 0 warnings" in out
    rules = set(re.findall(r": info: .*\[([a-z-]+)\]$", out, re.MULTILINE))
    assert rules <= {"rule-not-applicable", "inductance-estimated"}, out


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_filled_starter_is_valid_under_the_published_schema(tmp_path, kind):
    from jsonschema import Draft202012Validator

    from specguard.schema import spec_schema
    from specguard.source import load_bytes

    target = write_starter(tmp_path, kind, filled=True)
    loaded = load_bytes(target.read_bytes(), target.name)
    assert not loaded.findings
    assert list(Draft202012Validator(spec_schema()).iter_errors(loaded.data)) == []


def test_refuses_to_overwrite(tmp_path, capsys):
    target = tmp_path / "lift.axis.yaml"
    target.write_text("kept\n", encoding="utf-8")
    assert main(["new", "--kind", "dc-h-bridge", str(target)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert err.startswith("specguard: error: ") and err.rstrip().endswith("[output-error]")
    assert "exists" in err
    assert target.read_text(encoding="utf-8") == "kept\n"


def test_unwritable_target_is_an_output_error(tmp_path, capsys):
    assert main(["new", "--kind", "dc-h-bridge", str(tmp_path / "missing" / "x.axis.yaml")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("specguard: error: cannot write ") and err.rstrip().endswith("[output-error]")


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_dash_writes_to_stdout(tmp_path, capsys, kind):
    assert main(["new", "--kind", kind, "-"]) == 0
    assert capsys.readouterr().out == starter_text(kind)
    assert not (Path.cwd() / "-").exists()


def test_unknown_kind_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["new", "--kind", "stepper", "-"])
    assert exc.value.code == 2


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_comments_give_every_required_keys_unit(kind):
    """The comment above each placeholder states the unit: the SI unit of a dimensional
    value, or 'unit: none' for words, counts, fractions and names."""
    from specguard.model.build import model_at
    from specguard.starter import _info

    text = starter_text(kind)
    lines = text.splitlines()
    for number, _column, path in placeholders(text):
        comment = []
        i = number - 2
        while i >= 0 and lines[i].lstrip().startswith("#"):
            comment.insert(0, lines[i].lstrip("# ").strip())
            i -= 1
        said = " ".join(comment)
        parts = path.split(".")
        model = model_at(tuple(parts[:-1]))
        assert model is not None, path
        field = model.model_fields[parts[-1]]
        quantity = _info(field).quantity
        if quantity is not None:
            assert f"unit: {units.DIMENSIONS[quantity.dimension].si_unit}" in said, (path, said)
        else:
            assert "unit: none" in said, (path, said)
        if field.description:
            assert field.description.split(";")[0][:30] in said, (path, said)


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_optional_keys_are_commented_with_their_default(kind):
    text = starter_text(kind)
    for key in ("dead_time", "frequency_is", "freewheeling", "switch_resistance", "chokes", "thermal"):
        line = next(x for x in text.splitlines() if re.match(rf"^ *# {key}:", x))
        assert line  # commented out, not active
    assert "optional, default: absent; when absent: 0 s" in " ".join(
        x.strip("# ") for x in text.splitlines() if x.lstrip().startswith("#")
    ).replace("  ", " ")


def test_docs_example_passes_check(tmp_path, capsys):
    """The complete three-phase example in docs/format.md is a clean spec."""
    text = (ROOT / "docs" / "format.md").read_text(encoding="utf-8")
    example = re.search(r"```yaml\n(# A complete three-phase.*?)```", text, re.DOTALL)
    assert example, "docs/format.md lost its complete example"
    target = tmp_path / "example.axis.yaml"
    target.write_text(example.group(1), encoding="utf-8")
    status, out = check(target, capsys)
    assert status == 0 and "0 errors, 0 warnings" in out, out


def test_cli_offers_exactly_the_starter_kinds():
    # the parser lists the kinds itself, so that building it imports no pydantic model
    from specguard.cli import build_parser

    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    new = sub.choices["new"]  # type: ignore[attr-defined]
    kind = next(a for a in new._actions if a.dest == "kind")
    assert tuple(kind.choices) == tuple(KINDS)
