"""Assemble one spec document: the spec file plus the library files it references.

A section of a spec (``motor``, ``stage``, ``chokes``, ``cable``, ``load``) may
read ``from: <relative path>`` and override single values beside it. The
library file holds ``format: 1`` and a section of the same name, which may in
turn take ``from:`` another library file. Overrides are merged key by key into
mappings; any other value (scalars, lists) is replaced whole.

Every location stays attached to the file it came from, so a finding about a
library value points at the library file's line, and names the referencing
spec through its related location.
"""

from __future__ import annotations

import hashlib
import os
import posixpath
from dataclasses import dataclass, field
from pathlib import Path

from ..findings import Finding, Location, kind_of
from ..findings import dotted as _dotted
from . import Limits, LoadResult, ReferenceProblem, load_bytes, open_reference

REFERENCE_KEY = "from"
LIBRARY_SECTIONS = ("motor", "stage", "chokes", "cable", "load")

# Limits of a reference closure (docs/reliability.md G4).
MAX_CLOSURE_FILES = 64
MAX_CLOSURE_DEPTH = 8
MAX_CLOSURE_BYTES = 4 * 1024 * 1024

Path_ = tuple  # a document path: tuple of str keys and int indices


@dataclass
class Document:
    """A spec with its references resolved: plain data and where every value came from."""

    file: str  # repo-relative posix path of the spec
    data: dict | None
    findings: list[Finding]
    # document path -> value location / key location (each in its own file)
    values: dict[Path_, Location] = field(default_factory=dict)
    keys: dict[Path_, Location] = field(default_factory=dict)
    # path prefix of a section taken from a library -> the `from:` value location
    via: dict[Path_, Location] = field(default_factory=dict)
    # every file read for this document: (repo-relative path, sha256 hex)
    closure: list[tuple[str, str]] = field(default_factory=list)
    # references that reach their file through a symbolic link: (the path as named,
    # repo-relative without resolving links; the closure path it resolved to)
    links: list[tuple[str, str]] = field(default_factory=list)
    parser: str = ""

    def locate(self, path: Path_, *, key: bool = False) -> tuple[Location, tuple[Location, ...]]:
        """Location of ``path`` (or the deepest located parent) and related locations.

        With ``key=True`` the key itself is preferred (unknown keys point there).
        """
        probe = tuple(path)
        while True:
            if key and probe in self.keys:
                found = self.keys[probe]
                break
            if probe in self.values:
                found = self.values[probe]
                break
            if not probe:
                found = Location(self.file, 1, 1)
                break
            probe = probe[:-1]
        related: list[Location] = []
        for depth in range(len(path), 0, -1):
            ref = self.via.get(tuple(path[:depth]))
            if ref is not None and ref.file != found.file:
                related.append(ref)
        return _with_path(found, tuple(path)), tuple(related)


def _with_path(loc: Location, path: Path_) -> Location:
    return Location(loc.file, loc.line, loc.column, loc.end_line, loc.end_column, path)


class LibraryCache:
    """Parses each file once per run (keyed by real path, shown path and content
    hash: files under different roots of one run are shown by different paths)."""

    def __init__(self, limits: Limits) -> None:
        self.limits = limits
        self._parsed: dict[tuple[str, str], tuple[str, LoadResult]] = {}

    def parse(self, real: str, raw: bytes, size: int, rel: str) -> tuple[str, LoadResult]:
        digest = hashlib.sha256(raw).hexdigest()
        hit = self._parsed.get((real, rel))
        if hit is not None and hit[0] == digest:
            return hit
        result = (digest, load_bytes(raw, rel, self.limits, size=size))
        self._parsed[(real, rel)] = result
        return result


def _rel(root: Path, path: Path) -> str:
    try:
        return path.resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return path.as_posix()


def _named_rel(root: Path, referencing, ref: str) -> str:
    """The repo-relative path a reference names, symbolic links left unresolved."""
    base = os.path.dirname(os.path.abspath(os.fspath(referencing)))
    named = os.path.normpath(os.path.join(base, posixpath.normpath(ref)))
    return Path(os.path.relpath(named, os.path.abspath(os.fspath(root)))).as_posix()


