"""The location index: every mapping value and sequence item has a key span and a
value span (1-based lines, code-point columns, exclusive end)."""

from __future__ import annotations

import pytest

from specguard.source import NodeLoc, Span, load_bytes


def spans(result, path):
    loc = result.locations[path]
    key = None if loc.key is None else (loc.key.line, loc.key.column, loc.key.end_line, loc.key.end_column)
    v = loc.value
    return key, (v.line, v.column, v.end_line, v.end_column)


BLOCK = (
    "motor:\n"
    "  name: servo  # comment\n"
    "  poles: 8\n"
    "chokes:\n"
    "  - name: dc\n"
    "    L: 1.2 mH\n"
    "  - [1, 2]\n"
    "notes: |\n"
    "  line one\n"
    "  line two\n"
    "end: x\n"
)


def test_block_style(parser_kind):
    r = load_bytes(BLOCK.encode(), "b.yaml")
    assert r.findings == ()
    assert spans(r, ("motor", "name")) == ((2, 3, 2, 7), (2, 9, 2, 14))
    assert spans(r, ("motor", "poles")) == ((3, 3, 3, 8), (3, 10, 3, 11))
    assert spans(r, ("motor",)) == ((1, 1, 1, 6), (2, 3, 3, 11))
    assert spans(r, ("chokes", 0)) == (None, (5, 5, 6, 14))
    assert spans(r, ("chokes", 0, "L")) == ((6, 5, 6, 6), (6, 8, 6, 14))
    assert spans(r, ("chokes", 1)) == (None, (7, 5, 7, 11))
    assert spans(r, ("chokes", 1, 1)) == (None, (7, 9, 7, 10))
    assert spans(r, ("notes",)) == ((8, 1, 8, 6), (8, 8, 11, 1))
    assert spans(r, ("end",)) == ((11, 1, 11, 4), (11, 6, 11, 7))
    assert r.locations[()].key is None


def test_every_value_is_located(parser_kind):
    r = load_bytes(BLOCK.encode(), "b.yaml")
    paths = set()
    todo = [((), r.data)]
    while todo:
        p, v = todo.pop()
        paths.add(p)
        items = v.items() if isinstance(v, dict) else enumerate(v) if isinstance(v, list) else ()
        for k, child in items:
            todo.append((p + (k,), child))
    assert paths == set(r.locations)


def test_flow_style(parser_kind):
    r = load_bytes(b"m: {a: 1, b: [1, 2]}\n", "f.yaml")
    assert r.data == {"m": {"a": 1, "b": [1, 2]}}
    assert spans(r, ("m",)) == ((1, 1, 1, 2), (1, 4, 1, 21))
    assert spans(r, ("m", "a")) == ((1, 5, 1, 6), (1, 8, 1, 9))
    assert spans(r, ("m", "b")) == ((1, 11, 1, 12), (1, 14, 1, 20))
    assert spans(r, ("m", "b", 0)) == (None, (1, 15, 1, 16))
    assert spans(r, ("m", "b", 1)) == (None, (1, 18, 1, 19))


def test_nested_sequences(parser_kind):
    r = load_bytes(b"s:\n- - a\n  - b\n- - - c\n", "s.yaml")
    assert r.data == {"s": [["a", "b"], [["c"]]]}
    assert spans(r, ("s", 0, 1)) == (None, (3, 5, 3, 6))
    assert spans(r, ("s", 1, 0, 0)) == (None, (4, 7, 4, 8))
    assert spans(r, ("s", 1)) == (None, (4, 3, 4, 8))


def test_multiline_flow_and_quoted(parser_kind):
    raw = b'm: {\n  a: "x y",\n  b: [\n    1,\n    2\n  ]\n}\n'
    r = load_bytes(raw, "f.yaml")
    assert spans(r, ("m", "a")) == ((2, 3, 2, 4), (2, 6, 2, 11))
    assert spans(r, ("m", "b", 1)) == (None, (5, 5, 5, 6))
    assert spans(r, ("m", "b")) == ((3, 3, 3, 4), (3, 6, 6, 4))
    assert spans(r, ("m",)) == ((1, 1, 1, 2), (1, 4, 7, 2))


def test_non_ascii_columns_count_code_points(parser_kind):
    r = load_bytes("größe: µH\nx: 'é'\nnext: [ü, 2]\n".encode(), "u.yaml")
    assert spans(r, ("größe",)) == ((1, 1, 1, 6), (1, 8, 1, 10))
    assert spans(r, ("next", 1)) == (None, (3, 11, 3, 12))


def test_anchors_and_aliases(parser_kind):
    raw = b"base: &b\n  x: 1\n  y: [1, 2]\nuse: *b\nm:\n  <<: *b\n  z: 3\n"
    r = load_bytes(raw, "a.yaml")
    assert r.data == {"base": {"x": 1, "y": [1, 2]}, "use": {"x": 1, "y": [1, 2]}, "m": {"x": 1, "y": [1, 2], "z": 3}}
    # the anchored value is located where it is written
    assert spans(r, ("base", "y", 1)) == (None, (3, 10, 3, 11))
    assert spans(r, ("base",)) == ((1, 1, 1, 5), (1, 7, 3, 12))
    # values reached through an alias are located at the alias
    alias = (4, 6, 4, 8)
    assert spans(r, ("use",)) == ((4, 1, 4, 4), alias)
    assert spans(r, ("use", "x")) == (alias, alias)
    assert spans(r, ("use", "y", 1)) == (None, alias)
    merge = (6, 7, 6, 9)
    assert spans(r, ("m", "x")) == (merge, merge)
    assert spans(r, ("m", "y", 0)) == (None, merge)
    assert spans(r, ("m", "z")) == ((7, 3, 7, 4), (7, 6, 7, 7))
    assert ("m", "<<") not in r.locations


