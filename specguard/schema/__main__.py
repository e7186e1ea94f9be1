"""Regenerate the committed schema and format reference: ``python -m specguard.schema``."""

from pathlib import Path

from . import (
    CONFIG_SCHEMA_FILE,
    SPEC_SCHEMA_FILE,
    config_schema,
    dumps,
    format_reference,
    spec_schema,
)

ROOT = Path(__file__).resolve().parents[2]

(ROOT / "schemas" / SPEC_SCHEMA_FILE).write_text(dumps(spec_schema()), encoding="utf-8")
(ROOT / "docs" / "format.md").write_text(format_reference() + "\n", encoding="utf-8")
(ROOT / "schemas" / CONFIG_SCHEMA_FILE).write_text(dumps(config_schema()), encoding="utf-8")
print("wrote schemas/" + SPEC_SCHEMA_FILE + " and docs/format.md")
print("wrote schemas/" + CONFIG_SCHEMA_FILE)

# The rule format and the rule docs. The pack is read through importlib.resources
# (specguard.pack); in a source checkout without an install, map it onto rules/.
import importlib  # noqa: E402
import importlib.util  # noqa: E402
import sys  # noqa: E402

from . import RULE_SCHEMA_FILE, rule_schema, rules_reference  # noqa: E402

if importlib.util.find_spec("specguard.pack") is None:
    sys.path.insert(0, str(ROOT))
    sys.modules["specguard.pack"] = importlib.import_module("rules")
(ROOT / "schemas" / RULE_SCHEMA_FILE).write_text(dumps(rule_schema()), encoding="utf-8")
(ROOT / "docs" / "rules.md").write_text(rules_reference() + "\n", encoding="utf-8")
print("wrote schemas/" + RULE_SCHEMA_FILE + " and docs/rules.md")

from . import figures_reference  # noqa: E402

(ROOT / "docs" / "figures.md").write_text(figures_reference() + "\n", encoding="utf-8")
print("wrote docs/figures.md")
