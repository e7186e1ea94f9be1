"""Command line: the only module that touches argv, stdout and the exit status.

Exit status: 0 nothing at or above the fail level; 1 findings at or above it;
2 bad invocation, config or unreadable input path; 3 internal error (the
traceback only with ``--debug``).
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from . import SPEC_FORMAT_VERSION, __version__

EXIT_CLEAN, EXIT_FINDINGS, EXIT_USAGE, EXIT_INTERNAL = 0, 1, 2, 3


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # bad invocation: exit 2 with a one-line hint
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"specguard: error: {message}\n")


def _version_text() -> str:
    from .source import parser_path

    return (
        f"specguard {__version__} (spec format {SPEC_FORMAT_VERSION}; "
        f"YAML loader: {parser_path()}; Python {sys.version.split()[0]})"
    )


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="specguard",
        description="Design-rule linter for electric-drive specifications (YAML, one file per axis).",
        epilog="Exit status: 0 clean, 1 findings at or above the fail level, 2 bad invocation "
        "or unreadable input, 3 internal error.",
    )
    parser.add_argument("--version", action="store_true", help="print version and loader path")
    parser.add_argument("--debug", action="store_true", help="show tracebacks of internal errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    check = sub.add_parser("check", help="check spec files or directories")
    check.add_argument("paths", nargs="+", metavar="PATH", help="spec files or directories")
    _common_options(check)
    _output_options(check)
    _policy_options(check)

    demo = sub.add_parser("demo", help="check the bundled demo specs (an invented lab robot)")
    _common_options(demo, root=False)
    _output_options(demo)

    config = sub.add_parser("config", help="show the effective policy and where each value comes from")
    config.add_argument("file", nargs="?", metavar="FILE",
                        help="a spec file: show the values in force for it, per-path entries included")
    config.add_argument("--config", metavar="FILE", help="policy file (default: .specguard.yaml at the root)")
    config.add_argument("--root", metavar="DIR", help="repository root (default: nearest parent "
                        "with .specguard.yaml or .git)")

    schema = sub.add_parser("schema", help="print the JSON Schema of the spec format")
    schema.add_argument("--path", action="store_true", help="print where the schema file is installed")

    _report_parser(sub)

    rules = sub.add_parser("rules", help="list the rules: id, default severity, title")
    rules.add_argument("--rules-dir", action="append", default=[], metavar="DIR",
                       help="also list the rule files of DIR (a team's rules; may be repeated)")
    explain = sub.add_parser("explain", help="explain one rule: what, why, formula, thresholds, "
                             "sources, examples")
    explain.add_argument("rule", metavar="RULE", help="rule id (or a former id)")
    explain.add_argument("--rules-dir", action="append", default=[], metavar="DIR",
                         help="also look in the rule files of DIR (may be repeated)")
    return parser


def _common_options(p: argparse.ArgumentParser, root: bool = True) -> None:
    p.add_argument(
        "--fail-level",
        choices=("error", "warning", "info"),
        default=None,
        help="lowest severity that makes the exit status 1 (default: the config's fail_level, else error)",
    )
    colour = p.add_mutually_exclusive_group()
    colour.add_argument("--color", dest="colour", action="store_true", default=None,
                        help="colour the text output even when not on a terminal")
    colour.add_argument("--no-color", dest="colour", action="store_false",
                        help="never colour the text output")
    if root:
        p.add_argument("--root", metavar="DIR",
                       help="repository root that references must stay inside "
                       "(default: nearest parent with .specguard.yaml or .git)")


def _output_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--format", choices=("text", "json", "sarif"), default="text",
                   help="output format (default: text)")
    p.add_argument("--output", metavar="FILE",
                   help="write the report to FILE (atomically) instead of standard output")


def _policy_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--config", metavar="FILE",
                   help="policy file (default: .specguard.yaml at the root, when present)")
    baseline = p.add_mutually_exclusive_group()
    baseline.add_argument("--baseline", metavar="FILE",
                          help="suppress the findings recorded in this baseline file")
    baseline.add_argument("--write-baseline", metavar="FILE",
                          help="record the current rule findings in FILE (atomically) and suppress them")
    p.add_argument("--strict-baseline", action="store_true",
                   help="baseline entries that match no finding make the exit status 1")
    p.add_argument("--no-waivers", action="store_true",
                   help="ignore every waiver in the specs (strict mode)")


def _fail(message: str, rule: str) -> int:
    """A tool error before or after analysis: one line on stderr, exit 2."""
    from .report.safe import escape_controls

    sys.stderr.write(f"specguard: error: {escape_controls(message)} [{rule}]\n")
    return EXIT_USAGE


def _located(findings) -> int:
    from .report import text

    for finding in findings:
        sys.stderr.write(text.finding_line(finding) + "\n")
    return EXIT_USAGE


def _today():
    """The reference date for waiver expiry: SOURCE_DATE_EPOCH when set (reproducible
    runs, https://reproducible-builds.org/specs/source-date-epoch/), else today."""
    import datetime as dt

    raw = os.environ.get("SOURCE_DATE_EPOCH")
    if raw is None or raw == "":
        return dt.date.today()
    if not raw.isdigit():
        raise ValueError(f"SOURCE_DATE_EPOCH must be a whole number of seconds, not {raw!r}")
    return dt.datetime.fromtimestamp(int(raw), tz=dt.timezone.utc).date()


def _config_path(args, root: Path) -> Path | None:
    if getattr(args, "config", None):
        return Path(args.config)
    default = root / ".specguard.yaml"
    return default if default.exists() else None


def _load_policy(args, root: Path):
    """(config, pack) or an exit status after printing the located problems."""
    from .engine.config import ConfigError, load_policy

    path = _config_path(args, root)
    if path is not None and not path.is_file():
        return _fail(f"--config {path.as_posix()}: no such file", "config-invalid")
    try:
        return load_policy(path, root)
    except ConfigError as exc:
        return _located(exc.findings)


def _render(report, fmt: str, colour: bool) -> str:
    if fmt == "json":
        from .report import json_report

        return json_report.render(report)
    if fmt == "sarif":
        from .report import sarif

        return sarif.render(report)
    from .report import text

    return text.render(report, colour=colour)


def _emit(text: str) -> None:
    """Write to stdout; characters the stream cannot encode are escaped, and a
    reader that went away (``| head``) ends the output quietly."""
    stream = sys.stdout
    try:
        try:
            stream.write(text)
        except UnicodeEncodeError:
            encoding = getattr(stream, "encoding", None) or "ascii"
            stream.write(text.encode(encoding, "backslashreplace").decode(encoding))
        stream.flush()
    except BrokenPipeError:
        # Point stdout at /dev/null so the interpreter's final flush cannot fail.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, stream.fileno())
        os.close(devnull)


def _run_check(args, paths: list[str], root: Path) -> int:
    from .atomic import target_problem
    from .pipeline import RunOptions, check_paths
    from .report import text

    # Everything that can make the run a tool error is checked before any analysis.
    output = Path(args.output) if args.output else None
    write_baseline = Path(args.write_baseline) if getattr(args, "write_baseline", None) else None
    for option, target in (("--output", output), ("--write-baseline", write_baseline)):
        problem = target_problem(target) if target is not None else None
        if problem is not None:
            return _fail(f"{option} {target.as_posix()}: {problem}", "output-error")
    policy = _load_policy(args, root)
    if isinstance(policy, int):
        return policy
    config, pack = policy
    fail_level = args.fail_level or config.fail_level.value
    if args.fail_level:
        config = config.with_fail_level(args.fail_level, "--fail-level")
    baseline = None
    if getattr(args, "baseline", None):
        from .engine.baseline import BaselineError, load

        path = Path(args.baseline)
        try:
            baseline = load(path, _display(path, root))
        except BaselineError as exc:
            return _located([exc.finding])
    try:
        today = _today()
    except ValueError as exc:
        return _fail(str(exc), "config-invalid")
    denied = tuple(p for p in (output, write_baseline, getattr(args, "baseline", None)) if p)
    options = RunOptions(config=config, pack=pack, today=today,
                         no_waivers=getattr(args, "no_waivers", False), baseline=baseline,
                         strict_baseline=getattr(args, "strict_baseline", False), denied=denied)
    report = check_paths(paths, root=root, fail_level=fail_level, debug=args.debug, options=options)
    if write_baseline is not None:
        status = _write_baseline(report, write_baseline, root)
        if isinstance(status, int):
            return status
        report = status
    colour = args.format == "text" and output is None and text.use_colour(sys.stdout, args.colour)
    rendered = _render(report, args.format, colour)
    if output is not None:
        from .atomic import WriteError, write_atomic

        try:
            write_atomic(output, rendered)
        except WriteError as exc:
            return max(_fail(str(exc), "output-error"), report.exit_status())
        _emit(text.summary(report) + "\n")
    else:
        _emit(rendered)
    return report.exit_status()


def _display(path: Path, root: Path) -> str:
    from .pipeline import relpath

    return relpath(path, root)


# Seconds a second writer of the same baseline waits for the lock (RELIABILITY.md FI10).
BASELINE_LOCK_TIMEOUT = 10.0


def _write_baseline(report, path: Path, root: Path):
    """Write the baseline and return the report with it applied, or an exit status."""
    from .atomic import LockTimeout, WriteError
    from .engine import baseline as bl
    from .pipeline import apply_baseline

    if report.exit_status() >= 2:
        # A baseline of a partial run would silently drop the entries of the
        # files that could not be analysed.
        sys.stderr.write("specguard: the baseline was not written: some inputs could not be "
                         "analysed\n")
        return report
    display = _display(path, root)
    try:
        written = bl.write(path, display, {r.file: r.findings for r in report.files}, root,
                           lock_timeout=BASELINE_LOCK_TIMEOUT)
    except bl.BaselineError as exc:
        return _located([exc.finding])
    except (WriteError, LockTimeout) as exc:
        return _fail(str(exc), "output-error")
    return apply_baseline(report, written, root)


def _main(argv: list[str] | None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.version:
        _emit(_version_text() + "\n")
        return EXIT_CLEAN
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    if args.command == "check":
        from .pipeline import find_root

        if args.root is not None:
            root = Path(args.root)
            if not root.is_dir():
                parser.error(f"--root {args.root}: not a directory")
        else:
            root = find_root(Path.cwd())
        return _run_check(args, args.paths, root)
    if args.command == "demo":
        from .demo_data import demo_root

        root = demo_root()
        return _run_check(args, [str(root)], root)
    if args.command == "report":
        return _run_report(args)
    if args.command == "config":
        return _run_config(args)
    if args.command == "schema":
        from importlib.resources import files

        resource = files("specguard.schemas") / "spec-v1.schema.json"
        _emit((str(resource) if args.path else resource.read_text(encoding="utf-8")) + "\n")
        return EXIT_CLEAN
    if args.command in ("rules", "explain"):
        return _run_rules(args)
    parser.error(f"unknown command {args.command}")
    return EXIT_USAGE


def _run_rules(args) -> int:
    """`specguard rules` and `specguard explain RULE`."""
    from .engine.evaluate import PackError, load_pack
    from .engine.pack import explain_text
    from .findings import BUILTIN_IDS

    try:
        pack = load_pack([Path(d) for d in args.rules_dir])
    except PackError as exc:
        sys.stderr.write("".join(f"specguard: {line}\n" for line in exc.problems))
        return EXIT_USAGE
    if args.command == "rules":
        width = max(len(r.id) for r in pack.rules)
        lines = [f"{r.id:<{width}}  {r.rule.default_severity:<7}  {r.rule.title}"
                 for r in sorted(pack.rules, key=lambda r: r.id)]
        _emit("\n".join(lines) + "\n")
        return EXIT_CLEAN
    prule = pack.get(args.rule)
    if prule is not None:
        _emit(explain_text(prule))
        return EXIT_CLEAN
    if args.rule in BUILTIN_IDS:
        _emit(f"{args.rule}: built-in finding, not a rule of the pack\n  {BUILTIN_IDS[args.rule]}\n")
        return EXIT_CLEAN
    hint = pack.suggest(args.rule)
    sys.stderr.write(f"specguard: unknown rule '{args.rule}'"
                     + (f"; did you mean '{hint}'?" if hint else "; 'specguard rules' lists them") + "\n")
    return EXIT_USAGE


def _run_config(args) -> int:
    from .pipeline import find_root, relpath
    from .report.safe import escape_controls

    root = Path(args.root) if args.root else find_root(Path.cwd())
    if not root.is_dir():
        return _fail(f"--root {args.root}: not a directory", "input-unreadable")
    policy = _load_policy(args, root)
    if isinstance(policy, int):
        return policy
    config, _pack = policy
    rel = relpath(Path(args.file), root) if args.file else None
    _emit("\n".join(escape_controls(line) for line in config.explain_text(rel).split("\n")))
    return EXIT_CLEAN


# ---------------------------------------------------------------- report
def _report_parser(sub) -> None:
    report = sub.add_parser(
        "report", help="check like 'check' and write a standalone HTML review report and/or a "
        "Markdown summary for a pull-request comment")
    report.add_argument("paths", nargs="+", metavar="PATH", help="spec files or directories")
    report.add_argument("--html", metavar="FILE", help="write the HTML review report to FILE (atomically)")
    report.add_argument("--markdown", metavar="FILE", help="write the Markdown summary to FILE (atomically)")
    _common_options(report)
    _policy_options(report)


def _generated_text() -> str | None:
    """The report's date: only from SOURCE_DATE_EPOCH (no clock time otherwise)."""
    import datetime as dt

    raw = os.environ.get("SOURCE_DATE_EPOCH")
    if not raw or not raw.isdigit():
        return None
    return dt.datetime.fromtimestamp(int(raw), tz=dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def _run_report(args) -> int:
    """`specguard report PATH... --html FILE --markdown FILE`: the check of `check`, other outputs."""
    from .atomic import WriteError, target_problem, write_atomic
    from .pipeline import RunOptions, check_paths, find_root
    from .report import text

    targets = [(opt, Path(value)) for opt, value in (("--html", args.html), ("--markdown", args.markdown)) if value]
    if not targets:
        return _fail("report needs --html FILE, --markdown FILE or both", "output-error")
    if args.write_baseline:
        return _fail("report does not write baselines; use 'check --write-baseline'", "output-error")
    for option, target in targets:
        problem = target_problem(target)
        if problem is not None:
            return _fail(f"{option} {target.as_posix()}: {problem}", "output-error")
    if args.root is not None:
        root = Path(args.root)
        if not root.is_dir():
            return _fail(f"--root {args.root}: not a directory", "input-unreadable")
    else:
        root = find_root(Path.cwd())
    policy = _load_policy(args, root)
    if isinstance(policy, int):
        return policy
    config, pack = policy
    fail_level = args.fail_level or config.fail_level.value
    if args.fail_level:
        config = config.with_fail_level(args.fail_level, "--fail-level")
    baseline = None
    if args.baseline:
        from .engine.baseline import BaselineError, load

        try:
            baseline = load(Path(args.baseline), _display(Path(args.baseline), root))
        except BaselineError as exc:
            return _located([exc.finding])
    try:
        today = _today()
    except ValueError as exc:
        return _fail(str(exc), "config-invalid")
    denied = tuple(t for _, t in targets) + ((args.baseline,) if args.baseline else ())
    options = RunOptions(config=config, pack=pack, today=today, no_waivers=args.no_waivers,
                         baseline=baseline, strict_baseline=args.strict_baseline, denied=denied)
    report = check_paths(args.paths, root=root, fail_level=fail_level, debug=args.debug, options=options)
    status = report.exit_status()
    for option, target in targets:
        if option == "--html":
            from .report import html

            rendered = html.render(report, generated=_generated_text())
        else:
            from .report import markdown

            rendered = markdown.render(report)
        try:
            write_atomic(target, rendered)
        except WriteError as exc:
            return max(_fail(str(exc), "output-error"), status)
    _emit(text.summary(report) + "\n")
    return status


def main(argv: list[str] | None = None) -> int:
    debug = "--debug" in (argv if argv is not None else sys.argv[1:])
    try:
        return _main(argv)
    except KeyboardInterrupt:
        return 130
    except Exception as exc:
        if debug:
            raise
        sys.stderr.write(
            f"specguard: internal error: {type(exc).__name__}: {exc}\n"
            "specguard: this is a bug; run again with --debug for the traceback\n"
        )
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
