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
from typing import TYPE_CHECKING

from .findings import SEVERITY_ORDER, Finding, Location

if TYPE_CHECKING:  # for the annotations only: these modules load on use
    from .engine.baseline import Baseline, BaselineOutcome
    from .engine.config import EffectiveConfig
    from .engine.pack import Pack

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
    links: tuple[tuple[str, str], ...] = ()  # references reached through a symbolic link
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

    config: EffectiveConfig | None = None
    pack: Pack | None = None
    today: _dt.date | None = None  # reference date for waiver expiry (None: today)
    no_waivers: bool = False  # --no-waivers: ignore every waiver
    baseline: Baseline | None = None
    strict_baseline: bool = False
    # files specs may not reference: the baseline and the reports (RELIABILITY.md H11)
    denied: tuple = ()


@dataclass(frozen=True)
class Report:
    files: tuple[FileResult, ...]
    fail_level: str = "error"
    parser: str = ""
    extra: dict = field(default_factory=dict)
    baseline: BaselineOutcome | None = None
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
    return [(path, error) for path, error, _rel, _inside in _discover(paths, root, wanted)]


def _discover(paths: list[str], root: Path, wanted=None) -> list[tuple[Path, str | None, str, bool]]:
    """:func:`discover` with each file's repo-relative path and whether it lies inside
    the root (every path resolved once)."""
    real_root = _real(root)

    def rel_of(path: Path, real: Path) -> tuple[str, bool]:
        try:
            return real.relative_to(real_root).as_posix(), True
        except ValueError:
            return path.as_posix(), False

    out: dict[str, tuple[Path, str | None, str, bool]] = {}
    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            matched = 0
            for dirpath, dirnames, filenames in os.walk(p):
                dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
                for name in sorted(filenames):
                    if wanted is None and not name.endswith(SPEC_SUFFIXES):
                        continue
                    found = Path(dirpath) / name
                    real = _real(found)
                    rel, inside = rel_of(found, real)
                    if wanted is not None and not wanted(rel):
                        continue
                    matched += 1
                    out.setdefault(str(real), (found, None, rel, inside))
            if matched == 0:  # named explicitly but holding no spec: never a silent pass
                out.setdefault(str(p.absolute()),
                               (p, "no spec files matching the search patterns in this directory",
                                relpath(p, root), False))
        elif p.exists() or p.is_symlink():
            real = _real(p)
            out.setdefault(str(real), (p, None, *rel_of(p, real)))
        else:
            out.setdefault(str(p.absolute()),
                           (p, "no such file or directory", relpath(p, root), False))
    return sorted(out.values(), key=lambda item: item[2])


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
    RELIABILITY.md FI24), or a FileResult with the input error."""
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


def analyse(raw: bytes, size: int, path: Path, rel: str, root: Path, cache=None,
            options: RunOptions | None = None) -> tuple[FileResult, dict | None]:
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
        rule_findings, figures = _rule_findings(spec, doc.locate, rel, options)
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
            waivers.append({k: getattr(w, k) for k in
                            ("rule", "at", "path", "reason", "approved_by", "expires")})
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
    return FileResult(rel, tuple(sorted(findings, key=Finding.sort_key)),
                      closure=tuple((a, b) for a, b in closure), figures=figures)


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
    paths = getattr(config, "paths", None)
    if paths is None:
        return config.for_file(rel)
    signature = tuple(i for i, entry in enumerate(paths) if entry.regex.match(rel))
    memo = held[1]
    if signature not in memo:
        memo[signature] = config.for_file(rel)
    return memo[signature]


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
    jobs: int | None = 1,
    result_cache=None,
    progress=None,
) -> Report:
    """Check files and directories; never raises for bad input (InputPathError aside).

    ``options`` carries the policy (config, rule pack), the waiver date and mode
    and the baseline; without it no policy, waivers or baseline apply.
    ``jobs``: worker processes for the files not found in ``result_cache``
    (a :class:`specguard.cache.ResultCache`); None picks the number of CPUs when
    more than :data:`PARALLEL_MIN_FILES` files need analysis. ``progress(done,
    total)`` is called as files complete. The report is the same whatever the
    jobs, the cache or the argument order.
    """
    from .source import parser_path

    root = root or find_root(Path.cwd())
    wanted = options.config.wanted if options is not None and options.config is not None else None
    found = _discover(paths, root, wanted)
    results: list[FileResult | None] = [None] * len(found)
    work: list[tuple[int, Path, str, bytes, int, str | None]] = []
    for index, (path, error, rel, inside) in enumerate(found):
        if error is not None:
            results[index] = FileResult(rel, (), input_error=error)
            continue
        read = read_spec(path, root, rel, inside)
        if isinstance(read, FileResult):
            results[index] = read
            continue
        raw, size = read
        key = None
        if result_cache is not None:
            import hashlib

            sha = hashlib.sha256(raw).hexdigest()
            key = result_cache.key(rel, sha, policy_text(rel, options))
            payload = result_cache.lookup(key, rel, sha)
            if payload is not None:
                try:
                    results[index] = from_payload(rel, payload["closure"], payload, options)
                    continue
                except (KeyboardInterrupt, SystemExit):
                    raise
                except Exception:
                    result_cache.damaged += 1
        work.append((index, path, rel, raw, size, key))
    total = len(found)
    done = total - len(work)
    if progress is not None:
        progress(done, total)
    from .parallel import run_work

    for index, result in run_work(work, root, options, debug, jobs, result_cache):
        results[index] = result
        done += 1
        if progress is not None:
            progress(done, total)
    rules = rule_docs(options.pack) if options is not None and options.pack is not None else ()
    checked = tuple(r for r in results if r is not None)
    assert len(checked) == len(results)  # every file has its result by now
    report = Report(checked, fail_level=fail_level, parser=parser_path(), rules=rules)
    if options is not None and options.baseline is not None:
        report = apply_baseline(report, options.baseline, root, options.strict_baseline)
    return report


# Below this many files to analyse, a run stays in one process (start-up of the
# workers costs more than it saves).
PARALLEL_MIN_FILES = 8


def policy_text(rel: str, options: RunOptions | None) -> str:
    """The effective policy for one file as text, for the cache key."""
    overrides = _overrides(rel, options)
    held = _POLICY_TEXT.get(id(overrides))
    if held is None or held[0] is not overrides:
        held = (overrides, repr(sorted((k, repr(v)) for k, v in overrides.items())))
        _POLICY_TEXT[id(overrides)] = held
    return held[1]


_POLICY_TEXT: dict[int, tuple[dict, str]] = {}


def analyse_one(path: Path, rel: str, raw: bytes, size: int, root: Path, cache,
                options: RunOptions | None, debug: bool, result_cache=None,
                key: str | None = None) -> FileResult:
    """Analyse one read spec, turning a bug into an internal-error finding, and
    store a cacheable result."""
    try:
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
