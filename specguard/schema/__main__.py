"""Regenerate the committed schema and format reference: ``python -m specguard.schema``."""

from pathlib import Path

from . import SPEC_SCHEMA_FILE, dumps, format_reference, spec_schema

ROOT = Path(__file__).resolve().parents[2]

(ROOT / "schemas" / SPEC_SCHEMA_FILE).write_text(dumps(spec_schema()), encoding="utf-8")
(ROOT / "docs" / "format.md").write_text(format_reference() + "\n", encoding="utf-8")
print("wrote schemas/" + SPEC_SCHEMA_FILE + " and docs/format.md")
