"""The per-file pipeline: bytes -> source -> model (-> figures -> rules).

This is the public Python API too: :func:`check_paths` takes paths and gives a
:class:`Report`; :func:`check_text` checks one spec given as text.
Nothing here prints or exits; ``cli`` does that.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
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


@dataclass(frozen=True)
class Report:
    files: tuple[FileResult, ...]
    fail_level: str = "error"
    parser: str = ""
    extra: dict = field(default_factory=dict)

    @property
    def findings(self) -> tuple[Finding, ...]:
        out = [f for r in self.files for f in r.findings]
        return tuple(sorted(out, key=Finding.sort_key))

    def counts(self) -> dict[str, int]:
        counts = {"error": 0, "warning": 0, "info": 0}
        for f in self.findings:
            if f.waived is None:
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
            if f.waived is None and SEVERITY_ORDER[f.severity] >= threshold:
                return 1
        return 0


def find_root(start: Path) -> Path:
    """The repository root: the nearest ancestor holding ``.specguard.yaml`` or ``.git``."""
    here = start.resolve()
    for candidate in (here, *here.parents):
        if (candidate / ".specguard.yaml").exists() or (candidate / ".git").exists():
            return candidate
    return here


def discover(paths: list[str], root: Path) -> list[tuple[Path, str | None]]:
    """Expand directories into spec files; return (path, error) pairs, sorted, unique."""
    out: dict[str, tuple[Path, str | None]] = {}
    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            for dirpath, dirnames, filenames in os.walk(p):
                dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
                for name in sorted(filenames):
                    if name.endswith(SPEC_SUFFIXES):
                        found = Path(dirpath) / name
                        out.setdefault(str(found.resolve()), (found, None))
        elif p.exists() or p.is_symlink():
            out.setdefault(str(p.resolve()), (p, None))
        else:
            out.setdefault(str(p.absolute()), (p, "no such file or directory"))
    return sorted(out.values(), key=lambda item: relpath(item[0], root))


def relpath(path: Path, root: Path) -> str:
    try:
        return path.resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return path.as_posix()


def check_file(path: Path, root: Path, cache=None) -> FileResult:
    from .model import build
    from .source import InputError, Limits, read_limited
    from .source.library import LibraryCache, assemble

    rel = relpath(path, root)
    try:
        path.resolve().relative_to(root.resolve())
    except ValueError:
        return FileResult(rel, (), input_error=f"outside the repository root {root}")
    limits = Limits()
    try:
        raw, size = read_limited(path, limits)
    except InputError as exc:
        return FileResult(rel, (), input_error=str(exc))
    doc = assemble(raw, size, path, root, limits, cache or LibraryCache(limits))
    findings = list(doc.findings)
    spec = None
    if doc.data is not None:
        spec, model_findings = build(doc.data, doc.locate)
        findings.extend(model_findings)
    return FileResult(
        rel,
        tuple(sorted(findings, key=Finding.sort_key)),
        spec=spec,
        closure=tuple(doc.closure),
    )


def check_paths(
    paths: list[str], root: Path | None = None, fail_level: str = "error", debug: bool = False
) -> Report:
    """Check files and directories; never raises for bad input (InputPathError aside)."""
    from .source import Limits, parser_path
    from .source.library import LibraryCache

    root = root or find_root(Path.cwd())
    cache = LibraryCache(Limits())
    results: list[FileResult] = []
    for path, error in discover(paths, root):
        if error is not None:
            results.append(FileResult(relpath(path, root), (), input_error=error))
            continue
        try:
            results.append(check_file(path, root, cache))
        except (KeyboardInterrupt, SystemExit):
            raise
        except Exception as exc:  # a bug: report it as a finding, exit 3
            if debug:
                raise
            results.append(internal_error(relpath(path, root), exc))
    return Report(tuple(results), fail_level=fail_level, parser=parser_path())


def internal_error(rel: str, exc: BaseException) -> FileResult:
    message = f"specguard failed on this file: {type(exc).__name__}: {exc} (run with --debug for the traceback)"
    finding = Finding("internal-error", "error", message, Location(rel, 1, 1))
    return FileResult(rel, (finding,), input_error=None)
