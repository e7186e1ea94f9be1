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

    demo = sub.add_parser("demo", help="check the bundled demo specs (an invented lab robot)")
    _common_options(demo, root=False)

    schema = sub.add_parser("schema", help="print the JSON Schema of the spec format")
    schema.add_argument("--path", action="store_true", help="print where the schema file is installed")
    return parser


def _common_options(p: argparse.ArgumentParser, root: bool = True) -> None:
    p.add_argument(
        "--fail-level",
        choices=("error", "warning", "info"),
        default="error",
        help="lowest severity that makes the exit status 1 (default: error)",
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
    from .pipeline import check_paths
    from .report import text

    report = check_paths(paths, root=root, fail_level=args.fail_level, debug=args.debug)
    _emit(text.render(report, colour=text.use_colour(sys.stdout, args.colour)))
    return report.exit_status()


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
    if args.command == "schema":
        from importlib.resources import files

        resource = files("specguard.schemas") / "spec-v1.schema.json"
        _emit((str(resource) if args.path else resource.read_text(encoding="utf-8")) + "\n")
        return EXIT_CLEAN
    parser.error(f"unknown command {args.command}")
    return EXIT_USAGE


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
