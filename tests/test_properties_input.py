"""Property tests of the input side (docs/reliability.md G1 and §8).

(a) arbitrary text and bytes, (b) a YAML token grammar, (c) valid specs generated
from the model, (d) JSON text against ``json.loads``, (e) argument-order shuffles.

Default tier (PR CI): 1,000 derandomised examples per property, no database,
no deadline; (e) runs 200 (each example is a whole ``check_paths`` over six
files, about 30 ms). Extended tier: ``SPECGUARD_EXTENDED=1`` gives random
generation, 20,000 examples per property and ``print_blob=True``.

(a)-(c) go through ``pipeline.analyse`` in-process: the loader, the library
assembler, the model, the figures and the rule pack, exactly as a file checked
by ``check_paths`` (bytes are passed in, so no file is written per example).
``analyse`` is called directly, not through ``analyse_one``: an exception fails
the property instead of becoming an ``internal-error`` finding, and an
``internal-error`` finding fails it too.
"""

from __future__ import annotations

import json
import math
import os
import random
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from specguard.findings import Location
from specguard.model import build
from specguard.model.quantity import SI_MAGNITUDE
from specguard.model.units import DIMENSIONS
from specguard.pipeline import analyse, check_paths
from specguard.report.text import render
from specguard.source import load_bytes

ROOT = Path(__file__).resolve().parents[1]
EXTENDED = os.environ.get("SPECGUARD_EXTENDED") == "1"

if EXTENDED:
    SETTINGS = settings(
        max_examples=20_000,
        derandomize=False,
        deadline=None,
        database=None,
        print_blob=True,
        suppress_health_check=list(HealthCheck),
    )
    SHUFFLE_SETTINGS = SETTINGS
    FULL_SETTINGS = SETTINGS
else:
    SETTINGS = settings(
        max_examples=1000, derandomize=True, deadline=None, database=None, suppress_health_check=list(HealthCheck)
    )
    SHUFFLE_SETTINGS = settings(SETTINGS, max_examples=200)
    FULL_SETTINGS = settings(SETTINGS, max_examples=200)

FILE = "specs/case.axis.yaml"
INPUT_RULES = ("text-encoding", "number-invalid")  # plus every yaml-* id


@pytest.fixture(scope="module")
def repo(tmp_path_factory):
    """An empty repository root: a `from:` in generated text resolves inside it."""
    root = tmp_path_factory.mktemp("repo")
    (root / ".git").mkdir()
    (root / "specs").mkdir()
    (root / "specs" / "lib.yaml").write_text("format: 1\nmotor:\n  type: brushed-dc\n", encoding="utf-8")
    return root


def run(raw: bytes, root: Path):
    result, _payload = analyse(raw, len(raw), root / FILE, FILE, root)
    return result


def assert_no_internal_error(result):
    bad = [f for f in result.findings if f.rule == "internal-error"]
    assert not bad, [f.message for f in bad]
    for f in result.findings:
        assert f.location.line >= 1 and f.location.column >= 1, f


# --------------------------------------------------------------- (a) text, bytes
@SETTINGS
@given(raw=st.binary(max_size=2000))
def test_arbitrary_bytes_never_crash(repo, raw):
    assert_no_internal_error(run(raw, repo))


@SETTINGS
@given(text=st.text(max_size=1000))
def test_arbitrary_text_never_crashes(repo, text):
    assert_no_internal_error(run(text.encode("utf-8", "surrogatepass"), repo))


# ------------------------------------------------------------ (b) YAML grammar
_INDICATORS = ["-", "?", ":", ",", "[", "]", "{", "}", "#", "&", "*", "!", "|", ">", "'", '"', "%", "@", "`"]
_KEYS = [
    "format",
    "axis",
    "name",
    "motor",
    "type",
    "winding",
    "from",
    "stage",
    "supply",
    "voltage",
    "range",
    "pwm",
    "frequency",
    "scheme",
    "max_duty",
    "chokes",
    "count",
    "operating_points",
    "speed",
    "torque",
    "ambient",
    "profile",
    "segments",
    "duration",
    "waivers",
    "expires",
    "terminal_resistance",
    "value",
    "at",
    "<<",
    "notes",
]
_VALUES = [
    "1",
    "48 V",
    "85 uH",
    "25 kHz",
    "4200 rpm",
    "40 degC",
    "0.95",
    "1e400",
    "-0",
    "0x1F",
    "0o17",
    "010",
    ".nan",
    "-.inf",
    "true",
    "yes",
    "null",
    "~",
    "2027-01-15",
    "1:30",
    "2.5 MH",
    "5 mOhm",
    "µH",
    "",
    "brushed-dc",
    "bipolar",
    "../library/x.yaml",
    "/etc/passwd",
    "https://x",
    "\\ud800",
    "é",
]
_TOKENS = (
    _INDICATORS
    + [
        "!!int",
        "!!str",
        "!!binary",
        "!!python/object:os.system",
        "!local",
        "!<tag:yaml.org,2002:str>",
        "&a",
        "&b",
        "*a",
        "*b",
        "*nope",
        "<<: *a",
        "%YAML 1.2",
        "%YAML 1.1",
        "%TAG ! tag:x,2000:",
        "---",
        "...",
        "# comment",
        "? ",
        ": ",
        "- ",
        "{",
        "}",
        "[",
        "]",
        ", ",
        "|-",
        ">+",
        "'q'",
        '"d\\n"',
        '"\\u00e9"',
        "\t",
        "  ",
        "\n",
        "\r\n",
        "\n  ",
        "\n    ",
        "\n- ",
        "\ufeff",
        "\x00",
        "\x1b",
    ]
    + [k + ":" for k in _KEYS]
    + _KEYS
    + _VALUES
)


