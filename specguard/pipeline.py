"""The per-file pipeline: bytes -> source -> model (-> figures -> rules).

This is the public Python API too: :func:`check_paths` takes paths and gives a
:class:`Report`; :func:`check_text` checks one spec given as text.
Nothing here prints or exits; ``cli`` does that.
"""

from __future__ import annotations

import datetime as _dt
import os
from dataclasses import dataclass, field, replace
from pathlib import Path

from .findings import SEVERITY_ORDER, Finding, Location

# File pattern for specs found by searching a directory (documented in README).
SPEC_SUFFIXES = (".axis.yaml", ".axis.yml")


class InputPathError(Exception):
    """An input path given on the command line cannot be used (exit 2)."""


@dataclass(frozen=True)
class FileResult:
    file: str
    findings: tuple[Finding, ...]
    spec: object | None = None  # specguard.model.Spec when it was built
    closure: tuple[tuple[str, str], ...] = ()
    input_error: str | None = None  # set when the file could not be read (exit 2)
    figures: object | None = None  # specguard.figures.FigureSet when computed


@dataclass(frozen=True)
class RuleDoc:
    """What the outputs say about a rule of the pack (SARIF rule descriptors)."""

    id: str
    title: str
    description: str  # what it checks
    help: str  # why it matters and the relation behind it
    default_severity: str
    sources: tuple[str, ...] = ()
    aliases: tuple[str, ...] = ()


@dataclass(frozen=True)
class RunOptions:
    """The policy of one run, applied after the rules (engine: config, waivers, baseline)."""

    config: object | None = None  # specguard.engine.config.EffectiveConfig
    pack: object | None = None  # specguard.engine.pack.Pack
    today: _dt.date | None = None  # reference date for waiver expiry (None: today)
    no_waivers: bool = False  # --no-waivers: ignore every waiver
    baseline: object | None = None  # specguard.engine.baseline.Baseline
    strict_baseline: bool = False
    # files specs may not reference: the baseline and the reports (RELIABILITY.md H11)
    denied: tuple = ()


@dataclass(frozen=True)
class Report:
    files: tuple[FileResult, ...]
    fail_level: str = "error"
    parser: str = ""
    extra: dict = field(default_factory=dict)
    baseline: object | None = None  # specguard.engine.baseline.BaselineOutcome
    rules: tuple[RuleDoc, ...] = ()

    @property
    def findings(self) -> tuple[Finding, ...]:
        out = [f for r in self.files for f in r.findings]
        return tuple(sorted(out, key=Finding.sort_key))

    def counts(self) -> dict[str, int]:
        counts = {"error": 0, "warning": 0, "info": 0}
        for f in self.findings:
            if not f.suppressed:
                counts[f.severity] += 1
        return counts

    @property
    def input_errors(self) -> tuple[FileResult, ...]:
        return tuple(r for r in self.files if r.input_error is not None)

    def exit_status(self) -> int:
        if any(f.rule == "internal-error" for f in self.findings):
            return 3
        if self.input_errors:
            return 2
        threshold = SEVERITY_ORDER[self.fail_level]
        for f in self.findings:
            if not f.suppressed and SEVERITY_ORDER[f.severity] >= threshold:
                return 1
        if self.baseline is not None and self.baseline.strict and self.baseline.stale_count:
            return 1
        return 0


def find_root(start: Path) -> Path:
    """The repository root: the nearest ancestor holding ``.specguard.yaml`` or ``.git``."""
    here = start.resolve()
    for candidate in (here, *here.parents):
        if (candidate / ".specguard.yaml").exists() or (candidate / ".git").exists():
            return candidate
    return here


def discover(paths: list[str], root: Path, wanted=None) -> list[tuple[Path, str | None]]:
    """Expand directories into spec files; return (path, error) pairs, sorted, unique.

    ``wanted(rel_path)`` (the policy's include/exclude) picks the files of a
    directory search; files named explicitly are always checked.
    """
    out: dict[str, tuple[Path, str | None]] = {}
    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            before = len(out)
            for dirpath, dirnames, filenames in os.walk(p):
                dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
                for name in sorted(filenames):
                    found = Path(dirpath) / name
                    if wanted is not None:
                        if not wanted(relpath(found, root)):
                            continue
                    elif not name.endswith(SPEC_SUFFIXES):
                        continue
                    out.setdefault(str(_real(found)), (found, None))
            if len(out) == before:  # named explicitly but holding no spec: never a silent pass
                out.setdefault(str(p.absolute()),
                               (p, "no spec files (*.axis.yaml, *.axis.yml) in this directory"))
        elif p.exists() or p.is_symlink():
            out.setdefault(str(_real(p)), (p, None))
        else:
            out.setdefault(str(p.absolute()), (p, "no such file or directory"))
    return sorted(out.values(), key=lambda item: relpath(item[0], root))


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
    from .model import build
    from .source import InputError, Limits, read_limited
    from .source.library import LibraryCache, assemble

    rel = relpath(path, root)
    try:
        _real(path).relative_to(_real(root))
    except ValueError:
        return FileResult(rel, (), input_error=f"outside the repository root {root}")
    limits = Limits()
    try:
        raw, size = read_limited(path, limits)
    except InputError as exc:
        return FileResult(rel, (), input_error=str(exc))
    denied = options.denied if options is not None else ()
    doc = assemble(raw, size, path, root, limits, cache or LibraryCache(limits), denied)
    findings = list(doc.findings)
    spec = None
    if doc.data is not None:
        spec, model_findings = build(doc.data, doc.locate)
        findings.extend(model_findings)
    figures = None
    if spec is not None:
        rule_findings, figures = _rule_findings(spec, doc.locate, rel, options)
        findings.extend(rule_findings)
    if spec is not None:
        findings = _apply_waivers(findings, spec, doc.locate, rel, options or RunOptions())
    return FileResult(
        rel,
        tuple(sorted(findings, key=Finding.sort_key)),
        spec=spec,
        closure=tuple(doc.closure),
        figures=figures,
    )


