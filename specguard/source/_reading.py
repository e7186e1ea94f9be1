"""Reading files without surprises: size cap, no blocking on FIFOs, and library
references confined to the repository root (docs/reliability.md §7.2)."""

from __future__ import annotations

import os
import posixpath
import re
import stat
import unicodedata
from collections.abc import Iterable
from pathlib import Path

from ._types import Limits

_O_NONBLOCK = getattr(os, "O_NONBLOCK", 0)
_O_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_O_CLOEXEC = getattr(os, "O_CLOEXEC", 0)
_O_BINARY = getattr(os, "O_BINARY", 0)
_CHUNK = 64 * 1024
_DEFAULT_LIMITS = Limits()


class InputError(Exception):
    """An input path cannot be read as a regular file (a tool error, exit 2)."""


class ReferenceProblem(Exception):
    """A library reference cannot be resolved safely. The message quotes the
    requested path, never content of the target."""


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a directory"
    if stat.S_ISFIFO(mode):
        return "a FIFO"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISLNK(mode):
        return "a symbolic link"
    return "not a regular file"


def _read_fd(fd: int, cap: int) -> bytes:
    """At most cap bytes from fd."""
    parts = []
    left = cap
    while left > 0:
        chunk = os.read(fd, min(_CHUNK, left))
        if not chunk:
            break
        parts.append(chunk)
        left -= len(chunk)
    return b"".join(parts)


def read_limited(path: os.PathLike | str, limits: Limits = _DEFAULT_LIMITS) -> tuple[bytes, int]:
    """Read at most ``limits.max_bytes + 1`` bytes of a regular file.

    Returns (bytes, real size from fstat). Raises :class:`InputError` for a missing
    or unreadable path, a directory, FIFO, socket or device; a FIFO is opened
    non-blocking and rejected by fstat before any read.
    """
    name = os.fspath(path)
    try:
        fd = os.open(name, os.O_RDONLY | _O_NONBLOCK | _O_CLOEXEC | _O_BINARY)
    except FileNotFoundError:
        raise InputError(f"{name}: no such file") from None
    except PermissionError:
        raise InputError(f"{name}: permission denied") from None
    except OSError as exc:
        raise InputError(f"{name}: cannot open ({exc.strerror or exc})") from None
    except (ValueError, TypeError) as exc:  # embedded NUL and the like
        raise InputError(f"{name!r}: not a usable path ({exc})") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"{name}: {_kind(st.st_mode)}, not a regular file")
        try:
            data = _read_fd(fd, limits.max_bytes + 1)
        except OSError as exc:
            raise InputError(f"{name}: read failed ({exc.strerror or exc})") from None
        return data, max(st.st_size, len(data))
    finally:
        os.close(fd)


# ---------------------------------------------------------------- references

_SCHEME = re.compile(r"^[A-Za-z][A-Za-z0-9+.\-]*:")
_DRIVE = re.compile(r"^[A-Za-z]:")
_ENV = re.compile(r"\$[A-Za-z_{(]|%[A-Za-z_][A-Za-z0-9_]*%")
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029]")
# bidirectional controls and invisible characters: a path that holds one reads
# differently from the file it opens (docs/reliability.md G16)
_HIDDEN = re.compile("[\u00ad\u061c\u180e\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069\ufeff]")


def _quote(ref: str) -> str:
    """The requested path for a message, with control characters made visible."""
    shown = ref if len(ref) <= 200 else ref[:197] + "..."
    out = []
    for ch in shown:
        code = ord(ch)
        if ch == "'" or ch == "\\":
            out.append("\\" + ch)
        elif code < 0x20 or 0x7F <= code <= 0x9F or _CONTROL.match(ch) or _HIDDEN.match(ch) or 0xD800 <= code <= 0xDFFF:
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            out.append(ch)
    return "'" + "".join(out) + "'"


def _inside(path: str, root: str) -> bool:
    try:
        return os.path.commonpath([path, root]) == root and path != root
    except ValueError:
        return False


def _rel(path: str, root: str) -> str:
    return Path(os.path.relpath(path, root)).as_posix()


def _check_text(ref: str) -> None:
    if not isinstance(ref, str):
        raise ReferenceProblem(f"reference must be a text path, not {type(ref).__name__}")
    q = _quote(ref)
    if not ref.strip():
        raise ReferenceProblem(f"reference {q} is empty")
    if _CONTROL.search(ref):
        raise ReferenceProblem(f"reference {q} contains a NUL, line break or control character")
    if _HIDDEN.search(ref):
        raise ReferenceProblem(
            f"reference {q} contains a bidirectional control or an invisible character; "
            "it would open a file other than the one a reviewer reads"
        )
    if ref.startswith("\\\\") or ref.startswith("//"):
        raise ReferenceProblem(
            f"reference {q} is a network (UNC) path; it must be a relative path inside the repository"
        )
    if ref.startswith("/") or ref.startswith("\\"):
        raise ReferenceProblem(f"reference {q} is an absolute path; it must be a relative path inside the repository")
    if _DRIVE.match(ref):
        raise ReferenceProblem(f"reference {q} names a drive; it must be a relative path inside the repository")
    if _SCHEME.match(ref):
        raise ReferenceProblem(f"reference {q} is a URL; only relative file paths inside the repository are allowed")
    if ref.startswith("~"):
        raise ReferenceProblem(f"reference {q} starts with '~'; home directories are not expanded")
    if _ENV.search(ref):
        raise ReferenceProblem(f"reference {q} contains a variable; environment variables are not expanded")
    if "\\" in ref:
        raise ReferenceProblem(f"reference {q} contains a backslash; use forward slashes")


