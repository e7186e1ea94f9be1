"""Result cache: one JSON entry per checked spec, keyed by content, never by time.

Key (sha256 over a JSON list):

- the cache layout version, the tool version, the spec format and JSON report
  format versions, the active YAML parser path, and a digest of the tool's own
  source files (so an edited checkout of the tool never reuses its old results);
- the rule pack: sha256 of every built-in rule file and every file of the
  policy's team rule directories (``run_salt``);
- the effective policy for the file (``EffectiveConfig.for_file``) and the
  files references may not reach (baseline, reports, the cache itself);
- the spec's repo-relative path and the sha256 of the bytes read for it (the
  same bytes the parser gets: docs/reliability.md FI24).

The entry stores the spec's reference closure (every library file read, with
its sha256). A lookup is a hit only when every closure file still has that
hash; each library file is hashed at most once per run (``_digests``). So an
edited motor file invalidates every axis using it (FI20), and an edit that
keeps the mtime is still seen (FI19). A reference that reached its file through
a symbolic link is stored with the path it named; the lookup is a miss when
that path now leads elsewhere (a repointed link changes no file's hash).

Waivers are applied after the cache: an entry holds the findings before the
waivers, plus the spec's waivers and their locations, so a waiver that expires
"today" and ``--no-waivers`` never need a new analysis.

Not cached (always analysed again): files with reference problems (a missing
target that appears later changes no hash in the closure), input errors,
internal errors and files over the byte cap.

Layout: ``<dir>/results-v1/<key[:2]>/<key>.json``, each written atomically
(temporary file in the same directory, then ``os.replace``), so concurrent runs
on one cache never see a torn entry. A damaged entry (truncated, garbage,
another version) is ignored with one warning per run and rewritten.

This module imports json, hashlib and os only; the rest is imported on use.
"""

from __future__ import annotations

import hashlib
import json
import os

CACHE_FORMAT = 4  # 3: related locations carry a label; 4: findings name their cause
_SUBDIR = f"results-v{CACHE_FORMAT}"
_READ_CAP = 16 * 1024 * 1024  # an entry larger than this is damaged


def make_dirs(top: str, directory: str) -> None:
    """Create ``directory`` under the cache's ``top``; a new top gets a ``.gitignore``
    of ``*``, so a cache placed inside a work tree never shows in git status."""
    fresh = not os.path.isdir(top)
    os.makedirs(directory, exist_ok=True)
    if fresh:
        try:
            with open(os.path.join(top, ".gitignore"), "x") as fh:
                fh.write("# specguard cache\n*\n")
        except OSError:
            pass


def default_dir(environ=None) -> str:
    """``$SPECGUARD_CACHE_DIR``, else ``$XDG_CACHE_HOME/specguard``, else
    ``~/.cache/specguard``: outside every repository's tracked files."""
    env = os.environ if environ is None else environ
    explicit = env.get("SPECGUARD_CACHE_DIR")
    if explicit:
        return os.path.abspath(explicit)
    xdg = env.get("XDG_CACHE_HOME")
    if xdg and os.path.isabs(xdg):  # the XDG spec ignores relative values
        return os.path.join(xdg, "specguard")
    return os.path.join(os.path.expanduser("~"), ".cache", "specguard")


def sha256_file_tree(paths, suffixes=(".yaml", ".yml", ".json")) -> str:
    """One digest over the files (by suffix) below each directory of ``paths`` (sorted)."""
    h = hashlib.sha256()
    for base in paths:
        base = os.fspath(base)
        found = []
        for dirpath, dirnames, filenames in os.walk(base):
            dirnames.sort()
            for name in filenames:
                full = os.path.join(dirpath, name)
                if name.endswith(suffixes) and os.path.isfile(full):
                    found.append(full)
        for full in sorted(found):
            with open(full, "rb") as fh:
                data = fh.read()
            rel = os.path.relpath(full, base).replace(os.sep, "/")
            h.update(f"{rel}\0{len(data)}\0".encode("utf-8", "surrogateescape"))
            h.update(data)
    return h.hexdigest()


def run_salt(versions: dict, rule_dirs, denied=()) -> str:
    """The part of every key that is the same for a whole run."""
    doc = {"versions": versions, "pack": sha256_file_tree(rule_dirs), "denied": sorted(denied)}
    return hashlib.sha256(json.dumps(doc, sort_keys=True).encode()).hexdigest()


# ----------------------------------------------------------- (de)serialising
def _loc(loc) -> list:
    return [loc.file, loc.line, loc.column, loc.end_line, loc.end_column, list(loc.path), loc.label]


_LOCATIONS: dict = {}  # one Location object per distinct place (they repeat a lot)


