"""Write a sized layout: the original text with only the changed sizes and the added arresters.

The file is not re-dumped. PyYAML's composer (the C one where available) gives the start
and end of every scalar in the original text; each changed ``size`` value is replaced in
place, in the original's quoting, and each added arrester is a new line after the last
arrester entry in the style of that entry (flow ``{…}`` or block), or a new ``arresters:``
block at the end. Everything else — comments, key order, flow and block styles, blank
lines, line ends, quantity spelling — stays byte for byte.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import yaml

_Loader: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def _value(node: yaml.MappingNode, key: str) -> yaml.Node | None:
    for k, v in node.value:
        if isinstance(k, yaml.ScalarNode) and k.value == key:
            return v
    return None


def _scalar_text(node: yaml.ScalarNode, label: str) -> str:
    if node.style in ("'", '"'):
        return f"{node.style}{label}{node.style}"
    return label


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


def _dash_column(text: str, node: yaml.Node) -> int:
    """Column of the ``-`` that opens the block sequence entry ``node``."""
    start = node.start_mark.index
    line_start = text.rfind("\n", 0, start) + 1
    dash = text.rfind("-", line_start, start)
    return dash - line_start if dash >= 0 else node.start_mark.column


def edit_layout(text: str, sizes: dict[str, str], arresters: Sequence[dict[str, str]]) -> str:
    """``text`` with pipe sizes set to ``sizes`` (pipe id → label) and ``arresters`` added."""
    root = yaml.compose(text, Loader=_Loader)
    if not isinstance(root, yaml.MappingNode):
        raise ValueError("a layout is a mapping at the top")
    newline = "\r\n" if "\r\n" in text else "\n"
    edits: list[tuple[int, int, str]] = []
    pipes = _value(root, "pipes")
    column = 2
    if isinstance(pipes, yaml.SequenceNode):
        for item in pipes.value:
            if not isinstance(item, yaml.MappingNode):
                continue
            pid, size = _value(item, "id"), _value(item, "size")
            if not isinstance(pid, yaml.ScalarNode) or not isinstance(size, yaml.ScalarNode):
                continue
            new = sizes.get(pid.value)
            if new is not None and new != size.value:
                edits.append((size.start_mark.index, size.end_mark.index, _scalar_text(size, new)))
        if pipes.value and not pipes.flow_style:
            column = _dash_column(text, pipes.value[0])
    if arresters:
        edits.append(_arrester_edit(text, root, arresters, column, newline))
    out = text
    for start, end, new_text in sorted(edits, reverse=True):
        out = out[:start] + new_text + out[end:]
    return out


def _arrester_edit(
    text: str,
    root: yaml.MappingNode,
    arresters: Sequence[dict[str, str]],
    column: int,
    newline: str,
) -> tuple[int, int, str]:
    node = _value(root, "arresters")
    if isinstance(node, yaml.SequenceNode) and node.value and not node.flow_style:
        last = node.value[-1]
        flow = bool(getattr(last, "flow_style", False))
        col = _dash_column(text, last)
        end = text.find("\n", last.end_mark.index)
        at = len(text) if end < 0 else end + 1
        prefix = "" if end >= 0 else newline
        body = "".join(_entry(a, flow, col, newline) for a in arresters)
        return at, at, prefix + body
    if isinstance(node, yaml.SequenceNode):  # flow sequence: [] or [{…}, …]
        inner = ", ".join(
            "{" + ", ".join(f"{k}: {v}" for k, v in a.items()) + "}" for a in arresters
        )
        close = node.end_mark.index - 1  # the "]"
        joiner = ", " if node.value else ""
        return close, close, joiner + inner
    body = "arresters:" + newline + "".join(_entry(a, True, column, newline) for a in arresters)
    if node is not None:  # `arresters:` with an empty value
        key = next(k for k, v in root.value if v is node)
        return key.start_mark.index, node.end_mark.index, body.rstrip("\r\n")
    prefix = "" if text.endswith("\n") or not text else newline
    return len(text), len(text), prefix + body
