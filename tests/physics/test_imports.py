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
            if node.level:  # resolved against the module's own package, as Python does
                yield _resolve_relative(node.level, node.module)
            else:
                yield node.module or ""


def _resolve_relative(level: int, module: str | None) -> str:
    """The absolute name of a relative import in a module of specguard.physics:
    ``.x`` is specguard.physics.x, ``..findings`` is specguard.findings (outside)."""
    package = ["specguard", "physics"]
    base = package[: len(package) - (level - 1)] if level - 1 <= len(package) else []
    return ".".join(base + ([module] if module else [])) or "."


def test_relative_imports_are_resolved_before_the_check():
    # the leaf check must see where a relative import leads (ast of each form)
    def names(source: str) -> list[str]:
        tree = ast.parse(source)
        return [_resolve_relative(n.level, n.module) for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)]

    assert names("from ._num import x") == ["specguard.physics._num"]
    assert names("from . import _num") == ["specguard.physics"]
    assert names("from ..findings import Finding") == ["specguard.findings"]
    assert names("from ...x import y") == ["x"]


def test_an_import_leaving_the_package_is_refused(tmp_path):
    bad = tmp_path / "bad.py"
    bad.write_text("from ..findings import Finding\n", encoding="utf-8")
    with pytest.raises(AssertionError, match="from outside specguard.physics"):
        test_module_imports_only_numpy_stdlib_and_physics(bad)


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
