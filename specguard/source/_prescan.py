"""A cheap pure-Python look over the text before any parser sees it.

It rejects directives other than ``%YAML 1.2`` and bounds the nesting depth, so
the C parser is never handed the deeply nested text that crashes it
(docs/reliability.md A10). The depth is an estimate from flow brackets (counted
outside quoted scalars and comments) and block indentation (one level per
indentation step, per ``- `` / ``? `` indicator and per mapping key start). The
exact depth is enforced again on the event stream, so an estimate that is low
only moves the finding to the composer; one that is high would need more than
``max_depth`` unbalanced openers hidden in scalars.
"""

from __future__ import annotations

import re

_KEY_COLON = re.compile(r":(?=[ \t]|$)")
_QUOTED_KEY_COLON = re.compile(r"[ \t]*:(?=[ \t]|$)")
_BLOCK_HEADER = re.compile(r"[|>][-+0-9]*[ \t]*(?:#.*)?$")
_FLOW_SPECIAL = re.compile(r"[\[\]{}\"'#]")
_DOC_MARK = re.compile(r"(?:---|\.\.\.)(?=[ \t]|$)")
_DIRECTIVE = re.compile(r"%(\S*)(?:[ \t]+(\S+))?")


class PrescanProblem:
    __slots__ = ("rule", "message", "line", "column")

    def __init__(self, rule: str, message: str, line: int, column: int) -> None:
        self.rule = rule
        self.message = message
        self.line = line
        self.column = column


def _close_quote(line: str, start: int, quote: str) -> int:
    """Index just after the closing quote on this line, or -1 if it stays open."""
    if quote == "'":
        i = start
        while True:
            j = line.find("'", i)
            if j < 0:
                return -1
            if line.startswith("'", j + 1):  # '' is an escaped quote
                i = j + 2
                continue
            return j + 1
    i = start
    while True:
        j = line.find('"', i)
        if j < 0:
            return -1
        k = j - 1
        while k >= 0 and line[k] == "\\":
            k -= 1
        if (j - 1 - k) % 2 == 0:
            return j + 1
        i = j + 1


def _short(s: str, n: int = 40) -> str:
    return s if len(s) <= n else s[: n - 3] + "..."


def _directive_problem(line: str, lineno: int) -> PrescanProblem | None:
    m = _DIRECTIVE.match(line)
    name = m.group(1) if m else ""
    arg = (m.group(2) if m else None) or ""
    if name == "YAML":
        if arg == "1.2":
            return None
        return PrescanProblem(
            "yaml-structure",
            f"directive '%YAML {_short(arg, 20)}' is not allowed: specs are YAML 1.2 (remove the line)",
            lineno,
            1,
        )
    if name == "TAG":
        return PrescanProblem("yaml-structure", "'%TAG' directives are not allowed: specs carry no tags", lineno, 1)
    return PrescanProblem("yaml-structure", f"directive '%{_short(name, 20)}' is not allowed in a spec", lineno, 1)