def _rule_findings(spec, locate, rel: str, options: RunOptions | None) -> tuple[list[Finding], object]:
    """Figures, then the rule pack: (findings, FigureSet or None). A failure of either
    is an internal-error finding (exit 3)."""
    from .engine.evaluate import evaluate, load_pack
    from .figures import compute

    loc, _ = locate(())
    try:
        figures = compute(spec)
    except Exception as exc:
        text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
        return [Finding("internal-error", "error",
                        f"the figures of this file could not be computed: {text} "
                        "(run with --debug for the traceback)", loc)], None
    try:
        pack = options.pack if options is not None and options.pack is not None else load_pack()
        return evaluate(spec, figures, locate, pack, _overrides(rel, options)), figures
    except Exception as exc:
        text = " ".join(f"{type(exc).__name__}: {exc}".split())[:300]
        return [Finding("internal-error", "error",
                        f"the rule pack could not be evaluated on this file: {text} "
                        "(run with --debug for the traceback)", loc)], figures


def _overrides(rel: str, options: RunOptions | None) -> dict:
    """The policy's per-rule overrides for one file (empty without a policy)."""
    if options is None or options.config is None:
        return {}
    return options.config.for_file(rel)


def _apply_waivers(findings: list[Finding], spec, locate, rel: str, options: RunOptions) -> list[Finding]:
    from .engine.config import names_of
    from .engine.waivers import apply_waivers

    names = names_of(options.config.catalogue) if options.config is not None else None
    today = options.today or _dt.date.today()
    return apply_waivers(findings, spec, locate, _overrides(rel, options), today,
                         options.no_waivers, names=names)


def check_paths(
    paths: list[str],
    root: Path | None = None,
    fail_level: str = "error",
    debug: bool = False,
    options: RunOptions | None = None,
) -> Report:
    """Check files and directories; never raises for bad input (InputPathError aside).

    ``options`` carries the policy (config, rule pack), the waiver date and mode
    and the baseline; without it no policy, waivers or baseline apply.
    """
    from .source import Limits, parser_path
    from .source.library import LibraryCache

    root = root or find_root(Path.cwd())
    cache = LibraryCache(Limits())
    results: list[FileResult] = []
    wanted = options.config.wanted if options is not None and options.config is not None else None
    for path, error in discover(paths, root, wanted):
        if error is not None:
            results.append(FileResult(relpath(path, root), (), input_error=error))
            continue
        try:
            results.append(check_file(path, root, cache, options))
        except (KeyboardInterrupt, SystemExit):
            raise
        except Exception as exc:  # a bug: report it as a finding, exit 3
            if debug:
                raise
            results.append(internal_error(relpath(path, root), exc))
    rules = rule_docs(options.pack) if options is not None and options.pack is not None else ()
    report = Report(tuple(results), fail_level=fail_level, parser=parser_path(), rules=rules)
    if options is not None and options.baseline is not None:
        report = apply_baseline(report, options.baseline, root, options.strict_baseline)
    return report


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
        out.append(RuleDoc(
            id=rule.id,
            title=words(rule.title),
            description=words(rule.checks),
            help=f"{words(rule.why)}\n\nRelation: {words(rule.formula)}",
            default_severity=rule.default_severity,
            sources=tuple(rule.sources),
            aliases=tuple(rule.aliases),
        ))
    return tuple(sorted(out, key=lambda d: d.id))


def internal_error(rel: str, exc: BaseException) -> FileResult:
    message = f"specguard failed on this file: {type(exc).__name__}: {exc} (run with --debug for the traceback)"
    finding = Finding("internal-error", "error", message, Location(rel, 1, 1))
    return FileResult(rel, (finding,), input_error=None)
