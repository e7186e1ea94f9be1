"""The policy file ``.specguard.yaml``: each spec is judged by the nearest one in its
folder or above it, up to the repository root (``specguard.runsetup.PolicyIndex``).

It is read with the project's own guarded loader (:func:`specguard.source.load_bytes`)
and validated by the strict pydantic model below, from which
``schemas/config-v1.schema.json`` is generated. Example::

    format: 1
    fail_level: warning              # lowest severity that fails the run
    include: ["**/*.axis.yaml"]      # files a directory search picks up
    exclude: ["archive/**"]
    extra_rule_dirs: [policy/rules]  # the team's own rule files, inside the repository
    rules:
      <rule id>:
        enabled: true
        severity: error              # every finding of the rule takes this severity
        thresholds: {warning: 0.15, error: 40 %}  # band -> value as the rule file writes it (ratios: 0.4 or 40 %)
        waivable: false              # a spec cannot waive this rule
    paths:                           # per-path overrides; later entries win
      - match: "prototypes/**"
        rules:
          <rule id>: {enabled: false}

Precedence, lowest first: the rule pack's defaults, the ``rules:`` section, then
every ``paths:`` entry whose ``match`` glob matches the file's path relative to the
policy file's folder, in file order. Unknown keys and unknown rule ids are errors with a "did you mean"
hint; every problem is a ``config-invalid`` finding, and the CLI exits 2 before
any analysis.

Globs match the whole posix path relative to the policy file's folder (the
repository root for ``--config``): ``*`` and ``?`` stay within one
path segment, ``**`` (a whole segment) matches any number of segments, including
none, and ``[...]`` is a character class.
"""

from __future__ import annotations

import difflib
import os
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Annotated, Any, Literal

from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    StringConstraints,
    ValidationError,
)

from ..findings import Finding, Location, dotted
from .types import RuleOverride

CONFIG_NAME = ".specguard.yaml"
CONFIG_FORMAT = 1
DEFAULT_INCLUDE = ("**/*.axis.yaml", "**/*.axis.yml")
MAX_CONFIG_BYTES = 256 * 1024

Severity = Literal["error", "warning", "info"]

_CONFIG = ConfigDict(
    strict=True,
    extra="forbid",
    frozen=True,
    allow_inf_nan=False,
    hide_input_in_errors=True,
    defer_build=True,  # only the top model is validated: build it on first use
)


class _Model(BaseModel):
    model_config = _CONFIG


def _as_tuple(value: object) -> object:
    # YAML sequences arrive as lists; the frozen model holds tuples (items stay strict).
    return tuple(value) if isinstance(value, list) else value


AsTuple = BeforeValidator(_as_tuple)

Glob = Annotated[
    str,
    StringConstraints(min_length=1, max_length=300, pattern=r"^[^/\\\x00-\x1f][^\\\x00-\x1f]*$"),
]
RelDir = Annotated[
    str,
    StringConstraints(min_length=1, max_length=300, pattern=r"^[^/\\\x00-\x1f~$][^\\\x00-\x1f]*$"),
]
Threshold = Annotated[str, StringConstraints(min_length=1, max_length=64)] | float


class RulePolicy(_Model):
    """What the policy changes for one rule."""

    enabled: bool | None = Field(None, description="false turns the rule off")
    severity: Severity | None = Field(
        None, description="every finding of the rule takes this severity instead of its band's"
    )
    thresholds: dict[Severity, Threshold] | None = Field(
        None,
        description=(
            "new threshold per band severity, written like the rule file writes it: a number "
            'or a percentage for ratios (0.3 or "30 %"), a value with its unit otherwise ("16 kHz")'
        ),
    )
    waivable: bool | None = Field(None, description="false: a waiver in a spec cannot accept findings of this rule")


class PathPolicy(_Model):
    """Overrides for the files whose path (relative to the policy file's folder) matches a glob."""

    match: Glob = Field(description="glob on the path relative to the policy file's folder, e.g. prototypes/**")
    rules: dict[str, RulePolicy] = Field(description="per rule id, the same keys as the top-level rules")