def prescan(text: str, max_depth: int) -> list[PrescanProblem]:
    """Directive problems (all of them) or the first place where the estimated
    nesting depth exceeds ``max_depth``."""
    problems: list[PrescanProblem] = []
    stack: list[tuple[int, str]] = []  # open block collections: (column, "s" | "m")
    block_col: int | None = None  # parent column of an open block scalar
    flow = 0  # open flow brackets
    base = 0  # block depth the current flow collection sits in
    quote = ""  # quoted scalar continuing on the next line
    directives_allowed = True

    def over(lineno: int, column: int) -> list[PrescanProblem]:
        problems.append(PrescanProblem("yaml-limit", f"nesting is deeper than {max_depth} levels", lineno, column))
        return problems

    def scan_flow(line: str, pos: int, lineno: int) -> bool:
        """Scan flow text from pos; True when the depth limit was exceeded."""
        nonlocal flow, quote
        while True:
            m = _FLOW_SPECIAL.search(line, pos)
            if m is None:
                return False
            p = m.start()
            c = line[p]
            if c == "[" or c == "{":
                flow += 1
                if base + flow > max_depth:
                    over(lineno, p + 1)
                    return True
            elif c == "]" or c == "}":
                if flow:
                    flow -= 1
                if flow == 0:
                    return False
            elif c == "#":
                if p == 0 or line[p - 1] in " \t":
                    return False
            else:
                q = p - 1
                while q >= 0 and line[q] in " \t":
                    q -= 1
                if q < 0 or line[q] in "[{,:?":
                    end = _close_quote(line, p + 1, c)
                    if end < 0:
                        quote = c
                        return False
                    pos = end
                    continue
            pos = p + 1

    for lineno, line in enumerate(text.splitlines(), 1):
        if quote:
            end = _close_quote(line, 0, quote)
            if end < 0:
                continue
            quote = ""
            if flow:
                if scan_flow(line, end, lineno):
                    return problems
            continue
        if flow:
            if scan_flow(line, 0, lineno):
                return problems
            continue
        stripped = line.lstrip(" ")
        indent = len(line) - len(stripped)
        if indent == 0 and _DOC_MARK.match(line):
            block_col = None
            stack.clear()
            if line.startswith("..."):
                directives_allowed = True
                continue
            directives_allowed = False
            pos = 3
        else:
            if block_col is not None:
                if indent > block_col or not stripped.strip():
                    continue
                block_col = None
            if not stripped or stripped[0] == "#" or not stripped.strip():
                continue
            if directives_allowed and indent == 0 and stripped[0] == "%":
                problem = _directive_problem(line, lineno)
                if problem is not None:
                    problems.append(problem)
                continue
            directives_allowed = False
            if problems:  # directive problems: nothing more to check
                return problems
            pos = indent
            seq_line = stripped[0] == "-" and (len(stripped) == 1 or stripped[1] in " \t")
            while stack and (
                stack[-1][0] > indent or (stack[-1][0] == indent and stack[-1][1] == "s" and not seq_line)
            ):
                stack.pop()
        # walk the node starts on this line
        n = len(line)
        first = True
        while True:
            while pos < n and line[pos] in " \t":
                pos += 1
            if pos >= n:
                break
            c = line[pos]
            if c == "#":
                break
            if c in "-?:" and (pos + 1 >= n or line[pos + 1] in " \t"):
                if c != ":":
                    kind = "s" if c == "-" else "m"
                    if not (first and stack and stack[-1] == (pos, kind)):
                        stack.append((pos, kind))
                        if len(stack) > max_depth:
                            return over(lineno, pos + 1)
                first = False
                pos += 1
                continue
            if c == "&" or c == "!":
                while pos < n and line[pos] not in " \t":
                    pos += 1
                continue
            if c == "*":
                break
            if c == "[" or c == "{":
                base = len(stack)
                flow = 0
                if scan_flow(line, pos, lineno):
                    return problems
                break
            if c == '"' or c == "'":
                end = _close_quote(line, pos + 1, c)
                if end < 0:
                    quote = c
                    break
                m = _QUOTED_KEY_COLON.match(line, end)
                if m is None:
                    break
                key_end = m.end()
            elif c == "|" or c == ">":
                if _BLOCK_HEADER.match(line, pos):
                    block_col = stack[-1][0] if stack else -1
                break
            else:
                m = _KEY_COLON.search(line, pos)
                if m is None:
                    break
                hash_at = line.find(" #", pos, m.start())
                if hash_at < 0:
                    hash_at = line.find("\t#", pos, m.start())
                if hash_at >= 0:
                    break
                key_end = m.end()
            # a mapping key starts at pos
            if not (first and stack and stack[-1] == (pos, "m")):
                stack.append((pos, "m"))
                if len(stack) > max_depth:
                    return over(lineno, pos + 1)
            first = False
            pos = key_end
    return problems
