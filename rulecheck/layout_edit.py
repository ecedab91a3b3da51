"""Write a sized layout: the original text with only the changed sizes and the added arresters.

The file is not re-dumped. PyYAML's event stream (the C parser where available) gives the start
and end of every scalar in the original text; each changed ``size`` value is replaced in
place, in the original's quoting, and each added arrester is a new line after the last
arrester entry in the style of that entry (flow ``{…}`` or block), or a new ``arresters:``
block at the end. Everything else — comments, key order, flow and block styles, blank
lines, line ends, quantity spelling — stays byte for byte.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import yaml

_Loader: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


@dataclass
class _Found:
    """What the edit needs from the original text: marks from PyYAML's event stream."""

    sizes: dict[str, tuple[int, int, str | None]] = field(default_factory=dict)  # id -> span
    pipe_column: int = 2
    arresters_key: Any = None  # the top-level key scalar event
    arresters_value: Any = None  # the value's start event (a sequence, or a null scalar)
    arresters_end: Any = None  # the sequence's end event
    last_item: tuple[Any, Any] | None = None  # (start, end) events of the last entry
    inner_end: int = 0  # where the last entry's last value ends


def _scan(text: str) -> _Found:
    """One pass over the parser's events (no node tree: that costs five times as much)."""
    found = _Found()
    stack: list[list[Any]] = []  # [kind, key or index, wants key]
    pipe: dict[str, Any] = {}
    item_start: Any = None
    pipes_block = False

    def path() -> tuple[Any, ...]:
        return tuple(entry[1] for entry in stack)

    for event in yaml.parse(text, Loader=_Loader):
        if isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            kind, _, _, flow = stack.pop()
            where = path()
            if len(where) == 2 and where[0] == "pipes" and kind == "map":
                if "id" in pipe and "size" in pipe:
                    found.sizes[pipe["id"]] = pipe["size"]
                pipe = {}
            elif len(where) == 2 and where[0] == "arresters" and kind == "map":
                found.last_item = (item_start, event)
            if where[:1] == ("arresters",) and len(where) >= 2 and flow:
                found.inner_end = _index(event.end_mark)
            elif where == ("arresters",) and kind == "seq":
                found.arresters_end = event
            if stack and stack[-1][0] == "map":
                stack[-1][2] = True
            continue
        if not isinstance(
            event,
            (yaml.ScalarEvent, yaml.MappingStartEvent, yaml.SequenceStartEvent, yaml.AliasEvent),
        ):
            continue
        if stack and stack[-1][0] == "map" and stack[-1][2]:
            stack[-1][1], stack[-1][2] = getattr(event, "value", None), False
            if len(stack) == 1 and stack[0][1] == "arresters":
                found.arresters_key = event
            continue
        if stack and stack[-1][0] == "seq":
            stack[-1][1] += 1
        where = path()
        if where == ("arresters",):
            found.arresters_value = event
        if isinstance(event, yaml.ScalarEvent) and where[:1] == ("arresters",) and len(where) >= 3:
            found.inner_end = _index(event.end_mark)
        if isinstance(event, yaml.ScalarEvent):
            if len(where) == 3 and where[0] == "pipes" and where[2] in ("id", "size"):
                style = event.style if event.style in ("'", '"') else None
                span = (_index(event.start_mark), _index(event.end_mark), style)
                pipe[where[2]] = event.value if where[2] == "id" else span
        elif isinstance(event, yaml.AliasEvent):
            pass
        else:
            if where == ("pipes",):
                pipes_block = not event.flow_style
            if where == ("pipes", 0) and pipes_block:
                found.pipe_column = _column(text, _index(event.start_mark))
            if len(where) == 2 and where[0] == "arresters":
                item_start = event
            kind = "map" if isinstance(event, yaml.MappingStartEvent) else "seq"
            stack.append([kind, -1 if kind == "seq" else None, kind == "map", event.flow_style])
            continue
        if stack and stack[-1][0] == "map":
            stack[-1][2] = True
    return found


def _index(mark: Any) -> int:
    """Character offset of a parser mark (every event from a string has both marks)."""
    return int(mark.index) if mark is not None else 0


def _column(text: str, start: int) -> int:
    """Column of the ``-`` that opens the block sequence entry starting at ``start``."""
    line_start = text.rfind("\n", 0, start) + 1
    dash = text.rfind("-", line_start, start)
    return dash - line_start if dash >= 0 else start - line_start


def _entry(item: dict[str, str], flow: bool, column: int, newline: str) -> str:
    pad = " " * column
    if flow:
        inner = ", ".join(f"{k}: {v}" for k, v in item.items())
        return f"{pad}- {{{inner}}}{newline}"
    lines = [
        f"{pad}- {k}: {v}" if i == 0 else f"{pad}  {k}: {v}"
        for i, (k, v) in enumerate(item.items())
    ]
    return newline.join(lines) + newline


def edit_layout(text: str, sizes: dict[str, str], arresters: Sequence[dict[str, str]]) -> str:
    """``text`` with pipe sizes set to ``sizes`` (pipe id → label) and ``arresters`` added."""
    found = _scan(text)
    newline = "\r\n" if "\r\n" in text else "\n"
    edits: list[tuple[int, int, str]] = []
    for pid, (start, end, style) in found.sizes.items():
        new = sizes.get(pid)
        if new is not None and text[start:end].strip("'\"") != new:
            edits.append((start, end, f"{style}{new}{style}" if style else new))
    if arresters:
        edits.append(_arrester_edit(text, found, arresters, newline))
    pieces, at = [], 0
    for start, end, new_text in sorted(edits):  # one pass: linear in the file's length
        pieces += [text[at:start], new_text]
        at = end
    pieces.append(text[at:])
    return "".join(pieces)


def _flow_entries(arresters: Sequence[dict[str, str]]) -> str:
    return ", ".join("{" + ", ".join(f"{k}: {v}" for k, v in a.items()) + "}" for a in arresters)


def _arrester_edit(
    text: str, found: _Found, arresters: Sequence[dict[str, str]], newline: str
) -> tuple[int, int, str]:
    value = found.arresters_value
    if isinstance(value, yaml.SequenceStartEvent) and not value.flow_style and found.last_item:
        first = found.last_item[0]
        flow = bool(getattr(first, "flow_style", False))
        col = _column(text, _index(first.start_mark))
        end = text.find("\n", found.inner_end)
        at = len(text) if end < 0 else end + 1
        prefix = "" if end >= 0 else newline
        return at, at, prefix + "".join(_entry(a, flow, col, newline) for a in arresters)
    if isinstance(value, yaml.SequenceStartEvent) and found.arresters_end is not None:
        close = _index(found.arresters_end.end_mark) - 1  # the "]"
        joiner = ", " if found.last_item else ""
        return close, close, joiner + _flow_entries(arresters)
    column = found.pipe_column
    body = "arresters:" + newline + "".join(_entry(a, True, column, newline) for a in arresters)
    if found.arresters_key is not None:  # `arresters:` with an empty value
        stop = _index(value.end_mark) if value is not None else _index(found.arresters_key.end_mark)
        return _index(found.arresters_key.start_mark), stop, body.rstrip("\r\n")
    prefix = "" if text.endswith("\n") or not text else newline
    return len(text), len(text), prefix + body
