"""Reading files without surprises: size cap, no blocking on FIFOs, and library
references confined to the repository root (RELIABILITY.md 7.2)."""

from __future__ import annotations

import os
import posixpath
import re
import stat
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


def _quote(ref: str) -> str:
    """The requested path for a message, with control characters made visible."""
    shown = ref if len(ref) <= 200 else ref[:197] + "..."
    out = []
    for ch in shown:
        code = ord(ch)
        if ch == "'" or ch == "\\":
            out.append("\\" + ch)
        elif code < 0x20 or 0x7F <= code <= 0x9F or ch in "\u2028\u2029" or 0xD800 <= code <= 0xDFFF:
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
    if ref.startswith("\\\\") or ref.startswith("//"):
        raise ReferenceProblem(
            f"reference {q} is a network (UNC) path; it must be a relative path inside the repository")
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
    reference (absolute, drive, UNC, ``~``, variables, URL schemes, control
    characters) -> normalise -> inside root -> realpath -> inside the realpath of
    root -> deny-list (``.git`` and ``denied`` paths) -> lstat regular file. Then
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
    if ".git" in rel_parts or ".git" in cand_parts:
        raise ReferenceProblem(f"reference {q} points into .git/, which is never read")
    for d in denied:
        d_real = os.path.realpath(os.fspath(d))
        if real == d_real or _inside(real, d_real):
            raise ReferenceProblem(
                f"reference {q} points to '{_rel(d_real, real_root)}', which specs may not reference")
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
