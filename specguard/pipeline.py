"""The per-file pipeline: bytes -> source -> model (-> figures -> rules).

This is the public Python API too: :func:`check_paths` takes paths and gives a
:class:`Report`; :func:`check_text` checks one spec given as text.
Nothing here prints or exits; ``cli`` does that.
"""

from __future__ import annotations

import datetime as _dt
import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING

from .findings import Finding, Location
from .results import FileResult, Report, RuleDoc

if TYPE_CHECKING:  # for the annotations only: these modules load on use
    from .engine.baseline import Baseline
    from .engine.config import EffectiveConfig
    from .engine.pack import Pack
    from .figures import FigureSet

# File pattern for specs found by searching a directory (documented in README).
SPEC_SUFFIXES = (".axis.yaml", ".axis.yml")


__all__ = ["FileResult", "Report", "RuleDoc", "RunOptions", "Target", "check_paths", "plan", "run_targets"]


class InputPathError(Exception):
    """An input path given on the command line cannot be used (exit 2)."""


@dataclass(frozen=True)
class RunOptions:
    """The policy of one run, applied after the rules (engine: config, waivers, baseline)."""

    config: EffectiveConfig | None = None
    pack: Pack | None = None
    today: _dt.date | None = None  # reference date for waiver expiry (None: today)
    no_waivers: bool = False  # --no-waivers: ignore every waiver
    baseline: Baseline | None = None
    strict_baseline: bool = False
    # files specs may not reference: the baseline and the reports (docs/reliability.md H11)
    denied: tuple = ()
    # the fail level of this policy, when it judges its files by its own level
    # (None: the run's level, as with --fail-level)
    fail_level: str | None = None


def find_root(start: Path) -> Path:
    """The repository root for ``start`` (a folder): the top of the git work tree
    holding it (the nearest ancestor with ``.git``); outside git, the nearest
    ancestor holding ``.specguard.yaml``; else ``start`` itself.

    A policy file marks where a policy applies, not where the repository ends: a
    sub-project's ``.specguard.yaml`` must not narrow the root its specs' library
    references may reach, or a run from the sub-project would refuse references a
    run from the top accepts."""
    here = Path(os.path.realpath(start))
    chain = (here, *here.parents)
    for candidate in chain:
        if (candidate / ".git").exists():
            return candidate
    for candidate in chain:
        if (candidate / CONFIG_NAME).exists():
            return candidate
    return here


CONFIG_NAME = ".specguard.yaml"

# Folders a directory search never enters outside a git work tree (inside one, the
# repository's own ignore rules decide): virtual environments, build output and
# installed packages, where copies of specs (the bundled demo among them) live.
SKIPPED_DIRS = frozenset({"build", "dist", "node_modules", "site-packages", "__pycache__", "venv"})


def _skipped_dir(dirpath: str, name: str) -> bool:
    if name.startswith(".") or name in SKIPPED_DIRS or name.endswith(".egg-info"):
        return True
    return os.path.exists(os.path.join(dirpath, name, "pyvenv.cfg"))  # a virtual environment


@dataclass(frozen=True)
class Target:
    """One input of a run: the file, why it cannot be checked (or None), its path
    as shown, the root its references stay inside, the policy in force for it and
    the prefix shown before its paths (a file outside the run's root)."""

    path: Path
    error: str | None
    rel: str
    inside: bool
    root: Path
    options: RunOptions | None = None
    shown_as: str = ""
    not_a_file: str | None = None  # see FileResult.not_a_file


class Policies:
    """The policy of each file of a run. This one gives every file the same
    :class:`RunOptions`; the command line's lookup of the nearest policy file
    (``specguard.runsetup.PolicyIndex``) has the same method."""

    def __init__(self, options: RunOptions | None) -> None:
        self.options = options

    def options_for(self, root: Path, rel: str) -> RunOptions | None:
        return self.options


def discover(paths: list[str], root: Path, wanted=None) -> list[tuple[Path, str | None]]:
    """Expand directories into spec files; return (path, error) pairs, sorted, unique.

    ``wanted(rel_path)`` (the policy's include/exclude) picks the files of a
    directory search; files named explicitly are always checked.
    """
    policies = _WantedOnly(wanted)
    return [(t.path, t.error) for t in _discover(paths, root, policies)]