@st.composite
def yaml_like(draw):
    parts = draw(st.lists(st.sampled_from(_TOKENS), max_size=60))
    sep = draw(st.sampled_from(["", " ", "\n"]))
    return sep.join(parts)


@SETTINGS
@given(text=yaml_like())
def test_yaml_token_grammar_never_crashes(repo, text):
    assert_no_internal_error(run(text.encode("utf-8"), repo))


# ------------------------------------------------- (c) valid specs from the model
def _q(dimension: str, low: float, high: float):
    """A unit string in one of the accepted units of ``dimension``, SI value in [low, high]:
    exactly zero (when ``low`` is 0) or a magnitude the model accepts (SI_MAGNITUDE)."""
    dim = DIMENSIONS[dimension]
    floor = max(low, SI_MAGNITUDE[0] * 1.01)  # (the 6-digit text must not round below it)
    values = st.floats(floor, high, allow_nan=False, allow_infinity=False)
    if low == 0.0:
        values = st.just(0.0) | values

    @st.composite
    def build(draw):
        si = draw(values)
        unit = draw(st.sampled_from(list(dim.units)))
        factor, offset = dim.units[unit]
        number = (si - offset) / factor
        text = f"{number:.6g}"
        space = draw(st.sampled_from([" ", " ", ""]))
        return f"{text}{space}{unit}"

    return build()


def _name():
    return st.from_regex(r"[a-z][a-z0-9_.\-]{0,12}", fullmatch=True)


