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
from .interrupt import EXIT_SIGINT, RECEIVED, Interrupted
from .runsetup import (
    EXIT_CLEAN,
    EXIT_FINDINGS,
    EXIT_INTERNAL,
    EXIT_USAGE,
    Progress,
    cache_dir_denied,
    emit,
    fail,
    located,
    policy_index,
    prepare,
    result_cache,
    root_of,
)

__all__ = ["EXIT_CLEAN", "EXIT_FINDINGS", "EXIT_INTERNAL", "EXIT_USAGE", "build_parser", "main"]


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
    _speed_options(check)

    hook = sub.add_parser(
        "hook",
        help="pre-commit mode: check the given spec files, and for a given library "
        "file every spec that uses it; other files are ignored",
    )
    hook.add_argument("files", nargs="*", metavar="FILE", help="changed files (as a commit hook gets them)")
    _common_options(hook)
    _output_options(hook)
    _policy_options(hook)
    _speed_options(hook)

    demo = sub.add_parser("demo", help="check the bundled demo specs (an invented lab robot)")
    demo.add_argument(
        "--copy",
        metavar="DIR",
        help="copy the demo tree into DIR (a new or empty folder) to start from, instead of checking it",
    )
    _common_options(demo, root=False)
    _output_options(demo)
    _speed_options(demo)

    _compare_parser(sub)

    new = sub.add_parser("new", help="write a commented starter spec for a motor type and stage")
    new.add_argument(
        "--kind",
        required=True,
        choices=("dc-h-bridge", "three-phase-sinusoidal", "three-phase-six-step"),
        help="brushed DC motor on an H-bridge, or a three-phase motor with sinusoidal/space-vector PWM "
        "or six-step commutation",
    )
    new.add_argument("file", metavar="FILE", help="the spec to write (never overwritten; '-' for stdout)")

    config = sub.add_parser("config", help="show the effective policy and where each value comes from")
    config.add_argument(
        "file",
        nargs="?",
        metavar="FILE",
        help="a spec file: show the values in force for it, per-path entries included",
    )
    config.add_argument(
        "--config",
        metavar="FILE",
        help="policy file for every spec (default: the nearest "
        ".specguard.yaml in the spec's folder or above it, up to the repository root)",
    )
    config.add_argument(
        "--changed", action="store_true", help="show only the values that differ from the built-in defaults"
    )
    config.add_argument(
        "--root",
        metavar="DIR",
        help="repository root (default: the top of the git work tree, else the nearest parent with .specguard.yaml)",
    )

    schema = sub.add_parser("schema", help="print the JSON Schema of the spec format")
    schema.add_argument("--path", action="store_true", help="print where the schema file is installed")

    _report_parser(sub)
    _figures_parser(sub)
    _explore_parser(sub)

    rules = sub.add_parser("rules", help="list the rules: id, default severity, title")
    rules.add_argument(
        "--rules-dir",
        action="append",
        default=[],
        metavar="DIR",
        help="also list the rule files of DIR (a team's rules; may be repeated)",
    )
    explain = sub.add_parser("explain", help="explain one rule: what, why, formula, thresholds, sources, examples")
    explain.add_argument("rule", metavar="RULE", help="rule id (or a former id)")
    explain.add_argument(
        "--rules-dir",
        action="append",
        default=[],
        metavar="DIR",
        help="also look in the rule files of DIR (may be repeated)",
    )
    return parser


def _common_options(p: argparse.ArgumentParser, root: bool = True) -> None:
    p.add_argument(
        "--fail-level",
        choices=("error", "warning", "info"),
        default=None,
        help="lowest severity that makes the exit status 1 (default: the config's fail_level, else error)",
    )
    colour = p.add_mutually_exclusive_group()
    colour.add_argument(
        "--color",
        dest="colour",
        action="store_true",
        default=None,
        help="colour the text output even when not on a terminal",
    )
    colour.add_argument("--no-color", dest="colour", action="store_false", help="never colour the text output")
    if root:
        p.add_argument(
            "--root",
            metavar="DIR",
            help="repository root that references must stay inside "
            "(default: the top of the git work tree, else the nearest parent with .specguard.yaml)",
        )