class _WantedOnly(Policies):
    def __init__(self, wanted) -> None:
        super().__init__(None)
        self.wanted = wanted


def _wanted_test(policies: Policies, root: Path, rel: str):
    own = getattr(policies, "wanted", None)
    if own is not None:
        return own
    options = policies.options_for(root, rel)
    config = options.config if options is not None else None
    return config.wanted if config is not None else None


def _discover(paths: list[str], root: Path, policies: Policies | None = None) -> list[Target]:
    """:func:`discover` with each file's shown path, root and policy (every path
    resolved once). A directory inside a git work tree skips what git ignores."""
    policies = policies or Policies(None)
    real_root = _real(root)
    out: dict[str, Target] = {}

    def target(path: Path, real: Path, error: str | None = None, named: bool = False) -> Target:
        if _under(Path(os.path.abspath(path)) if named else real, real_root) and _under(real, real_root):
            rel = real.relative_to(real_root).as_posix()
            return Target(path, error, rel, True, root, policies.options_for(root, rel))
        # Outside the run's root (named there, or named inside it through a link
        # that leads out, as a directory walk meets it too): checked within a root
        # of its own, shown with a path the user can open; never an input error.
        own = find_root(real.parent)
        rel = real.relative_to(own).as_posix()
        shown = str(own) if path.is_absolute() else os.path.relpath(own)
        # read where it is, so that its references resolve as written next to it
        return Target(real, error, rel, True, own, policies.options_for(own, rel), Path(shown).as_posix())

    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            matched = 0
            walk_root = (
                root
                if _under(_real(p), real_root) or _under(Path(os.path.abspath(p)), real_root)
                else find_root(_real(p))
            )
            ignored = _git_ignored(p)
            for dirpath, dirnames, filenames in os.walk(p):
                dirnames[:] = sorted(
                    d
                    for d in dirnames
                    if not (
                        d.startswith(".")
                        or (ignored is None and _skipped_dir(dirpath, d))
                        or (ignored is not None and _real(Path(dirpath) / d) in ignored)
                    )
                )
                for name in sorted(filenames):
                    found = Path(dirpath) / name
                    real = _real(found)
                    if ignored is not None and real in ignored:
                        continue
                    item = target(found, real) if walk_root == root else target(found, real, named=True)
                    wanted = _wanted_test(policies, item.root, item.rel)
                    if wanted is None and not name.endswith(SPEC_SUFFIXES):
                        continue
                    if wanted is not None and not wanted(item.rel):
                        continue
                    matched += 1
                    out.setdefault(str(real), item)
            if matched == 0:  # named explicitly but holding no spec: never a silent pass
                out.setdefault(
                    str(p.absolute()),
                    Target(
                        p,
                        "no spec files matching the search patterns in this directory",
                        relpath(p, root),
                        False,
                        root,
                        not_a_file="directory",
                    ),
                )
        elif p.exists() or p.is_symlink():
            real = _real(p)
            out.setdefault(str(real), target(p, real, named=True))
        else:
            missing = Target(p, "no such file or directory", relpath(p, root), False, root, not_a_file="missing")
            out.setdefault(str(p.absolute()), missing)
    return sorted(out.values(), key=lambda t: (t.shown_as, t.rel))


def _under(path: Path, real_root: Path) -> bool:
    try:
        path.relative_to(real_root)
    except ValueError:
        return False
    return True


def _git_ignored(folder: Path) -> frozenset[Path] | None:
    """The real paths git ignores below ``folder`` (files, and folders as a whole), or
    None when ``folder`` is not inside a git work tree or git cannot be run.

    Asking git itself (``git ls-files --others --ignored --exclude-standard
    --directory``, one process per searched folder) applies every ignore source
    exactly as git does (nested .gitignore files, .git/info/exclude, the user's
    global excludes, negations), which a re-implementation of the matching rules
    would only approximate. A file named on the command line is never asked about."""
    import subprocess

    real = _real(folder)
    if not any((c / ".git").exists() for c in (real, *real.parents)):
        return None
    try:
        done = subprocess.run(
            ["git", "ls-files", "-z", "--others", "--ignored", "--exclude-standard", "--directory"],
            cwd=real,
            capture_output=True,
            timeout=60,
            check=False,
            env={**os.environ, "GIT_OPTIONAL_LOCKS": "0"},
        )
    except (OSError, subprocess.SubprocessError):
        return None
    if done.returncode != 0:
        return None
    names = done.stdout.decode("utf-8", "surrogateescape").split("\0")
    return frozenset(_real(real / name.rstrip("/")) for name in names if name)