def _same_name(a: str, b: str) -> bool:
    """Names that are one file on every disk (a disk may store either normal form)."""
    return a == b or unicodedata.normalize("NFC", a) == unicodedata.normalize("NFC", b)


def _fold(name: str) -> str:
    return unicodedata.normalize("NFC", name).casefold()


def _case_problem(base_dir: str, ref: str) -> str | None:
    """The reference respelled as the directory listings spell it, when some path
    component matches a name on disk only without regard to letter case; else None.

    Every component the reference names is compared with the listing of its
    directory, so the answer is the same on a case-sensitive disk (where the open
    would fail) and a case-insensitive one (where it would succeed): a spec that
    works on one machine works on all (docs/reliability.md H09).
    """
    parts = posixpath.normpath(ref).split("/")
    ups = 0
    while ups < len(parts) and parts[ups] == "..":
        ups += 1
    names = [p for p in parts[ups:] if p not in ("", ".")]
    current = os.path.normpath(os.path.join(base_dir, *([".."] * ups)))
    fixed: list[str] = []
    differs = False
    for name in names:
        try:
            listing = os.listdir(current)
        except OSError:
            return None  # not a directory, unreadable: the checks below say so
        if any(_same_name(entry, name) for entry in listing):
            fixed.append(name)
            current = os.path.join(current, name)
            continue
        folded = _fold(name)
        matches = sorted(entry for entry in listing if _fold(entry) == folded)
        if not matches:
            return None  # missing for real: "does not exist" below
        differs = True
        fixed.append(matches[0])
        current = os.path.join(current, matches[0])
    if not differs:
        return None
    return "/".join([".."] * ups + fixed)


def open_reference(
    root: Path,
    referencing_file: Path,
    ref: str,
    limits: Limits = _DEFAULT_LIMITS,
    *,
    denied: Iterable[os.PathLike | str] = (),
) -> tuple[Path, bytes, int]:
    """Resolve ``ref`` relative to the referencing file's directory, confined to
    ``root``, and read it (at most ``limits.max_bytes + 1`` bytes).

    Checks, in this order, and nothing is opened until all pass: the text of the
    reference (absolute, drive, UNC, ``~``, variables, URL schemes, control,
    bidirectional and invisible characters) -> normalise -> inside root -> realpath -> inside the realpath of
    root -> deny-list (``.git`` and ``denied`` paths) -> every component spelled
    as the directory listing spells it (letter case) -> lstat regular file. Then
    open with O_NOFOLLOW | O_NONBLOCK, fstat regular file, read.

    Returns (resolved path, bytes, real size). Raises :class:`ReferenceProblem`.
    ``denied`` lists further files or directories (cache, baseline, reports) that
    a reference may not reach.
    """
    _check_text(ref)
    q = _quote(ref)
    root_abs = os.path.abspath(os.fspath(root))
    base_dir = os.path.dirname(os.path.abspath(os.fspath(referencing_file)))
    candidate = os.path.normpath(os.path.join(base_dir, posixpath.normpath(ref)))
    if not _inside(candidate, root_abs):
        raise ReferenceProblem(f"reference {q} leads outside the repository root")
    real_root = os.path.realpath(root_abs)
    real = os.path.realpath(candidate)
    if not _inside(real, real_root):
        raise ReferenceProblem(f"reference {q} leads outside the repository root through a symbolic link")
    rel = _rel(real, real_root)
    rel_parts = Path(rel).parts
    cand_parts = Path(_rel(candidate, root_abs)).parts
    if any(p.casefold() == ".git" for p in rel_parts + cand_parts):  # .GIT is .git on some disks
        raise ReferenceProblem(f"reference {q} points into .git/, which is never read")
    for d in denied:
        d_real = os.path.realpath(os.fspath(d))
        if real == d_real or _inside(real, d_real):
            raise ReferenceProblem(
                f"reference {q} points to '{_rel(d_real, real_root)}', which specs may not reference"
            )
    spelled = _case_problem(base_dir, ref)
    if spelled is not None:
        raise ReferenceProblem(
            f"reference {q} does not match the letter case on disk: the file on disk is spelled "
            f"{_quote(spelled)} (write it exactly so, for case-sensitive disks)"
        )
    try:
        st = os.lstat(real)
    except FileNotFoundError:
        raise ReferenceProblem(f"reference {q} points to '{rel}', which does not exist") from None
    except OSError as exc:
        raise ReferenceProblem(f"reference {q} points to '{rel}', which cannot be inspected ({exc.strerror})") from None
    if not stat.S_ISREG(st.st_mode):
        raise ReferenceProblem(f"reference {q} points to '{rel}', which is {_kind(st.st_mode)}, not a regular file")
    try:
        fd = os.open(real, os.O_RDONLY | _O_NOFOLLOW | _O_NONBLOCK | _O_CLOEXEC | _O_BINARY)
    except OSError as exc:
        raise ReferenceProblem(f"reference {q} points to '{rel}', which cannot be opened ({exc.strerror})") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise ReferenceProblem(f"reference {q} points to '{rel}', which is not a regular file")
        try:
            data = _read_fd(fd, limits.max_bytes + 1)
        except OSError as exc:
            raise ReferenceProblem(f"reference {q} points to '{rel}', which cannot be read ({exc.strerror})") from None
        return Path(real), data, max(st.st_size, len(data))
    finally:
        os.close(fd)