def _unloc(data):
    file, line, column, end_line, end_column, path, *rest = data
    label = rest[0] if rest else ""
    key = (file, line, column, end_line, end_column, label, *path)
    loc = _LOCATIONS.get(key)
    if loc is None:
        from .findings import Location

        if not isinstance(file, str) or not isinstance(line, int) or not isinstance(column, int):
            raise ValueError("bad location")
        if not isinstance(label, str):
            raise ValueError("bad location label")
        if len(_LOCATIONS) > 200_000:
            _LOCATIONS.clear()
        loc = _LOCATIONS[key] = Location(file, line, column, end_line, end_column, tuple(path), label)
    return loc


class Tables:
    """Per-entry tables: each distinct file name, location and help text once; findings
    refer to them by index (locations repeat a lot across related lists)."""

    def __init__(self, data: dict | None = None) -> None:
        self.files: list[str] = []
        self.locs: list[list] = []
        self.texts: list[str] = []
        self._index: dict = {}
        if data is not None:
            self.files, self.locs, self.texts = data["files"], data["locs"], data["texts"]
            self._built: list = [None] * len(self.locs)

    def dump(self) -> dict:
        return {"files": self.files, "locs": self.locs, "texts": self.texts}

    def _intern(self, kind: str, value, table: list, stored) -> int:
        key = (kind, value)
        i = self._index.get(key)
        if i is None:
            i = self._index[key] = len(table)
            table.append(stored)
        return i

    def loc(self, loc) -> int:
        fi = self._intern("f", loc.file, self.files, loc.file)
        key = (fi, loc.line, loc.column, loc.end_line, loc.end_column, loc.label, *loc.path)
        return self._intern(
            "l", key, self.locs, [fi, loc.line, loc.column, loc.end_line, loc.end_column, list(loc.path), loc.label]
        )

    def text(self, value: str) -> int:
        return self._intern("t", value, self.texts, value)

    def unloc(self, i: int):
        built = self._built[i]
        if built is None:
            fi, line, column, end_line, end_column, path, label = self.locs[i]
            built = self._built[i] = _unloc([self.files[fi], line, column, end_line, end_column, path, label])
        return built


def finding_to_json(f, t: Tables) -> list:
    return [
        f.rule,
        f.severity,
        f.message,
        t.loc(f.location),
        [t.loc(r) for r in f.related],
        f.operating_point,
        [list(x) for x in f.figures],
        list(f.remedies),
        t.text(f.help),
        f.waived,
        [list(m) for m in f.meta],
        f.baselined,
        [fix_to_json(x) for x in f.fixes],
        f.explained_by,
    ]


def fix_to_json(fix) -> list:
    return [
        fix.text,
        [[c.pointer, _plain(c.value), list(c.region) if c.region else None] for c in fix.changes],
        list(fix.clears),
        fix.reaches,
        list(fix.side_effects),
        fix.cost,
    ]


def _plain(value):
    """A change's value as JSON: text, or a section as a mapping."""
    if isinstance(value, tuple):  # a section: (key, value) pairs
        return {"__pairs__": [[k, _plain(v)] for k, v in value]}
    return value  # text, or a list of texts


def _unplain(value):
    if isinstance(value, dict) and "__pairs__" in value:
        return tuple((k, _unplain(v)) for k, v in value["__pairs__"])
    return value


def fix_from_json(d: list):
    from .findings import Change, Fix

    text, changes, clears, reaches, side_effects, cost = d
    return Fix(
        text,
        tuple(Change(p, _unplain(v), tuple(r) if r else None) for p, v, r in changes),
        tuple(clears),
        reaches,
        tuple(side_effects),
        float(cost),
    )


def finding_from_json(d: list, t: Tables):
    from .findings import Finding

    (rule, severity, message, loc, related, point, figures, remedies, help_, waived, meta, baselined, fixes, cause) = d
    if not isinstance(rule, str) or not isinstance(message, str):
        raise ValueError("bad finding")
    return Finding(
        rule,
        severity,
        message,
        t.unloc(loc),
        related=tuple(t.unloc(r) for r in related),
        operating_point=point,
        figures=tuple((n, v, u) for n, v, u in figures),
        remedies=tuple(remedies),
        help=t.texts[help_],
        waived=waived,
        meta=tuple((a, b) for a, b in meta),
        baselined=baselined,
        fixes=tuple(fix_from_json(x) for x in fixes),
        explained_by=cause,
    )


def figures_to_json(fs) -> dict | None:
    if fs is None:
        return None
    return {
        "axis": [[k, v] for k, v in fs.axis.items()],
        "points": [[name, [[k, v] for k, v in vals.items()]] for name, vals in fs.points],
        "missing": [[k, v] for k, v in fs.missing.items()],
        "notes": [[k, v] for k, v in fs.notes.items()],
    }


def figures_from_json(d):
    if d is None:
        return None
    from .figures import FigureSet

    return FigureSet(
        axis={k: v for k, v in d["axis"]},
        points=tuple((name, {k: v for k, v in vals}) for name, vals in d["points"]),
        missing={k: v for k, v in d["missing"]},
        notes={k: v for k, v in d["notes"]},
    )