class ConfigModel(_Model):
    """The specguard policy file (.specguard.yaml; the nearest one above a spec is in force)."""

    format: Literal[1] = Field(description="policy file format version")
    rules: dict[str, RulePolicy] = Field(default_factory=dict, description="per rule id")
    paths: Annotated[tuple[PathPolicy, ...], AsTuple] = Field(
        (), max_length=200, description="per-path overrides, applied in order (later entries win)"
    )
    fail_level: Severity | None = Field(
        None, description="lowest severity that makes the exit status 1 (default: error)"
    )
    extra_rule_dirs: Annotated[tuple[RelDir, ...], AsTuple] = Field(
        (),
        max_length=20,
        description="directories with the team's own rule files (rule pack format), relative to "
        "the policy file's folder and inside the repository",
    )
    include: Annotated[tuple[Glob, ...], AsTuple] | None = Field(
        None,
        max_length=100,
        description="files a directory search checks (default: **/*.axis.yaml, **/*.axis.yml)",
    )
    exclude: Annotated[tuple[Glob, ...], AsTuple] = Field(
        (), max_length=100, description="files a directory search skips, even when included"
    )
    modelling: Modelling | None = Field(
        None, description="modelling choices: the inductance estimate, how estimates soften verdicts, reserves"
    )
    unapplied_rules: Literal["report", "hide"] | None = Field(
        None,
        description="report (default): a rule that cannot be applied because the spec lacks what it "
        "needs gives an info finding (the text output gathers them in one line per file); hide: no "
        "such findings",
    )


class EstimateCurve(_Model):
    """The estimate of a winding's inductance at the ripple frequency from its catalogue
    value: ``L(f) = L_cat max((f/f_cat)^-exponent, floor)`` (docs/physics.md §5.3)."""

    exponent: float = Field(ge=0.0, le=2.0, description="power-law exponent of the fall with frequency")
    floor: float = Field(gt=0.0, le=1.0, description="the lowest fraction of the catalogue value")


class Modelling(_Model):
    """Modelling choices that are common practice rather than physics (docs/physics.md)."""

    inductance_estimate: dict[Literal["iron-core", "slotless", "coreless"], EstimateCurve] | None = Field(
        None, description="the inductance estimate curve per winding construction (missing ones keep the default)"
    )
    estimate_softens_verdicts: bool | None = Field(
        None,
        description="a finding whose verdict rests on the inductance estimate drops one band (default true)",
    )
    supply_reserve: float | None = Field(
        None, ge=0.0, le=1.0, description="reserve on the lowest supply that reaches every point (default 0.1)"
    )
    fix_pwm_frequency_max: Threshold | None = Field(
        None, description="the highest PWM (leg) frequency a fix may propose, with its unit (default 250 kHz)"
    )
    fix_costs: (
        dict[
            Literal[
                "pwm_frequency",
                "added_inductance",
                "choke_saturation_current",
                "supply_voltage",
                "pwm_scheme",
                "loop_bandwidth",
                "stage_continuous_current",
                "stage_peak_current",
                "brake_resistor",
            ],
            Annotated[float, Field(ge=0.0, le=1000.0)],
        ]
        | None
    ) = Field(
        None,
        description="what a relative change of 1 of each lever costs when fixes and explore options are "
        "ordered (a part added where none was: one change); missing levers keep the defaults "
        "(pwm_scheme 0.3, loop_bandwidth 0.5, pwm_frequency, added_inductance, choke_saturation_current "
        "and brake_resistor 1, supply_voltage and the stage ratings 2)",
    )


def hide_unapplied(config: EffectiveConfig | None) -> bool:
    """Whether the policy turns the rule-not-applicable findings off (``unapplied_rules: hide``)."""
    return config is not None and config.unapplied_rules.value == "hide"


# ------------------------------------------------------------------ globs
def glob_regex(pattern: str) -> re.Pattern[str]:
    """Compile a repo-path glob (see the module docstring) to an anchored regex."""
    out: list[str] = []
    segments = pattern.split("/")
    for index, segment in enumerate(segments):
        last = index == len(segments) - 1
        if segment == "**":
            out.append(".*" if last else "(?:[^/]*/)*")
            continue
        i = 0
        while i < len(segment):
            ch = segment[i]
            if ch == "*":
                out.append("[^/]*")
            elif ch == "?":
                out.append("[^/]")
            elif ch == "[":
                end = segment.find("]", i + 2 if segment[i + 1 : i + 2] in ("!", "]") else i + 1)
                if end < 0:
                    out.append(re.escape(ch))
                else:
                    body = segment[i + 1 : end]
                    if body.startswith("!"):
                        body = "^" + body[1:]
                    out.append("[" + body.replace("\\", "\\\\") + "]")
                    i = end
            else:
                out.append(re.escape(ch))
            i += 1
        if not last:
            out.append("/")
    return re.compile("".join(out) + r"\Z", re.DOTALL)


def glob_match(pattern: str, rel_path: str) -> bool:
    return glob_regex(pattern).match(rel_path) is not None


