"""The baseline: the findings a repository accepted when it adopted specguard.

``specguard check --write-baseline FILE`` records the current rule findings;
``--baseline FILE`` then suppresses exactly those and shows only new ones.

Matching key (decided here): an entry matches a finding with
the same rule id, the same repo-relative file, the same document path (JSON
pointer), the same operating point, and the same **values digest**: a hash of the
figures behind the finding, each rounded to three significant digits. Line and
column are not part of it, so an edit that only moves a finding keeps it
baselined; a changed spec path or rule breaks the match, and so does a change
that moves the finding's numbers (docs/reliability.md G17: "a changed value
un-baselines it"). Message wording is not part of it either, so rewording a
message in a new release does not un-baseline a repository.

Only rule findings are baselined. Built-in findings (unreadable or invalid
specs, waiver problems, internal errors) never are: a baseline must not make a
broken input look like a pass.

A damaged file (not UTF-8, not JSON, duplicate keys or fingerprints, a wrong,
missing or unknown version, an entry whose fingerprint does not match its
fields) raises :class:`BaselineError`; it is never read as empty.
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from collections import Counter
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path

from ..figures.registry import FORMER_FIGURE_NAMES
from ..findings import BUILTIN_IDS, Finding, Location

BASELINE_FORMAT = 1
# A baseline of 100,000 findings is about 40 MB; anything larger is not ours.
MAX_BASELINE_BYTES = 64 * 1024 * 1024
LOCK_TIMEOUT = 10.0

_ENTRY_KEYS = frozenset({"fingerprint", "rule", "file", "pointer", "operating_point", "values", "count", "message"})
_TOP_KEYS = frozenset({"baseline_format", "entries"})
_HEX32 = re.compile(r"^[0-9a-f]{32}$")
_HEX16 = re.compile(r"^[0-9a-f]{16}$")


class BaselineError(Exception):
    """A baseline that cannot be used (exit 2); ``finding`` says where and why."""

    def __init__(self, finding: Finding) -> None:
        super().__init__(finding.message)
        self.finding = finding


@dataclass(frozen=True)
class Entry:
    fingerprint: str
    rule: str
    file: str
    pointer: str
    operating_point: str | None
    values: str
    count: int = 1
    message: str = ""  # for the reviewer of the baseline's diff; not matched

    def as_json(self) -> dict:
        return {
            "fingerprint": self.fingerprint,
            "rule": self.rule,
            "file": self.file,
            "pointer": self.pointer,
            "operating_point": self.operating_point,
            "values": self.values,
            "count": self.count,
            "message": self.message,
        }


@dataclass(frozen=True)
class Baseline:
    file: str  # as shown in messages (repo-relative when inside the root)
    entries: tuple[Entry, ...]

    def by_fingerprint(self) -> dict[str, Entry]:
        return {e.fingerprint: e for e in self.entries}


@dataclass(frozen=True)
class BaselineOutcome:
    """What applying a baseline did; carried by the Report for every output."""

    file: str
    suppressed: int
    stale: tuple[Entry, ...]  # entries (count = unmatched occurrences) that matched nothing
    strict: bool = False  # --strict-baseline: stale entries make the exit status 1

    @property
    def stale_count(self) -> int:
        return sum(e.count for e in self.stale)


# ------------------------------------------------------------------ the key
_DIGEST_NAMES = {new: old for old, new in FORMER_FIGURE_NAMES.items()}


def _round(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        v = float(value)
        if not math.isfinite(v):
            return repr(v)
        if v == 0.0:
            return "0"  # no "-0"
        return f"{v:.3g}"
    return str(value)


def values_digest(figures: Iterable[tuple[str, object, str]]) -> str:
    """Hash of the figures behind a finding (name, rounded SI value, unit), order-free.
    A renamed figure is hashed under its former name, so a rename breaks no baseline."""
    parts = sorted(f"{_DIGEST_NAMES.get(name, name)}={_round(value)}{unit}" for name, value, unit in figures)
    text = "\n".join(parts)
    return hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()[:16]


def fingerprint(rule: str, file: str, pointer: str, point: str | None, values: str) -> str:
    text = json.dumps([rule, file, pointer, point, values], ensure_ascii=True)
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:32]


def eligible(finding: Finding) -> bool:
    """Findings a baseline may hold: rule findings that are not already waived."""
    return finding.rule not in BUILTIN_IDS and finding.waived is None


def key_of(finding: Finding, file: str | None = None) -> Entry:
    """The baseline entry of a finding of the checked spec ``file`` (default: the
    finding's own file; a finding about a library value is keyed by the spec)."""
    loc = finding.location
    file = loc.file if file is None else file
    values = values_digest(finding.figures)
    fp = fingerprint(finding.rule, file, loc.pointer, finding.operating_point, values)
    return Entry(fp, finding.rule, file, loc.pointer, finding.operating_point, values, 1, finding.message)


# ------------------------------------------------------------------ reading
def _fail(display: str, message: str, line: int = 1, column: int = 1) -> BaselineError:
    return BaselineError(
        Finding(
            "baseline-invalid",
            "error",
            f"baseline {display}: {message}",
            Location(display, max(1, line), max(1, column)),
        )
    )


def _position(text: str, needle: str, occurrence: int = 1) -> tuple[int, int]:
    index = -1
    for _ in range(occurrence):
        index = text.find(needle, index + 1)
        if index < 0:
            return 1, 1
    line = text.count("\n", 0, index) + 1
    column = index - (text.rfind("\n", 0, index) + 1) + 1
    return line, column


def load(path: Path, display: str) -> Baseline:
    """Read and check a baseline file; raise :class:`BaselineError` when it is unusable."""
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_BASELINE_BYTES + 1)
    except FileNotFoundError:
        raise _fail(display, "no such file (write one with --write-baseline)") from None
    except IsADirectoryError:
        raise _fail(display, "is a directory") from None
    except OSError as exc:
        raise _fail(display, f"cannot be read: {exc.strerror or exc}") from None
    if len(raw) > MAX_BASELINE_BYTES:
        raise _fail(display, f"larger than {MAX_BASELINE_BYTES // (1024 * 1024)} MiB")
    return parse(raw, display)


