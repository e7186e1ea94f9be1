"""Pre-commit mode: which specs to check for a set of changed files.

A changed spec is checked. A changed library file is not checked on its own: every
spec of the repository whose reference closure holds it (directly or through a
chain of ``from:`` references) is checked instead, so editing a shared motor
file cannot pass the hook while it breaks an axis that uses it (docs/reliability.md
FI20, §7.2). A changed policy file (the ``.specguard.yaml`` in force, or the ``--config`` file) or
a changed file inside one of its ``extra_rule_dirs`` can change the outcome of every
spec, so it makes the hook check every spec the policy picks up. Any other file is
ignored.

Finding the referencing specs must be fast, so the repository's specs (the
policy's include/exclude patterns) and the library files they lead to are not
parsed: their ``from:`` values are picked out of the text with a regular
expression. The scan over-approximates (a ``from:`` in a comment counts too),
which costs at most an extra spec checked, never a missed one; the check itself
resolves references with the full, confined loader.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

# `from: x`, `"from": 'x'`, and `{from: x, ...}` in flow mappings.
_FROM = re.compile(
    rb"""(?:^|[\s{,])["']?from["']?[ \t]*:[ \t]*(?:"([^"\n]*)"|'([^'\n]*)'|([^\s,}#'"][^\s,}#]*))""",
    re.MULTILINE,
)
_SCAN_CAP = 4 * 1024 * 1024  # bytes read per file for the scan


def _references(real_file: str, real_root: str) -> list[str]:
    """Real paths named by the ``from:`` values of one file (inside the root only)."""
    try:
        with open(real_file, "rb") as fh:
            data = fh.read(_SCAN_CAP)
    except OSError:
        return []
    base = os.path.dirname(real_file)
    out = []
    for match in _FROM.finditer(data):
        raw = match.group(1) or match.group(2) or match.group(3) or b""
        try:
            ref = raw.decode("utf-8")
        except UnicodeDecodeError:
            continue
        if not ref or "\0" in ref:
            continue
        target = os.path.realpath(os.path.normpath(os.path.join(base, ref)))
        if target == real_root or target.startswith(real_root + os.sep):
            out.append(target)
    return out


def referencing_specs(changed: list[str], specs: list[Path], root: Path) -> list[Path]:
    """The specs among ``specs`` whose reference closure holds a file of ``changed``
    (real paths)."""
    real_root = os.path.realpath(root)
    targets = set(changed)
    memo: dict[str, list[str]] = {}

    def refs(real: str) -> list[str]:
        if real not in memo:
            memo[real] = _references(real, real_root)
        return memo[real]

    hit: list[Path] = []
    for spec in specs:
        seen: set[str] = set()
        stack = [os.path.realpath(spec)]
        found = False
        while stack and not found:
            current = stack.pop()
            for target in refs(current):
                if target in targets:
                    found = True
                    break
                if target not in seen and len(seen) < 256:
                    seen.add(target)
                    stack.append(target)
        if found:
            hit.append(spec)
    return hit


def _is_policy(real: str, policy_files: tuple[str, ...], rule_dirs: tuple[str, ...]) -> bool:
    if real in policy_files:
        return True
    return any(real.startswith(d.rstrip(os.sep) + os.sep) for d in rule_dirs)


def select(files: list[str], root: Path, policies) -> tuple[list[str], int]:
    """The spec files to check for the changed ``files``: (paths, number of changed
    library files). ``policies`` (:class:`specguard.runsetup.PolicyIndex`) gives the
    policy in force for each file: its include/exclude test, its policy file and its
    team rule directories. A change to a policy file (``.specguard.yaml`` or the
    ``--config`` file) or to a file in its rule directories selects every spec of the
    folder that policy governs (the whole repository for the root's or --config's)."""
    from .pipeline import CONFIG_NAME, discover, relpath

    chosen: dict[str, str] = {}
    others: list[str] = []
    folders: list[Path] = []
    for name in files:
        rel = relpath(Path(name), root)
        real = os.path.realpath(name)
        options = policies.options_for(root, rel)
        config = options.config if options is not None else None
        policy_file = policies.config_path(root, rel)
        governs = root if policy_file is None or policies.override is not None else policy_file.parent
        policy_files = tuple(os.path.realpath(p) for p in (policy_file,) if p is not None)
        rule_dirs = tuple(os.path.realpath(d) for d in getattr(config, "extra_rule_paths", ()))
        if os.path.basename(name) == CONFIG_NAME and policies.override is None:
            folders.append(Path(name).parent)  # a policy file added or changed: its folder
        elif _is_policy(real, policy_files, rule_dirs):
            folders.append(governs)
        elif config is not None and config.wanted(rel):
            chosen.setdefault(real, name)
        elif config is None and rel.endswith((".axis.yaml", ".axis.yml")):
            chosen.setdefault(real, name)
        elif os.path.isfile(name):
            others.append(real)
    for folder in folders:  # every spec the policy picks up, as `specguard check FOLDER` finds them
        chosen.setdefault(os.path.realpath(folder) + os.sep, str(folder))
    libraries = 0
    if others:
        specs = [p for p, error in discover([str(root)], root, _wanted(policies, root)) if error is None]
        users = referencing_specs(others, specs, root)
        for spec in users:
            chosen.setdefault(os.path.realpath(spec), str(spec))
        if users:
            libraries = len(others)
    return sorted(chosen.values()), libraries


def _wanted(policies, root: Path):
    def wanted(rel: str) -> bool:
        options = policies.options_for(root, rel)
        config = options.config if options is not None else None
        return config.wanted(rel) if config is not None else rel.endswith((".axis.yaml", ".axis.yml"))

    return wanted
