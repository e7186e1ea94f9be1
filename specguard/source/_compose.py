"""Build plain data and a location index straight from parser events.

The parser (C or pure) only produces events; nothing of ruamel's composer or
constructor runs, so no tag ever constructs an object and no recursion follows
the user's nesting. Every budget is checked as the events arrive, so an alias
bomb is stopped at the alias that crosses the node budget without expanding it.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any, NoReturn

from specguard.findings import Finding, Location, kind_of

from ._errors import exception_finding
from ._text import FORBIDDEN, HIDDEN, TextIndex, describe_char, hidden_note
from ._types import Limits, NodeLoc, Span

_PENDING = object()  # a mapping waits for its next key
_MERGE = object()  # the current key is the merge key <<
_BAD = object()  # the current key was rejected; drop its value

_SPECIAL_PLAIN: dict[str, Any] = {
    "": None,
    "~": None,
    "null": None,
    "Null": None,
    "NULL": None,
    "true": True,
    "True": True,
    "TRUE": True,
    "false": False,
    "False": False,
    "FALSE": False,
}
_NUMERIC_START = frozenset("0123456789+-.")
_INT10 = re.compile(r"[-+]?[0-9]+")
_INT8 = re.compile(r"0o[0-7]+")
_INT16 = re.compile(r"0x[0-9a-fA-F]+")
_FLOAT = re.compile(r"[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?")
_INF = re.compile(r"[-+]?\.(?:inf|Inf|INF)")
_NAN = re.compile(r"\.(?:nan|NaN|NAN)")
_MAX_NUMBER_CHARS = 100
# a float literal whose digits before the exponent are not all zero
_NONZERO_MANTISSA = re.compile(r"[-+]?[0.]*[1-9]")

_SURROGATE = re.compile("[\ud800-\udfff]")
_SURROGATE_PAIR = re.compile("[\ud800-\udbff][\udc00-\udfff]")


def _join_pair(m: re.Match) -> str:
    hi, lo = m.group()
    return chr(0x10000 + ((ord(hi) - 0xD800) << 10) + (ord(lo) - 0xDC00))


def _tag_end(text: str, j: int) -> int:
    """Index just after the tag that starts at ``text[j] == "!"``. A verbatim tag
    ``!<...>`` may hold ',' and brackets, so it ends at its '>'."""
    n = len(text)
    if text.startswith("!<", j):
        close = text.find(">", j + 2, j + 4096)
        if close >= 0:
            return close + 1
    k = j
    while k < n and text[k] not in " \t\r\n,[]{}":
        k += 1
    return k


def fmt_size(n: int) -> str:
    if n < 1024:
        return f"{n} bytes"
    if n < 1024 * 1024:
        value, unit = n / 1024, "KiB"
    else:
        value, unit = n / (1024 * 1024), "MiB"
    text = f"{value:.1f}"
    if text.endswith(".0"):
        text = text[:-2]
    return f"{text} {unit}"


def _short(s: str, n: int = 40) -> str:
    s = s.replace("\n", "\\n").replace("\r", "\\r").replace("\t", "\\t")
    return s if len(s) <= n else s[: n - 3] + "..."


class _Map:
    __slots__ = (
        "path",
        "span",
        "anchor",
        "count0",
        "height",
        "own",
        "keyspans",
        "key",
        "key_span",
        "merge_at",
        "sources",
        "flow",
        "last",
        "merge_value",
    )

    def __init__(self, path, span, anchor, count0, flow, merge_value):
        self.path = path
        self.span = span
        self.anchor = anchor
        self.count0 = count0
        self.height = 1
        self.own: dict = {}
        self.keyspans: dict = {}
        self.key = _PENDING
        self.key_span = None
        self.merge_at = None
        self.sources = None
        self.flow = flow
        self.last = span
        self.merge_value = merge_value


class _Seq:
    __slots__ = ("path", "span", "anchor", "count0", "height", "items", "flow", "last", "spans")

    def __init__(self, path, span, anchor, count0, flow, merge_value):
        self.path = path
        self.span = span
        self.anchor = anchor
        self.count0 = count0
        self.height = 1
        self.items: list = []
        self.flow = flow
        self.last = span
        self.spans = [] if merge_value else None


class _Stop(Exception):
    """A problem after which no more events are read."""


def compose(
    next_event: Callable[[], Any],
    text: str,
    index: TextIndex,
    file: str,
    limits: Limits,
) -> tuple[Any, dict, list[Finding]]:
    """Consume events until the stream ends or a fatal problem. Returns
    (root value or None, locations, findings)."""
    from ruamel.yaml import events as ev_mod

    ScalarEvent = ev_mod.ScalarEvent
    AliasEvent = ev_mod.AliasEvent
    MappingStartEvent = ev_mod.MappingStartEvent
    MappingEndEvent = ev_mod.MappingEndEvent
    SequenceStartEvent = ev_mod.SequenceStartEvent
    SequenceEndEvent = ev_mod.SequenceEndEvent
    DocumentStartEvent = ev_mod.DocumentStartEvent
    StreamEndEvent = ev_mod.StreamEndEvent

    max_nodes = limits.max_nodes
    max_depth = limits.max_depth
    max_aliases = limits.max_aliases
    max_scalar = limits.max_scalar_bytes
    max_int = limits.max_int
    scalar_chars_fast = max_scalar // 4  # below this many code points a value fits surely

    findings: list[Finding] = []
    locs: dict[tuple, NodeLoc] = {}
    anchors: dict[str, Any] = {}  # name -> open frame, or (value, size, height, span)
    stack: list[Any] = []
    nodes = 0
    alias_count = 0
    docs = 0
    root: Any = _PENDING
    root_span: Span | None = None
    state = {"last": None}

    def add(rule, severity, message, span, path=(), related=()):
        if span is None:
            loc = Location(file, 1, 1, path=path or ())
        else:
            loc = Location(file, span.line, span.column, span.end_line, span.end_column, path or ())
        findings.append(Finding(rule, severity, message, loc, related=tuple(related)))

    def stop(rule, message, span, path=()) -> NoReturn:
        add(rule, "error", message, span, path)
        raise _Stop

    def at(offset: int) -> Span:
        line, col = index.pos(offset)
        return Span(line, col, line, col + 1)

    def child_path():
        """Document path of the node about to be emitted (None if unrecorded)."""
        if not stack:
            return ()
        f = stack[-1]
        if f.path is None:
            return None
        if type(f) is _Map:
            k = f.key
            if k is _PENDING or k is _MERGE or k is _BAD:
                return None
            return f.path + (k,)
        if f.spans is not None:
            return None
        return f.path + (len(f.items),)

    def report_path():
        """Best path for a finding about the node about to be emitted."""
        for f in reversed(stack):
            if f.path is not None:
                p = f.path
                break
        else:
            return ()
        top = stack[-1]
        if top.path is None:
            return p
        if type(top) is _Map:
            k = top.key
            return p + (k,) if isinstance(k, str) else p
        return p + (len(top.items),)

    def is_key_position():
        return bool(stack) and type(stack[-1]) is _Map and stack[-1].key is _PENDING

    def tag_span(event) -> Span:
        i = event.start_mark.index
        j = i
        n = len(text)
        while j < n and text[j] == "&":  # skip an anchor written before the tag
            while j < n and text[j] not in " \t\r\n":
                j += 1
            while j < n and text[j] in " \t\r\n":
                j += 1
        if j >= n or text[j] != "!":
            j = i
        line, col = index.pos(j)
        k = _tag_end(text, j)
        return Span(line, col, line, col + max(1, k - j))

    def tag_text(event, span: Span) -> str:
        i = event.start_mark.index
        j = text.find("!", i, i + 4096)
        if j < 0:
            return str(event.tag)
        return text[j : _tag_end(text, j)]

    def reject_tag(event, path):
        span = tag_span(event)
        add(
            "yaml-tag",
            "error",
            f"explicit tag '{_short(tag_text(event, span), 60)}' is not allowed: specs carry plain values only",
            span,
            path,
        )

    def resolve_plain(value: str, span: Span, as_key: bool):
        special = _SPECIAL_PLAIN.get(value, _PENDING)
        if special is not _PENDING:
            return special
        if value[0] not in _NUMERIC_START:
            return value
        if len(value) > _MAX_NUMBER_CHARS:
            if _FLOAT.fullmatch(value) or _INT16.fullmatch(value) or _INT8.fullmatch(value):
                if not as_key:
                    add(
                        "number-invalid",
                        "error",
                        f"number with {len(value)} characters is too long (at most {_MAX_NUMBER_CHARS})",
                        span,
                        report_path(),
                    )
                return value
            return value
        if _INT10.fullmatch(value):
            result: int | float = int(value)
            digits = value.lstrip("+-")
            if not as_key and len(digits) > 1 and digits[0] == "0":
                octal = ""
                if all(c in "01234567" for c in digits):
                    octal = f", as octal {int(digits, 8)} by YAML 1.1 tools"
                add(
                    "number-invalid",
                    "warning",
                    f"ambiguous leading zero in '{value}': read as decimal {result} here{octal}",
                    span,
                    report_path(),
                )
        elif _INT16.fullmatch(value):
            result = int(value[2:], 16)
        elif _INT8.fullmatch(value):
            result = int(value[2:], 8)
        elif _FLOAT.fullmatch(value):
            result = float(value)
            if result in (float("inf"), float("-inf")):
                if not as_key:
                    add(
                        "number-invalid",
                        "error",
                        f"'{_short(value)}' is too large to represent: outside the range of a 64-bit float",
                        span,
                        report_path(),
                    )
            elif result == 0.0 and not as_key and _NONZERO_MANTISSA.match(value):
                # 1e-400 reads as 0.0: what the reviewer reads is not zero, what we
                # would compute with is (docs/reliability.md F02)
                add(
                    "number-invalid",
                    "error",
                    f"'{_short(value)}' underflows to zero: too small to represent as a 64-bit float",
                    span,
                    report_path(),
                )
            return result
        elif _INF.fullmatch(value) or _NAN.fullmatch(value):
            if not as_key:
                add(
                    "number-invalid",
                    "error",
                    f"'{value}' is not a finite number; spec numbers must be finite",
                    span,
                    report_path(),
                )
            return float(value.replace(".", "", 1).lower().replace("+", ""))
        else:
            return value
        if not as_key and (result > max_int or result < -max_int):
            add(
                "number-invalid",
                "error",
                f"integer {_short(value, 30)} is outside the allowed range ±{max_int}",
                span,
                report_path(),
            )
        return result

    def emit(value, span: Span, height: int, merge_key: bool = False, item_spans=None):
        nonlocal root, root_span
        if not stack:
            root = value
            root_span = span
            return
        f = stack[-1]
        if height >= f.height:
            f.height = height + 1
        f.last = span
        if type(f) is _Seq:
            if f.path is not None and f.spans is None:
                locs[f.path + (len(f.items),)] = NodeLoc(None, span)
            f.items.append(value)
            if f.spans is not None:
                f.spans.append(span)
            return
        k = f.key
        if k is _PENDING:  # this node is a key
            if merge_key:
                if f.merge_at is not None:
                    first = f.keyspans["<<"]
                    add(
                        "yaml-key",
                        "error",
                        f"second merge key '<<' in one mapping (first at {first.line}:{first.column})",
                        span,
                        f.path or (),
                        related=(Location(file, first.line, first.column, path=f.path or ()),),
                    )
                    f.key = _BAD
                else:
                    f.merge_at = len(f.own)
                    f.keyspans["<<"] = span
                    f.key = _MERGE
                    f.key_span = span
            elif type(value) is not str:
                add(
                    "yaml-key",
                    "error",
                    f"keys must be strings; this key is {kind_of(value)}",
                    span,
                    f.path or (),
                )
                f.key = _BAD
            else:
                first = f.keyspans.get(value)
                if first is not None:
                    add(
                        "yaml-key",
                        "error",
                        f"duplicate key '{_short(value)}' (first defined at {first.line}:{first.column})",
                        span,
                        (f.path + (value,)) if f.path is not None else (),
                        related=(Location(file, first.line, first.column, path=f.path or ()),),
                    )
                    f.key = _BAD
                else:
                    f.keyspans[value] = span
                    f.key = value
                    f.key_span = span
            return
        if k is _MERGE:
            if type(value) is dict:
                sources = [(value, span)]
            elif type(value) is list and all(type(v) is dict for v in value):
                spans = item_spans if item_spans is not None else [span] * len(value)
                sources = list(zip(value, spans, strict=False))
            else:
                add(
                    "yaml-structure",
                    "error",
                    "merge key '<<' needs a mapping or a list of mappings (usually an alias like *defaults)",
                    span,
                    f.path or (),
                )
                sources = []
            if f.sources is None:
                f.sources = sources
            else:
                f.sources.extend(sources)
        elif k is not _BAD:
            f.own[k] = value
            if f.path is not None:
                locs[f.path + (k,)] = NodeLoc(f.key_span, span)
        f.key = _PENDING

    def expand_locations(path: tuple, value: Any, span: Span, as_key_span: bool) -> None:
        """Locate every path inside an alias-expanded value at the alias."""
        todo = [(path, value)]
        while todo:
            p, v = todo.pop()
            if type(v) is dict:
                for k, child in v.items():
                    locs[p + (k,)] = NodeLoc(span, span)
                    if type(child) is dict or type(child) is list:
                        todo.append((p + (k,), child))
            else:
                for i, child in enumerate(v):
                    locs[p + (i,)] = NodeLoc(None, span)
                    if type(child) is dict or type(child) is list:
                        todo.append((p + (i,), child))

    def close_map(f: _Map, end_span: Span | None):
        sources = f.sources
        if sources:
            own = f.own
            items = list(own.items())
            value = dict(items[: f.merge_at])
            merged = []
            for src, src_span in sources:
                for k, v in src.items():
                    if k not in own and k not in value:
                        value[k] = v
                        merged.append((k, v, src_span))
            value.update(items[f.merge_at :])
            if f.path is not None:
                for k, v, src_span in merged:
                    p = f.path + (k,)
                    locs[p] = NodeLoc(src_span, src_span)
                    if (type(v) is dict or type(v) is list) and v:
                        expand_locations(p, v, src_span, True)
        else:
            value = f.own
        return value

    def register_anchor(name: str, node_span: Span, target: Any):
        old = anchors.get(name)
        if old is not None:
            old_span = old.span if isinstance(old, (_Map, _Seq)) else old[3]
            add(
                "yaml-limit",
                "warning",
                f"anchor '&{_short(name)}' is defined again (first at {old_span.line}:{old_span.column}); "
                "later aliases use this one",
                node_span,
                report_path(),
            )
        anchors[name] = target

    try:
        while True:
            event = next_event()
            state["last"] = event
            t = type(event)
            if t is ScalarEvent:
                sm = event.start_mark
                em = event.end_mark
                span = Span(sm.line + 1, sm.column + 1, em.line + 1, em.column + 1)
                nodes += 1
                if nodes > max_nodes:
                    stop(
                        "yaml-limit",
                        f"the document has more than {max_nodes:,} nodes (aliases count their full size)",
                        span,
                        report_path(),
                    )
                value = event.value
                style = event.style
                as_key = is_key_position()
                if len(value) > scalar_chars_fast:
                    nbytes = len(value.encode("utf-8", "surrogatepass"))
                    if nbytes > max_scalar:
                        add(
                            "yaml-limit",
                            "error",
                            f"text value is {fmt_size(nbytes)}, above the {fmt_size(max_scalar)} limit per value",
                            span,
                            report_path(),
                        )
                merge_key = False
                if event.tag is not None:
                    reject_tag(event, report_path())
                elif not style:
                    if value == "<<" and as_key:
                        merge_key = True
                    else:
                        value = resolve_plain(value, span, as_key) if value else None
                elif style == '"':
                    if _SURROGATE.search(value):
                        value = _SURROGATE_PAIR.sub(_join_pair, value)
                        lone = _SURROGATE.search(value)
                        if lone:
                            add(
                                "text-encoding",
                                "error",
                                f"escape \\u{ord(lone.group()):04x} is a lone surrogate, not a character",
                                span,
                                report_path(),
                            )
                    bad = FORBIDDEN.search(value)
                    if bad:
                        add(
                            "text-encoding",
                            "error",
                            f"escaped {describe_char(bad.group())} in a string is not allowed",
                            span,
                            report_path(),
                        )
                    hidden = HIDDEN.search(value)
                    if hidden and hidden.group() not in text[sm.index : em.index]:
                        # written as an escape: the raw text shows it, the value holds it
                        add(
                            "text-encoding",
                            "warning",
                            f"escaped {describe_char(hidden.group())} in a string: {hidden_note(hidden.group())}",
                            span,
                            report_path(),
                        )
                if event.anchor:
                    register_anchor(event.anchor, span, (value, 1, 0, span))
                emit(value, span, 0, merge_key)
            elif t is MappingEndEvent or t is SequenceEndEvent:
                f = stack.pop()
                start = f.span
                if f.flow:
                    em = event.end_mark
                    span = Span(start.line, start.column, em.line + 1, em.column + 1)
                else:
                    last = f.last
                    span = Span(start.line, start.column, last.end_line, last.end_column)
                if t is MappingEndEvent:
                    value = close_map(f, span)
                    item_spans = None
                else:
                    value = f.items
                    item_spans = f.spans
                if f.anchor and anchors.get(f.anchor) is f:
                    frame: Any = f  # (the identity test narrowed f to the dict's value type)
                    anchors[frame.anchor] = (value, nodes - frame.count0, frame.height, span)
                emit(value, span, f.height, False, item_spans)
            elif t is MappingStartEvent or t is SequenceStartEvent:
                sm = event.start_mark
                em = event.end_mark
                span = Span(sm.line + 1, sm.column + 1, em.line + 1, em.column + 1)
                nodes += 1
                if len(stack) >= max_depth:
                    stop("yaml-limit", f"nesting is deeper than {max_depth} levels", span, report_path())
                if nodes > max_nodes:
                    stop(
                        "yaml-limit",
                        f"the document has more than {max_nodes:,} nodes (aliases count their full size)",
                        span,
                        report_path(),
                    )
                if event.tag is not None:
                    reject_tag(event, report_path())
                merge_value = bool(stack) and type(stack[-1]) is _Map and stack[-1].key is _MERGE
                path = child_path()
                cls = _Map if t is MappingStartEvent else _Seq
                frame = cls(path, span, event.anchor, nodes - 1, bool(event.flow_style), merge_value)
                if event.anchor:
                    register_anchor(event.anchor, span, frame)
                stack.append(frame)
            elif t is AliasEvent:
                sm = event.start_mark
                em = event.end_mark
                span = Span(sm.line + 1, sm.column + 1, em.line + 1, em.column + 1)
                alias_count += 1
                name = event.anchor
                if alias_count > max_aliases:
                    stop("yaml-limit", f"more than {max_aliases} aliases in the file", span, report_path())
                target = anchors.get(name)
                if target is None:
                    stop(
                        "yaml-structure",
                        f"alias '*{_short(name)}' refers to no anchor defined before it",
                        span,
                        report_path(),
                    )
                if isinstance(target, (_Map, _Seq)):
                    stop(
                        "yaml-limit",
                        f"recursive alias: '*{_short(name)}' at {span.line}:{span.column} "
                        "is inside the collection it refers to",
                        target.span,
                        report_path(),
                    )
                value, size, height, _anchor_span = target
                nodes += size
                if nodes > max_nodes:
                    stop(
                        "yaml-limit",
                        f"alias '*{_short(name)}' expands the document beyond {max_nodes:,} nodes",
                        span,
                        report_path(),
                    )
                if height and len(stack) + height > max_depth:
                    stop(
                        "yaml-limit",
                        f"alias '*{_short(name)}' expands to nesting deeper than {max_depth} levels",
                        span,
                        report_path(),
                    )
                path = child_path()
                as_key = is_key_position()
                emit(value, span, height)
                if path is not None and not as_key and height and value:
                    expand_locations(path, value, span, False)
            elif t is DocumentStartEvent:
                docs += 1
                if docs > 1:
                    sm = event.start_mark
                    stop(
                        "yaml-structure",
                        "a second document starts here; a spec file holds exactly one YAML document",
                        Span(sm.line + 1, sm.column + 1, sm.line + 1, sm.column + 1),
                    )
            elif t is StreamEndEvent:
                break
    except _Stop:
        return None, locs, findings
    except Exception as exc:  # anything the parser raises, of any class
        findings.append(exception_finding(exc, state["last"], text, index, file))
        return None, locs, findings

    if root is _PENDING or root is None:
        add("yaml-structure", "error", "empty document, expected a mapping", None)
        return None, locs, findings
    if type(root) is not dict:
        where = f" (it starts at {root_span.line}:{root_span.column})" if root_span else ""
        add(
            "yaml-structure",
            "error",
            f"the document is {kind_of(root)}, expected a mapping of keys to values{where}",
            None,
        )
        return None, locs, findings
    assert root_span is not None  # set together with root by emit()
    locs[()] = NodeLoc(None, root_span)
    return root, locs, findings