@st.composite
def valid_spec(draw):
    three = draw(st.booleans())
    supply = draw(st.floats(6.0, 400.0))
    motor = {
        "type": "three-phase" if three else "brushed-dc",
        "winding": draw(st.sampled_from(["iron-core", "coreless", "slotless"])),
        "terminal_resistance": {
            "value": draw(_q("resistance", 0.01, 50.0)),
            "at": draw(_q("temperature", 283.15, 323.15)),
        },
        "torque_constant": {
            "value": draw(_q("torque_constant", 1e-3, 2.0)),
            "current": draw(st.sampled_from(["phase-rms", "phase-peak", "block"])) if three else "dc",
        },
        "back_emf_constant": {
            "value": draw(_q("back_emf_constant", 1e-3, 2.0)),
            "voltage": draw(st.sampled_from(["line-to-line-peak", "line-to-line-rms", "phase-peak", "phase-rms"]))
            if three
            else "terminal",
        },
        "rated_current": draw(_q("current", 0.05, 50.0)),
    }
    if draw(st.booleans()):
        motor["terminal_inductance"] = {
            "value": draw(_q("inductance", 1e-6, 0.1)),
            "measured_at": draw(_q("frequency", 50.0, 1e5)),
        }
    if not motor.get("terminal_inductance") or draw(st.booleans()):
        n = draw(st.integers(2, 5))
        freqs = sorted(set(draw(st.lists(st.floats(10.0, 2e5), min_size=n, max_size=n))))
        if len(freqs) < 2:
            freqs = [1e3, 1e4]
        rows = []
        for f in freqs:
            row = {"frequency": f"{f:.17g} Hz", "inductance": draw(_q("inductance", 1e-6, 0.1))}
            if draw(st.booleans()):
                row["series_resistance"] = draw(_q("resistance", 0.01, 100.0))
            rows.append(row)
        motor["inductance_vs_frequency"] = rows
    if three:
        motor["pole_pairs"] = draw(st.integers(1, 200))
        if draw(st.booleans()):
            motor["d_axis_inductance"] = draw(_q("inductance", 1e-6, 0.1))
            motor["q_axis_inductance"] = draw(_q("inductance", 1e-6, 0.1))
    for key, dim, low, high in (
        ("peak_current", "current", 0.05, 200.0),
        ("no_load_current", "current", 0.0, 1.0),
        ("max_speed", "speed", 1.0, 5000.0),
        ("rotor_inertia", "inertia", 1e-8, 1e-2),
    ):
        if draw(st.booleans()):
            motor[key] = draw(_q(dim, low, high))
    if draw(st.booleans()):
        thermal = {
            "winding_to_housing": draw(_q("thermal_resistance", 0.05, 50.0)),
            "housing_to_ambient": draw(_q("thermal_resistance", 0.05, 100.0)),
        }
        if draw(st.booleans()):
            thermal["winding_time_constant"] = draw(_q("time", 0.5, 200.0))
            thermal["motor_time_constant"] = draw(_q("time", 10.0, 1e4))
        choice = draw(st.sampled_from(["max", "class", "both", "none"]))
        if choice in ("max", "both"):
            thermal["max_winding_temperature"] = draw(_q("temperature", 350.0, 480.0))
        if choice in ("class", "both"):
            thermal["insulation_class"] = draw(st.sampled_from(["B", "F", "H", "155", "180"]))
        motor["thermal"] = thermal
    schemes = (
        ["six-step-chop-one", "six-step-chop-both", "sinusoidal", "space-vector"]
        if three
        else ["bipolar", "unipolar-single", "unipolar-phase-shifted"]
    )
    pwm = {
        "frequency": draw(_q("frequency", 1e3, 2e5)),
        "scheme": draw(st.sampled_from(schemes)),
        "max_duty": draw(st.floats(0.51, 1.0)),
    }
    for key, strat in (
        ("frequency_is", st.sampled_from(["leg", "ripple"])),
        ("freewheeling", st.sampled_from(["synchronous", "diode"])),
        ("dead_time", _q("time", 0.0, 2e-6)),
        ("min_pulse", _q("time", 1e-8, 5e-6)),
        ("timer_clock", _q("frequency", 1e6, 5e8)),
        ("alignment", st.sampled_from(["center", "edge"])),
    ):
        if draw(st.booleans()):
            pwm[key] = draw(strat)
    stage = {"supply": {"voltage": f"{supply:.6g} V"}, "pwm": pwm}
    if draw(st.booleans()):
        stage["supply"]["range"] = [f"{supply * 0.9:.6g} V", f"{supply * 1.1:.6g} V"]
    if draw(st.booleans()):
        stage["supply"]["absorbs_braking_energy"] = draw(st.booleans())
    if draw(st.booleans()):
        stage["switch_resistance"] = draw(_q("resistance", 0.0, 1.0))
    if draw(st.booleans()):
        stage["current_limit"] = {"continuous": draw(_q("current", 0.1, 100.0))}
        if draw(st.booleans()):
            stage["current_limit"]["peak"] = draw(_q("current", 0.1, 300.0))
    if draw(st.booleans()):
        stage["current_loop"] = {
            "bandwidth": draw(_q("frequency", 10.0, 2e4)),
            "sampling": draw(st.sampled_from(["single-update", "double-update"])),
        }
    if draw(st.booleans()):
        stage["bus_capacitance"] = draw(_q("capacitance", 1e-6, 1e-1))
        stage["overvoltage_trip"] = f"{supply * draw(st.floats(1.3, 2.0)):.6g} V"
    spec = {"format": 1, "axis": {"name": draw(_name())}, "motor": motor, "stage": stage}
    if draw(st.booleans()):
        spec["chokes"] = {
            "inductance": draw(_q("inductance", 1e-6, 1e-2)),
            "placement": "per-phase" if three else "per-lead",
            "count": draw(st.integers(1, 3 if three else 2)),
        }
    if draw(st.booleans()):
        spec["cable"] = {"resistance": draw(_q("resistance", 0.0, 1.0)), "length": draw(_q("length", 0.1, 50.0))}
    if draw(st.booleans()):
        spec["load"] = {"inertia": draw(_q("inertia", 0.0, 1.0))}
    names = draw(st.lists(_name(), min_size=1, max_size=4, unique=True))
    # Zero torque at standstill (zero terminal voltage) was a bug this property found;
    # it is pinned by test_all_points_idle_supply_window and
    # test_idle_point_ripple_remedy below, and the generator now reaches it too.
    spec["operating_points"] = [
        {
            "name": n,
            "speed": draw(_q("speed", 0.0, 2000.0)),
            "torque": draw(_q("torque", 0.0, 5.0)),
            "ambient": draw(_q("temperature", 253.15, 333.15)),
        }
        for i, n in enumerate(names)
    ]
    if draw(st.booleans()):
        spec["profile"] = {
            "ambient": draw(_q("temperature", 253.15, 333.15)),
            "segments": [
                {
                    "duration": draw(_q("time", 1e-3, 100.0)),
                    "speed": draw(_q("speed", 0.0, 2000.0)),
                    "torque": draw(_q("torque", 0.0, 5.0)),
                }
                for _ in range(draw(st.integers(1, 4)))
            ],
        }
    if three:
        # the constants' conventions must fit the EMF shape (specguard.model.conventions):
        # a trapezoidal (six-step) EMF has no RMS constant, a block current is six-step's
        six_step = pwm["scheme"].startswith("six-step")
        if six_step and motor["back_emf_constant"]["voltage"].endswith("-rms"):
            motor["back_emf_constant"]["voltage"] = motor["back_emf_constant"]["voltage"].replace("-rms", "-peak")
        if not six_step and motor["torque_constant"]["current"] == "block":
            motor["torque_constant"]["current"] = "phase-rms"
    return spec