def _pairs(pairs: list[tuple[str, object]]) -> dict:
    out: dict = {}
    for key, value in pairs:
        if key in out:
            raise ValueError(f"duplicate key '{key}'")
        out[key] = value
    return out


def _no_constant(name: str) -> object:
    raise ValueError(f"'{name}' is not a JSON number")


def parse(raw: bytes, display: str) -> Baseline:
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise _fail(display, f"not UTF-8 text (byte {exc.start})") from None
    if not text.strip():
        raise _fail(display, "is empty (a baseline with no findings still holds its version)")
    try:
        data = json.loads(text, object_pairs_hook=_pairs, parse_constant=_no_constant)
    except json.JSONDecodeError as exc:
        raise _fail(display, f"not valid JSON ({exc.msg}); the file may be truncated", exc.lineno, exc.colno) from None
    except (ValueError, RecursionError) as exc:
        raise _fail(display, f"not valid JSON ({exc})") from None
    if not isinstance(data, dict):
        raise _fail(display, "must hold a JSON object")
    if "baseline_format" not in data:
        raise _fail(display, "not a specguard baseline (no 'baseline_format')")
    version = data["baseline_format"]
    if type(version) is not int or version != BASELINE_FORMAT:
        line, col = _position(text, '"baseline_format"')
        raise _fail(
            display,
            f"unknown baseline format {version!r}; this specguard reads format {BASELINE_FORMAT}",
            line,
            col,
        )
    unknown = sorted(set(data) - _TOP_KEYS)
    if unknown:
        line, col = _position(text, json.dumps(unknown[0], ensure_ascii=False))
        raise _fail(display, f"unknown key '{unknown[0]}'", line, col)
    items = data.get("entries")
    if not isinstance(items, list):
        raise _fail(display, "'entries' must be a list")
    entries: list[Entry] = []
    seen: Counter[str] = Counter()
    for index, item in enumerate(items):
        entry = _entry(item, index, text, display)
        seen[entry.fingerprint] += 1
        if seen[entry.fingerprint] > 1:
            line, col = _position(text, f'"{entry.fingerprint}"', seen[entry.fingerprint])
            raise _fail(display, f"entry {index}: duplicate fingerprint {entry.fingerprint}", line, col)
        entries.append(entry)
    return Baseline(display, tuple(entries))


def _entry(item: object, index: int, text: str, display: str) -> Entry:
    where = f"entry {index}"
    if not isinstance(item, dict):
        raise _fail(display, f"{where}: must be an object")
    fp = item.get("fingerprint")
    line, col = _position(text, f'"{fp}"') if isinstance(fp, str) else (1, 1)
    missing = sorted(_ENTRY_KEYS - set(item))
    if missing:
        raise _fail(display, f"{where}: missing '{missing[0]}'", line, col)
    unknown = sorted(set(item) - _ENTRY_KEYS)
    if unknown:
        raise _fail(display, f"{where}: unknown key '{unknown[0]}'", line, col)
    for key in ("fingerprint", "rule", "file", "pointer", "values", "message"):
        if not isinstance(item[key], str):
            raise _fail(display, f"{where}: '{key}' must be a string", line, col)
    point = item["operating_point"]
    if point is not None and not isinstance(point, str):
        raise _fail(display, f"{where}: 'operating_point' must be a string or null", line, col)
    count = item["count"]
    if type(count) is not int or count < 1:
        raise _fail(display, f"{where}: 'count' must be a whole number of at least 1", line, col)
    if not _HEX32.match(item["fingerprint"]) or not _HEX16.match(item["values"]):
        raise _fail(display, f"{where}: malformed fingerprint or values digest", line, col)
    if item["pointer"] and not item["pointer"].startswith("/"):
        raise _fail(display, f"{where}: 'pointer' must be a JSON pointer", line, col)
    expected = fingerprint(item["rule"], item["file"], item["pointer"], point, item["values"])
    if expected != item["fingerprint"]:
        raise _fail(
            display,
            f"{where}: the fingerprint does not match the entry's fields (edited by hand?); write the baseline again",
            line,
            col,
        )
    return Entry(
        item["fingerprint"],
        item["rule"],
        item["file"],
        item["pointer"],
        point,
        item["values"],
        count,
        item["message"],
    )