# -------------------------------------------------------- rule catalogue
@dataclass(frozen=True)
class RuleFacts:
    """What the policy needs to know about one rule of the pack."""

    id: str
    # band severity -> threshold as the rule file writes it (for explain and checks)
    bands: Mapping[str, str | float] = field(default_factory=dict)
    aliases: tuple[str, ...] = ()
    # unit dimension of the thresholds (a specguard.model.units dimension), or
    # "ratio" / "flag" / None when not known
    dimension: str | None = None
    origin: str = "rule pack"  # where the rule file lives, for explain
    # (band, value) -> why the threshold override does not fit the rule, or None;
    # given by the pack so that thresholds are read exactly as evaluation reads them
    check: Callable[[str, Any], str | None] | None = field(default=None, compare=False)


Catalogue = Mapping[str, RuleFacts]


def catalogue_from_pack(pack) -> dict[str, RuleFacts]:
    """The policy's view of a rule pack (:class:`specguard.engine.pack.Pack`)."""
    from .evaluate import OverrideError, effective_bands

    out: dict[str, RuleFacts] = {}
    for prule in pack.rules:

        def check(band: str, value: Any, prule=prule) -> str | None:
            try:
                effective_bands(prule, RuleOverride(thresholds={band: value}))
            except OverrideError as exc:
                return str(exc)
            return None

        out[prule.id] = RuleFacts(
            id=prule.id,
            bands={b.severity: b.written for b in prule.bands},
            aliases=tuple(prule.rule.aliases),
            dimension=prule.figure.dimension,
            origin=prule.source,
            check=check,
        )
    return out


def load_policy(config_path: Path | None, root: Path, pack_cache: str | None = None, base: Path | None = None):
    """The effective policy and the rule pack it selects (built-in rules plus the
    config's ``extra_rule_dirs``). ``base``: the folder its globs and rule
    directories are relative to (default: ``root``; a discovered policy file's own
    folder). Raises :class:`ConfigError` for a bad config or a bad rule file of the
    team; a bad built-in rule file is a bug and raises ``PackError``."""
    from .evaluate import PackError, load_pack

    packs: list = []

    def catalogue_for(extra_dirs: tuple[Path, ...]) -> dict[str, RuleFacts]:
        if not extra_dirs:
            packs.append(load_pack((), pack_cache))
        else:
            try:
                packs.append(load_pack(extra_dirs, pack_cache))
            except PackError as exc:
                raise ConfigError([_pack_problem(line, root) for line in exc.problems]) from None
        return catalogue_from_pack(packs[-1])

    if config_path is None:
        return EffectiveConfig.default(catalogue_for(())), packs[-1]
    config = load_config(config_path, root, catalogue_for, base)
    # Team rule files are shown by their repo-relative path, never an absolute one.
    from dataclasses import replace as _replace

    shown = {rule: _replace(facts, origin=_strip_root(facts.origin, root)) for rule, facts in config.catalogue.items()}
    return _replace(config, catalogue=shown), packs[-1]


def _strip_root(text: str, root: Path) -> str:
    for prefix in sorted(
        {root.as_posix().rstrip("/") + "/", str(root.resolve()).rstrip("/") + "/"},
        key=len,
        reverse=True,
    ):
        if text.startswith(prefix):
            return text[len(prefix) :]
    return text


def _pack_problem(line: str, root: Path) -> Finding:
    line = _strip_root(line, root)
    match = re.match(r"^(.*?):(\d+):(\d+): (.*)$", line)
    if match:
        return Finding(
            "config-invalid",
            "error",
            f"rule file: {match.group(4)}",
            Location(match.group(1), int(match.group(2)), int(match.group(3))),
        )
    head, _, rest = line.partition(": ")
    return Finding("config-invalid", "error", f"rule file: {rest or line}", Location(head or "?", 1, 1))


def names_of(catalogue: Catalogue) -> dict[str, str]:
    """Every rule id and alias -> the rule id."""
    out: dict[str, str] = {}
    for rule in catalogue.values():
        out[rule.id] = rule.id
        for alias in rule.aliases:
            out.setdefault(alias, rule.id)
    return out


# ------------------------------------------------------- effective values
@dataclass(frozen=True)
class Origin:
    kind: Literal["default", "pack", "config", "path", "cli"]
    file: str | None = None
    line: int = 0
    column: int = 0
    entry: int | None = None
    match: str | None = None
    note: str = ""

    def describe(self) -> str:
        if self.kind == "default":
            return "built-in default"
        if self.kind == "pack":
            return f"rule pack default ({self.note})" if self.note else "rule pack default"
        if self.kind == "cli":
            return f"command line ({self.note})"
        where = f"{self.file}:{self.line}:{self.column}"
        if self.kind == "path":
            return f"{where} (paths[{self.entry}], match '{self.match}')"
        return where


DEFAULT = Origin("default")


@dataclass(frozen=True)
class Setting:
    value: Any
    origin: Origin = DEFAULT


@dataclass(frozen=True)
class PathEntry:
    match: str
    regex: re.Pattern[str]
    origin: Origin
    rules: Mapping[str, Mapping[str, Setting]]


