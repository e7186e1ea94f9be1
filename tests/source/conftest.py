"""Fixtures of the loader tests: run a test once per parser path."""

from __future__ import annotations

import pytest

from specguard.source import _backend


def c_parser_available() -> bool:
    return _backend._load_c_parser() is not None


def parser_params() -> list:
    skip_c = None
    if not c_parser_available():
        skip_c = "ruamel.yaml.clib is not installed, so there is no C parser path to test"
    elif _backend.env_wants_pure():
        skip_c = f"{_backend.ENV_PURE} is set: this run tests the pure-Python path only"
    c = pytest.param("c", marks=pytest.mark.skip(reason=skip_c)) if skip_c else "c"
    return [c, "pure"]


@pytest.fixture(params=parser_params())
def parser_kind(request, monkeypatch):
    """Pins the loader to one parser path for the test ("c" or "pure")."""
    monkeypatch.setattr(_backend, "FORCE", request.param)
    return request.param
