"""specguard.physics is a leaf: it imports only numpy, the standard library and itself."""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "specguard" / "physics"
FORBIDDEN_TOP_LEVEL = {"scipy", "pint", "matplotlib"}
ALLOWED_THIRD_PARTY = {"numpy"}
FILES = sorted(PACKAGE.glob("*.py"))


def _imported_modules(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name
        elif isinstance(node, ast.ImportFrom):
            if node.level:  # relative import stays inside the package
                yield "specguard.physics." + (node.module or "")
            else:
                yield node.module or ""


def test_package_has_modules():
    assert len(FILES) >= 10


@pytest.mark.parametrize("path", FILES, ids=[p.name for p in FILES])
def test_module_imports_only_numpy_stdlib_and_physics(path):
    for name in _imported_modules(path):
        top = name.split(".")[0]
        assert top not in FORBIDDEN_TOP_LEVEL, f"{path.name} imports {name}"
        if top == "specguard":
            assert name == "specguard.physics" or name.startswith("specguard.physics."), (
                f"{path.name} imports {name} from outside specguard.physics"
            )
        elif top not in ALLOWED_THIRD_PARTY and top != "__future__":
            assert top in sys.stdlib_module_names, f"{path.name} imports non-stdlib {name}"