@dataclass(frozen=True)
class Explained:
    scope: str  # "run" or a rule id
    key: str  # "fail_level", "enabled", "threshold error", ...
    value: str
    source: str


@dataclass(frozen=True)
class EffectiveConfig:
    """The policy in force: defaults, the config file and its per-path entries."""

    file: str | None  # repo-relative config path; None when no file is in use
    catalogue: Catalogue
    rules: Mapping[str, Mapping[str, Setting]] = field(default_factory=dict)
    paths: tuple[PathEntry, ...] = ()
    fail_level: Setting = Setting("error")
    include: Setting = Setting(DEFAULT_INCLUDE)
    exclude: Setting = Setting(())
    extra_rule_dirs: Setting = Setting(())
    unapplied_rules: Setting = Setting("report")  # "hide": no rule-not-applicable findings
    modelling: Setting = Setting(None)  # a Modelling, or None for the defaults
    extra_rule_paths: tuple[Path, ...] = ()  # resolved, inside the root
    # Root-relative folder the globs and rule directories are relative to: the policy
    # file's own folder for a discovered .specguard.yaml, "" for --config or the root's.
    base: str = ""

    @classmethod
    def default(cls, catalogue: Catalogue) -> EffectiveConfig:
        return cls(None, catalogue)

    def with_fail_level(self, level: str, note: str) -> EffectiveConfig:
        from dataclasses import replace

        return replace(self, fail_level=Setting(level, Origin("cli", note=note)))

    def local(self, rel_path: str) -> str | None:
        """``rel_path`` (repo-relative) as the globs see it: relative to :attr:`base`;
        None for a file outside the policy's folder."""
        if not self.base:
            return rel_path
        prefix = self.base + "/"
        return rel_path[len(prefix) :] if rel_path.startswith(prefix) else None

    def wanted(self, rel_path: str) -> bool:
        """Whether a directory search picks up ``rel_path`` (include, then exclude)."""
        local = self.local(rel_path)
        if local is None or not any(glob_match(p, local) for p in self.include.value):
            return False
        return not any(glob_match(p, local) for p in self.exclude.value)

    def matching_entries(self, rel_path: str) -> tuple[int, ...]:
        """Indexes of the ``paths:`` entries whose glob matches ``rel_path``."""
        local = self.local(rel_path)
        if local is None:
            return ()
        return tuple(i for i, entry in enumerate(self.paths) if entry.regex.match(local))

    def _layers(self, rel_path: str):
        yield self.rules
        for index in self.matching_entries(rel_path):
            yield self.paths[index].rules

    def _settings(self, rule: str, rel_path: str | None) -> dict[str, Setting]:
        facts = self.catalogue[rule]
        current: dict[str, Setting] = {
            "enabled": Setting(True),
            "severity": Setting(None),
            "waivable": Setting(True),
        }
        for band, value in sorted(facts.bands.items(), key=lambda kv: _BAND_ORDER[kv[0]]):
            current[f"threshold {band}"] = Setting(value, Origin("pack", note=facts.origin))
        layers = self._layers(rel_path) if rel_path is not None else iter((self.rules,))
        for layer in layers:
            for key, setting in layer.get(rule, {}).items():
                current[key] = setting
        return current

    def for_file(self, rel_path: str) -> dict[str, RuleOverride]:
        """The effect of the policy on every rule of the pack, for one file."""
        out: dict[str, RuleOverride] = {}
        for rule in sorted(self.catalogue):
            s = self._settings(rule, rel_path)
            thresholds = {
                key.split(" ", 1)[1]: setting.value
                for key, setting in s.items()
                if key.startswith("threshold ") and setting.origin.kind not in ("default", "pack")
            }
            out[rule] = RuleOverride(
                enabled=bool(s["enabled"].value),
                severity=s["severity"].value,
                thresholds=thresholds,
                unwaivable=not s["waivable"].value,
            )
        return out

    def explain_for_file(self, rel_path: str | None, changed: bool = False) -> list[Explained]:
        """Every effective value with where it came from (``rel_path`` None: the
        repository-wide values, without per-path entries); ``changed``: only the
        values the policy file or the command line set."""
        out = [
            Explained(
                "run",
                "policy file",
                self.file or "(none)",
                "in use" if self.file else "no .specguard.yaml in force: built-in defaults only",
            ),
            Explained("run", "fail_level", str(self.fail_level.value), self.fail_level.origin.describe()),
            Explained(
                "run",
                "include",
                ", ".join(self.include.value) or "(none)",
                self.include.origin.describe(),
            ),
            Explained(
                "run",
                "exclude",
                ", ".join(self.exclude.value) or "(none)",
                self.exclude.origin.describe(),
            ),
            Explained(
                "run",
                "extra_rule_dirs",
                ", ".join(self.extra_rule_dirs.value) or "(none)",
                self.extra_rule_dirs.origin.describe(),
            ),
            Explained(
                "run",
                "unapplied_rules",
                str(self.unapplied_rules.value),
                self.unapplied_rules.origin.describe(),
            ),
            Explained("run", "modelling", _modelling_text(self.modelling.value), self.modelling.origin.describe()),
        ]
        if changed:
            moved = {
                "fail_level": self.fail_level,
                "include": self.include,
                "exclude": self.exclude,
                "extra_rule_dirs": self.extra_rule_dirs,
                "unapplied_rules": self.unapplied_rules,
                "modelling": self.modelling,
            }
            out = [out[0]] + [e for e in out[1:] if moved[e.key].origin.kind not in _DEFAULT_KINDS]
        for rule in sorted(self.catalogue):
            for key, setting in self._settings(rule, rel_path).items():
                if changed and setting.origin.kind in _DEFAULT_KINDS:
                    continue
                out.append(Explained(rule, key, _show(setting.value, key), setting.origin.describe()))
        return out

    def changed_text(self, rel_path: str | None) -> str:
        """:meth:`explain_text` with only the values that differ from the defaults."""
        return self.explain_text(rel_path, changed=True)

    def explain_text(self, rel_path: str | None, changed: bool = False) -> str:
        lines: list[str] = []
        if rel_path is None:
            lines.append("effective policy for the whole repository (per-path entries not applied)")
        else:
            lines.append(f"effective policy for {rel_path}")
        scope = None
        for item in self.explain_for_file(rel_path, changed):
            if item.scope != scope:
                scope = item.scope
                lines.append("" if scope == "run" else f"rule {scope}:")
            indent = "  " if scope == "run" else "    "
            lines.append(f"{indent}{item.key} = {item.value}    [{item.source}]")
        if rel_path is None and self.paths:
            lines.append("per-path entries (applied in this order to matching files):")
            for i, entry in enumerate(self.paths):
                lines.append(
                    f"  paths[{i}] match '{entry.match}'    [{entry.origin.file}:"
                    f"{entry.origin.line}:{entry.origin.column}]"
                )
        return "\n".join(lines) + "\n"


