"""What every command that checks specs sets up before the analysis, shared by
``cli`` and ``compare``: the policy in force for each file (the nearest
``.specguard.yaml``), the fail level, the baseline, the waiver date, the result
cache, the progress line, tool errors and writing to standard output.

Only this module and ``cli`` write to stdout and stderr; nothing here exits.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path, PurePosixPath

from . import SPEC_FORMAT_VERSION, __version__
from .interrupt import stop_if_signalled
from .pipeline import CONFIG_NAME, Policies, RunOptions

EXIT_CLEAN, EXIT_FINDINGS, EXIT_USAGE, EXIT_INTERNAL = 0, 1, 2, 3


# ------------------------------------------------------------ tool errors
def fail(message: str, rule: str) -> int:
    """A tool error before or after analysis: one line on stderr, exit 2."""
    from .report.safe import escape_controls

    sys.stderr.write(f"specguard: error: {escape_controls(message)} [{rule}]\n")
    return EXIT_USAGE


def located(findings) -> int:
    """Located problems of the set-up (policy, baseline) on stderr, exit 2."""
    from .report import text

    for finding in findings:
        sys.stderr.write(text.finding_line(finding) + "\n")
    return EXIT_USAGE


# ------------------------------------------------------------------ stdout
_ESCAPE_ERRORS = "specguard-uescape"


def _u_escape(error: UnicodeError) -> tuple[str, int]:
    """Codec error handler: each character the encoding lacks as ``\\uXXXX`` (a UTF-16
    pair above U+FFFF), readable in text and still valid inside JSON strings, where
    "backslashreplace" would write ``\\xfc``, which JSON does not accept (FI18)."""
    if not isinstance(error, UnicodeEncodeError):  # registered for encoding only
        raise error
    out = []
    for ch in error.object[error.start : error.end]:
        cp = ord(ch)
        if cp > 0xFFFF:
            cp -= 0x10000
            out.append(f"\\u{0xD800 + (cp >> 10):04x}\\u{0xDC00 + (cp & 0x3FF):04x}")
        else:
            out.append(f"\\u{cp:04x}")
    return "".join(out), error.end


def emit(text: str) -> None:
    """Write to stdout; characters the stream cannot encode are escaped, and a
    reader that went away (``| head``) ends the output quietly."""
    stop_if_signalled()
    stream = sys.stdout
    try:
        try:
            stream.write(text)
        except UnicodeEncodeError:
            import codecs

            try:
                codecs.lookup_error(_ESCAPE_ERRORS)
            except LookupError:
                codecs.register_error(_ESCAPE_ERRORS, _u_escape)
            encoding = getattr(stream, "encoding", None) or "ascii"
            stream.write(text.encode(encoding, _ESCAPE_ERRORS).decode(encoding))
        stream.flush()
    except BrokenPipeError:
        # Point stdout at /dev/null so the interpreter's final flush cannot fail.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, stream.fileno())
        os.close(devnull)


class Progress:
    """``specguard: 412/1000 files`` on stderr, rewritten in place; only on a terminal,
    never in CI (``CI`` set) or with --quiet, and only once a run lasts over a second."""

    DELAY = 1.0

    def __init__(self, stream=None, enabled: bool | None = None) -> None:
        import time

        self.stream = stream or sys.stderr
        if enabled is None:
            enabled = bool(getattr(self.stream, "isatty", lambda: False)()) and not os.environ.get("CI")
        self.enabled = enabled
        self.clock = time.monotonic
        self.start = self.clock()
        self.width = 0
        self.last = -1.0

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled:
            return
        now = self.clock()
        if now - self.start < self.DELAY or (now - self.last < 0.1 and done < total):
            return
        self.last = now
        line = f"specguard: {done}/{total} files"
        self.width = max(self.width, len(line))
        try:
            self.stream.write("\r" + line.ljust(self.width))
            self.stream.flush()
        except (OSError, ValueError):
            self.enabled = False

    def clear(self) -> None:
        if self.width:
            try:
                self.stream.write("\r" + " " * self.width + "\r")
                self.stream.flush()
            except (OSError, ValueError):
                pass
            self.width = 0


# ------------------------------------------------------------ run settings
def today():
    """The reference date for waiver expiry: SOURCE_DATE_EPOCH when set (reproducible
    runs, https://reproducible-builds.org/specs/source-date-epoch/), else today."""
    import datetime as dt

    raw = os.environ.get("SOURCE_DATE_EPOCH")
    if raw is None or raw == "":
        return dt.date.today()
    if not raw.isdigit():
        raise ValueError(f"SOURCE_DATE_EPOCH must be a whole number of seconds, not {raw!r}")
    return dt.datetime.fromtimestamp(int(raw), tz=dt.timezone.utc).date()


def root_of(args) -> Path | int:
    """--root when given (exit 2 unless it is a directory), else the repository root
    found upwards from the working directory."""
    from .pipeline import find_root

    if getattr(args, "root", None) is not None:
        root = Path(args.root)
        if not root.is_dir():
            return fail(f"--root {args.root}: not a directory", "input-unreadable")
        return root
    return find_root(Path.cwd())


def builtin_rules_dir() -> str | None:
    from importlib.resources import files

    try:
        return str(files("specguard.pack"))
    except (ModuleNotFoundError, TypeError):
        return None


def result_cache(args, root: Path, index: PolicyIndex):
    """The run's result cache, or None with --no-cache (or where a command has none)."""
    if getattr(args, "no_cache", True):
        return None
    from . import cache as rc
    from .report.json_report import REPORT_FORMAT
    from .source import parser_path

    directory = args.cache_dir or rc.default_dir()
    builtin = builtin_rules_dir()
    rule_dirs = ([builtin] if builtin else []) + [str(p) for p in index.rule_dirs()]
    versions = {
        "tool": __version__,
        "spec_format": SPEC_FORMAT_VERSION,
        "report_format": REPORT_FORMAT,
        "parser": parser_path(),
        "cache": rc.CACHE_FORMAT,
        "code": rc.sha256_file_tree([os.path.dirname(os.path.abspath(__file__))], (".py",)),
    }
    denied = [os.path.realpath(d) for d in _denied_for_cache(args)]
    return rc.ResultCache(directory, rc.run_salt(versions, rule_dirs, denied), str(root))


def _denied_for_cache(args) -> list[str]:
    return [
        str(p)
        for p in (getattr(args, "output", None), getattr(args, "write_baseline", None), getattr(args, "baseline", None))
        if p
    ]


def cache_dir_denied(args) -> tuple:
    """The cache directory is never a reference target (docs/reliability.md H11)."""
    if getattr(args, "no_cache", True) and not getattr(args, "cache_dir", None):
        return ()
    from .cache import default_dir

    return (Path(args.cache_dir or default_dir()),)


# ----------------------------------------------------------------- policies
class PolicyIndex(Policies):
    """The policy in force for each file: the nearest ``.specguard.yaml`` in the
    file's folder or above it, up to the file's root (``--config`` overrides them
    all). Globs and rule directories of a policy file are relative to its folder,
    so a run from the top of a repository and a run from a sub-project judge a
    file alike. Each policy file is read once; its problems collect in
    :attr:`errors` (the command stops with exit 2 before any analysis)."""

    def __init__(self, override: Path | None, fail_level: str | None, pack_cache: str | None, base: RunOptions) -> None:
        super().__init__(None)
        self.override = override
        self.cli_fail_level = fail_level
        self.pack_cache = pack_cache
        self.base = base
        self.errors: list = []
        self._has_config: dict[str, bool] = {}
        self._loaded: dict[tuple[str, str], RunOptions | None] = {}

    def config_path(self, root: Path, rel: str) -> Path | None:
        """The policy file in force for ``rel`` (relative to ``root``), or None."""
        if self.override is not None:
            return self.override
        posix = PurePosixPath(rel)
        parts = () if posix.is_absolute() or ".." in posix.parts else posix.parent.parts
        for depth in range(len(parts), -1, -1):  # the file's folder first, the root last
            folder = root.joinpath(*parts[:depth])
            key = str(folder)
            if key not in self._has_config:
                self._has_config[key] = (folder / CONFIG_NAME).is_file()
            if self._has_config[key]:
                return folder / CONFIG_NAME
        return None

    def options_for(self, root: Path, rel: str) -> RunOptions | None:
        path = self.config_path(root, rel)
        key = (str(root), str(path))
        if key not in self._loaded:
            self._loaded[key] = self._load(root, path)
        return self._loaded[key]

    def _load(self, root: Path, path: Path | None) -> RunOptions | None:
        from dataclasses import replace

        from .engine.config import ConfigError, load_policy

        if path is not None and not path.is_file():
            self.errors.append(("--config", f"--config {path.as_posix()}: no such file"))
            return None
        base = root if self.override is not None or path is None else path.parent
        try:
            config, pack = load_policy(path, root, self.pack_cache, base)
        except ConfigError as exc:
            self.errors.extend(exc.findings)
            return None
        level = None
        if self.cli_fail_level:
            config = config.with_fail_level(self.cli_fail_level, "--fail-level")
        else:
            level = config.fail_level.value
        return replace(self.base, config=config, pack=pack, fail_level=level)

    def loaded(self) -> list[RunOptions]:
        return [o for o in self._loaded.values() if o is not None]

    def rule_dirs(self) -> list[Path]:
        out: list[Path] = []
        for options in self.loaded():
            for p in getattr(options.config, "extra_rule_paths", ()):
                if p not in out:
                    out.append(p)
        return out

    def report_errors(self) -> int | None:
        """Print the problems of the policy files read so far: exit 2, or None."""
        if not self.errors:
            return None
        for item in self.errors:
            if isinstance(item, tuple):
                return fail(item[1], "config-invalid")
        return located(self.errors)


def policy_index(args, root: Path, base: RunOptions | None = None) -> PolicyIndex:
    pack_cache = None
    if not getattr(args, "no_cache", True):  # commands with a cache keep the parsed pack there too
        from .cache import default_dir

        pack_cache = args.cache_dir or default_dir()
    override = Path(args.config) if getattr(args, "config", None) else None
    return PolicyIndex(override, getattr(args, "fail_level", None), pack_cache, base or RunOptions())


def run_fail_level(args, index: PolicyIndex, root: Path) -> str:
    """The run's fail level: --fail-level, else the policy in force at the root, else
    error. Files under a policy file with another level carry their own."""
    if getattr(args, "fail_level", None):
        return args.fail_level
    options = index.options_for(root, "")
    if options is not None and options.fail_level is not None:
        return options.fail_level
    return "error"


def prepare(args, root: Path, denied: tuple, paths: list[str]):
    """(targets, run fail level, run options, index) for check and report, or an exit
    status after printing the problem: policies, --fail-level, baseline, waiver date,
    denied files."""
    from .pipeline import plan

    baseline = None
    if getattr(args, "baseline", None):
        from .engine.baseline import BaselineError, load
        from .pipeline import relpath

        path = Path(args.baseline)
        try:
            baseline = load(path, relpath(path, root))
        except BaselineError as exc:
            return located([exc.finding])
        denied += (path,)
    try:
        date = today()
    except ValueError as exc:
        return fail(str(exc), "config-invalid")
    base = RunOptions(
        today=date,
        no_waivers=getattr(args, "no_waivers", False),
        baseline=baseline,
        strict_baseline=getattr(args, "strict_baseline", False),
        denied=denied,
    )
    index = policy_index(args, root, base)
    fail_level = run_fail_level(args, index, root)
    targets = plan(paths, root, index) if paths else []
    status = index.report_errors()
    if status is not None:
        return status
    options = index.options_for(root, "")
    return targets, fail_level, options, index
