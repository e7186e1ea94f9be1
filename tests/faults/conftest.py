"""Fault-injection tests (docs/reliability.md §5): every run gets a private result cache."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _private_cache(tmp_path_factory, monkeypatch):
    cache = tmp_path_factory.mktemp("cache")
    monkeypatch.setenv("SPECGUARD_CACHE_DIR", str(cache))
    monkeypatch.delenv("SPECGUARD_LOCK_TIMEOUT", raising=False)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    return cache
