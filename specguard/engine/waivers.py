"""Waivers: findings a spec accepts on purpose, reviewed like any other change.

A waiver in a spec names a rule (its id or an alias), a target and why::

    waivers:
      - rule: <rule id>
        at: hold                    # an operating point, or
        path: /stage/pwm/frequency  # a document path (prefix), or neither: the whole file
        reason: ...
        approved_by: ...
        expires: 2027-06-30         # valid through that day

With both ``at`` and ``path`` a finding must match both. A matched finding
stays in every output with ``waived`` set to the reason and the approver, and
no longer counts for the exit status.

Problems with waivers are ``waiver-invalid`` findings at the waiver, and such a
waiver waives nothing: expired (error), a rule the policy marks unwaivable
(error), an unknown rule (error), a path that is not a slash path (error), and
a waiver that matched no finding (warning). ``strict=True`` (``--no-waivers``)
ignores every waiver.
"""

from __future__ import annotations

import datetime as _dt
import difflib
from collections.abc import Callable, Iterable, Mapping
from dataclasses import replace

from ..findings import BUILTIN_IDS, Finding, Location, Severity
from .types import RuleOverride

Locate = Callable[..., tuple[Location, tuple[Location, ...]]]

# Built-in findings a waiver may cover: only "the rule could not be applied".
# Problems of the file itself or of the tool are fixed, never waived.
WAIVABLE_BUILTINS = frozenset({"rule-not-applicable"})


def _covers(pointer: str, prefix: str) -> bool:
    prefix = prefix.rstrip("/")
    return prefix == "" or pointer == prefix or pointer.startswith(prefix + "/")


def apply_waivers(
    findings: Iterable[Finding],
    spec,
    locate: Locate,
    overrides: Mapping[str, RuleOverride],
    today: _dt.date,
    strict: bool,
    names: Mapping[str, str] | None = None,
) -> list[Finding]:
    """Apply the spec's waivers to the findings of its file; return the sorted result.

    ``names`` maps every rule id and alias of the pack to the rule id; without
    it, waiver rule names are taken as they are and not checked for existence.
    """
    out = list(findings)
    waivers = tuple(getattr(spec, "waivers", ()) or ()) if spec is not None else ()
    if strict or not waivers:
        return sorted(out, key=Finding.sort_key)
    problems: list[Finding] = []
    for index, waiver in enumerate(waivers):
        base = ("waivers", index)
        rule = (names or {}).get(waiver.rule, waiver.rule)

        def problem(message: str, severity: Severity = "error", field: str | None = None, base: tuple = base) -> None:
            loc, related = locate(base + ((field,) if field else ()))
            problems.append(Finding("waiver-invalid", severity, message, loc, related))

        # numbered as a reader counts them (the first waiver is waiver 1); the
        # location gives the line, the document path keeps the list index
        label = f"waiver {index + 1} for '{waiver.rule}'"
        if rule in BUILTIN_IDS and rule not in WAIVABLE_BUILTINS:
            problem(
                f"{label}: built-in finding '{rule}' cannot be waived; fix the spec instead",
                field="rule",
            )
            continue
        if names is not None and rule not in names.values() and rule not in BUILTIN_IDS:
            hint = difflib.get_close_matches(waiver.rule, sorted(names), n=1, cutoff=0.6)
            tail = f"; did you mean '{hint[0]}'?" if hint else ""
            problem(f"{label}: no rule has this id{tail}", field="rule")
            continue
        expires = _dt.date.fromisoformat(waiver.expires)
        if today > expires:
            problem(
                f"{label}: expired on {waiver.expires} and waives nothing; renew it "
                "with a new review or fix the finding",
                field="expires",
            )
            continue
        if overrides.get(rule, RuleOverride()).unwaivable:
            problem(f"{label}: the policy marks rule '{rule}' as not waivable", field="rule")
            continue
        if waiver.path is not None and not waiver.path.startswith("/"):
            problem(
                f"{label}: path '{waiver.path}' must be a slash path such as /stage/pwm/frequency",
                field="path",
            )
            continue
        note = f"{waiver.reason} (approved by {waiver.approved_by}, until {waiver.expires})"
        used = overlapped = False
        for i, finding in enumerate(out):
            if finding.rule != rule:
                continue
            if waiver.at is not None and finding.operating_point != waiver.at:
                continue
            if waiver.path is not None and not _covers(finding.location.pointer, waiver.path):
                continue
            if finding.waived is not None:
                overlapped = True
                continue
            out[i] = replace(finding, waived=note)
            used = True
        if not used:
            if overlapped:
                why = "every finding it covers is already waived by an earlier waiver"
            elif not overrides.get(rule, RuleOverride()).enabled:
                why = f"rule '{rule}' is disabled by the policy for this file"
            else:
                target = []
                if waiver.at is not None:
                    target.append(f"operating point '{waiver.at}'")
                if waiver.path is not None:
                    target.append(f"path {waiver.path}")
                where = " and ".join(target) or "this file"
                why = f"no '{rule}' finding at {where}"
            problem(f"{label}: unused, {why}; remove the waiver", severity="warning")
    return sorted(out + problems, key=Finding.sort_key)
