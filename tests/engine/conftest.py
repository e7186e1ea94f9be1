"""Test set-up for the rule engine.

The built-in rules are read through ``importlib.resources.files("specguard.pack")``.
In the wheel that package is the top-level ``rules/`` folder (pyproject maps it).
When the tests run from a source checkout without an install (``PYTHONPATH=.``),
this maps the same data packages onto their folders, exactly as the wheel does,
so that the code under test still goes through importlib.resources.
"""

from __future__ import annotations

import importlib
import importlib.util
import sys

_DATA_PACKAGES = {
    "specguard.pack": "rules",
    "specguard.schemas": "schemas",
    "specguard.demo": "examples",
}


def _map_data_packages() -> None:
    for name, folder in _DATA_PACKAGES.items():
        if name in sys.modules:
            continue
        try:
            if importlib.util.find_spec(name) is not None:
                continue  # installed: use the real package
        except ModuleNotFoundError:
            pass
        sys.modules[name] = importlib.import_module(folder)


_map_data_packages()