def test_comment_lines_between_key_and_value(parser_kind):
    """docs/reliability.md §1 (decisions): valid YAML that crashes one loader mode must load
    with correct locations."""
    raw = b"a:\n  # why\n\n  # more\n  b: 1\nc:\n# left\n\n  - x\nd:\n  # note\n  e\n"
    r = load_bytes(raw, "c.yaml")
    assert r.data == {"a": {"b": 1}, "c": ["x"], "d": "e"}
    assert spans(r, ("a", "b")) == ((5, 3, 5, 4), (5, 6, 5, 7))
    assert spans(r, ("c", 0)) == (None, (9, 5, 9, 6))
    assert spans(r, ("d",)) == ((10, 1, 10, 2), (12, 3, 12, 4))


def _all(result):
    return {p: spans(result, p) for p in result.locations}


def test_crlf_identical_to_lf(parser_kind):
    """docs/reliability.md E10: same locations and findings for CRLF."""
    lf = BLOCK + "bad: .nan\n" + "dup: 1\ndup: 2\nm: {a: 1, b: [1, 2]}\n"
    r_lf = load_bytes(lf.encode(), "x.yaml")
    r_crlf = load_bytes(lf.replace("\n", "\r\n").encode(), "x.yaml")
    assert _all(r_lf) == _all(r_crlf)
    assert r_lf.findings == r_crlf.findings
    assert len(r_lf.findings) == 2
    ok_lf = load_bytes(BLOCK.encode(), "x.yaml")
    ok_crlf = load_bytes(BLOCK.replace("\n", "\r\n").encode(), "x.yaml")
    assert ok_crlf.data["notes"] == ok_lf.data["notes"] == "line one\nline two\n"
    assert _all(ok_lf) == _all(ok_crlf)


def test_bom_does_not_shift_columns(parser_kind):
    """docs/reliability.md E01: the BOM must not count as column 1."""
    plain = load_bytes(BLOCK.encode(), "x.yaml")
    bom = load_bytes(b"\xef\xbb\xbf" + BLOCK.encode(), "x.yaml")
    assert bom.data == plain.data
    assert _all(bom) == _all(plain)
    (f,) = load_bytes(b"\xef\xbb\xbfa: .nan\n", "x.yaml").findings
    assert (f.location.line, f.location.column) == (1, 4)


def test_text_positions_after_crlf_and_bom(parser_kind):
    (f,) = load_bytes(b"\xef\xbb\xbfa: 1\r\nb: x\x07\r\n", "x.yaml").findings
    assert (f.rule, f.location.line, f.location.column) == ("text-encoding", 2, 5)


def test_types_are_frozen():
    loc = NodeLoc(None, Span(1, 1, 1, 2))
    with pytest.raises(AttributeError):
        loc.value.line = 3  # type: ignore[misc]


@pytest.mark.parametrize("sep", ["\u2028", "\u2029", "\u0085"])
def test_line_separators_are_rejected_before_any_later_location(parser_kind, sep):
    """docs/reliability.md E04: the YAML parsers break lines at NEL, LS and PS, most
    editors do not. The character is an error at its own line:column (counted by
    LF/CRLF/CR only, as an editor shows it) and nothing after it is located, so no
    finding can point one line off."""
    raw = f"a: 1\nnotes: one{sep}two # c\nb: .nan\nc: [1,\n".encode()
    r = load_bytes(raw, "ls.yaml")
    assert r.data is None
    (f,) = r.findings
    assert (f.rule, f.severity, f.location.line, f.location.column) == ("text-encoding", "error", 2, 11)
    assert f"U+{ord(sep):04X}" in f.message
    # also as the last character of a comment line, and with CRLF line ends
    (g,) = load_bytes(f"a: 1\r\n# x{sep}\r\nb: 2\r\n".encode(), "ls.yaml").findings
    assert (g.location.line, g.location.column) == (2, 4)


def test_text_index_counts_editor_line_breaks_only():
    from specguard.source._text import position_in

    text = "a\u2028b\u2029c\u0085d\ne\r\nf\rg"
    assert position_in(text, text.index("d")) == (1, 7)
    assert position_in(text, text.index("e")) == (2, 1)
    assert position_in(text, text.index("f")) == (3, 1)
    assert position_in(text, text.index("g")) == (4, 1)


def test_hidden_characters_do_not_shift_locations(parser_kind):
    """A bidi control or zero-width character is one code point: a warning at its
    place, and the locations after it are those of the same text without it, plus
    one column on its own line."""
    raw = "a: x\u200by\nb: \u202eok\u202c\nc: .nan\n".encode()
    r = load_bytes(raw, "h.yaml")
    assert [(f.rule, f.severity, f.location.line, f.location.column) for f in r.findings] == [
        ("text-encoding", "warning", 1, 5),
        ("text-encoding", "warning", 2, 4),
        ("text-encoding", "warning", 2, 7),
        ("number-invalid", "error", 3, 4),
    ]


def test_hidden_character_warnings_are_capped(parser_kind):
    r = load_bytes(("a: " + "x\u200b" * 25 + "\n").encode(), "h.yaml")
    assert r.data == {"a": "x\u200b" * 25}
    assert len(r.findings) == 10
    assert r.findings[-1].message.endswith("(15 more such characters in this file are not listed)")