_BAND_ORDER = {"info": 0, "warning": 1, "error": 2}
_DEFAULT_KINDS = ("default", "pack")  # origins of values nobody set


def _band_rank(band: str) -> int:
    return _BAND_ORDER.get(band, len(_BAND_ORDER))


def _show(value: Any, key: str) -> str:
    if value is None and key == "severity":
        return "per band (as the rule file says)"
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


# --------------------------------------------------------------- loading
class ConfigError(Exception):
    """The policy file cannot be used; ``findings`` say where and why (exit 2)."""

    def __init__(self, findings: list[Finding]) -> None:
        super().__init__("; ".join(f.message for f in findings))
        self.findings = sorted(findings, key=Finding.sort_key)


class _Locator:
    def __init__(self, file: str, locations: Mapping[tuple, Any]) -> None:
        self.file = file
        self.locations = locations

    def __call__(self, path: tuple, key: bool = False) -> Location:
        probe = tuple(path)
        while True:
            node = self.locations.get(probe)
            if node is not None:
                span = node.key if (key and node.key is not None) else node.value
                return Location(self.file, span.line, span.column, span.end_line, span.end_column, tuple(path))
            if not probe:
                return Location(self.file, 1, 1, path=tuple(path))
            probe = probe[:-1]


def _bad(locate: _Locator, path: tuple, message: str, key: bool = False) -> Finding:
    where = dotted(path)
    text = f"{where}: {message}" if where else message
    return Finding("config-invalid", "error", text, locate(path, key=key))


_KIND = {
    "string_type": "a string",
    "float_type": "a number",
    "bool_type": "true or false",
    "dict_type": "a mapping",
    "model_type": "a mapping",
    "model_attributes_type": "a mapping",
    "tuple_type": "a list",
}


def _model_for(path: tuple) -> type[BaseModel] | None:
    """The model describing the mapping at ``path`` of the config."""
    if not path:
        return ConfigModel
    if path[0] == "rules" and len(path) == 2:
        return RulePolicy
    if path[0] == "paths" and len(path) == 2:
        return PathPolicy
    if path[0] == "paths" and len(path) == 4 and path[2] == "rules":
        return RulePolicy
    return None