def _real(path: Path) -> Path:
    """``path.resolve()`` that never raises: Python 3.11 raises RuntimeError on a
    symlink loop, and the loop must become an input error, not a crash."""
    return Path(os.path.realpath(path))


def relpath(path: Path, root: Path) -> str:
    try:
        return _real(path).relative_to(_real(root)).as_posix()
    except ValueError:
        return path.as_posix()


def check_file(path: Path, root: Path, cache=None, options: RunOptions | None = None) -> FileResult:
    """Check one spec file (the library files it references are read through ``cache``)."""
    if not _inside(path, root):  # within a root of its own, as the command line does
        root = find_root(_real(path).parent)
    rel = relpath(path, root)
    read = read_spec(path, root, rel, _inside(path, root))
    if isinstance(read, FileResult):
        return read
    raw, size = read
    return analyse(raw, size, path, rel, root, cache, options)[0]


def _inside(path: Path, root: Path) -> bool:
    try:
        _real(path).relative_to(_real(root))
    except ValueError:
        return False
    return True


def read_spec(path: Path, root: Path, rel: str, inside: bool):
    """The spec's bytes and real size (read once: hash and parse use the same bytes,
    docs/reliability.md FI24), or a FileResult with the input error."""
    from .source import InputError, Limits, read_limited

    if not inside:
        return FileResult(rel, (), input_error=f"outside the repository root {root}")
    try:
        return read_limited(path, Limits())
    except InputError as exc:
        return FileResult(rel, (), input_error=str(exc))


# Findings that make a result unfit for the result cache: a reference problem can
# go away without any file of the closure changing (a missing target appears).
_NOT_CACHED = frozenset({"reference-invalid", "internal-error"})


def analyse(
    raw: bytes, size: int, path: Path, rel: str, root: Path, cache=None, options: RunOptions | None = None
) -> tuple[FileResult, dict | None]:
    """Analyse the bytes of one spec: (result, cache payload or None when not cacheable).

    The payload holds the findings before the waivers, the figures, and the
    spec's waivers with their locations, so waivers are applied after the cache.
    """
    from .model import build
    from .source import Limits
    from .source.library import LibraryCache, assemble

    limits = Limits()
    denied = options.denied if options is not None else ()
    doc = assemble(raw, size, path, root, limits, cache or LibraryCache(limits), denied)
    findings = list(doc.findings)
    spec = None
    if doc.data is not None:
        spec, model_findings = build(doc.data, doc.locate)
        findings.extend(model_findings)
    figures = None
    if spec is not None:
        rule_findings, figures = _rule_findings(spec, doc.locate, rel, options, doc.data)
        findings.extend(rule_findings)
    before = sorted(findings, key=Finding.sort_key)
    if spec is not None:
        findings = _apply_waivers(findings, spec, doc.locate, rel, options or RunOptions())
    result = FileResult(
        rel,
        tuple(sorted(findings, key=Finding.sort_key)),
        spec=spec,
        closure=tuple(doc.closure),
        figures=figures,
        links=tuple(doc.links),
    )
    payload = None
    if size <= limits.max_bytes and not any(f.rule in _NOT_CACHED for f in before):
        payload = _payload(before, figures, spec, doc.locate)
    return result, payload


_WAIVER_FIELDS = ("", "rule", "expires", "path")


def _payload(before: list[Finding], figures, spec, locate) -> dict | None:
    from .cache import Tables, _loc, figures_to_json, finding_to_json

    tables = Tables()
    waivers = []
    locations = {}
    if spec is not None:
        for index, w in enumerate(getattr(spec, "waivers", ()) or ()):
            waivers.append({k: getattr(w, k) for k in ("rule", "at", "path", "reason", "approved_by", "expires")})
            for name in _WAIVER_FIELDS:
                loc, related = locate(("waivers", index) + ((name,) if name else ()))
                locations[f"{index}/{name}"] = [_loc(loc), [_loc(r) for r in related]]
    findings = [finding_to_json(f, tables) for f in before]
    return {
        "tables": tables.dump(),
        "findings": findings,
        "figures": figures_to_json(figures),
        "has_spec": spec is not None,
        "waivers": waivers,
        "waiver_locations": locations,
    }


