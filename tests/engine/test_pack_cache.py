"""The on-disk copy of the validated built-in pack: same rules, ignored when damaged."""

from __future__ import annotations

import json

from specguard.engine import evaluate as ev


def fresh(cache_dir=None):
    ev._builtin_rules.cache_clear()
    try:
        return ev.load_pack(pack_cache=str(cache_dir) if cache_dir else None)
    finally:
        ev._builtin_rules.cache_clear()


def test_cached_pack_equals_parsed_pack(tmp_path):
    parsed = fresh()
    first = fresh(tmp_path)  # parses and writes the entry
    entries = list((tmp_path / f"pack-v{ev.PACK_CACHE_FORMAT}").glob("*.json"))
    assert len(entries) == 1
    second = fresh(tmp_path)  # reads the entry
    assert parsed.rules == first.rules == second.rules
    # the rebuilt models hold tuples, as validation would have made them
    rule = second.rules[0].rule
    assert isinstance(rule.bands, tuple) and isinstance(rule.related, tuple)


def test_damaged_or_foreign_entry_is_ignored(tmp_path):
    fresh(tmp_path)
    entry = next((tmp_path / f"pack-v{ev.PACK_CACHE_FORMAT}").glob("*.json"))
    parsed = fresh()
    for damage in (
        "{",
        json.dumps({"pack_cache_format": 99, "rules": []}),
        json.dumps({"pack_cache_format": ev.PACK_CACHE_FORMAT, "rules": [{"x": 1}]}),
    ):
        entry.write_text(damage, encoding="utf-8")
        assert fresh(tmp_path).rules == parsed.rules


def test_key_covers_every_rule_file_and_the_version():
    blobs = [("a.yaml", b"id: a"), ("b.yaml", b"id: b")]
    base = ev._pack_cache_file("/c", blobs)
    assert ev._pack_cache_file("/c", [("a.yaml", b"id: a"), ("b.yaml", b"id: c")]) != base
    assert ev._pack_cache_file("/c", blobs[:1]) != base
    assert ev._pack_cache_file("/c", list(blobs)) == base