def _index(doc: Document, result: LoadResult, file: str, prefix: Path_, strip: int) -> None:
    """Copy a file's location index into the document, re-rooted at ``prefix``."""
    for path, nodeloc in result.locations.items():
        if len(path) < strip:
            continue
        target = prefix + tuple(path[strip:])
        span = nodeloc.value
        doc.values[target] = Location(file, span.line, span.column, span.end_line, span.end_column, target)
        if nodeloc.key is not None:
            k = nodeloc.key
            doc.keys[target] = Location(file, k.line, k.column, k.end_line, k.end_column, target)


def _merge(base: object, override: object) -> object:
    if isinstance(base, dict) and isinstance(override, dict):
        merged = dict(base)
        for key, value in override.items():
            merged[key] = _merge(base[key], value) if key in base else value
        return merged
    return override


_DEFAULT_LIMITS = Limits()  # frozen: one shared default is safe


def assemble(
    raw: bytes,
    size: int,
    file_path: Path,
    root: Path,
    limits: Limits = _DEFAULT_LIMITS,
    cache: LibraryCache | None = None,
    denied: tuple = (),
) -> Document:
    """Parse a spec file and resolve its library references. ``denied`` lists files
    or directories a reference may not reach (baseline, reports; docs/reliability.md H11)."""
    cache = cache or LibraryCache(limits)
    rel = _rel(root, file_path)
    real = os.path.realpath(file_path)
    digest, result = cache.parse(real, raw, size, rel)
    doc = Document(file=rel, data=None, findings=list(result.findings), parser=result.parser)
    doc.closure.append((rel, digest))
    if result.data is None:
        return doc
    _index(doc, result, rel, (), 0)
    problem = format_problem(result.data)
    if problem is not None:  # another format: its fields mean other things, stop here
        at, _ = doc.locate(("format",))
        doc.findings.append(Finding("schema-violation", "error", problem, at))
        return doc
    data = dict(result.data)
    state = _Closure(root=root, limits=limits, cache=cache, doc=doc, denied=tuple(denied))
    for section in LIBRARY_SECTIONS:
        value = data.get(section)
        if isinstance(value, dict) and REFERENCE_KEY in value:
            resolved = state.resolve(value, (section,), section, file_path, rel, [real], 1)
            if resolved is None:
                return doc
            data[section] = resolved
    doc.data = data
    return doc


def is_format_one(value: object) -> bool:
    """Whether ``value`` is the format version this specguard reads: the number 1
    (1.0 too, as JSON Schema's const reads it; never true, which a Python comparison
    would take for 1)."""
    return type(value) in (int, float) and value == 1


def format_problem(data: object) -> str | None:
    """Why a spec's ``format`` stops the check before anything else is read, or None.

    A spec of another format version is not checked further: its keys and values
    mean other things, so every later message would be a follow-on error. A missing
    ``format`` and a quoted "1" are left to the model, which names them among the
    spec's other problems."""
    if not isinstance(data, dict) or "format" not in data:
        return None
    value = data["format"]
    if is_format_one(value) or (isinstance(value, str) and value.strip() == "1"):
        return None
    if type(value) in (int, float):
        shown = int(value) if float(value).is_integer() else value
        return (
            f"format: {shown} is a spec format this version of specguard does not read (it reads format 1); "
            "the rest of the file was not checked"
        )
    if value is None or isinstance(value, (bool, str)):
        shown = "null" if value is None else ("true" if value is True else "false" if value is False else repr(value))
    else:
        shown = kind_of(value)
    return (
        f"format: {shown} is not a format version; write 'format: 1' (the format this version of "
        "specguard reads); the rest of the file was not checked"
    )