def _pydantic_findings(exc: ValidationError, locate: _Locator) -> list[Finding]:
    out: dict[tuple, Finding] = {}
    for err in exc.errors(include_url=False):
        loc = tuple(p for p in err.get("loc", ()) if isinstance(p, (str, int)))
        kind = err.get("type", "")
        if "[key]" in loc:
            loc = loc[: loc.index("[key]")]
            allowed = re.findall(r"'([^']*)'", str(err.get("ctx", {}).get("expected", "")))
            name = str(err.get("input", loc[-1] if loc else ""))
            hint = difflib.get_close_matches(name, allowed, n=1, cutoff=0.6)
            if "thresholds" in loc:
                message = "a band is one of error, warning, info" + (f"; did you mean '{hint[0]}'?" if hint else "")
            elif hint:
                message = f"unknown key '{name}'; did you mean '{hint[0]}'?"
            else:
                message = f"unknown key '{name}' (allowed here: {', '.join(allowed)})"
            finding = _bad(locate, loc, message, key=True)
        # A threshold is a union (text with unit, or number): one message for both members.
        elif "thresholds" in loc and len(loc) > loc.index("thresholds") + 2:
            loc = loc[: loc.index("thresholds") + 2]
            finding = _bad(locate, loc, "expected a number, or a value with its unit such as '16 kHz'")
        elif kind == "extra_forbidden":
            model = _model_for(loc[:-1])
            known = list(model.model_fields) if model else []
            name = str(loc[-1])
            hint = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
            message = f"unknown key '{name}'"
            message += (
                f"; did you mean '{hint[0]}'?" if hint else (f" (allowed here: {', '.join(known)})" if known else "")
            )
            where = dotted(loc[:-1])
            finding = Finding(
                "config-invalid",
                "error",
                f"{where}: {message}" if where else message,
                locate(loc, key=True),
            )
        elif kind == "missing":
            finding = _bad(locate, loc[:-1], f"missing required key '{loc[-1]}'")
        elif kind == "literal_error":
            finding = _bad(locate, loc, f"expected one of {err.get('ctx', {}).get('expected', '')}")
        elif kind in _KIND:
            message = f"expected {_KIND[kind]}"
            if kind == "bool_type":
                message += " (YAML 1.2 booleans are true and false only)"
            finding = _bad(locate, loc, message)
        elif kind in ("greater_than_equal", "less_than_equal", "greater_than", "less_than"):
            bound = err.get("ctx", {})
            words = {"ge": "at least", "le": "at most", "gt": "above", "lt": "below"}
            said = next((f"{w} {bound[k]}" for k, w in words.items() if k in bound), "in range")
            finding = _bad(locate, loc, f"must be {said} (it is {err.get('input')!r})")
        elif kind == "string_pattern_mismatch":
            finding = _bad(
                locate,
                loc,
                "must be a relative path or glob with forward slashes "
                "(no leading '/', no backslash, no control characters)",
            )
        else:
            finding = _bad(locate, loc, err.get("msg", "invalid value"))
        out.setdefault((loc, finding.message), finding)
    return list(out.values())


def _resolve_dir(root: Path, text: str, base: Path | None = None) -> str | None:
    """Why a rule directory (relative to ``base``, the policy's folder, default
    ``root``) is not acceptable, or None. It must stay inside ``root``."""
    posix = PurePosixPath(text)
    if posix.is_absolute() or ":" in text.split("/")[0]:
        return "must be a path relative to the policy file's folder"
    base = root if base is None else base
    start = list(PurePosixPath(os.path.relpath(os.path.realpath(base), os.path.realpath(root))).parts)
    parts: list[str] = [p for p in start if p != "."]
    for part in posix.parts:
        if part == "..":
            if not parts:
                return "leaves the repository root"
            parts.pop()
        elif part != ".":
            parts.append(part)
    if any(p == ".git" for p in parts):
        return "must not point into .git"
    target = root.joinpath(*parts)
    real_root = os.path.realpath(root)
    real = os.path.realpath(target)
    if os.path.commonpath([real_root, real]) != real_root:
        return "leaves the repository root (through a symbolic link)"
    if not os.path.isdir(real):
        return "is not a directory"
    return None


def load_config(
    path: Path,
    root: Path,
    catalogue_for: Callable[[tuple[Path, ...]], Catalogue],
    base: Path | None = None,
) -> EffectiveConfig:
    """Read, validate and resolve the policy file at ``path``.

    ``catalogue_for(extra_dirs)`` returns the rules known with the team's own rule
    directories added (it may raise :class:`ConfigError` for a bad rule file).
    Raises :class:`ConfigError` on any problem.
    """
    from ..source import InputError, Limits, load_bytes, read_limited

    display = _display(path, root)
    limits = Limits(max_bytes=MAX_CONFIG_BYTES)
    try:
        raw, size = read_limited(path, limits)
    except InputError as exc:
        raise ConfigError(
            [
                Finding(
                    "config-invalid",
                    "error",
                    f"cannot read the policy file: {exc}",
                    Location(display, 1, 1),
                )
            ]
        ) from None
    result = load_bytes(raw, display, limits, size=size)
    for finding in result.findings:
        if finding.rule == "internal-error":  # a bug of the loader, not of the config: exit 3
            raise RuntimeError(finding.message)
    if result.data is None:
        problems = [
            Finding("config-invalid", "error", f"{f.message} [{f.rule}]", f.location)
            for f in result.findings
            if f.severity == "error"
        ]
        raise ConfigError(
            problems
            or [
                Finding(
                    "config-invalid",
                    "error",
                    "the policy file cannot be loaded",
                    Location(display, 1, 1),
                )
            ]
        )
    return validate(result.data, result.locations, display, root, catalogue_for, base)