def from_payload(rel: str, closure, payload: dict, options: RunOptions | None) -> FileResult:
    """The FileResult of a cache entry: the stored findings with the waivers applied
    now (today's date, --no-waivers). Raises on a malformed payload."""
    from types import SimpleNamespace

    from .cache import Tables, _unloc, figures_from_json, finding_from_json

    tables = Tables(payload["tables"])
    findings = [finding_from_json(d, tables) for d in payload["findings"]]
    figures = figures_from_json(payload["figures"])
    if payload["has_spec"]:
        locations = payload["waiver_locations"]

        def locate(path, key=False):
            index = path[1]
            name = path[2] if len(path) > 2 else ""
            loc, related = locations[f"{index}/{name}"]
            return _unloc(loc), tuple(_unloc(r) for r in related)

        waivers = tuple(SimpleNamespace(**w) for w in payload["waivers"])
        if waivers:
            spec = SimpleNamespace(waivers=waivers)
            findings = _apply_waivers(findings, spec, locate, rel, options or RunOptions())
    return FileResult(
        rel, tuple(sorted(findings, key=Finding.sort_key)), closure=tuple((a, b) for a, b in closure), figures=figures
    )


def _rule_findings(
    spec, locate, rel: str, options: RunOptions | None, data: dict | None = None
) -> tuple[list[Finding], FigureSet | None]:
    """Figures, then the rule pack, then the fixes verified on the changed spec:
    (findings, FigureSet or None). A failure of any is an internal-error finding
    (exit 3)."""
    from .debugging import ACTIVE, reraise_when_debugging
    from .engine.evaluate import evaluate, load_pack
    from .figures import compute

    loc, _ = locate(())
    try:
        pack = options.pack if options is not None and options.pack is not None else load_pack()
        overrides = _overrides(rel, options)
        settings = figure_settings(pack, overrides, options.config if options is not None else None)
    except Exception as exc:
        reraise_when_debugging()
        text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
        return [_internal(f"the rule pack could not be evaluated on this file: {text}", loc)], None
    try:
        figures = compute(spec, settings)
    except Exception as exc:
        reraise_when_debugging()
        text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
        return [_internal(f"the figures of this file could not be computed: {text}", loc)], None
    try:
        judged = evaluate(spec, figures, locate, pack, overrides, remedy=_no_remedy, debug=ACTIVE.get())
        findings = _estimate_dependence(judged, spec, figures, locate, pack, overrides, settings)
        if data is not None:
            findings = _verified_fixes(
                findings, data, spec, figures, locate, pack, overrides, options, settings, judged
            )
        from .engine.evaluate import group_consequences

        return group_consequences(findings, pack), figures
    except Exception as exc:
        reraise_when_debugging()
        text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
        return [_internal(f"the rule pack could not be evaluated on this file: {text}", loc)], figures


def _internal(text: str, loc: Location) -> Finding:
    return Finding("internal-error", "error", f"{text} (run with --debug for the traceback)", loc)


def _no_remedy(*_args, **_kwargs):
    return None  # candidates come from the verification step, aimed at each finding's band


# The rule whose lowest band is the ripple limit the supply window and the ripple
# fixes use (the policy moves it for its files).
RIPPLE_RULE = "ripple-over-rated-current"