@dataclass
class _Closure:
    root: Path
    limits: Limits
    cache: LibraryCache
    doc: Document
    denied: tuple = ()
    files: int = 1
    total: int = 0

    def _fail(self, message: str, at: Location, related: tuple[Location, ...] = ()) -> None:
        self.doc.findings.append(Finding("reference-invalid", "error", message, at, related=related))

    def resolve(
        self,
        section_data: dict,
        prefix: Path_,
        section: str,
        referencing: Path,
        referencing_rel: str,
        chain: list[str],
        depth: int,
    ) -> dict | None:
        ref_path = prefix + (REFERENCE_KEY,)
        at, _ = self.doc.locate(ref_path)
        ref = section_data[REFERENCE_KEY]
        if not isinstance(ref, str):
            self._fail(f"{_dotted(ref_path)}: a reference must be a relative path string", at)
            return None
        if depth > MAX_CLOSURE_DEPTH:
            self._fail(f"references nest deeper than {MAX_CLOSURE_DEPTH} levels at '{ref}'", at)
            return None
        try:
            target, raw, size = open_reference(self.root, referencing, ref, self.limits, denied=self.denied)
        except ReferenceProblem as exc:
            self._fail(f"{_dotted(ref_path)}: {exc}", at)
            return None
        real = os.path.realpath(target)
        target_rel = _rel(self.root, target)
        named = _named_rel(self.root, referencing, ref)
        if named != target_rel and (named, target_rel) not in self.doc.links:
            self.doc.links.append((named, target_rel))
        if real in chain:
            names = [_rel(self.root, Path(c)) for c in chain] + [target_rel]
            self._fail("reference cycle: " + " -> ".join(names), at)
            return None
        self.files += 1
        self.total += len(raw)
        if self.files > MAX_CLOSURE_FILES:
            self._fail(f"more than {MAX_CLOSURE_FILES} files in the reference closure", at)
            return None
        if self.total > MAX_CLOSURE_BYTES:
            self._fail("the reference closure exceeds 4 MiB", at)
            return None
        digest, result = self.cache.parse(real, raw, size, target_rel)
        if (target_rel, digest) not in self.doc.closure:
            self.doc.closure.append((target_rel, digest))
        via = at
        for finding in result.findings:
            self.doc.findings.append(
                Finding(
                    finding.rule,
                    finding.severity,
                    f"{finding.message} (in a library file used by {referencing_rel})",
                    finding.location,
                    related=finding.related + (via,),
                )
            )
        if result.data is None:
            return None
        lib = result.data
        first = Location(target_rel, 1, 1)
        fmt = lib.get("format")
        if not is_format_one(fmt):
            self._fail(
                f"library file {target_rel} must declare 'format: 1' (found {fmt!r})",
                first,
                (via,),
            )
            return None
        extra = sorted(set(lib) - {"format", section})
        if extra or section not in lib:
            self._fail(
                f"library file {target_rel} must hold exactly one '{section}' section "
                f"besides 'format' (found: {', '.join(sorted(lib))})",
                first,
                (via,),
            )
            return None
        body = lib[section]
        if not isinstance(body, dict):
            self._fail(f"'{section}' in {target_rel} must be a mapping", first, (via,))
            return None
        # Index the library's locations first; overrides (already indexed from the
        # referencing file) must win, so re-apply them afterwards.
        overrides = {
            p: (self.doc.values[p], self.doc.keys.get(p))
            for p in list(self.doc.values)
            if p[: len(prefix)] == prefix and len(p) > len(prefix)
        }
        _index(self.doc, result, target_rel, prefix, 1)
        self.doc.via[prefix] = via
        if REFERENCE_KEY in body:
            resolved_body = self.resolve(body, prefix, section, target, target_rel, chain + [real], depth + 1)
            if resolved_body is None:
                return None
            body = resolved_body
            self.doc.via[prefix] = via
        for p, (value_loc, key_loc) in overrides.items():
            if p == ref_path:
                continue
            self.doc.values[p] = value_loc
            if key_loc is not None:
                self.doc.keys[p] = key_loc
        local = {k: v for k, v in section_data.items() if k != REFERENCE_KEY}
        merged = _merge(body, local)
        assert isinstance(merged, dict)
        return merged
