"""Atomic file writes and an advisory lock, for reports, the baseline and the cache.

A reader of a file written here sees either the old content or the new, never a
part: the bytes go to a temporary file in the target's own directory (so
``os.replace`` never crosses a filesystem), are flushed and fsynced, get the
final mode, and then replace the target in one step. Every error path removes
the temporary file. docs/reliability.md §2 (the error contract) and FI01-FI14, FI22, FI23.

The lock is an OS advisory lock (``fcntl.flock``) on a separate lock file opened
with ``O_NOFOLLOW``: the kernel releases it when the holder dies, so a killed
process never leaves a stale lock behind (FI11).
"""

from __future__ import annotations

import contextlib
import errno
import os
import stat
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

from .interrupt import stop_if_signalled

# Prefix and suffix of our temporary files; the stale-temp sweep matches them only.
_TEMP_PREFIX = ".specguard-"
_TEMP_SUFFIX = ".tmp"
# Temporary files of ours older than this are left over from a killed run (FI06).
STALE_TEMP_SECONDS = 3600.0
# os.replace can fail transiently with PermissionError on Windows while another
# process has the target open (FI13): retry a bounded number of times.
REPLACE_TRIES = 10
REPLACE_DELAY = 0.05  # seconds between tries; 10 tries stay within 0.5 s


class WriteError(Exception):
    """A file could not be written; the message names the path and the reason."""


class LockTimeout(Exception):
    """The lock stayed taken by another process for the whole wait."""


def _umask() -> int:
    # There is no way to read the umask without setting it; set it back at once.
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def target_problem(path: Path) -> str | None:
    """Why ``path`` cannot be written as a file, or None when it can be tried.

    Checked before any analysis so that a bad ``--output`` costs nothing (I10).
    """
    if path.name in ("", ".", ".."):
        return "not a file name"
    if path.is_dir():
        return "is a directory"
    parent = path.parent
    if not parent.exists():
        return f"the directory {parent.as_posix()} does not exist"
    if not parent.is_dir():
        return f"{parent.as_posix()} is not a directory"
    if path.is_symlink() and not path.exists():
        return "is a dangling symbolic link"
    return None


def _reason(exc: BaseException) -> str:
    if isinstance(exc, OSError) and exc.strerror:
        return exc.strerror
    return f"{type(exc).__name__}: {exc}"


def write_atomic(path: Path | str, data: bytes | str) -> None:
    """Replace ``path`` with ``data`` atomically; raise :class:`WriteError` on failure.

    The final mode is the previous file's mode, or ``0o666 & ~umask`` for a new
    file (``mkstemp`` creates 0600, FI23). On any failure the target is untouched
    and the temporary file is gone.
    """
    stop_if_signalled()  # nothing is written after a signal (specguard.interrupt)
    target = Path(path)
    payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    problem = target_problem(target)
    if problem is not None:
        raise WriteError(f"cannot write {target.as_posix()}: {problem}")
    directory = target.parent
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except FileNotFoundError:
        mode = 0o666 & ~_umask()
    except OSError as exc:
        raise WriteError(f"cannot write {target.as_posix()}: {_reason(exc)}") from exc
    _sweep_stale_temps(directory)
    temp: str | None = None
    try:
        fd, temp = tempfile.mkstemp(prefix=_TEMP_PREFIX, suffix=_TEMP_SUFFIX, dir=directory)
        with os.fdopen(fd, "wb") as handle:
            handle.write(payload)
            handle.flush()
            os.fsync(handle.fileno())
            os.fchmod(handle.fileno(), mode)
        _replace(temp, target)
        temp = None
        _fsync_directory(directory)
    except BaseException as exc:  # includes KeyboardInterrupt: never leave a temp file
        if temp is not None:
            with contextlib.suppress(OSError):
                os.unlink(temp)
        if not isinstance(exc, Exception):  # KeyboardInterrupt, SIGTERM, SystemExit
            raise
        raise WriteError(f"cannot write {target.as_posix()}: {_reason(exc)}") from exc


def _replace(source: str, target: Path) -> None:
    for attempt in range(REPLACE_TRIES):
        try:
            os.replace(source, target)
            return
        except PermissionError:
            if attempt == REPLACE_TRIES - 1:
                raise
            time.sleep(REPLACE_DELAY)


def _fsync_directory(directory: Path) -> None:
    # Makes the rename itself durable on POSIX; not possible everywhere (Windows).
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _sweep_stale_temps(directory: Path) -> None:
    """Remove our own temporary files left in ``directory`` by a killed run."""
    now = time.time()
    try:
        names = os.listdir(directory)
    except OSError:
        return
    for name in names:
        if not (name.startswith(_TEMP_PREFIX) and name.endswith(_TEMP_SUFFIX)):
            continue
        full = directory / name
        try:
            info = os.lstat(full)
            if stat.S_ISREG(info.st_mode) and now - info.st_mtime > STALE_TEMP_SECONDS:
                os.unlink(full)
        except OSError:
            continue


@contextlib.contextmanager
def locked(lock_path: Path | str, timeout: float = 10.0) -> Iterator[None]:
    """Hold an exclusive advisory lock on ``lock_path`` (created when missing).

    Waits at most ``timeout`` seconds, then raises :class:`LockTimeout` naming
    the process id the holder wrote into the lock file.
    """
    import fcntl

    lock = Path(lock_path)
    flags = os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(lock, flags, 0o666 & ~_umask())
    except OSError as exc:
        raise WriteError(f"cannot open the lock file {lock.as_posix()}: {_reason(exc)}") from exc
    try:
        deadline = time.monotonic() + timeout
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except OSError as exc:
                if exc.errno not in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
                    raise WriteError(f"cannot lock {lock.as_posix()}: {_reason(exc)}") from exc
                if time.monotonic() >= deadline:
                    holder = _holder(fd)
                    raise LockTimeout(f"{lock.as_posix()} is locked by {holder}; gave up after {timeout:g} s") from None
                time.sleep(0.05)
        with contextlib.suppress(OSError):
            os.ftruncate(fd, 0)
            os.pwrite(fd, f"{os.getpid()}\n".encode("ascii"), 0)
        try:
            yield
        finally:
            fcntl.flock(fd, fcntl.LOCK_UN)
    finally:
        os.close(fd)


def _holder(fd: int) -> str:
    try:
        text = os.pread(fd, 32, 0).decode("ascii", "replace").strip()
    except OSError:
        text = ""
    return f"PID {text}" if text.isdigit() else "another process"
