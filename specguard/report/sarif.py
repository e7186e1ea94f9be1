"""SARIF 2.1.0 output (OASIS standard) for code-scanning views.

A pure function of the Report. Paths are repo-relative URIs against the base id
``SRCROOT`` (the repository root), whose absolute location is deliberately not
written: the log carries no absolute path and no timestamp, and is
byte-identical across runs and hash seeds.

``partialFingerprints["specguardFinding/v1"]`` is a hash of the rule id, file,
document path (JSON pointer) and operating point, plus ``:n`` for the n-th
result with the same hash (in sorted order). No line numbers go in, so an edit
that moves a finding keeps its fingerprint and a code-scanning view keeps
tracking the same alert. (The baseline's key additionally holds a digest of the
finding's numbers; see :mod:`specguard.engine.baseline`.)

Waived findings carry a ``suppressions`` entry of kind ``inSource`` (the waiver
is in the spec) with the waiver's reason as justification; baselined findings
one of kind ``external``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import hashlib
import json
import re
from urllib.parse import quote

from .json_report import _number, dumps
from .text import related_label

SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
MAX_RESULTS = 25_000  # docs/reliability.md G15
FINGERPRINT_KEY = "specguardFinding/v1"
_LEVEL = {"error": "error", "warning": "warning", "info": "note"}


def uri(path: str) -> str:
    """A repo-relative path as a relative URI reference (percent-encoded UTF-8)."""
    # A file name that is not valid UTF-8 arrives with surrogate escapes (PEP 383):
    # give back its original bytes; any other lone surrogate is encoded as is.
    try:
        return quote(path, safe="/", errors="surrogateescape")
    except UnicodeEncodeError:
        return quote(path, safe="/", errors="surrogatepass")


def fingerprint(rule: str, file: str, pointer: str, point: str | None) -> str:
    text = json.dumps([rule, file, pointer, point], ensure_ascii=True)
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:32]


def _pascal(rule_id: str) -> str:
    return "".join(part[:1].upper() + part[1:] for part in rule_id.split("-"))


def _physical(loc) -> dict:
    region: dict = {"startLine": max(1, loc.line), "startColumn": max(1, loc.column)}
    if loc.end_line is not None and loc.end_column is not None:
        region["endLine"] = max(region["startLine"], loc.end_line)
        region["endColumn"] = max(1, loc.end_column)
    return {
        "artifactLocation": {"uri": uri(loc.file), "uriBaseId": "SRCROOT"},
        "region": region,
    }


def _written(value: object) -> str:
    """A change's value as YAML flow text for a replacement."""
    if isinstance(value, list):
        return "[" + ", ".join(_written(v) for v in value) + "]"
    if isinstance(value, tuple):
        return "{" + ", ".join(f"{k}: {_written(v)}" for k, v in value) + "}"
    return str(value)


def _fix(fix) -> dict | None:
    """A SARIF fix: replacements of the values in the axis file. A change that adds a
    key (an override of a library value, a new section) has no region to replace:
    such a fix is in the JSON report only."""
    if not fix.changes or any(c.region is None for c in fix.changes):
        return None
    by_file: dict[str, list[dict]] = {}
    for c in fix.changes:
        file, line, column, end_line, end_column = c.region
        by_file.setdefault(file, []).append(
            {
                "deletedRegion": {
                    "startLine": line,
                    "startColumn": column,
                    "endLine": end_line,
                    "endColumn": end_column,
                },
                "insertedContent": {"text": _written(c.value)},
            }
        )
    return {
        "description": {"text": fix.text},
        "artifactChanges": [
            {"artifactLocation": {"uri": uri(file), "uriBaseId": "SRCROOT"}, "replacements": reps}
            for file, reps in sorted(by_file.items())
        ],
    }


def _code_span(value: str) -> str:
    """``value`` as one inline code span (a fence longer than any backtick run inside)."""
    value = " ".join(value.split())
    runs = [len(m) for m in re.findall(r"`+", value)]
    fence = "`" * (max(runs, default=0) + 1)
    pad = " " if value.startswith("`") or value.endswith("`") else ""
    return f"{fence}{pad}{value}{pad}{fence}"


def help_markdown(doc) -> str:
    """A rule's help in Markdown: what it checks, why, the relation as code, the sources."""
    from .markdown import escape

    why, _, relation = doc.help.partition("\n\nRelation: ")
    parts = [f"**{escape(doc.title)}**"]
    if doc.description:
        parts.append(escape(doc.description))
    if why.strip():
        parts.append(escape(why))
    if relation.strip():
        parts.append("Relation: " + _code_span(relation))
    if doc.sources:
        parts.append("Sources:\n\n" + "\n".join(f"- {escape(src)}" for src in doc.sources))
    return "\n\n".join(parts)


