"""Shapes shared by the rule evaluation and the policy layer."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from ..findings import Severity


@dataclass(frozen=True)
class RuleOverride:
    """What the policy (config file) changes for one rule in one file."""

    enabled: bool = True
    # every finding of the rule takes this severity instead of its band's
    severity: Severity | None = None
    # band severity -> new threshold, written like the rule file writes it
    # (a number for ratios, "16 kHz" for a frequency, ...)
    thresholds: Mapping[str, str | float] = field(default_factory=dict)
    # the policy forbids waiving this rule
    unwaivable: bool = False