def _display(path: Path, root: Path) -> str:
    try:
        return path.resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return path.as_posix()


def validate(
    data: Any,
    locations: Mapping[tuple, Any],
    display: str,
    root: Path,
    catalogue_for: Callable[[tuple[Path, ...]], Catalogue],
    base: Path | None = None,
) -> EffectiveConfig:
    """Validate loaded config data (see :func:`load_config`)."""
    base_dir = root if base is None else base
    base_rel = _display(base_dir, root)
    base_rel = "" if base_rel in (".", "") else base_rel
    locate = _Locator(display, locations)
    if not isinstance(data, dict):
        raise ConfigError([_bad(locate, (), "the policy file must hold a mapping")])
    try:
        model = ConfigModel.model_validate(data)
    except ValidationError as exc:
        raise ConfigError(_pydantic_findings(exc, locate)) from None

    problems: list[Finding] = []

    def origin(path: tuple, kind: str = "config", entry: int | None = None, match: str | None = None) -> Origin:
        loc = locate(path)
        return Origin(kind, display, loc.line, loc.column, entry, match)  # type: ignore[arg-type]

    # -- rule directories, confined to the root
    resolved: list[Path] = []
    for i, text in enumerate(model.extra_rule_dirs):
        why = _resolve_dir(root, text, base_dir)
        if why is not None:
            problems.append(_bad(locate, ("extra_rule_dirs", i), f"'{text}' {why}"))
        else:
            resolved.append(base_dir / text)
    for key in ("include", "exclude"):
        for i, pattern in enumerate(getattr(model, key) or ()):
            if any(seg == ".." for seg in pattern.split("/")):
                problems.append(_bad(locate, (key, i), f"'{pattern}' must not contain '..'"))
    for i, entry in enumerate(model.paths):
        if any(seg == ".." for seg in entry.match.split("/")):
            problems.append(_bad(locate, ("paths", i, "match"), f"'{entry.match}' must not contain '..'"))
    limit = model.modelling.fix_pwm_frequency_max if model.modelling is not None else None
    if limit is not None:
        why = _threshold_problem(limit, "frequency")
        if why is not None:
            problems.append(_bad(locate, ("modelling", "fix_pwm_frequency_max"), why))
    if problems:
        raise ConfigError(problems)

    catalogue = catalogue_for(tuple(resolved))
    names = names_of(catalogue)

    def rule_layer(
        section: Mapping[str, RulePolicy],
        base: tuple,
        kind: str,
        entry: int | None = None,
        match: str | None = None,
    ) -> dict[str, dict[str, Setting]]:
        layer: dict[str, dict[str, Setting]] = {}
        written_as: dict[str, str] = {}
        for name, policy in section.items():
            here = base + (name,)
            rule = names.get(name)
            if rule is None:
                hint = difflib.get_close_matches(name, sorted(names), n=1, cutoff=0.6)
                tail = f"; did you mean '{hint[0]}'?" if hint else ""
                problems.append(
                    Finding(
                        "config-invalid",
                        "error",
                        f"{dotted(base)}: unknown rule id '{name}'{tail}",
                        locate(here, key=True),
                    )
                )
                continue
            if rule in written_as:
                problems.append(
                    _bad(
                        locate,
                        here,
                        f"rule '{rule}' is configured twice (as '{written_as[rule]}' and as '{name}')",
                        key=True,
                    )
                )
                continue
            written_as[rule] = name
            settings: dict[str, Setting] = {}
            for key in ("enabled", "severity", "waivable"):
                value = getattr(policy, key)
                if value is not None:
                    settings[key] = Setting(value, origin(here + (key,), kind, entry, match))
            facts = catalogue[rule]
            for band, value in (policy.thresholds or {}).items():
                where = here + ("thresholds", band)
                if facts.bands and band not in facts.bands:
                    problems.append(
                        _bad(
                            locate,
                            where,
                            f"rule '{rule}' has no '{band}' band "
                            f"(it has: {', '.join(sorted(facts.bands, key=_band_rank))})",
                            key=True,
                        )
                    )
                    continue
                why = (
                    facts.check(band, value) if facts.check is not None else _threshold_problem(value, facts.dimension)
                )
                if why is not None:
                    problems.append(_bad(locate, where, why))
                    continue
                settings[f"threshold {band}"] = Setting(value, origin(where, kind, entry, match))
            layer[rule] = settings
        return layer

    rules = rule_layer(model.rules, ("rules",), "config")
    entries: list[PathEntry] = []
    for i, entry in enumerate(model.paths):
        layer = rule_layer(entry.rules, ("paths", i, "rules"), "path", i, entry.match)
        entries.append(
            PathEntry(
                entry.match,
                glob_regex(entry.match),
                origin(("paths", i), "path", i, entry.match),
                layer,
            )
        )
    if problems:
        raise ConfigError(problems)

    def top(key: str, value: Any, fallback: Any) -> Setting:
        if key in data:
            return Setting(value, origin((key,)))
        return Setting(fallback)

    return EffectiveConfig(
        file=display,
        catalogue=catalogue,
        rules=rules,
        paths=tuple(entries),
        fail_level=top("fail_level", model.fail_level, "error"),
        include=top("include", model.include, DEFAULT_INCLUDE),
        exclude=top("exclude", model.exclude, ()),
        extra_rule_dirs=top("extra_rule_dirs", model.extra_rule_dirs, ()),
        unapplied_rules=top("unapplied_rules", model.unapplied_rules, "report"),
        modelling=top("modelling", model.modelling, None),
        extra_rule_paths=tuple(resolved),
        base=base_rel,
    )


