"""Property tests (docs/reliability.md G1, 8): random bytes and random mutations of a
small realistic spec never raise through load_bytes and always give either plain
JSON data or located findings."""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from specguard.source import _backend, load_bytes

SPEC = b"""# axis spec
motor:
  pole_pairs: 4
  phase_resistance: 0.82 ohm
  terminal_inductance: 6.4 mH
  insulation: {rated_voltage: 400 V, dv_dt_limit: 5 kV/us}
stage: &stage
  dc_link_voltage: 560 V
  switching_frequency: 8 kHz
backup: *stage
chokes:
  - name: "output choke"
    inductance: 1.2 mH
  - name: 'dc choke'
    inductance: [0.6, mH]
operating_points:
  - <<: *stage
    speed: 3000 rpm
    torque: -5.7
notes: |
  free text
  second line
"""

PR_PROFILE = settings(max_examples=1000, derandomize=True, deadline=None, database=None)

YAML_BITS = st.sampled_from(
    [
        b"[",
        b"]",
        b"{",
        b"}",
        b":",
        b": ",
        b"- ",
        b"? ",
        b",",
        b"#",
        b"&a",
        b"*a",
        b"*stage",
        b"!",
        b"!!int",
        b"<<",
        b"|",
        b">",
        b"'",
        b'"',
        b"\\",
        b"\\ud800",
        b"\n",
        b"\r\n",
        b"\t",
        b"  ",
        b"%YAML 1.1\n",
        b"---",
        b"...",
        b"~",
        b".nan",
        b"1e400",
        b"0x",
        b"010",
        b"\x00",
        b"\xff",
        b"\xef\xbb\xbf",
        b"\xc3",
        "\u00e9".encode(),
    ]
)


@st.composite
def mutated_spec(draw):
    data = bytearray(SPEC)
    for _ in range(draw(st.integers(1, 6))):
        pos = draw(st.integers(0, len(data)))
        action = draw(st.sampled_from(["insert", "delete", "replace", "byte"]))
        if action == "insert":
            data[pos:pos] = draw(YAML_BITS)
        elif action == "delete":
            data[pos : pos + draw(st.integers(1, 12))] = b""
        elif action == "replace":
            data[pos : pos + draw(st.integers(1, 4))] = draw(YAML_BITS)
        else:
            data[pos:pos] = bytes([draw(st.integers(0, 255))])
    return bytes(data)


def _check(raw: bytes) -> None:
    result = load_bytes(raw, "fuzz.yaml")
    assert result.parser in ("c", "pure")
    errors = [f for f in result.findings if f.severity == "error"]
    for f in result.findings:
        assert f.rule != "internal-error", f
        assert f.location.file == "fuzz.yaml"
        assert f.location.line >= 1 and f.location.column >= 1
        assert "\n" not in f.message
    if errors:
        assert result.data is None
    else:
        assert isinstance(result.data, dict)
        json.dumps(result.data, allow_nan=False)  # plain JSON: finite numbers, str keys
        assert () in result.locations


def _paths():
    kinds = ["pure"]
    if _backend._load_c_parser() is not None and not _backend.env_wants_pure():
        kinds.insert(0, "c")
    return kinds


@pytest.mark.parametrize("kind", _paths())
def test_random_bytes_never_raise(kind):
    @PR_PROFILE
    @given(st.binary(max_size=400))
    def prop(raw):
        _check(raw)

    old = _backend.FORCE
    _backend.FORCE = kind
    try:
        prop()
    finally:
        _backend.FORCE = old


@pytest.mark.parametrize("kind", _paths())
def test_mutated_spec_never_raises(kind):
    @PR_PROFILE
    @given(mutated_spec())
    def prop(raw):
        _check(raw)

    old = _backend.FORCE
    _backend.FORCE = kind
    try:
        prop()
    finally:
        _backend.FORCE = old


def test_unmutated_spec_is_clean():
    result = load_bytes(SPEC, "fuzz.yaml")
    assert result.findings == ()
    assert result.data["operating_points"][0]["switching_frequency"] == "8 kHz"