def to_yaml(value, indent: int = 0) -> str:
    """Block-style YAML of plain data; every string double-quoted (JSON escapes)."""
    pad = "  " * indent
    if isinstance(value, dict):
        lines = []
        for key, item in value.items():
            if isinstance(item, (dict, list)) and item:
                lines.append(f"{pad}{key}:\n{to_yaml(item, indent + 1)}")
            else:
                lines.append(f"{pad}{key}: {_scalar(item)}")
        return "\n".join(lines)
    lines = []
    for item in value:
        if isinstance(item, dict) and item:
            inner = to_yaml(item, indent + 1).lstrip()
            lines.append(f"{pad}- {inner}")
        else:
            lines.append(f"{pad}- {_scalar(item)}")
    return "\n".join(lines)


def _scalar(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)
    return "{}" if isinstance(value, dict) else "[]"


_SOURCE_OR_SCHEMA = ("schema-violation", "unit-invalid", "text-encoding", "number-invalid")


def _locate(path, key=False):
    return Location(FILE, 1, 1, path=tuple(path)), ()


@SETTINGS
@given(spec=valid_spec())
def test_generated_valid_specs_pass_loader_and_model(spec):
    """1,000 examples through the loader and the model (the part that judges validity)."""
    result = load_bytes((to_yaml(spec) + "\n").encode("utf-8"), FILE)
    assert result.data is not None, [f"{f.rule}: {f.message}" for f in result.findings]
    built, findings = build(result.data, _locate)
    assert built is not None, [f"{f.rule}: {f.message}" for f in findings]
    assert not findings, [f"{f.rule}: {f.message}" for f in findings]


@FULL_SETTINGS
@given(spec=valid_spec())
def test_generated_valid_specs_through_the_pipeline(repo, spec):
    """Fewer examples through the whole pipeline (figures and 76 rules cost ~100 ms
    on some generated specs): no loader or schema finding, figures computed, no
    internal error."""
    raw = (to_yaml(spec) + "\n").encode("utf-8")
    result = run(raw, repo)
    bad = [f for f in result.findings if f.rule in _SOURCE_OR_SCHEMA or f.rule.startswith("yaml-")]
    assert not bad, [f"{f.rule}: {f.message}" for f in bad]
    assert result.spec is not None
    assert result.figures is not None
    assert_no_internal_error(result)


IDLE_SPEC = {
    "format": 1,
    "axis": {"name": "a"},
    "motor": {
        "type": "brushed-dc",
        "winding": "iron-core",
        "terminal_resistance": {"value": "1 ohm", "at": "20 degC"},
        "terminal_inductance": {"value": "1 mH", "measured_at": "1 kHz"},
        "torque_constant": {"value": "1 N*m/A", "current": "dc"},
        "back_emf_constant": {"value": "1 V/(rad/s)", "voltage": "terminal"},
        "rated_current": "1 A",
    },
    "stage": {"supply": {"voltage": "6 V"}, "pwm": {"frequency": "20 kHz", "scheme": "bipolar", "max_duty": 1.0}},
    "operating_points": [{"name": "idle", "speed": "0 rpm", "torque": "0 N*m", "ambient": "20 degC"}],
}


def test_all_points_idle_supply_window(repo):
    result = run((to_yaml(IDLE_SPEC) + "\n").encode("utf-8"), repo)
    assert_no_internal_error(result)


