"""Revision comparison for design review: the specs at a git revision against the work tree.

``specguard compare REV [PATH...]`` reads the YAML files of REV with ``git ls-tree``
and ``git cat-file`` into a temporary directory (so library references resolve
within the old tree; nothing is checked out, nothing leaves the machine), checks
both trees with the same policy (the work tree's), and reports per spec:

- every figure whose value changed: old, new, change in percent, with units;
- findings new, resolved and unchanged, matched like the baseline matches them
  (rule, file, document pointer, operating point; never lines), counted per key;
- specs added and removed.

Exit status: 1 when the work tree has a new finding at or above the fail level
(not waived or baselined), else 0; 2 when REV is not a commit here, the
directory is not a git repository, or an input of the work tree is unreadable;
3 on an internal error.
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
import tempfile
from dataclasses import dataclass, field, replace
from pathlib import Path

from .pipeline import Policies

COMPARE_FORMAT = 1


class CompareError(Exception):
    """Exit 2 with this message."""


# ------------------------------------------------------------------ git side
def _git(args: list[str], cwd: Path, data: bytes | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, GIT_TERMINAL_PROMPT="0", LC_ALL="C")
    return subprocess.run(["git", *args], cwd=cwd, input=data, capture_output=True, env=env)


def git_toplevel(root: Path) -> Path:
    try:
        done = _git(["rev-parse", "--show-toplevel"], root)
    except FileNotFoundError:
        raise CompareError("git is not installed or not on PATH") from None
    if done.returncode != 0:
        raise CompareError(f"{root.as_posix()} is not inside a git repository")
    return Path(done.stdout.decode("utf-8", "surrogateescape").strip())


def resolve_rev(rev: str, top: Path) -> str:
    if not rev or rev.startswith("-") or "\0" in rev:
        raise CompareError(f"not a revision: {rev!r}")
    done = _git(["rev-parse", "--verify", "--quiet", "--end-of-options", rev + "^{commit}"], top)
    if done.returncode == 0:
        return done.stdout.decode().strip()
    shallow = _git(["rev-parse", "--is-shallow-repository"], top).stdout.decode().strip() == "true"
    hint = (
        (
            "; this clone is shallow: fetch the history (in CI, check out with fetch-depth: 0, "
            "or run 'git fetch --unshallow')"
        )
        if shallow
        else ("; fetch it first (for the merge base: git fetch origin main)")
    )
    raise CompareError(f"revision {rev!r} is not a commit in this repository{hint}")


def export_tree(commit: str, top: Path, prefix: str, dest: Path) -> int:
    """Write the YAML files of ``commit`` below ``prefix`` into ``dest``; the count."""
    args = ["ls-tree", "-r", "-z", "--full-tree", commit]
    if prefix not in ("", "."):
        args += ["--", prefix]
    listing = _git(args, top)
    if listing.returncode != 0:
        raise CompareError(f"cannot list the files of {commit[:12]}: {listing.stderr.decode(errors='replace').strip()}")
    wanted: list[tuple[str, str]] = []
    for item in listing.stdout.split(b"\0"):
        if not item:
            continue
        meta, _, raw_path = item.partition(b"\t")
        mode, kind, sha = meta.split(b" ")
        path = raw_path.decode("utf-8", "surrogateescape")
        if kind != b"blob" or mode not in (b"100644", b"100755"):
            continue  # symlinks and submodules are not exported
        if not path.endswith((".yaml", ".yml")):
            continue
        rel = path if prefix in ("", ".") else path[len(prefix) :].lstrip("/")
        parts = rel.split("/")
        if not rel or any(p in ("", ".", "..", ".git") for p in parts):
            continue
        wanted.append((rel, sha.decode()))
    if not wanted:
        return 0
    batch = _git(["cat-file", "--batch"], top, data="".join(s + "\n" for _, s in wanted).encode())
    if batch.returncode != 0:
        raise CompareError(f"cannot read the files of {commit[:12]}")
    out = batch.stdout
    pos = 0
    for rel, _sha in wanted:
        end = out.index(b"\n", pos)
        header = out[pos:end].split(b" ")
        if len(header) != 3:
            raise CompareError(f"cannot read {rel} at {commit[:12]}")
        size = int(header[2])
        body = out[end + 1 : end + 1 + size]
        pos = end + 1 + size + 1
        target = dest / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(body)
    return len(wanted)


# ---------------------------------------------------------------- comparison
@dataclass
class FigureChange:
    point: str | None  # None: an axis figure
    name: str
    unit: str
    dimension: str
    old: float | bool | None
    new: float | bool | None

    @property
    def percent(self) -> float | None:
        o, n = self.old, self.new
        if isinstance(o, bool) or isinstance(n, bool) or o is None or n is None:
            return None
        if o == 0 or not (math.isfinite(o) and math.isfinite(n)):
            return None
        if (o > 0) != (n > 0) and n != 0:
            return None  # a percent change across zero says nothing: the values speak
        return (n - o) / abs(o) * 100.0

    def significant(self, threshold: float) -> bool:
        """A change that matters: a flag flipped, a figure that appeared or went, a sign
        change, or a relative change of at least ``threshold``."""
        o, n = self.old, self.new
        if isinstance(o, bool) or isinstance(n, bool) or o is None or n is None:
            return True
        if not (math.isfinite(o) and math.isfinite(n)) or o == 0 or (o > 0) != (n > 0):
            return True
        return abs(n - o) / abs(o) >= threshold


# Relative change below which a figure change is not shown by default (1 %: below the
# spread of datasheet values; common practice). `compare --all-changes` shows every one.
SIGNIFICANT_CHANGE = 0.01


@dataclass
class FileComparison:
    file: str
    status: str  # added, removed, changed, unchanged
    figures: list[FigureChange] = field(default_factory=list)
    new: list = field(default_factory=list)
    resolved: list = field(default_factory=list)
    unchanged: list = field(default_factory=list)
    input_error: str | None = None


@dataclass
class Comparison:
    rev: str
    commit: str
    fail_level: str
    files: list[FileComparison]
    exit_status: int
    hidden_changes: int = 0  # figure changes below the significance threshold, not listed


def _figure_rows(fs) -> dict[tuple[str | None, str], float | bool]:
    if fs is None:
        return {}
    rows: dict = {(None, k): v for k, v in fs.axis.items()}
    for point, values in fs.points:
        for k, v in values.items():
            rows[(point, k)] = v
    return rows


def _same(a, b) -> bool:
    if isinstance(a, bool) or isinstance(b, bool):
        return a is b or a == b and type(a) is type(b)
    if a is None or b is None:
        return a is b
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return a == b


def _figure_changes(old, new) -> list[FigureChange]:
    from .figures.registry import FIGURE_DEFS

    a, b = _figure_rows(old), _figure_rows(new)
    out = []
    points_order = [p for p, _ in (new.points if new is not None else ())]
    points_order += [p for p, _ in (old.points if old is not None else ()) if p not in points_order]
    order = {p: i for i, p in enumerate(points_order)}
    for key in sorted(set(a) | set(b), key=lambda k: (k[0] is not None, order.get(k[0], 0), k[1])):
        va, vb = a.get(key), b.get(key)
        if _same(va, vb):
            continue
        fdef = FIGURE_DEFS.get(key[1])
        out.append(FigureChange(key[0], key[1], fdef.unit if fdef else "", fdef.dimension if fdef else "", va, vb))
    return out


def _match_key(f) -> tuple:
    loc = f.location
    return (f.rule, loc.file, loc.pointer, f.operating_point or "")


def _match(old: tuple, new: tuple) -> tuple[list, list, list]:
    from collections import defaultdict

    groups_old: dict = defaultdict(list)
    groups_new: dict = defaultdict(list)
    for f in old:
        groups_old[_match_key(f)].append(f)
    for f in new:
        groups_new[_match_key(f)].append(f)
    added, gone, same = [], [], []
    for key in set(groups_old) | set(groups_new):
        o, n = groups_old.get(key, []), groups_new.get(key, [])
        k = min(len(o), len(n))
        same.extend(n[:k])
        added.extend(n[k:])
        gone.extend(o[k:])
    key = lambda f: f.sort_key()  # noqa: E731
    return sorted(added, key=key), sorted(gone, key=key), sorted(same, key=key)


def compare_reports(
    old_report, new_report, rev: str, commit: str, fail_level: str, threshold: float | None = SIGNIFICANT_CHANGE
) -> Comparison:
    from .findings import SEVERITY_ORDER

    old_files = {r.file: r for r in old_report.files}
    new_files = {r.file: r for r in new_report.files}
    files = []
    level = SEVERITY_ORDER[fail_level]
    hidden = 0
    failing_new = False
    for name in sorted(set(old_files) | set(new_files)):
        o, n = old_files.get(name), new_files.get(name)
        if o is None:
            assert n is not None  # the name comes from one side or the other
            fc = FileComparison(name, "added", [], list(n.findings), [], [], n.input_error)
        elif n is None:
            fc = FileComparison(name, "removed", [], [], list(o.findings), [])
        else:
            added, gone, same = _match(o.findings, n.findings)
            figs = _figure_changes(o.figures, n.figures)
            if threshold is not None:
                kept = [fc for fc in figs if fc.significant(threshold)]
                hidden += len(figs) - len(kept)
                figs = kept
            change = "changed" if (added or gone or figs) else "unchanged"
            fc = FileComparison(name, change, figs, added, gone, same, n.input_error)
        files.append(fc)
        for f in fc.new:
            if not f.suppressed and SEVERITY_ORDER[f.severity] >= level:
                failing_new = True
    status = 1 if failing_new else 0
    new_status = new_report.exit_status()
    if new_status >= 2:
        status = new_status
    if any(f.rule == "internal-error" for f in old_report.findings):
        status = 3
    return Comparison(rev, commit, fail_level, files, status, hidden)


# -------------------------------------------------------------------- output
def value_text(value, dimension: str, unit: str) -> str:
    if value is None:
        return "absent"
    if isinstance(value, bool):
        return "yes" if value else "no"
    from .model.units import DIMENSIONS, format_si

    if dimension in DIMENSIONS:
        try:
            return format_si(value, dimension)
        except Exception:  # a figure of a dimension without a display table
            pass
    if dimension == "ratio" or unit == "1":
        return f"{value * 100:.4g} %"
    return f"{value:.4g} {unit}".rstrip()


def percent_text(p: float | None) -> str:
    return "" if p is None else f"{p:+.3g} %"


def _scope(fc: FigureChange) -> str:
    return f"at '{fc.point}'" if fc.point is not None else "axis"


def summary_counts(c: Comparison) -> dict:
    return {
        "files": len(c.files),
        "added": sum(1 for f in c.files if f.status == "added"),
        "removed": sum(1 for f in c.files if f.status == "removed"),
        "changed": sum(1 for f in c.files if f.status == "changed"),
        "figures_changed": sum(len(f.figures) for f in c.files),
        "new": sum(len(f.new) for f in c.files),
        "resolved": sum(len(f.resolved) for f in c.files),
        "unchanged": sum(len(f.unchanged) for f in c.files),
    }


def render_text(c: Comparison) -> str:
    from .report.safe import escape_controls as esc
    from .report.text import finding_line

    lines = [f"specguard compare: {esc(c.rev)} ({c.commit[:12]}) -> working tree"]
    for f in c.files:
        if f.status == "unchanged":
            continue
        lines.append(f"{esc(f.file)}: {f.status}")
        if f.input_error:
            lines.append(f"  cannot read input: {esc(f.input_error)}")
        for fc in f.figures:
            lines.append(
                f"  figure {fc.name} ({_scope(fc)}): "
                f"{value_text(fc.old, fc.dimension, fc.unit)} -> "
                f"{value_text(fc.new, fc.dimension, fc.unit)}"
                + (f" ({percent_text(fc.percent)})" if fc.percent is not None else "")
            )
        for finding in f.new:
            lines.append("  new: " + finding_line(finding))
        for finding in f.resolved:
            lines.append("  resolved: " + finding_line(finding) + f" (line at {esc(c.rev)})")
        if f.unchanged:
            lines.append(f"  unchanged: {len(f.unchanged)} finding{'s' if len(f.unchanged) != 1 else ''}")
    s = summary_counts(c)
    lines.append(
        f"specguard: {s['files']} spec{'s' if s['files'] != 1 else ''} compared "
        f"({s['added']} added, {s['removed']} removed, {s['changed']} changed); "
        f"{s['figures_changed']} figure{'s' if s['figures_changed'] != 1 else ''} changed; "
        f"findings: {s['new']} new, {s['resolved']} resolved, {s['unchanged']} unchanged"
    )
    if c.hidden_changes:
        lines.append(
            f"specguard: {c.hidden_changes} figure change{'s' if c.hidden_changes != 1 else ''} under "
            f"{SIGNIFICANT_CHANGE * 100:g} % not listed (--all-changes lists them)"
        )
    return "\n".join(lines) + "\n"


def document(c: Comparison) -> dict:
    from . import __version__
    from .report.json_report import _number, finding

    def fig(fc: FigureChange) -> dict:
        def num(v):
            return v if isinstance(v, bool) or v is None else _number(v)

        return {
            "point": fc.point,
            "name": fc.name,
            "unit": fc.unit,
            "old": num(fc.old),
            "new": num(fc.new),
            "change_percent": fc.percent,
            "old_text": value_text(fc.old, fc.dimension, fc.unit),
            "new_text": value_text(fc.new, fc.dimension, fc.unit),
        }

    return {
        "compare_format": COMPARE_FORMAT,
        "tool": {"name": "specguard", "version": __version__},
        "base": {"rev": c.rev, "commit": c.commit},
        "fail_level": c.fail_level,
        "exit_status": c.exit_status,
        "files": [
            {
                "file": f.file,
                "status": f.status,
                "input_error": f.input_error,
                "figures": [fig(x) for x in f.figures],
                "findings": {
                    "new": [finding(x) for x in f.new],
                    "resolved": [finding(x) for x in f.resolved],
                    "unchanged": [finding(x) for x in f.unchanged],
                },
            }
            for f in c.files
        ],
        "summary": summary_counts(c),
    }


def render_json(c: Comparison) -> str:
    from .report.json_report import dumps

    return dumps(document(c))


def _md(text: str) -> str:
    from .report.safe import escape_controls

    out = escape_controls(str(text))
    for ch in "\\`*_[]<>#|~":
        out = out.replace(ch, "\\" + ch)
    return out


def render_markdown(c: Comparison) -> str:
    s = summary_counts(c)
    lines = [
        f"## specguard: design changes since `{_md(c.commit[:12])}`",
        "",
        f"{s['files']} specs compared: {s['added']} added, {s['removed']} removed, "
        f"{s['changed']} changed. Figures changed: {s['figures_changed']}. "
        f"Findings: **{s['new']} new**, {s['resolved']} resolved, {s['unchanged']} unchanged.",
    ]
    for f in c.files:
        if f.status == "unchanged":
            continue
        lines += ["", f"### {_md(f.file)} ({f.status})"]
        if f.figures:
            lines += ["", "| figure | where | before | after | change |", "|---|---|---|---|---|"]
            for fc in f.figures:
                lines.append(
                    f"| {_md(fc.name)} | {_md(_scope(fc))} | "
                    f"{_md(value_text(fc.old, fc.dimension, fc.unit))} | "
                    f"{_md(value_text(fc.new, fc.dimension, fc.unit))} | "
                    f"{_md(percent_text(fc.percent))} |"
                )
        for title, items in (("New findings", f.new), ("Resolved findings", f.resolved)):
            if items:
                lines += ["", f"{title}:", ""]
                for x in items:
                    loc = x.location
                    lines.append(
                        f"- **{x.severity}** `{_md(x.rule)}` {_md(loc.file)}:{loc.line}: "
                        f"{_md(x.message)}" + (" (waived)" if x.waived else "")
                    )
        if f.unchanged:
            lines += ["", f"{len(f.unchanged)} finding(s) unchanged."]
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------- CLI
def _files_for(rels: list[str], base: Path, wanted) -> list[str]:
    from .pipeline import discover

    out: list[str] = []
    for rel in rels:
        p = base / rel if rel not in ("", ".") else base
        if not (p.is_dir() or p.is_file()):
            continue
        for path, error in discover([str(p)], base, wanted):
            if error is None:
                out.append(str(path))
    return out


class _WorkingTreePolicies(Policies):
    """The working tree's policies for the files of the revision's tree: each file
    is judged by the policy in force for the same path in the working tree."""

    def __init__(self, index, root: Path) -> None:
        super().__init__(None)
        self.index = index
        self.root = root

    def options_for(self, _root: Path, rel: str):
        return self.index.options_for(self.root, rel)

    def wanted(self, rel: str) -> bool:
        options = self.options_for(self.root, rel)
        config = options.config if options is not None else None
        return config.wanted(rel) if config is not None else rel.endswith((".axis.yaml", ".axis.yml"))


def run_compare(args) -> int:
    from . import runsetup as rs
    from .pipeline import RunOptions, plan, relpath, run_targets

    output = Path(args.output) if args.output else None
    if output is not None:
        from .atomic import target_problem

        problem = target_problem(output)
        if problem is not None:
            return rs.fail(f"--output {output.as_posix()}: {problem}", "output-error")
    root = rs.root_of(args)
    if isinstance(root, int):
        return root
    try:
        top = git_toplevel(root)
        commit = resolve_rev(args.rev, top)
    except CompareError as exc:
        return rs.fail(str(exc), "input-unreadable")
    try:
        today = rs.today()
    except ValueError as exc:
        return rs.fail(str(exc), "config-invalid")
    rels = []
    for raw in args.paths or [str(root)]:
        rel = relpath(Path(raw), root)
        if Path(rel).is_absolute() or rel == ".." or rel.startswith("../"):
            return rs.fail(
                f"{raw}: outside the repository root {root.as_posix()}; compare reads the files of this "
                f"repository at {args.rev}; check a file elsewhere with 'specguard check'",
                "input-outside-root",
            )
        rels.append(rel)
    prefix = relpath(root, top)
    prefix = "" if prefix == "." else prefix
    denied = rs.cache_dir_denied(args) + ((output,) if output else ())
    index = rs.policy_index(args, root, RunOptions(today=today, no_waivers=args.no_waivers, denied=denied))
    fail_level = rs.run_fail_level(args, index, root)
    policies = _WorkingTreePolicies(index, root)
    with tempfile.TemporaryDirectory(prefix="specguard-compare-") as tmp:
        old_root = Path(tmp) / "tree"
        old_root.mkdir()
        try:
            export_tree(commit, top, prefix, old_root)
        except CompareError as exc:
            return rs.fail(str(exc), "input-unreadable")
        new_files = _files_for(rels, root, policies.wanted)
        old_files = _files_for(rels, old_root, policies.wanted)
        new_targets = plan(new_files, root, policies)
        old_targets = [
            replace(t, options=t.options and replace(t.options, denied=())) for t in plan(old_files, old_root, policies)
        ]
        status = index.report_errors()
        if status is not None:
            return status
        for rel in rels:
            base_new, base_old = root / rel, old_root / rel
            if not (base_new.exists() or base_old.exists()):
                return rs.fail(
                    f"{rel}: no such file or directory in the working tree or at {args.rev}", "input-unreadable"
                )
        jobs = args.jobs
        progress = rs.Progress(enabled=False if args.quiet else None)
        try:
            new_report = (
                run_targets(
                    new_targets,
                    fail_level=fail_level,
                    debug=args.debug,
                    jobs=jobs,
                    result_cache=rs.result_cache(args, root, index),
                    progress=progress,
                )
                if new_files
                else _empty(fail_level)
            )
            old_report = (
                run_targets(
                    old_targets,
                    fail_level=fail_level,
                    debug=args.debug,
                    jobs=jobs,
                    result_cache=rs.result_cache(args, old_root, index),
                )
                if old_files
                else _empty(fail_level)
            )
        finally:
            progress.clear()
    threshold = None if getattr(args, "all_changes", False) else SIGNIFICANT_CHANGE
    comparison = compare_reports(old_report, new_report, args.rev, commit, fail_level, threshold)
    render = {"json": render_json, "markdown": render_markdown}.get(args.format, render_text)
    text = render(comparison)
    if output is not None:
        from .atomic import WriteError, write_atomic

        try:
            write_atomic(output, text)
        except WriteError as exc:
            return max(rs.fail(str(exc), "output-error"), comparison.exit_status)
        s = summary_counts(comparison)
        sys.stdout.write(
            f"specguard: {s['new']} new, {s['resolved']} resolved findings; {s['figures_changed']} figures changed\n"
        )
    else:
        rs.emit(text)
    return comparison.exit_status


def _empty(fail_level: str):
    from .pipeline import Report

    return Report((), fail_level=fail_level)