def figure_settings(pack, overrides, config=None):
    """The figures' settings that come from the policy in force: the ripple limit of
    the supply window is the lowest band of the per-point ripple rule; the policy's
    ``modelling`` section sets the inductance estimate, whether estimates soften
    verdicts, the supply reserve and the PWM-frequency bound of the fixes."""
    from dataclasses import replace as _replace

    from .engine.evaluate import effective_bands
    from .figures import FigureSettings
    from .model.units import parse_quantity

    settings = FigureSettings()
    prule = pack.get(RIPPLE_RULE)
    if prule is not None:
        bands = effective_bands(prule, overrides.get(prule.id))
        settings = _replace(settings, ripple_limit_ratio=float(bands[-1].threshold))
    modelling = getattr(getattr(config, "modelling", None), "value", None)
    if modelling is not None:
        curves = dict(settings.inductance_curves)
        for winding, curve in (modelling.inductance_estimate or {}).items():
            curves[winding] = (curve.exponent, curve.floor)
        settings = _replace(settings, inductance_curves=tuple(curves.items()))
        if modelling.estimate_softens_verdicts is not None:
            settings = _replace(settings, estimate_softens_verdicts=modelling.estimate_softens_verdicts)
        if modelling.supply_reserve is not None:
            settings = _replace(settings, reserve_fraction=modelling.supply_reserve)
        if modelling.fix_pwm_frequency_max is not None:
            settings = _replace(
                settings, pwm_frequency_max=parse_quantity(modelling.fix_pwm_frequency_max, "frequency")
            )
        if modelling.fix_costs:
            settings = _replace(settings, fix_costs=tuple(sorted(modelling.fix_costs.items())))
    return settings


# Findings a verdict on the inductance estimate never softens: the estimate's own
# note and the findings that do not judge a figure.
_ESTIMATE_NEUTRAL = frozenset({"inductance-estimated", "rule-not-applicable", "internal-error"})


def _estimate_dependence(findings, spec, figures, locate, pack, overrides, settings):
    """Findings whose verdict rests on the estimate of the inductance at the ripple
    frequency (the same rule passes, or fires at a lower band, with the catalogue
    value) say so with both figures, and drop one band: an estimate alone does not
    make an error (docs/physics.md §5.3)."""
    from dataclasses import replace as _replace

    from .engine.evaluate import evaluate
    from .engine.pack import format_value
    from .figures import compute
    from .figures.registry import FIGURE_DEFS, Fig
    from .findings import SEVERITY_ORDER

    if not figures.axis.get(Fig.inductance_estimated):
        return findings
    catalogue_settings = _replace(
        settings, inductance_curves=tuple((name, (0.0, 1.0)) for name, _ in settings.inductance_curves)
    )
    try:
        cat_figures = compute(spec, catalogue_settings)
    except Exception:  # the estimate's figures stand; nothing to compare with
        from .debugging import went_on_without

        went_on_without("the figures with the catalogue inductance")
        return findings
    at_catalogue: dict[tuple, int] = {}
    for f in evaluate(spec, cat_figures, locate, pack, overrides, remedy=_no_remedy, lean=True):
        key = (f.rule, f.operating_point)
        at_catalogue[key] = max(at_catalogue.get(key, -1), SEVERITY_ORDER[f.severity])
    lower = {"error": "warning", "warning": "info"}
    estimate = format_value(float(figures.axis[Fig.loop_inductance]), "inductance")
    catalogue = format_value(float(figures.axis[Fig.loop_inductance_catalogue]), "inductance")
    out = []
    for f in findings:
        if f.rule in _ESTIMATE_NEUTRAL or f.severity == "info":
            out.append(f)
            continue
        then = at_catalogue.get((f.rule, f.operating_point), -1)
        if then >= SEVERITY_ORDER[f.severity]:
            out.append(f)
            continue
        prule = pack.get(f.rule)
        name = prule.rule.figure if prule is not None else None
        value = cat_figures.value(name, f.operating_point) if name else None
        shown = (
            f"it reads {format_value(float(value), FIGURE_DEFS[name].dimension)} and "
            if name in FIGURE_DEFS and isinstance(value, (int, float)) and not isinstance(value, bool)
            else ""
        )
        verdict = "passes" if then < 0 else f"gives a {next(k for k, v in SEVERITY_ORDER.items() if v == then)}"
        note = (
            f"; this rests on the estimated inductance ({estimate} in the loop; with the catalogue value "
            f"{catalogue} {shown}the rule {verdict}): measure the inductance at the ripple frequency"
        )
        if not settings.estimate_softens_verdicts:  # the policy keeps the band; the note stays
            out.append(_replace(f, message=f.message + note))
            continue
        softer = lower[f.severity]
        aim = f.aim
        if aim is not None and prule is not None:
            # its fixes aim at the band it is shown at
            from .engine.evaluate import band_of

            band = band_of(prule, overrides.get(prule.id), softer)
            aim = (float(band.threshold), aim[1], aim[2])
        out.append(_replace(f, message=f.message + note, severity=softer, aim=aim))
    return out