def _descriptors(report) -> list[dict]:
    from ..findings import BUILTIN_IDS

    docs = {doc.id: doc for doc in getattr(report, "rules", ())}
    used = {f.rule for f in report.findings}
    out: dict[str, dict] = {}
    for rule_id, doc in docs.items():
        help_text = doc.help
        if doc.sources:
            help_text += "\n\nSources:\n" + "\n".join(f"- {s}" for s in doc.sources)
        properties: dict = {"sources": list(doc.sources)}
        if doc.aliases:
            properties["aliases"] = list(doc.aliases)
        out[rule_id] = {
            "id": rule_id,
            "name": _pascal(rule_id),
            "shortDescription": {"text": doc.title},
            "fullDescription": {"text": doc.description or doc.title},
            "help": {"text": help_text or doc.title, "markdown": help_markdown(doc)},
            "defaultConfiguration": {"level": _LEVEL[doc.default_severity]},
            "properties": properties,
        }
    for rule_id in sorted(used - set(out)):
        meaning = BUILTIN_IDS.get(rule_id, "a rule of a team's own rule pack")
        out[rule_id] = {
            "id": rule_id,
            "name": _pascal(rule_id),
            "shortDescription": {"text": meaning[:1].upper() + meaning[1:]},
            "fullDescription": {"text": f"Built-in finding of specguard: {meaning}."},
            "help": {"text": f"Built-in finding of specguard: {meaning}."},
            "defaultConfiguration": {"level": "error"},
            "properties": {"builtin": True, "sources": []},
        }
    return [out[k] for k in sorted(out)]


def document(report: Report) -> dict:
    from .. import __version__

    rules = _descriptors(report)
    index = {r["id"]: i for i, r in enumerate(rules)}
    outcome = getattr(report, "baseline", None)
    results: list[dict] = []
    seen: dict[str, int] = {}
    for f in report.findings:
        loc = f.location
        digest = fingerprint(f.rule, loc.file, loc.pointer, f.operating_point)
        seen[digest] = seen.get(digest, 0) + 1
        result: dict = {
            "ruleId": f.rule,
            "ruleIndex": index[f.rule],
            "level": _LEVEL[f.severity],
            "message": {"text": f.message},
            "locations": [{"physicalLocation": _physical(loc)}],
            "partialFingerprints": {FINGERPRINT_KEY: f"{digest}:{seen[digest]}"},
        }
        if loc.pointer:
            result["locations"][0]["logicalLocations"] = [{"fullyQualifiedName": loc.pointer, "kind": "element"}]
        if f.related:
            result["relatedLocations"] = [
                {
                    "id": i + 1,
                    "physicalLocation": _physical(r),
                    "message": {"text": related_label(r)},
                }
                for i, r in enumerate(f.related)
            ]
        properties: dict = {}
        if f.operating_point is not None:
            properties["operatingPoint"] = f.operating_point
        if f.figures:
            properties["figures"] = [{"name": n, "value": _number(v), "unit": u} for n, v, u in f.figures]
        if f.remedies:
            properties["remedies"] = list(f.remedies)
            # the first fix in the message text, where code-scanning views show it
            result["message"]["text"] = f"{f.message}. Fix: {f.remedies[0]}"
        sarif_fixes = [x for x in (_fix(fix) for fix in f.fixes) if x is not None]
        if sarif_fixes:
            result["fixes"] = sarif_fixes
        if f.help:
            properties["help"] = f.help
        if f.explained_by is not None:
            # one cause reported once: this result is a consequence of another
            properties["explainedBy"] = f.explained_by
            result["message"]["text"] = f"{result['message']['text']} (a consequence of {f.explained_by})"
        if properties:
            result["properties"] = properties
        suppressions = []
        if f.waived is not None:
            suppressions.append({"kind": "inSource", "status": "accepted", "justification": f.waived})
        if getattr(f, "baselined", False):
            justification = f"held by the baseline {outcome.file}" if outcome else "held by the baseline"
            suppressions.append({"kind": "external", "status": "accepted", "justification": justification})
        if suppressions:
            result["suppressions"] = suppressions
        if outcome is not None:
            result["baselineState"] = "unchanged" if getattr(f, "baselined", False) else "new"
        results.append(result)

    notifications: list[dict] = []
    for r in report.input_errors:
        notifications.append(
            {
                "level": "error",
                "descriptor": {"id": "input-unreadable"},
                "message": {"text": f"cannot read input {r.file}: {r.input_error}"},
            }
        )
    if len(results) > MAX_RESULTS:
        omitted = len(results) - MAX_RESULTS
        results = results[:MAX_RESULTS]
        notifications.append(
            {
                "level": "warning",
                "descriptor": {"id": "results-truncated"},
                "message": {
                    "text": f"{omitted} more results were left out: a SARIF log holds at most "
                    f"{MAX_RESULTS:,} results; see the JSON or text report for all of them"
                },
            }
        )
    if outcome is not None:
        n = outcome.suppressed
        notifications.append(
            {
                "level": "note",
                "descriptor": {"id": "baseline-suppressed"},
                "message": {"text": f"{n} finding{'s' if n != 1 else ''} suppressed by the baseline {outcome.file}"},
            }
        )
    if outcome is not None and outcome.stale_count:
        notifications.append(
            {
                "level": "error" if outcome.strict else "note",
                "descriptor": {"id": "baseline-stale"},
                "message": {"text": f"{outcome.stale_count} baseline entries in {outcome.file} matched no finding"},
            }
        )
    status = report.exit_status()
    invocation: dict = {"executionSuccessful": status in (0, 1), "exitCode": status}
    if notifications:
        invocation["toolExecutionNotifications"] = notifications
    run = {
        "tool": {
            "driver": {
                "name": "specguard",
                "version": __version__,
                "semanticVersion": __version__,
                "rules": rules,
            }
        },
        "originalUriBaseIds": {
            "SRCROOT": {"description": {"text": "The repository root: the directory holding .specguard.yaml or .git."}}
        },
        "columnKind": "unicodeCodePoints",
        "invocations": [invocation],
        "results": results,
    }
    return {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [run]}


def render(report: Report) -> str:
    return dumps(document(report))