# ------------------------------------------------------------------- cache
class ResultCache:
    """The cache of one run. ``lookup`` and ``store`` never raise for cache problems."""

    def __init__(self, directory: str, salt: str, root: str) -> None:
        self.directory = os.path.join(os.fspath(directory), _SUBDIR)
        self.top = os.fspath(directory)
        self.salt = salt
        self.root = os.path.realpath(root)
        self._digests: dict[str, str | None] = {}
        self.damaged = 0
        self.write_problem: str | None = None
        self.hits = self.misses = 0

    # Per-process state is rebuilt in worker processes; only these travel.
    def settings(self) -> tuple:
        return (self.top, self.salt, self.root)

    def key(self, rel: str, spec_sha: str, policy: str) -> str:
        text = json.dumps([CACHE_FORMAT, self.salt, policy, rel, spec_sha])
        return hashlib.sha256(text.encode("utf-8", "surrogateescape")).hexdigest()

    def _path(self, key: str) -> str:
        return os.path.join(self.directory, key[:2], key + ".json")

    def _digest(self, rel: str) -> str | None:
        if rel in self._digests:
            return self._digests[rel]
        digest = None
        full = os.path.join(self.root, rel)
        flags = os.O_RDONLY | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_NONBLOCK", 0)
        try:
            fd = os.open(full, flags)
        except (OSError, ValueError):
            fd = None
        if fd is not None:
            try:
                import stat

                if stat.S_ISREG(os.fstat(fd).st_mode):
                    chunks = []
                    while True:
                        chunk = os.read(fd, 1 << 20)
                        if not chunk:
                            break
                        chunks.append(chunk)
                    digest = hashlib.sha256(b"".join(chunks)).hexdigest()
            except OSError:
                digest = None
            finally:
                os.close(fd)
        self._digests[rel] = digest
        return digest

    def _resolved(self, named: str) -> str | None:
        """The repo-relative real path ``named`` leads to now (None when it leaves the root)."""
        real = os.path.realpath(os.path.join(self.root, named))
        real_root = os.path.realpath(self.root)
        if not real.startswith(real_root.rstrip(os.sep) + os.sep):
            return None
        return os.path.relpath(real, real_root).replace(os.sep, "/")

    def lookup(self, key: str, rel: str, spec_sha: str):
        """The stored payload (a dict) when the entry is whole and its closure unchanged."""
        path = self._path(key)
        try:
            with open(path, "rb") as fh:
                raw = fh.read(_READ_CAP + 1)
        except FileNotFoundError:
            self.misses += 1
            return None
        except OSError:
            self.damaged += 1
            self.misses += 1
            return None
        try:
            entry = json.loads(raw)
            if (
                not isinstance(entry, dict)
                or entry.get("cache_format") != CACHE_FORMAT
                or entry.get("key") != key
                or entry.get("file") != rel
            ):
                raise ValueError("not an entry of this version")
            closure = entry["closure"]
            if not closure or closure[0] != [rel, spec_sha]:
                raise ValueError("closure does not start with the spec")
            payload = entry["result"]
            if not isinstance(payload, dict):
                raise ValueError("no result")
            links = entry.get("links", [])
            if not isinstance(links, list) or not all(
                isinstance(x, list) and len(x) == 2 and all(isinstance(p, str) for p in x) for x in links
            ):
                raise ValueError("bad links")
        except Exception:
            self.damaged += 1
            self.misses += 1
            return None
        self._digests.setdefault(rel, spec_sha)
        for crel, csha in closure[1:]:
            if self._digest(crel) != csha:
                self.misses += 1
                return None
        for named, target in links:  # a repointed symbolic link leaves every hash unchanged
            if self._resolved(named) != target:
                self.misses += 1
                return None
        self.hits += 1
        payload["closure"] = closure
        return payload

    def store(self, key: str, rel: str, closure, payload: dict, links=()) -> None:
        if self.write_problem is not None:
            return
        entry = {
            "cache_format": CACHE_FORMAT,
            "key": key,
            "file": rel,
            "closure": [list(c) for c in closure],
            "links": [list(x) for x in links],
            "result": payload,
        }
        try:
            text = json.dumps(entry, ensure_ascii=True, separators=(",", ":"))
        except (TypeError, ValueError) as exc:  # not representable: just don't cache
            del exc
            return
        from .atomic import WriteError, write_atomic

        path = self._path(key)
        try:
            if not os.path.isdir(os.path.dirname(path)):
                self._make_dirs(os.path.dirname(path))
            write_atomic(path, text)
        except (OSError, WriteError) as exc:
            self.write_problem = str(exc)

    def _make_dirs(self, directory: str) -> None:
        make_dirs(self.top, directory)

    def warnings(self) -> list[str]:
        out = []
        if self.damaged:
            n = self.damaged
            out.append(
                f"specguard: warning: ignored {n} damaged cache entr{'ies' if n != 1 else 'y'}"
                f" in {self.top} (they are analysed again and rewritten)"
            )
        if self.write_problem is not None:
            out.append(
                f"specguard: warning: the result cache is not written for the rest of this run: {self.write_problem}"
            )
        return out