def _verified_fixes(findings, data, spec, figures, locate, pack, overrides, options, settings, judged):
    from .debugging import ACTIVE
    from .engine.evaluate import band_of, evaluate, resolved_overrides, top_severity
    from .engine.fixes import FixContext, verify
    from .figures import compute, remedy
    from .figures.levers import cost_weights
    from .findings import SEVERITY_ORDER
    from .model import build

    level = "error"
    if options is not None and options.config is not None:
        level = str(options.config.fail_level.value)
    # A variant is judged by the rules that fired on the spec (is the finding gone, what
    # else clears) and those that can fire at the fail level (does it create a new
    # one); a rule that can only warn below the fail level and did not fire changes
    # nothing a fix is judged or described by.
    resolved = resolved_overrides(pack, overrides)
    gate = SEVERITY_ORDER[level]
    judging = {f.rule for f in judged} | {
        p.id for p in pack.rules if SEVERITY_ORDER[top_severity(p, resolved.get(p.id))] >= gate
    }

    def run_variant(changed: dict):
        variant, built = build(changed, locate)
        if variant is None:
            return None
        try:
            figs = compute(variant, settings)
        except Exception:  # a change the figures cannot take is no fix
            from .debugging import went_on_without

            went_on_without("a fix variant's figures")
            return None
        found = evaluate(
            variant, figs, locate, pack, overrides, remedy=_no_remedy, lean=True, rules=judging, debug=ACTIVE.get()
        )
        return built + found, figs, variant

    def candidate(name, spec_, figures_, *, point, limit):
        return remedy(name, spec_, figures_, point=point, limit=limit, settings=settings)

    def remedy_names(rule_id: str) -> tuple[str, ...]:
        prule = pack.get(rule_id)
        return tuple(prule.rule.remedies) if prule is not None else ()

    doc = getattr(locate, "__self__", None)  # the assembled Document behind ``locate``

    def region(path: tuple):
        values = getattr(doc, "values", {})
        loc = values.get(tuple(path))
        if loc is None or loc.file != getattr(doc, "file", None) or loc.end_line is None:
            return None  # not written in the axis file itself (a library value, or absent)
        return (loc.file, loc.line, loc.column, loc.end_line, loc.end_column)

    def threshold(rule_id: str, severity: str) -> float | None:
        prule = pack.get(rule_id)
        if prule is None:
            return None
        band = band_of(prule, resolved.get(prule.id), severity)
        if band.comparator == "is":
            return None
        return float(band.threshold)

    def worse_when_higher(rule_id: str) -> bool | None:
        prule = pack.get(rule_id)
        if prule is None:
            return None
        comparator = prule.bands[0].comparator
        return {"above": True, "at_least": True, "below": False, "at_most": False}.get(comparator)

    def rule_figure(rule_id: str) -> str | None:
        prule = pack.get(rule_id)
        return prule.rule.figure if prule is not None else None

    ctx = FixContext(
        data,
        spec,
        figures,
        level,
        run_variant,
        candidate,
        region,
        settings.pwm_frequency_max,
        rule_figure=rule_figure,
        cost_weights=cost_weights(settings),
        threshold=threshold,
        worse_when_higher=worse_when_higher,
    )
    # variants are judged as evaluated (no softening for the inductance estimate), so the
    # failing findings they are compared with are those of the same judgement
    return verify(findings, ctx, remedy_names, before=judged)


_OVERRIDES_MEMO: dict[int, tuple[object, dict]] = {}


def _overrides(rel: str, options: RunOptions | None) -> dict:
    """The policy's per-rule overrides for one file (empty without a policy).

    They depend on the file only through the per-path entries it matches, so
    they are computed once per distinct set of matching entries."""
    if options is None or options.config is None:
        return {}
    config = options.config
    held = _OVERRIDES_MEMO.get(id(config))
    if held is None or held[0] is not config:
        if len(_OVERRIDES_MEMO) > 8:
            _OVERRIDES_MEMO.clear()
        held = (config, {})
        _OVERRIDES_MEMO[id(config)] = held
    if getattr(config, "paths", None) is None:
        return config.for_file(rel)
    signature = config.matching_entries(rel)
    memo = held[1]
    if signature not in memo:
        memo[signature] = config.for_file(rel)
    return memo[signature]


