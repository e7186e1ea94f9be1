"""Resource guarantees: cheap rejection of oversize files, the C parser never sees
deep input, alias bombs stop early."""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from specguard.source import Limits, _backend, load_bytes, parser_path, read_limited

REPO = Path(__file__).resolve().parents[2]


def test_10mb_file_rejected_fast_reading_at_most_cap_plus_one(tmp_path, monkeypatch):
    """docs/reliability.md A12/G5."""
    spec = (Path(__file__).parent / "data" / "axis_5k.yaml").read_bytes()
    big = tmp_path / "big.yaml"
    big.write_bytes((spec * (10_700_000 // len(spec) + 1))[:10_700_000])
    read = []
    real_read = os.read

    def counting_read(fd, n):
        chunk = real_read(fd, n)
        read.append(len(chunk))
        return chunk

    monkeypatch.setattr(os, "read", counting_read)
    t0 = time.perf_counter()
    raw, size = read_limited(big)
    result = load_bytes(raw, "big.yaml", size=size)
    elapsed = time.perf_counter() - t0
    assert sum(read) == len(raw) == Limits().max_bytes + 1
    assert size == 10_700_000
    (f,) = result.findings
    assert (f.rule, f.location.line, f.location.column) == ("yaml-limit", 1, 1)
    assert f.message == "file is 10.2 MiB (10,700,000 bytes), above the 256 KiB limit"
    assert elapsed < 0.05


def test_truncated_bytes_with_small_size_argument():
    """The size argument only ever raises the size that is checked."""
    (f,) = load_bytes(b"a: 1\n", "t.yaml", size=300_000).findings
    assert f.rule == "yaml-limit" and "292.97" not in f.message and "293 KiB" in f.message


def test_alias_bomb_stops_fast(parser_kind):
    """docs/reliability.md A01/G6: the 9x9 bomb, well under 0.5 s."""
    bomb = b'a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]\n' + b"".join(
        b"%c: &%c [%s]\n" % (c, c, b",".join([b"*%c" % p] * 9)) for p, c in zip(b"abcdefgh", b"bcdefghi", strict=True)
    )
    assert len(bomb) < 400
    t0 = time.perf_counter()
    result = load_bytes(bomb, "bomb.yaml", Limits(max_aliases=1000))
    assert time.perf_counter() - t0 < 0.5
    (f,) = result.findings
    assert f.rule == "yaml-limit" and "beyond 50,000 nodes" in f.message
    assert (f.location.line, f.location.column) == (5, 23)


def test_one_line_flow_list_within_raised_cap(parser_kind):
    """docs/reliability.md A13/A14: with the byte cap raised, the node budget stops a
    huge flow list quickly."""
    raw = b"l: [" + b"1," * 1_000_000 + b"1]\n"
    t0 = time.perf_counter()
    (f,) = load_bytes(raw, "flow.yaml", Limits(max_bytes=4 * 1024 * 1024)).findings
    assert time.perf_counter() - t0 < 3.0
    assert f.rule == "yaml-limit" and "50,000 nodes" in f.message


_DEEP_SCRIPT = textwrap.dedent(
    """
    import sys
    from specguard.source import _backend, load_bytes
    _backend.FORCE = "c"
    assert _backend.active() == "c"
    n = 100_000
    cases = {"flow": b"[" * n, "block": b"- " * n + b"x\\n", "mixed": (b"- [" * 20000)}
    for name, raw in cases.items():
        r = load_bytes(raw, name + ".yaml")
        f = r.findings[0]
        print(name, r.parser, f.rule, f.location.line, f.location.column)
    """
)


@pytest.mark.skipif(_backend._load_c_parser() is None, reason="ruamel.yaml.clib is not installed")
def test_100k_deep_input_never_reaches_the_c_parser():
    """docs/reliability.md A10: in a subprocess, so a segfault would show as rc -11/139."""
    env = dict(os.environ, PYTHONPATH=str(REPO))
    env.pop("SPECGUARD_PURE_YAML", None)
    proc = subprocess.run(
        [sys.executable, "-c", _DEEP_SCRIPT], capture_output=True, text=True, timeout=60, env=env, cwd=REPO
    )
    assert proc.returncode == 0, (proc.returncode, proc.stderr[-2000:])
    lines = proc.stdout.split("\n")
    assert lines[0] == "flow c yaml-limit 1 65"
    assert lines[1] == "block c yaml-limit 1 129"
    assert lines[2] == "mixed c yaml-limit 1 192"  # depth k sits at column 3(k-1)


def test_environment_variable_selects_pure(monkeypatch):
    monkeypatch.setattr(_backend, "FORCE", None)
    monkeypatch.setenv("SPECGUARD_PURE_YAML", "1")
    assert load_bytes(b"a: 1\n", "e.yaml").parser == "pure"
    assert parser_path().startswith("pure-Python parser (max_depth 64")
    monkeypatch.delenv("SPECGUARD_PURE_YAML")
    expected = "c" if _backend._load_c_parser() is not None else "pure"
    assert load_bytes(b"a: 1\n", "e.yaml").parser == expected
    if expected == "c":
        assert parser_path() == "C parser (ruamel.yaml.clib) behind a depth/size pre-scan"


def test_missing_extension_falls_back_to_pure(monkeypatch):
    monkeypatch.setattr(_backend, "FORCE", None)
    monkeypatch.delenv("SPECGUARD_PURE_YAML", raising=False)
    monkeypatch.setattr(_backend, "_c_checked", True)
    monkeypatch.setattr(_backend, "_c_parser", None)
    monkeypatch.setattr(_backend, "_c_error", "ModuleNotFoundError: No module named '_ruamel_yaml'")
    assert load_bytes(b"a: [1]\n", "e.yaml").data == {"a": [1]}
    assert load_bytes(b"a: 1\n", "e.yaml").parser == "pure"
    assert "ruamel.yaml.clib not importable" in parser_path()


def test_surrogate_escape_takes_the_pure_path(parser_kind):
    result = load_bytes(b'a: "\\ud83d\\ude00"\n', "s.yaml")
    assert result.data == {"a": "\U0001f600"}
    assert result.parser == "pure"


def test_any_library_exception_becomes_a_finding(parser_kind, monkeypatch):
    """docs/reliability.md §7.5: exceptions of any class from the parser are located."""

    def broken(text, kind, max_depth):
        events = iter([object()])

        def nxt():
            try:
                return next(events)
            except StopIteration:
                raise KeyError("boom") from None

        return nxt, lambda: None

    monkeypatch.setattr(_backend, "open_events", broken)
    (f,) = load_bytes(b"a: 1\n", "x.yaml").findings
    assert (f.rule, f.location.line, f.location.column) == ("yaml-syntax", 1, 1)
    assert "KeyError" in f.message


def test_loader_bug_is_an_internal_error_not_a_raise(monkeypatch):
    from specguard.source import _text

    monkeypatch.setattr(_text, "decode", lambda raw: 1 / 0)
    (f,) = load_bytes(b"a: 1\n", "x.yaml").findings
    assert f.rule == "internal-error" and "ZeroDivisionError" in f.message


def test_no_heavy_imports():
    """Keep the loader's import cheap: no numpy, pint or scipy."""
    code = (
        "import sys, specguard.source as s; s.load_bytes(b'a: 1', 'x'); "
        "print(sorted(m for m in ('numpy','pint','scipy') if m in sys.modules))"
    )
    proc = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        env=dict(os.environ, PYTHONPATH=str(REPO)),
        cwd=REPO,
        timeout=60,
    )
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "[]"