def test_idle_point_ripple_remedy(repo):
    spec = json.loads(json.dumps(IDLE_SPEC))
    spec["motor"]["rated_current"] = "0.125 A"
    spec["motor"]["terminal_inductance"] = {"value": "62.5 mH", "measured_at": "1 kHz"}
    spec["stage"]["pwm"]["frequency"] = "1 kHz"
    spec["operating_points"] = [
        {"name": "push", "speed": "0 rpm", "torque": "1 N*m", "ambient": "20 degC"},
        {"name": "idle", "speed": "0 rpm", "torque": "0 N*m", "ambient": "20 degC"},
    ]
    result = run((to_yaml(spec) + "\n").encode("utf-8"), repo)
    assert_no_internal_error(result)


def test_generator_produces_both_motor_types():
    """The generator is not stuck in one corner: both topologies occur."""
    seen = set()

    @settings(max_examples=50, derandomize=True, database=None, deadline=None)
    @given(spec=valid_spec())
    def collect(spec):
        seen.add(spec["motor"]["type"])

    collect()
    assert seen == {"brushed-dc", "three-phase"}


# ------------------------------------------------- (d) JSON text differential
# Intended, systematic differences (rejections by design, not silent changes):
#  * the root must be a mapping: a JSON array or scalar root is `yaml-structure`;
#  * a control character (C0, DEL, C1 such as U+0085) in a string is
#    `text-encoding`, raw or escaped as \\u001f (policy: no controls in spec text);
#  * scalars above 64 KiB, or more nodes than the budget, are `yaml-limit`;
#  * duplicate keys (`yaml-key`) cannot occur here: Python dicts have none.
def _json_containers(children):
    return st.one_of(st.lists(children, max_size=5), st.dictionaries(st.text(max_size=8), children, max_size=5))


json_values = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(-(2**53), 2**53)
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(max_size=20),
    _json_containers,
    max_leaves=25,
)


def same(a, b) -> bool:
    """Equal with types: True is not 1, 1.0 is not 1, -0.0 is not 0.0."""
    if type(a) is not type(b):
        return False
    if isinstance(a, float):
        return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)
    if isinstance(a, dict):
        return a.keys() == b.keys() and all(same(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b, strict=True))
    return a == b


@SETTINGS
@given(value=json_values, ascii_only=st.booleans(), mapping_root=st.booleans())
def test_json_text_loads_like_json(value, ascii_only, mapping_root):
    if mapping_root:
        value = {"root": value}
    text = json.dumps(value, ensure_ascii=ascii_only)
    expected = json.loads(text)
    result = load_bytes(text.encode("utf-8"), "case.json")
    if result.data is not None:
        assert same(result.data, expected), (text, result.data)
        return
    assert result.findings, text
    for f in result.findings:
        assert f.rule in INPUT_RULES or f.rule.startswith("yaml-"), (text, f.rule, f.message)
        assert f.location.line >= 1 and f.location.column >= 1, (text, f)
    if mapping_root and ascii_only:
        # ASCII JSON of a mapping holds no raw control characters and stays far
        # below the limits: the only rejection allowed is the policy one, a string
        # that holds a control character (escaped or not; docs/reliability.md E04)
        assert _has_control(value), (text, [f.message for f in result.findings])
        assert all(f.rule == "text-encoding" for f in result.findings), text


def _has_control(value) -> bool:
    if isinstance(value, str):
        return any(ord(c) < 0x20 or 0x7F <= ord(c) <= 0x9F for c in value)
    if isinstance(value, dict):
        return any(_has_control(k) or _has_control(v) for k, v in value.items())
    if isinstance(value, list):
        return any(_has_control(v) for v in value)
    return False


# ------------------------------------------------------- (e) argument shuffles
DEMO = sorted(str(p) for p in (ROOT / "examples").rglob("*.axis.yaml"))
_RENDERED: dict[tuple[str, ...], str] = {}


def _render(order: tuple[str, ...]) -> str:
    if order not in _RENDERED:
        _RENDERED[order] = render(check_paths(list(order), root=ROOT))
    return _RENDERED[order]


def test_demo_has_six_files():
    assert len(DEMO) == 6, DEMO


@SHUFFLE_SETTINGS
@given(order=st.permutations(DEMO))
def test_text_output_independent_of_argument_order(order):
    assert _render(tuple(order)) == _render(tuple(DEMO))


def test_shuffle_with_python_random():
    """Three seeded shuffles besides the hypothesis ones (cheap, always run)."""
    reference = _render(tuple(DEMO))
    for seed in range(3):
        order = list(DEMO)
        random.Random(seed).shuffle(order)
        assert _render(tuple(order)) == reference
