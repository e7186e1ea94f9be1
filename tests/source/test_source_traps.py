"""One input per loader trap of docs/reliability.md §4, rows A-F: rule, severity,
exact line:column and message, on both parser paths."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from specguard.findings import BUILTIN_IDS
from specguard.source import Limits, load_bytes

_BOMB = b'a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]\n' + b"".join(
    b"%c: &%c [%s]\n" % (c, c, b",".join([b"*%c" % p] * 9)) for p, c in zip(b"abcdefgh", b"bcdefghi", strict=True)
)

# (case, input, rule, severity, line, column, message pattern); one case per line
# fmt: off
TRAPS = [
    ("docs/reliability.md A01 alias bomb 9x9", _BOMB, "yaml-limit", "error", 5, 23, r"alias '\*d' expands .* 50,000 nodes"),
    (
        "docs/reliability.md A03 101 aliases",
        b"x: &x 1\nl: [" + b", ".join([b"*x"] * 101) + b"]\n",
        "yaml-limit", "error", 2, 405, r"more than 100 aliases",
    ),
    ("docs/reliability.md A04 recursive alias", b"a: &a [*a]\n", "yaml-limit", "error", 1, 4, r"recursive alias.*'\*a' at 1:8"),
    ("docs/reliability.md A06 undefined alias", b"a: *nope\n", "yaml-structure", "error", 1, 4, r"'\*nope' refers to no anchor"),
    ("docs/reliability.md A07 reused anchor", b"a: &x 1\nb: &x 2\nc: *x\n", "yaml-limit", "warning", 2, 4, r"'&x' is defined again \(first at 1:4\)"),
    ("docs/reliability.md A08 [ x1000", b"[" * 1000, "yaml-limit", "error", 1, 65, r"deeper than 64 levels"),
    (
        "docs/reliability.md A09 300 nested block mappings",
        b"".join(b" " * i + b"k:\n" for i in range(300)),
        "yaml-limit", "error", 65, 65, r"deeper than 64 levels",
    ),
    (
        "docs/reliability.md A11 depth 250 under a key",
        b"a: " + b"[" * 250 + b"]" * 250 + b"\n",
        "yaml-limit", "error", 1, 67, r"deeper than 64 levels",
    ),
    ("docs/reliability.md A16 70 KB string", b"notes: " + b"x" * 70000 + b"\n", "yaml-limit", "error", 1, 8, r"68.4 KiB, above the 64 KiB limit"),
    ("docs/reliability.md B01 empty file", b"", "yaml-structure", "error", 1, 1, r"^empty document, expected a mapping$"),
    ("docs/reliability.md B01 comments only", b"# nothing\n\n# here\n", "yaml-structure", "error", 1, 1, r"^empty document, expected a mapping$"),
    ("docs/reliability.md B02 root is a list", b"- a\n- b\n", "yaml-structure", "error", 1, 1, r"is a list, expected a mapping"),
    ("docs/reliability.md B02 root is a scalar", b"42\n", "yaml-structure", "error", 1, 1, r"is an integer, expected a mapping"),
    ("docs/reliability.md B03 two documents", b"a: 1\n---\nb: 2\n", "yaml-structure", "error", 2, 1, r"second document"),
    ("docs/reliability.md B04 %YAML 1.1", b"%YAML 1.1\n---\na: NO\nb: 0755\n", "yaml-structure", "error", 1, 1, r"'%YAML 1.1' is not allowed"),
    ("docs/reliability.md B05 %YAML 1.3", b"%YAML 1.3\n---\na: 1\n", "yaml-structure", "error", 1, 1, r"'%YAML 1.3' is not allowed"),
    ("docs/reliability.md B05 %TAG", b"# c\n%TAG ! tag:example.com,2000:\n---\na: 1\n", "yaml-structure", "error", 2, 1, r"'%TAG' directives are not allowed"),
    ("docs/reliability.md B07 tab indentation", b"a:\n\tb: 1\n", "yaml-syntax", "error", 2, 1, r"tab character"),
    ("docs/reliability.md B07 unclosed quote", b'a: "x\nb: 1\n', "yaml-syntax", "error", 3, 1, r"starts at 1:4 is never closed"),
    ("docs/reliability.md B07 bad indentation", b"a:\n  b: 1\n c: 2\n", "yaml-syntax", "error", 3, 2, r"bad indentation.*starts at 1:1"),
    ("docs/reliability.md B09 !!int abc", b"a: !!int abc\n", "yaml-tag", "error", 1, 4, r"'!!int' is not allowed"),
    ("docs/reliability.md B09 !!bool after anchor", b"a: &f !!bool maybe\n", "yaml-tag", "error", 1, 7, r"'!!bool' is not allowed"),
    (
        "docs/reliability.md C01 python/object/apply",
        b'x: !!python/object/apply:os.system ["touch /tmp/canary"]\n',
        "yaml-tag", "error", 1, 4, r"'!!python/object/apply:os.system' is not allowed",
    ),
    ("docs/reliability.md C02 python/name", b"x: !!python/name:os.system\n", "yaml-tag", "error", 1, 4, r"'!!python/name:os.system'"),
    ("docs/reliability.md C02 python/module", b"x:\n  - !!python/module:os ''\n", "yaml-tag", "error", 2, 5, r"'!!python/module:os'"),
    ("docs/reliability.md C04 !!binary", b"x: !!binary aGVsbG8=\n", "yaml-tag", "error", 1, 4, r"'!!binary'"),
    ("docs/reliability.md C04 !!set", b"x: !!set {a, b}\n", "yaml-tag", "error", 1, 4, r"'!!set'"),
    ("docs/reliability.md C04 !!omap", b"x: !!omap\n  - a: 1\n", "yaml-tag", "error", 1, 4, r"'!!omap'"),
    ("docs/reliability.md C04 local tag", b"v: !volts 24\n", "yaml-tag", "error", 1, 4, r"'!volts'"),
    ("docs/reliability.md D01 duplicate key", b"a: 1\na: 2\n", "yaml-key", "error", 2, 1, r"duplicate key 'a' \(first defined at 1:1\)"),
    ("docs/reliability.md D02 duplicate quoted key", b"a: 1\n'a': 2\n", "yaml-key", "error", 2, 1, r"duplicate key 'a' \(first defined at 1:1\)"),
    (
        "docs/reliability.md D03 two merge keys",
        b"b: &b {x: 1}\nm:\n  <<: *b\n  <<: *b\n",
        "yaml-key", "error", 4, 3, r"second merge key '<<'.*first at 3:3",
    ),
    ("docs/reliability.md D05 integer key", b"a: 0\n1: x\n", "yaml-key", "error", 2, 1, r"keys must be strings; this key is an integer"),
    ("docs/reliability.md D05 boolean key", b"true: x\n", "yaml-key", "error", 1, 1, r"keys must be strings; this key is a boolean"),
    ("docs/reliability.md D05 null key", b"~: x\n", "yaml-key", "error", 1, 1, r"keys must be strings; this key is null"),
    ("docs/reliability.md D05 .nan key", b".nan: x\n", "yaml-key", "error", 1, 1, r"keys must be strings; this key is a number"),
    ("docs/reliability.md D05 sequence key", b"? [a, b]\n: x\n", "yaml-key", "error", 1, 3, r"keys must be strings; this key is a list"),
    ("docs/reliability.md D05 mapping key", b"{a: 1}: x\n", "yaml-key", "error", 1, 1, r"keys must be strings; this key is a mapping"),
    ("docs/reliability.md E02 UTF-16 with BOM", "a: 1\n".encode("utf-16"), "text-encoding", "error", 1, 1, r"UTF-16.*must be UTF-8"),
    ("docs/reliability.md E02 UTF-32", "a: 1\n".encode("utf-32"), "text-encoding", "error", 1, 1, r"UTF-32.*must be UTF-8"),
    ("docs/reliability.md E02 UTF-16 without BOM", "a: 1\n".encode("utf-16-le"), "text-encoding", "error", 1, 1, r"looks like UTF-16"),
    ("docs/reliability.md E03 byte 0xFF", b"a: 1\nb: \xff\n", "text-encoding", "error", 2, 4, r"byte 0xFF at byte offset 8 is not valid UTF-8"),
    ("docs/reliability.md E03 Latin-1 cafe", "a: 1\nb: café\n".encode("latin-1"), "text-encoding", "error", 2, 7, r"byte 0xE9 at byte offset 11"),
    ("docs/reliability.md E03 after BOM", b"\xef\xbb\xbfa: \xe9\n", "text-encoding", "error", 1, 4, r"byte 0xE9 at byte offset 6"),
    ("docs/reliability.md E04 NUL", b"a: 1\nb: x\x00y\n", "text-encoding", "error", 2, 5, r"U\+0000 \(NUL\) is not allowed"),
    ("docs/reliability.md E04 raw ESC", b"a: \x1b[31m\n", "text-encoding", "error", 1, 4, r"U\+001B \(escape\)"),
    ("docs/reliability.md E04 C1 control", "a: x\u0085y\n".encode(), "text-encoding", "error", 1, 5, r"U\+0085"),
    ("docs/reliability.md E06 lone surrogate", b'a: "\\ud800"\n', "text-encoding", "error", 1, 4, r"lone surrogate"),
    ("docs/reliability.md F01 .nan", b"a: 1\nb: .nan\n", "number-invalid", "error", 2, 4, r"'\.nan' is not a finite number"),
    ("docs/reliability.md F01 -.Inf", b"b: -.Inf\n", "number-invalid", "error", 1, 4, r"'-\.Inf' is not a finite number"),
    ("docs/reliability.md F02 1e400", b"a: 1e400\n", "number-invalid", "error", 1, 4, r"'1e400' is too large to represent: outside the range of a 64-bit float"),
    ("docs/reliability.md F02 1e-400 underflows", b"a: 1\nb: 1e-400\n", "number-invalid", "error", 2, 4, r"'1e-400' underflows to zero"),
    ("docs/reliability.md F02 -1e-400 underflows", b"b: [1, -1e-400]\n", "number-invalid", "error", 1, 8, r"'-1e-400' underflows to zero"),
    ("docs/reliability.md F02 .5e-330 underflows", b"b: .5e-330\n", "number-invalid", "error", 1, 4, r"underflows to zero"),
    ("docs/reliability.md F02 -1e999 overflows", b"b: -1e999\n", "number-invalid", "error", 1, 4, r"too large to represent"),
    ("docs/reliability.md E04 raw LS", "a: 1\nb: x\u2028y\nc: .nan\n".encode(), "text-encoding", "error", 2, 5, r"U\+2028 \(line separator\) is not allowed.*line break"),
    ("docs/reliability.md E04 raw PS", "a: x\u2029\n".encode(), "text-encoding", "error", 1, 5, r"U\+2029 \(paragraph separator\)"),
    ("docs/reliability.md E04 raw LS in a comment", "a: 1 # x\u2028y\n".encode(), "text-encoding", "error", 1, 9, r"U\+2028"),
    ("docs/reliability.md E04 escaped LS", b'a: "x\\Ly"\n', "text-encoding", "error", 1, 4, r"escaped U\+2028"),
    ("docs/reliability.md E04 escaped NEL", b'a: "x\\Ny"\n', "text-encoding", "error", 1, 4, r"escaped U\+0085"),
    ("docs/reliability.md G16 RLO in free text", "a: 1\nnotes: ok \u202eevil\n".encode(), "text-encoding", "warning", 2, 11, r"U\+202E \(right-to-left override\).*bidirectional"),
    ("docs/reliability.md G16 ALM in a comment", "a: 1 # \u061c\n".encode(), "text-encoding", "warning", 1, 8, r"U\+061C \(Arabic letter mark\)"),
    ("docs/reliability.md G16 isolate in a key", "ab\u2066c: 1\n".encode(), "text-encoding", "warning", 1, 3, r"U\+2066"),
    ("docs/reliability.md G16 LRM in a quoted value", "a: 'x\u200ey'\n".encode(), "text-encoding", "warning", 1, 6, r"U\+200E"),
    ("docs/reliability.md G16 escaped RLO", b'a: "x\\u202Ey"\n', "text-encoding", "warning", 1, 4, r"escaped U\+202E"),
    ("docs/reliability.md G16 zero-width space", "a: x\u200by\n".encode(), "text-encoding", "warning", 1, 5, r"U\+200B \(zero-width space\).*invisible"),
    ("docs/reliability.md G16 word joiner in a key", "mo\u2060tor: 1\n".encode(), "text-encoding", "warning", 1, 3, r"U\+2060 \(word joiner\)"),
    ("docs/reliability.md G16 BOM mid-file", "a: 1\nb: \ufeffx\n".encode(), "text-encoding", "warning", 2, 4, r"U\+FEFF"),
    ("docs/reliability.md F04 5000 digits", b"a: " + b"9" * 5000 + b"\n", "number-invalid", "error", 1, 4, r"5000 characters is too long"),
    ("docs/reliability.md F05 20000 hex digits", b"a: 0x" + b"f" * 20000 + b"\n", "number-invalid", "error", 1, 4, r"too long"),
    ("docs/reliability.md F05 beyond 2^53", b"a: 9007199254740993\n", "number-invalid", "error", 1, 4, r"outside the allowed range ±9007199254740992"),
    ("docs/reliability.md F06 010", b"a: 010\n", "number-invalid", "warning", 1, 4, r"ambiguous leading zero in '010': read as decimal 10"),
    ("docs/reliability.md F06 0755", b"mode: 0755\n", "number-invalid", "warning", 1, 7, r"decimal 755 here, as octal 493"),
]
# fmt: on


@pytest.mark.parametrize("case, raw, rule, severity, line, column, pattern", TRAPS, ids=[t[0] for t in TRAPS])
def test_trap_is_one_located_finding(parser_kind, case, raw, rule, severity, line, column, pattern):
    result = load_bytes(raw, "specs/trap.yaml")
    matching = [f for f in result.findings if f.rule == rule]
    assert matching, f"{case}: expected {rule}, got {result.findings}"
    first = matching[0]
    assert first.severity == severity
    assert (first.location.line, first.location.column) == (line, column), first
    assert first.location.file == "specs/trap.yaml"
    assert re.search(pattern, first.message), first.message
    assert "\n" not in first.message
    assert first.rule in BUILTIN_IDS
    if severity == "error":
        assert result.data is None
    else:
        assert result.data is not None
        assert all(f.severity != "error" for f in result.findings)


def test_trap_table_covers_enough_inputs():
    assert len(TRAPS) >= 25
    assert len({t[0] for t in TRAPS}) == len(TRAPS)


def test_python_tag_runs_nothing(parser_kind, tmp_path):
    """docs/reliability.md C01: the os.system tag must not execute."""
    canary = tmp_path / "canary"
    raw = (
        f'x: !!python/object/apply:os.system ["touch {canary}"]\ny: !!python/object/new:os.system ["touch {canary}"]\n'
    )
    result = load_bytes(raw.encode(), "c01.yaml")
    assert [f.rule for f in result.findings] == ["yaml-tag", "yaml-tag"]
    assert result.data is None
    assert not canary.exists()


def test_no_ruamel_constructor_is_used(parser_kind, monkeypatch):
    """docs/reliability.md D01/7.5: we never build values with ruamel's constructor, so its
    allow_duplicate_keys switch cannot drift; its default also stays False."""
    from ruamel.yaml import YAML, constructor

    assert YAML(typ="safe", pure=True).allow_duplicate_keys is False

    def refuse(*args, **kwargs):
        raise AssertionError("ruamel's constructor must not run")

    monkeypatch.setattr(constructor.BaseConstructor, "construct_object", refuse)
    monkeypatch.setattr(constructor.BaseConstructor, "construct_document", refuse)
    result = load_bytes(b"a: 1\nb: [x, {c: 2}]\n", "d01.yaml")
    assert result.data == {"a": 1, "b": ["x", {"c": 2}]}
    assert load_bytes(b"a: 1\na: 2\n", "d01.yaml").findings[0].rule == "yaml-key"


def test_duplicate_key_names_the_first(parser_kind):
    """docs/reliability.md D01: the finding is at the second key and relates the first."""
    result = load_bytes(b"motor:\n  r: 1\n  r: 2\n", "d01.yaml")
    (f,) = result.findings
    assert f.location.path == ("motor", "r")
    assert [(r.line, r.column) for r in f.related] == [(2, 3)]


@pytest.mark.parametrize(
    "raw, expected",
    [
        # docs/reliability.md C05: date-like values stay strings
        (
            b"commissioned: 2001-12-14\nat: 2001-12-14t21:59:43.10-05:00\n",
            {"commissioned": "2001-12-14", "at": "2001-12-14t21:59:43.10-05:00"},
        ),
        # docs/reliability.md F07/F08: YAML 1.2 core schema, no 1.1 coercions
        (
            b"a: yes\nb: on\nc: NO\nd: 1:30\ne: 1_000\nf: y\n",
            {"a": "yes", "b": "on", "c": "NO", "d": "1:30", "e": "1_000", "f": "y"},
        ),
        # YAML 1.2 core schema: null, bool and number forms
        (
            b"a: ~\nb: null\nc: NULL\nd:\ne: True\nf: FALSE\ng: 0o17\nh: 0x1F\ni: -12\nj: +3\n",
            {"a": None, "b": None, "c": None, "d": None, "e": True, "f": False, "g": 15, "h": 31, "i": -12, "j": 3},
        ),
        # a zero written with a huge exponent is zero, not an underflow
        (
            b"a: 1.5e3\nb: .5\nc: -1.\nd: 0e-400\ne: 0\nf: -0\ng: 0x\nh: 0o8\ni: 0.000e999\nj: 5e-324\n",
            {"a": 1500.0, "b": 0.5, "c": -1.0, "d": 0.0, "e": 0, "f": 0, "g": "0x", "h": "0o8", "i": 0.0, "j": 5e-324},
        ),
        # quoted and block scalars are always strings
        (b"a: '1'\nb: \"true\"\nc: |\n  3\nd: >-\n  null\n", {"a": "1", "b": "true", "c": "3\n", "d": "null"}),
        # G4: integer magnitude up to 2^53 inclusive is fine
        (b"a: 9007199254740992\nb: -9007199254740992\n", {"a": 2**53, "b": -(2**53)}),
        # docs/reliability.md E07: a valid escaped surrogate pair is joined into its character
        (b'a: "\\uD83D\\uDCA9"\n', {"a": "\U0001f4a9"}),
        # docs/reliability.md C06: merge keys within the budget; own keys win over merged ones
        (b"base: &b {x: 1, y: 2}\nm:\n  <<: *b\n  y: 3\n", {"base": {"x": 1, "y": 2}, "m": {"x": 1, "y": 3}}),
        (
            b"p: &p {x: 1}\nq: &q {x: 2, z: 3}\nm:\n  <<: [*p, *q]\n",
            {"p": {"x": 1}, "q": {"x": 2, "z": 3}, "m": {"x": 1, "z": 3}},
        ),
        (b"m: {<<: {a: 1}, b: 2}\n", {"m": {"a": 1, "b": 2}}),
        # a quoted '<<' is an ordinary key
        (b"'<<': 1\n", {"<<": 1}),
        # docs/reliability.md E01: UTF-8 BOM accepted
        (b"\xef\xbb\xbfa: v\n", {"a": "v"}),
        # 2.4 of RELIABILITY "decisions": comment lines between a key and its value
        (b"a:\n  # first\n\n  # second\n  b: 1\nc:\n# at column 1\n  - x\n", {"a": {"b": 1}, "c": ["x"]}),
    ],
)
def test_plain_values(parser_kind, raw, expected):
    result = load_bytes(raw, "v.yaml")
    assert [f for f in result.findings if f.severity == "error"] == []
    assert result.data == expected
    assert result.parser in ("c", "pure")


def test_merge_value_must_be_a_mapping(parser_kind):
    result = load_bytes(b"m:\n  <<: 3\n", "c06.yaml")
    (f,) = result.findings
    assert (f.rule, f.location.line, f.location.column) == ("yaml-structure", 2, 7)


def test_escaped_control_character_in_string(parser_kind):
    """docs/reliability.md §7.5: control characters are rejected after loading too."""
    (f,) = load_bytes(b'a: ok\nb: "bell\\a"\n', "e04.yaml").findings
    assert (f.rule, f.location.line, f.location.column) == ("text-encoding", 2, 4)
    assert "U+0007" in f.message


def test_findings_carry_document_path(parser_kind):
    result = load_bytes(b"motor:\n  poles: [4, .inf]\n", "f01.yaml")
    (f,) = result.findings
    assert f.location.path == ("motor", "poles", 1)
    assert (f.location.line, f.location.column, f.location.end_line, f.location.end_column) == (2, 14, 2, 18)


def _sized(n: int) -> bytes:
    """A valid spec of exactly n bytes (many short entries, padded by a comment)."""
    body = b"".join(b"k%05d: %s\n" % (i, b"v" * 100) for i in range(n // 110 - 1))
    pad = n - len(body) - 1
    return body + b"#" + b"-" * (pad - 1) + b"\n"


@pytest.mark.parametrize(
    "field, at_limit, over",
    [
        ("max_depth", b"a: " + b"[" * 63 + b"]" * 63, b"a: " + b"[" * 64 + b"]" * 64),
        (
            "max_aliases",
            b"x: &x 1\nl: [" + b",".join([b"*x"] * 100) + b"]",
            b"x: &x 1\nl: [" + b",".join([b"*x"] * 101) + b"]",
        ),
        ("max_scalar_bytes", b"a: " + b"x" * 65536, b"a: " + b"x" * 65537),
        ("max_bytes", _sized(262144), _sized(262145)),
        # nodes: the root, the key "l", the list and its items
        ("max_nodes", b"l: [" + b",".join([b"1"] * 49997) + b"]", b"l: [" + b",".join([b"1"] * 49998) + b"]"),
    ],
)
def test_default_limits_at_limit_and_one_over(parser_kind, field, at_limit, over):
    """docs/reliability.md G4: unit tests at limit and limit+1."""
    ok = load_bytes(at_limit, "g4.yaml")
    assert ok.data is not None, ok.findings
    bad = load_bytes(over, "g4.yaml")
    assert bad.data is None
    assert [f.rule for f in bad.findings] == ["yaml-limit"]


def test_limits_are_configurable(parser_kind):
    small = Limits(max_depth=3, max_aliases=1, max_nodes=10, max_int=1000)
    assert load_bytes(b"a: {b: {c: 1}}", "l.yaml", small).data is not None
    f = load_bytes(b"a: {b: {c: {d: 1}}}", "l.yaml", small).findings[0]
    assert (f.rule, f.location.column, f.message) == ("yaml-limit", 12, "nesting is deeper than 3 levels")
    f = load_bytes(b"a: 1001", "l.yaml", small).findings[0]
    assert f.rule == "number-invalid" and "±1000" in f.message


def test_alias_expansion_counts_towards_depth(parser_kind):
    """An alias to a deep value cannot smuggle the data past max_depth."""
    small = Limits(max_depth=4)
    raw = b"a: &a [[[1]]]\nb: {c: *a}\n"
    (f,) = load_bytes(raw, "d.yaml", small).findings
    assert (f.rule, f.location.line, f.location.column) == ("yaml-limit", 2, 8)


def test_prescan_and_composer_agree_on_depth(parser_kind, monkeypatch):
    """With the pre-scan switched off, the exact check on the event stream reports
    the same place, so the pre-scan only moves where the limit is found."""
    from specguard.source import _prescan

    deep = [
        b"[" * 1000,
        b"".join(b" " * i + b"k:\n" for i in range(100)),
        b"- " * 200 + b"x\n",
        b"a:\n" + b"".join(b"  " * i + b"- b:\n" for i in range(1, 80)),
    ]
    with_scan = [load_bytes(raw, "d.yaml").findings for raw in deep]
    monkeypatch.setattr(_prescan, "prescan", lambda text, max_depth: [])
    without = [load_bytes(raw, "d.yaml").findings for raw in deep]
    for a, b in zip(with_scan, without, strict=True):
        assert [(f.rule, f.location.line, f.location.column) for f in a] == [
            (f.rule, f.location.line, f.location.column) for f in b
        ]
        assert a[0].rule == "yaml-limit"


def test_spec_example_loads_clean(parser_kind):
    raw = (Path(__file__).parent / "data" / "axis_5k.yaml").read_bytes()
    result = load_bytes(raw, "examples/axis.yaml")
    assert result.findings == ()
    assert result.data["motor"]["pole_pairs"] == 4
    assert result.data["axis"]["reviewed"] == "2024-05-17"
    assert result.data["operating_points"][0]["ambient"] == "25 degC"
    assert result.data["backup_stage"] == result.data["power_stage"]