def _apply_waivers(findings: list[Finding], spec, locate, rel: str, options: RunOptions) -> list[Finding]:
    from .engine.config import names_of
    from .engine.waivers import apply_waivers

    names = names_of(options.config.catalogue) if options.config is not None else None
    today = options.today or _dt.date.today()
    return apply_waivers(findings, spec, locate, _overrides(rel, options), today, options.no_waivers, names=names)


def check_paths(
    paths: list[str],
    root: Path | None = None,
    fail_level: str = "error",
    debug: bool = False,
    options: RunOptions | None = None,
    jobs: int | None = 1,
    result_cache=None,
    progress=None,
    policies: Policies | None = None,
) -> Report:
    """Check files and directories; never raises for bad input (InputPathError aside).

    ``options`` carries the policy (config, rule pack), the waiver date and mode
    and the baseline; without it no policy, waivers or baseline apply.
    ``policies`` (instead of ``options``) gives each file its own policy, as the
    command line does with the nearest ``.specguard.yaml``.
    ``jobs``: worker processes for the files not found in ``result_cache``
    (a :class:`specguard.cache.ResultCache`); None picks the number of CPUs when
    more than :data:`PARALLEL_MIN_FILES` files need analysis. ``progress(done,
    total)`` is called as files complete. The report is the same whatever the
    jobs, the cache or the argument order.
    """
    root = root or find_root(Path.cwd())
    policies = policies or Policies(options)
    return run_targets(
        _discover(paths, root, policies),
        fail_level=fail_level,
        debug=debug,
        options=options,
        jobs=jobs,
        result_cache=result_cache,
        progress=progress,
    )


def plan(paths: list[str], root: Path, policies: Policies) -> list[Target]:
    """The inputs of a run, each with its root and policy (see :func:`run_targets`)."""
    return _discover(paths, root, policies)


def run_targets(
    found: list[Target],
    fail_level: str = "error",
    debug: bool = False,
    options: RunOptions | None = None,
    jobs: int | None = 1,
    result_cache=None,
    progress=None,
) -> Report:
    """Check planned inputs (:func:`plan`). ``options`` gives the run's rule pack and
    baseline for the report; each file is judged by its own target's options."""
    from .source import parser_path

    results: list[FileResult | None] = [None] * len(found)
    contexts: list[tuple[Path, RunOptions | None]] = []
    context_index: dict[tuple[str, int], int] = {}
    work: list[tuple[int, Path, str, bytes, int, str | None, int]] = []
    for index, t in enumerate(found):
        if t.error is not None:
            results[index] = _shown(FileResult(t.rel, (), input_error=t.error, not_a_file=t.not_a_file), t)
            continue
        read = read_spec(t.path, t.root, t.rel, t.inside)
        if isinstance(read, FileResult):
            results[index] = _shown(read, t)
            continue
        raw, size = read
        key = None
        cache = result_cache if not t.shown_as else None  # the cache keeps paths under the run's root
        if cache is not None:
            import hashlib

            sha = hashlib.sha256(raw).hexdigest()
            key = cache.key(t.rel, sha, policy_text(t.rel, t.options))
            payload = cache.lookup(key, t.rel, sha)
            if payload is not None:
                try:
                    results[index] = _shown(from_payload(t.rel, payload["closure"], payload, t.options), t)
                    continue
                except (KeyboardInterrupt, SystemExit):
                    raise
                except Exception:
                    cache.damaged += 1
        ckey = (str(t.root), id(t.options))
        if ckey not in context_index:
            context_index[ckey] = len(contexts)
            contexts.append((t.root, t.options))
        work.append((index, t.path, t.rel, raw, size, key if cache is not None else None, context_index[ckey]))
    total = len(found)
    done = total - len(work)
    if progress is not None:
        progress(done, total)
    from .parallel import run_work

    for index, result in run_work(work, contexts, debug, jobs, result_cache):
        results[index] = _shown(result, found[index])
        done += 1
        if progress is not None:
            progress(done, total)
    checked = tuple(r for r in results if r is not None)
    assert len(checked) == len(results)  # every file has its result by now
    if options is None:
        options = next((t.options for t in found if t.options is not None), None)
    rules = rule_docs(options.pack) if options is not None and options.pack is not None else ()
    report = Report(checked, fail_level=fail_level, parser=parser_path(), rules=rules)
    if options is not None and options.baseline is not None:
        root = found[0].root if found else Path.cwd()
        report = apply_baseline(report, options.baseline, root, options.strict_baseline)
    return report