def _output_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--format", choices=("text", "json", "sarif"), default="text", help="output format (default: text)")
    p.add_argument("--output", metavar="FILE", help="write the report to FILE (atomically) instead of standard output")
    p.add_argument(
        "--summary",
        action="store_true",
        help="text output: one line per file (its counts and verdict) and the totals, instead of the findings",
    )
    p.add_argument(
        "--show",
        type=_severities,
        default=None,
        metavar="SEVERITIES",
        help="text output: print only the findings of these severities, e.g. 'error,warning' "
        "(the counts and the exit status still take every finding)",
    )
    p.add_argument(
        "--show-baselined",
        action="store_true",
        help="text output: also print the findings the baseline holds (left out by default; always counted)",
    )


def _severities(text: str) -> tuple[str, ...]:
    from .report.text import parse_show

    try:
        return parse_show(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def _policy_options(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--config",
        metavar="FILE",
        help="policy file for every spec (default: the nearest .specguard.yaml in the "
        "spec's folder or above it, up to the repository root)",
    )
    baseline = p.add_mutually_exclusive_group()
    baseline.add_argument("--baseline", metavar="FILE", help="suppress the findings recorded in this baseline file")
    baseline.add_argument(
        "--write-baseline",
        metavar="FILE",
        help="record the current rule findings in FILE (atomically) and suppress them; "
        "a second writer waits for the lock up to SPECGUARD_LOCK_TIMEOUT seconds "
        "(default 10)",
    )
    p.add_argument(
        "--strict-baseline", action="store_true", help="baseline entries that match no finding make the exit status 1"
    )
    p.add_argument("--no-waivers", action="store_true", help="ignore every waiver in the specs (strict mode)")


def _speed_options(p: argparse.ArgumentParser, cache: bool = True) -> None:
    p.add_argument(
        "-j",
        "--jobs",
        type=_jobs,
        default=None,
        metavar="N",
        help=(
            "worker processes (default: the number of CPUs when more than 8 files need analysis, else 1; "
            "the HTML report draws its axis sections on every CPU unless -j is given)"
        ),
    )
    if cache:
        p.add_argument("--no-cache", action="store_true", help="neither read nor write the result cache")
        p.add_argument(
            "--cache-dir",
            metavar="DIR",
            help="result cache directory (default: $SPECGUARD_CACHE_DIR, else "
            "$XDG_CACHE_HOME/specguard, else ~/.cache/specguard)",
        )
    p.add_argument("-q", "--quiet", action="store_true", help="no progress line on the terminal")


def _jobs(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a whole number: {text!r}") from None
    if not 1 <= value <= 256:
        raise argparse.ArgumentTypeError("must be between 1 and 256")
    return value


def _render(report, fmt: str, colour: bool, args=None) -> str:
    if fmt == "json":
        from .report import json_report

        return json_report.render(report)
    if fmt == "sarif":
        from .report import sarif

        return sarif.render(report)
    from .report import text

    return text.render(
        report,
        colour=colour,
        show=getattr(args, "show", None) or text.SEVERITIES,
        show_baselined=bool(getattr(args, "show_baselined", False)),
        summary_only=bool(getattr(args, "summary", False)),
    )


def _without_unapplied(report, targets):
    """The report without the rule-not-applicable findings of the files whose policy
    turns them off (``unapplied_rules: hide``); applied after the cache and the rules."""
    from dataclasses import replace

    from .engine.config import hide_unapplied

    options = {}
    for t in targets:
        options[t.rel] = t.options
        if t.shown_as:  # a file outside the run's root: its paths carry the prefix the user typed
            options[f"{t.shown_as.rstrip('/')}/{t.rel}"] = t.options
    files = []
    for result in report.files:
        opts = options.get(result.file)
        if opts is not None and hide_unapplied(opts.config):
            kept = tuple(f for f in result.findings if f.rule != "rule-not-applicable")
            if len(kept) != len(result.findings):
                result = replace(result, findings=kept)
        files.append(result)
    return replace(report, files=tuple(files))


def _run_check(args, paths: list[str], root: Path, select=None) -> int:
    from .atomic import target_problem
    from .pipeline import run_targets
    from .report import text

    # Everything that can make the run a tool error is checked before any analysis.
    output = Path(args.output) if args.output else None
    write_baseline = Path(args.write_baseline) if getattr(args, "write_baseline", None) else None
    for option, target in (("--output", output), ("--write-baseline", write_baseline)):
        problem = target_problem(target) if target is not None else None
        if target is not None and problem is not None:
            return fail(f"{option} {target.as_posix()}: {problem}", "output-error")
    denied = tuple(p for p in (output, write_baseline) if p) + cache_dir_denied(args)
    if select is not None:  # pre-commit mode: the specs to check for the changed files
        paths = select()
        if not paths:
            return EXIT_CLEAN
    prepared = prepare(args, root, denied, paths)
    if isinstance(prepared, int):
        return prepared
    targets, fail_level, options, index = prepared
    cache = result_cache(args, root, index)
    progress = Progress(enabled=False if getattr(args, "quiet", False) else None)
    try:
        report = run_targets(
            targets,
            fail_level=fail_level,
            debug=args.debug,
            options=options,
            jobs=getattr(args, "jobs", 1),
            result_cache=cache,
            progress=progress,
        )
    finally:
        progress.clear()
    report = _without_unapplied(report, targets)
    if cache is not None:
        for line in cache.warnings():
            sys.stderr.write(line + "\n")
    if write_baseline is not None:
        status = _write_baseline(report, write_baseline, root)
        if isinstance(status, int):
            return status
        report = status
    colour = args.format == "text" and output is None and text.use_colour(sys.stdout, args.colour)
    rendered = _render(report, args.format, colour, args)
    if output is not None:
        from .atomic import WriteError, write_atomic

        try:
            write_atomic(output, rendered)
        except WriteError as exc:
            return max(fail(str(exc), "output-error"), report.exit_status())
        emit(text.summary(report) + "\n")
    else:
        emit(rendered)
    return report.exit_status()


def _display(path: Path, root: Path) -> str:
    from .pipeline import relpath

    return relpath(path, root)


# Seconds a second writer of the same baseline waits for the lock (docs/reliability.md FI10);
# the environment variable SPECGUARD_LOCK_TIMEOUT (seconds, 0 to 3600) sets another wait.
BASELINE_LOCK_TIMEOUT = 10.0
LOCK_TIMEOUT_VARIABLE = "SPECGUARD_LOCK_TIMEOUT"


def _lock_timeout() -> float:
    """The lock wait in seconds; ValueError for a value that is not 0 to 3600."""
    import math

    raw = os.environ.get(LOCK_TIMEOUT_VARIABLE, "").strip()
    if not raw:
        return BASELINE_LOCK_TIMEOUT
    try:
        value = float(raw)
    except ValueError:
        value = math.nan
    if not 0.0 <= value <= 3600.0:  # also false for nan
        raise ValueError(f"{LOCK_TIMEOUT_VARIABLE} must be a number of seconds from 0 to 3600, not {raw!r}")
    return value


def _write_baseline(report, path: Path, root: Path):
    """Write the baseline and return the report with it applied, or an exit status."""
    from .atomic import LockTimeout, WriteError
    from .engine import baseline as bl
    from .pipeline import apply_baseline

    if report.exit_status() >= 2:
        # A baseline of a partial run would silently drop the entries of the
        # files that could not be analysed.
        sys.stderr.write("specguard: the baseline was not written: some inputs could not be analysed\n")
        return report
    display = _display(path, root)
    try:
        timeout = _lock_timeout()
    except ValueError as exc:
        return fail(str(exc), "config-invalid")
    try:
        written = bl.write(path, display, {r.file: r.findings for r in report.files}, root, lock_timeout=timeout)
    except bl.BaselineError as exc:
        return located([exc.finding])
    except LockTimeout as exc:
        return fail(f"the baseline {display} was not written: {exc}", "output-error")
    except WriteError as exc:
        return fail(str(exc), "output-error")
    return apply_baseline(report, written, root)


def _with_root(run):
    """A command that needs the repository root (--root, else found upwards)."""

    def command(args) -> int:
        root = root_of(args)
        return root if isinstance(root, int) else run(args, root)

    return command


def _check(args, root: Path) -> int:
    return _run_check(args, args.paths, root)


def _hook(args, root: Path) -> int:
    if not args.files:  # nothing staged that the hook's file filter passes
        return EXIT_CLEAN

    def select():
        from .hook import select as pick

        index = policy_index(args, root)
        chosen = pick(args.files, root, index)[0]
        # A broken policy file: the run's set-up reads it again and stops with exit 2.
        return list(args.files) if index.errors else chosen

    return _run_check(args, [], root, select=select)


def _demo(args) -> int:
    from .demo_data import copy_demo, demo_root

    if args.copy:
        try:
            written = copy_demo(Path(args.copy))
        except OSError as exc:
            return fail(f"--copy {args.copy}: {exc.strerror or exc}", "output-error")
        emit(f"specguard: the demo is in {written.as_posix()}; try 'specguard check {written.as_posix()}'\n")
        return EXIT_CLEAN
    root = demo_root()
    return _run_check(args, [str(root)], root)


def _new(args) -> int:
    from .atomic import WriteError, write_atomic
    from .starter import starter_text

    text = starter_text(args.kind)
    if args.file == "-":
        emit(text)
        return EXIT_CLEAN
    target = Path(args.file)
    if target.exists() or target.is_symlink():
        return fail(f"{args.file}: exists; 'specguard new' never overwrites a file", "output-error")
    try:
        write_atomic(target, text)
    except WriteError as exc:
        return fail(str(exc), "output-error")
    emit(f"specguard: wrote {target.as_posix()}; fill its <...> placeholders, then run 'specguard check'\n")
    return EXIT_CLEAN


def _compare(args) -> int:
    from .compare import run_compare

    return run_compare(args)


def _schema(args) -> int:
    from importlib.resources import files

    resource = files("specguard.schemas") / "spec-v1.schema.json"
    emit((str(resource) if args.path else resource.read_text(encoding="utf-8")) + "\n")
    return EXIT_CLEAN


def _main(argv: list[str] | None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.version:
        emit(_version_text() + "\n")
        return EXIT_CLEAN
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    commands = {
        "check": _with_root(_check),
        "hook": _with_root(_hook),
        "compare": _compare,
        "demo": _demo,
        "new": _new,
        "figures": _with_root(_run_figures),
        "explore": _with_root(_run_explore),
        "report": _with_root(_run_report),
        "config": _with_root(_run_config),
        "schema": _schema,
        "rules": _run_rules,
        "explain": _run_rules,
    }
    return commands[args.command](args)


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
        lines = [
            f"{r.id:<{width}}  {r.rule.default_severity:<7}  {r.rule.title}"
            for r in sorted(pack.rules, key=lambda r: r.id)
        ]
        emit("\n".join(lines) + "\n")
        return EXIT_CLEAN
    prule = pack.get(args.rule)
    if prule is not None:
        emit(explain_text(prule))
        return EXIT_CLEAN
    if args.rule in BUILTIN_IDS:
        emit(f"{args.rule}: built-in finding, not a rule of the pack\n  {BUILTIN_IDS[args.rule]}\n")
        return EXIT_CLEAN
    hint = pack.suggest(args.rule)
    sys.stderr.write(
        f"specguard: unknown rule '{args.rule}'"
        + (f"; did you mean '{hint}'?" if hint else "; 'specguard rules' lists them")
        + "\n"
    )
    return EXIT_USAGE


def _run_config(args, root: Path) -> int:
    import posixpath

    from .pipeline import relpath
    from .report.safe import escape_controls

    index = policy_index(args, root)
    rel = relpath(Path(args.file), root) if args.file else posixpath.join(relpath(Path.cwd(), root), "-")
    if args.file and not Path(args.file).exists():
        return fail(f"{args.file}: no such file", "input-unreadable")
    options = index.options_for(root, rel)
    status = index.report_errors()
    if status is not None or options is None:
        return EXIT_USAGE if status is None else status
    config = options.config
    assert config is not None  # the index always puts a policy in its options
    used = index.config_path(root, rel)
    where = relpath(used, root) if used is not None else None
    head = (
        f"policy file in force: {where}"
        if where is not None
        else "policy file in force: none (no .specguard.yaml in this folder or above it, "
        "up to the repository root): built-in defaults"
    )
    body = config.explain_text(rel if args.file else None)
    if args.changed:
        body = config.changed_text(rel if args.file else None)
    _emit_lines(head + "\n" + body, escape_controls)
    return EXIT_CLEAN


def _emit_lines(text: str, escape) -> None:
    emit("\n".join(escape(line) for line in text.split("\n")))


# ---------------------------------------------------------------- report
def _explore_parser(sub) -> None:
    explore = sub.add_parser(
        "explore",
        help="for one axis, the cheapest changes of PWM frequency, added inductance and supply that clear every rule",
        description="Move the levers of one axis (PWM frequency, added series inductance, supply voltage; the PWM "
        "frequency with added inductance together) and judge every variant with the whole rule pack: the "
        "cheapest changes that leave no finding at the fail level, and none at warning level, with the figures "
        "that matter. Exit status 0 when the table was computed, 2 for a spec that cannot be checked.",
    )
    explore.add_argument("path", metavar="SPEC", help="one spec file")
    explore.add_argument("--format", choices=("text", "json"), default="text")
    explore.add_argument("--root", metavar="DIR", help="repository root (as for check)")
    explore.add_argument("--config", metavar="FILE", help="policy file (as for check)")


def _run_explore(args, root: Path) -> int:
    from .explore import explore, render_json, render_text

    prepared = prepare(args, root, (), [args.path])
    if isinstance(prepared, int):
        return prepared
    targets, _level, _options, _index = prepared
    target = targets[0] if targets else None
    if target is None or target.error is not None:
        return fail(f"{args.path}: {target.error if target else 'no such file'}", "input-unreadable")
    from .debugging import enabled

    try:
        with enabled(args.debug):
            result = explore(target.path, target.root, target.options)
    except ValueError as exc:
        return fail(f"{args.path}: {exc}", "input-unreadable")
    emit(render_json(result) if args.format == "json" else render_text(result))
    return EXIT_CLEAN


def _figures_parser(sub) -> None:
    figures = sub.add_parser(
        "figures",
        help="print every figure of the specs (the numbers behind the findings)",
        description="Print the figures of each spec: axis values and values per operating "
        "point, with what could not be computed and why. Text shows readable units; JSON "
        "holds SI values, names and units (layout: docs/figures.md).",
    )
    figures.add_argument("paths", nargs="+", metavar="PATH", help="spec files or directories")
    figures.add_argument("--format", choices=("text", "json"), default="text")
    figures.add_argument("--output", metavar="FILE", help="write to FILE (atomically)")
    figures.add_argument("--root", metavar="DIR", help="repository root (as for check)")
    figures.add_argument("--config", metavar="FILE", help="policy file (as for check)")


def _run_figures(args, root: Path) -> int:
    """Exit 0 when every file gave its figures; 2 for unreadable inputs; 3 on a bug."""
    from .atomic import WriteError, target_problem, write_atomic
    from .pipeline import run_targets
    from .report import figures_table

    output = Path(args.output) if args.output else None
    if output is not None and (problem := target_problem(output)) is not None:
        return fail(f"--output {output.as_posix()}: {problem}", "output-error")
    args.no_waivers = False
    prepared = prepare(args, root, (), args.paths)
    if isinstance(prepared, int):
        return prepared
    targets, _level, options, _index = prepared
    report = run_targets(targets, debug=args.debug, options=options)
    rendered = (figures_table.render_json if args.format == "json" else figures_table.render_text)(report)
    if output is not None:
        try:
            write_atomic(output, rendered)
        except WriteError as exc:
            return fail(str(exc), "output-error")
    else:
        emit(rendered)
    status = report.exit_status()
    return status if status >= 2 else EXIT_CLEAN


# --------------------------------------------------------------- compare
def _compare_parser(sub) -> None:
    compare = sub.add_parser(
        "compare",
        help="design review: compare the specs at a git revision with the working "
        "tree (figures changed, findings new and resolved)",
        description="Compare the specs at REV (e.g. $(git merge-base origin/main HEAD)) with the "
        "working tree. Both are checked with the working tree's policy. Exit status: 1 when the "
        "working tree has new findings at or above the fail level, else 0; 2 for a bad revision, "
        "not a git repository or an unreadable input.",
    )
    compare.add_argument("rev", metavar="REV", help="the git revision to compare against")
    compare.add_argument(
        "paths", nargs="*", metavar="PATH", help="spec files or directories (default: the whole repository)"
    )
    compare.add_argument(
        "--format", choices=("text", "json", "markdown"), default="text", help="output format (default: text)"
    )
    compare.add_argument(
        "--output", metavar="FILE", help="write the comparison to FILE (atomically) instead of standard output"
    )
    compare.add_argument(
        "--config", metavar="FILE", help="policy file for every spec (default: the nearest .specguard.yaml)"
    )
    compare.add_argument(
        "--all-changes",
        action="store_true",
        help="list every figure change (default: changes of at least 1 %%, sign changes and flags)",
    )
    compare.add_argument("--no-waivers", action="store_true", help="ignore every waiver in the specs (strict mode)")
    _common_options(compare)
    _speed_options(compare)


def _report_parser(sub) -> None:
    report = sub.add_parser(
        "report",
        help="check like 'check' and write a standalone HTML review report and/or a "
        "Markdown summary for a pull-request comment",
    )
    report.add_argument("paths", nargs="+", metavar="PATH", help="spec files or directories")
    report.add_argument("--html", metavar="FILE", help="write the HTML review report to FILE (atomically)")
    report.add_argument("--markdown", metavar="FILE", help="write the Markdown summary to FILE (atomically)")
    _common_options(report)
    _policy_options(report)
    _speed_options(report, cache=False)


def _generated_text() -> str | None:
    """The report's date: only from SOURCE_DATE_EPOCH (no clock time otherwise)."""
    import datetime as dt

    raw = os.environ.get("SOURCE_DATE_EPOCH")
    if not raw or not raw.isdigit():
        return None
    return dt.datetime.fromtimestamp(int(raw), tz=dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def _run_report(args, root: Path) -> int:
    """`specguard report PATH... --html FILE --markdown FILE`: the check of `check`, other outputs."""
    from .atomic import WriteError, target_problem, write_atomic
    from .pipeline import run_targets
    from .report import text

    targets = [(opt, Path(value)) for opt, value in (("--html", args.html), ("--markdown", args.markdown)) if value]
    if not targets:
        return fail("report needs --html FILE, --markdown FILE or both", "output-error")
    if args.write_baseline:
        return fail("report does not write baselines; use 'check --write-baseline'", "output-error")
    for option, target in targets:
        problem = target_problem(target)
        if problem is not None:
            return fail(f"{option} {target.as_posix()}: {problem}", "output-error")
    prepared = prepare(args, root, tuple(t for _, t in targets), args.paths)
    if isinstance(prepared, int):
        return prepared
    planned, fail_level, options, _index = prepared
    progress = Progress(enabled=False if args.quiet else None)
    try:  # never from the result cache: the HTML plots need each spec's model
        report = run_targets(
            planned, fail_level=fail_level, debug=args.debug, options=options, jobs=args.jobs, progress=progress
        )
    finally:
        progress.clear()
    report = _without_unapplied(report, planned)
    status = report.exit_status()
    for option, target in targets:
        if option == "--html":
            from .report import html

            missing = html.plots_unavailable()
            if missing is not None:
                sys.stderr.write(f"specguard: the HTML report has no plots: {missing}\n")
            rendered = html.render(
                report, generated=_generated_text(), plots=missing is None, plots_note=missing, jobs=args.jobs
            )
        else:
            from .report import markdown

            rendered = markdown.render(report)
        try:
            write_atomic(target, rendered)
        except WriteError as exc:
            return max(fail(str(exc), "output-error"), status)
    emit(text.summary(report) + "\n")
    return status


def _signal_handlers(received: list[int]):
    """Install handlers turning SIGINT and SIGTERM into :class:`Interrupted`;
    return a function that puts the previous handlers back.

    Only the first signal raises: a second one during the cleanup is remembered
    in ``received`` (the highest status wins) and lets the cleanup finish. A
    forked worker process that inherited the handler ends at once and quietly
    (the parent reports). A signal the caller set to be ignored stays ignored.
    """
    import signal

    main_pid = os.getpid()

    def handler(signum, _frame):
        status = 128 + signum
        if os.getpid() != main_pid:
            os._exit(status)
        first = not received
        received.append(status)
        if first:
            raise Interrupted(status)

    previous = {}
    for signum in (signal.SIGINT, signal.SIGTERM):
        try:
            if signal.getsignal(signum) is signal.SIG_IGN:
                continue
            previous[signum] = signal.signal(signum, handler)
        except (ValueError, OSError):  # not the main thread, or not supported here
            continue

    def restore() -> None:
        for signum, old in previous.items():
            try:
                signal.signal(signum, old)
            except (ValueError, OSError):
                pass

    return restore


def _quiet_interrupts(previous):
    """An unraisable-exception hook that says nothing of our own :class:`Interrupted`.

    Where Python cannot raise (a ``__del__``, a fork hook, a callback from compiled
    code such as a validator's pattern match) it prints "Exception ignored in ..."
    with a traceback; for the signal's exception that is noise, since :func:`main`
    still exits with the signal's status. Everything else goes to ``previous``."""

    def hook(unraisable):
        if isinstance(unraisable.exc_value, Interrupted):
            return
        previous(unraisable)

    return hook


def entry() -> int:
    """The process's entry point (the ``specguard`` command and ``python -m specguard``):
    :func:`main`, then the objects still alive are moved out of the collector's reach.
    The interpreter's last collection at exit walks every object left, hundreds of
    thousands after an HTML report has been drawn, for memory the operating system takes
    back anyway (it took a fifth of the report's time); the atexit handlers still run.
    In a process that goes on (tests, a caller's own code), call :func:`main`."""
    import gc

    status = main()
    gc.freeze()
    return status


def main(argv: list[str] | None = None) -> int:
    debug = "--debug" in (argv if argv is not None else sys.argv[1:])
    received = RECEIVED
    received.clear()
    restore = _signal_handlers(received)
    unraisable = sys.unraisablehook
    sys.unraisablehook = _quiet_interrupts(unraisable)
    try:
        status = _main(argv)
        # The signal's exception can be swallowed where Python ignores exceptions
        # (e.g. in a fork hook while workers start); the status still says it came.
        return max([status, *received])
    except KeyboardInterrupt as exc:  # Ctrl-C, SIGINT or SIGTERM: after the cleanup
        return max([getattr(exc, "status", EXIT_SIGINT), *received])
    except Exception as exc:
        if received and not debug:
            # The signal's exception was swallowed inside compiled code, which then
            # failed in its own way (a pattern "did not match"): the signal is the
            # cause, so its status, not a bug report.
            return max(received)
        if debug:
            raise
        sys.stderr.write(
            f"specguard: internal error: {type(exc).__name__}: {exc}\n"
            "specguard: this is a bug; run again with --debug for the traceback\n"
        )
        return EXIT_INTERNAL
    finally:
        received.clear()  # the statuses above are taken; the next run starts clean
        sys.unraisablehook = unraisable
        restore()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