def _modelling_text(value: Modelling | None) -> str:
    """The modelling choices in force, defaults included (``specguard config``)."""
    from ..figures.compute import FigureSettings
    from ..figures.levers import COST_WEIGHT, PWM_FREQUENCY_MAX

    settings = FigureSettings()
    costs = dict(COST_WEIGHT)
    curves = dict(settings.inductance_curves)
    soften, reserve, f_max = True, settings.reserve_fraction, f"{PWM_FREQUENCY_MAX / 1e3:g} kHz"
    if value is not None:
        for winding, curve in (value.inductance_estimate or {}).items():
            curves[winding] = (curve.exponent, curve.floor)
        soften = soften if value.estimate_softens_verdicts is None else value.estimate_softens_verdicts
        reserve = reserve if value.supply_reserve is None else value.supply_reserve
        f_max = f_max if value.fix_pwm_frequency_max is None else str(value.fix_pwm_frequency_max)
        costs.update({str(k): float(v) for k, v in (value.fix_costs or {}).items()})
    shown = ", ".join(f"{w} (f/f_cat)^-{n:g} at least {floor:g}" for w, (n, floor) in sorted(curves.items()))
    return (
        f"inductance estimate: {shown}; estimate softens verdicts: {'yes' if soften else 'no'}; "
        f"supply reserve: {reserve:g}; PWM frequency a fix may propose: at most {f_max}; "
        "fix costs: " + ", ".join(f"{k} {v:g}" for k, v in sorted(costs.items()))
    )


def _threshold_problem(value: str | float, dimension: str | None) -> str | None:
    """Check a threshold override against the dimension of the rule's figure."""
    if dimension is None:
        return None
    if dimension in ("ratio", "flag"):
        if isinstance(value, str):
            from .pack import percent_value

            if dimension == "ratio" and percent_value(value) is not None:
                return None
            return f"'{value}' must be a plain number or a percentage for this rule (0.3 or '30 %')"
        return None
    if not isinstance(value, str):
        from ..model.units import accepted_units

        try:
            example = accepted_units(dimension)[0]
        except Exception:
            example = "unit"
        return f"{value:g} needs its unit, e.g. '{value:g} {example}'"
    from ..model.units import UnitError, parse_quantity, underflow_message

    try:
        too_small = underflow_message(value, dimension)
        if too_small is not None:  # parse_quantity would read it as a silent zero
            return too_small
        parse_quantity(value, dimension)
    except UnitError as exc:
        return exc.message
    except Exception as exc:  # an unknown dimension name from a team's rule file
        return f"cannot read '{value}': {exc}"
    return None


def config_schema() -> dict[str, Any]:
    """The JSON Schema of the policy file (Draft 2020-12), generated from the model."""
    from pydantic.json_schema import GenerateJsonSchema

    class _Generator(GenerateJsonSchema):
        def generate(self, schema, mode="validation"):
            out = super().generate(schema, mode=mode)
            head = {
                "$schema": "https://json-schema.org/draft/2020-12/schema",
                "$id": "urn:specguard:schema:config:v1",
            }
            return {**head, **out}

    return ConfigModel.model_json_schema(schema_generator=_Generator)