# ------------------------------------------------------------------ writing
def compose(
    results: Mapping[str, Iterable[Finding]],
    previous: Baseline | None = None,
    still_exists=lambda rel: True,
) -> tuple[Entry, ...]:
    """The entries of a new baseline: the eligible findings of the checked files
    (``results``: spec file -> its findings), plus the previous entries of files
    not checked in this run that still exist."""
    checked = set(results)
    merged: dict[str, Entry] = {}
    for file, finding in ((k, f) for k, fs in results.items() for f in fs):
        if not eligible(finding):
            continue
        entry = key_of(finding, file)
        if entry.fingerprint in merged:
            old = merged[entry.fingerprint]
            merged[entry.fingerprint] = replace(old, count=old.count + 1)
        else:
            merged[entry.fingerprint] = entry
    if previous is not None:
        for entry in previous.entries:
            if entry.file not in checked and still_exists(entry.file):
                merged.setdefault(entry.fingerprint, entry)
    return tuple(sorted(merged.values(), key=_entry_order))


def _entry_order(e: Entry) -> tuple:
    return (e.file, e.pointer, e.rule, e.operating_point or "", e.fingerprint)


_UNSAFE_JSON = re.compile(
    "[\x7f-\x9f\u00ad\u061c\u180e\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069\u2028\u2029\ufeff\ud800-\udfff]"
)


def dumps(entries: Iterable[Entry]) -> str:
    document = {"baseline_format": BASELINE_FORMAT, "entries": [e.as_json() for e in entries]}
    text = json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False)
    # json escapes C0 controls itself; escape the rest that must not appear raw
    # (C1, bidi, separators, lone surrogates), still valid JSON for the same value.
    return _UNSAFE_JSON.sub(lambda m: f"\\u{ord(m.group()):04x}", text) + "\n"


def lock_path(path: Path) -> Path:
    """The lock file that serialises writers of the baseline ``path`` (beside it, hidden)."""
    return path.with_name(f".{path.name}.lock")


def write(
    path: Path,
    display: str,
    results: Mapping[str, Iterable[Finding]],
    root: Path,
    lock_timeout: float = LOCK_TIMEOUT,
) -> Baseline:
    """Write a baseline atomically under a lock; return what was written.

    Raises :class:`BaselineError` when an existing file at ``path`` is damaged
    (it is not overwritten silently), and ``atomic.WriteError`` /
    ``atomic.LockTimeout`` when it cannot be written.
    """
    from ..atomic import locked, write_atomic

    results = {k: list(v) for k, v in results.items()}
    with locked(lock_path(path), timeout=lock_timeout):
        previous = load(path, display) if path.exists() else None
        entries = compose(results, previous, still_exists=lambda rel: (root / rel).is_file())
        write_atomic(path, dumps(entries))
    return Baseline(display, entries)


# ----------------------------------------------------------------- applying
def apply(
    results: Mapping[str, tuple[Finding, ...]],
    baseline: Baseline,
    root: Path | None = None,
    strict: bool = False,
) -> tuple[dict[str, tuple[Finding, ...]], BaselineOutcome]:
    """Mark the findings the baseline holds as baselined (they stay in the output).

    ``results`` maps each checked file to its sorted findings. Entries for files
    not checked in this run are neither used nor stale, unless the file no
    longer exists under ``root`` (then they are stale).
    """
    budget = {e.fingerprint: e.count for e in baseline.entries}
    out: dict[str, tuple[Finding, ...]] = {}
    suppressed = 0
    for file, findings in results.items():
        marked: list[Finding] = []
        for finding in findings:
            if eligible(finding):
                fp = key_of(finding, file).fingerprint
                if budget.get(fp, 0) > 0:
                    budget[fp] -= 1
                    suppressed += 1
                    finding = replace(finding, baselined=True)
            marked.append(finding)
        out[file] = tuple(marked)
    stale: list[Entry] = []
    for entry in baseline.entries:
        left = budget[entry.fingerprint]
        if left <= 0:
            continue
        gone = root is not None and not (root / entry.file).is_file()
        if entry.file in results or gone:
            stale.append(replace(entry, count=left))
    return out, BaselineOutcome(baseline.file, suppressed, tuple(stale), strict)