def _shown(result: FileResult, target: Target) -> FileResult:
    """The result with the file's own fail level, and its paths prefixed when the file
    lies outside the run's root (shown with a path the user can open)."""
    options = target.options
    level = options.fail_level if options is not None else None
    if level is not None and result.fail_level != level:
        result = replace(result, fail_level=level)
    if not target.shown_as:
        return result
    prefix = target.shown_as.rstrip("/") + "/"

    def move(loc: Location) -> Location:
        return replace(loc, file=prefix + loc.file)

    findings = tuple(
        replace(f, location=move(f.location), related=tuple(move(r) for r in f.related)) for f in result.findings
    )
    return replace(result, file=prefix + result.file, findings=findings)


# Below this many files to analyse, a run stays in one process (start-up of the
# workers costs more than it saves).
PARALLEL_MIN_FILES = 8


def policy_text(rel: str, options: RunOptions | None) -> str:
    """The effective policy for one file as text, for the cache key: the rule overrides
    and the modelling choices (both change the figures or the findings)."""
    overrides = _overrides(rel, options)
    held = _POLICY_TEXT.get(id(overrides))
    if held is None or held[0] is not overrides:
        held = (overrides, repr(sorted((k, repr(v)) for k, v in overrides.items())))
        _POLICY_TEXT[id(overrides)] = held
    config = options.config if options is not None else None
    modelling = getattr(getattr(config, "modelling", None), "value", None)
    return held[1] if modelling is None else held[1] + "|modelling=" + repr(modelling)


_POLICY_TEXT: dict[int, tuple[dict, str]] = {}


def analyse_one(
    path: Path,
    rel: str,
    raw: bytes,
    size: int,
    root: Path,
    cache,
    options: RunOptions | None,
    debug: bool,
    result_cache=None,
    key: str | None = None,
) -> FileResult:
    """Analyse one read spec, turning a bug into an internal-error finding, and
    store a cacheable result."""
    from .debugging import enabled

    try:
        with enabled(debug):
            result, payload = analyse(raw, size, path, rel, root, cache, options)
    except (KeyboardInterrupt, SystemExit):
        raise
    except Exception as exc:  # a bug: report it as a finding, exit 3
        if debug:
            raise
        return internal_error(rel, exc)
    if result_cache is not None and key is not None and payload is not None:
        result_cache.store(key, rel, result.closure, payload, result.links)
    return result


def apply_baseline(report: Report, baseline, root: Path, strict: bool = False) -> Report:
    """The report with the findings the baseline holds marked as baselined."""
    from .engine.baseline import apply

    marked, outcome = apply({r.file: r.findings for r in report.files}, baseline, root, strict=strict)
    files = tuple(replace(r, findings=marked[r.file]) for r in report.files)
    return replace(report, files=files, baseline=outcome)


def rule_docs(pack) -> tuple[RuleDoc, ...]:
    """Descriptions of the pack's rules for the outputs."""
    out = []
    for prule in pack.rules:
        rule = prule.rule
        words = lambda text: " ".join(str(text).split())  # noqa: E731
        out.append(
            RuleDoc(
                id=rule.id,
                title=words(rule.title),
                description=words(rule.checks),
                help=f"{words(rule.why)}\n\nRelation: {words(rule.formula)}",
                default_severity=rule.default_severity,
                sources=tuple(rule.sources),
                aliases=tuple(rule.aliases),
            )
        )
    return tuple(sorted(out, key=lambda d: d.id))


def internal_error(rel: str, exc: BaseException) -> FileResult:
    message = f"specguard failed on this file: {type(exc).__name__}: {exc} (run with --debug for the traceback)"
    finding = Finding("internal-error", "error", message, Location(rel, 1, 1))
    return FileResult(rel, (finding,), input_error=None)
