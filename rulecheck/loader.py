"""Read a YAML layout into plain Python data plus the position of every node.

PyYAML composes the node graph (with the C parser when present); this module
walks it once, building dicts/lists/scalars and a table from each JSON path
(a tuple of keys and indices) to its 1-based :class:`Position`. Later stages
report problems against these paths, so every message can name a line and a
column.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from rulecheck.errors import InputError, Position, ProblemCollector

try:  # the C parser is several times faster; fall back quietly without libyaml
    _Loader: type = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on the PyYAML build
    _Loader = yaml.SafeLoader

JsonPath = tuple[str | int, ...]

_MAP = "tag:yaml.org,2002:map"
_SEQ = "tag:yaml.org,2002:seq"
_STR = "tag:yaml.org,2002:str"


@dataclass
class Document:
    """A parsed layout: the data, where each value sits, and where each key sits."""

    path: str
    data: Any
    positions: dict[JsonPath, Position] = field(default_factory=dict)
    key_positions: dict[JsonPath, Position] = field(default_factory=dict)

    def where(self, path: JsonPath) -> Position:
        """Position of the node at ``path``, or of its nearest ancestor that has one."""
        while path:
            found = self.positions.get(path)
            if found is not None:
                return found
            path = path[:-1]
        return self.positions.get((), Position(1, 1))

    def key_where(self, path: JsonPath) -> Position:
        """Position of the mapping key that names ``path`` (falls back to the value)."""
        return self.key_positions.get(path) or self.where(path)


def _mark(node: yaml.Node) -> Position:
    return Position(node.start_mark.line + 1, node.start_mark.column + 1)


class _Builder:
    def __init__(self, doc: Document, problems: ProblemCollector) -> None:
        self.doc = doc
        self.problems = problems
        self.scalars = yaml.constructor.SafeConstructor()
        self.active: set[int] = set()

    def build(self, node: yaml.Node, path: JsonPath) -> Any:
        self.doc.positions[path] = _mark(node)
        if isinstance(node, yaml.ScalarNode):
            return self._scalar(node)
        if id(node) in self.active:
            self.problems.add(_mark(node), "a recursive alias refers to itself", "remove the alias")
            return None
        self.active.add(id(node))
        try:
            if isinstance(node, yaml.SequenceNode):
                return [self.build(item, (*path, i)) for i, item in enumerate(node.value)]
            return self._mapping(node, path)
        finally:
            self.active.discard(id(node))

    def _mapping(self, node: yaml.MappingNode, path: JsonPath) -> dict[str, Any]:
        result: dict[str, Any] = {}
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode):
                self.problems.add(_mark(key_node), "a mapping key must be plain text")
                continue
            # Keys are names, taken as written: YAML 1.1 would read `on:` (a device's pipe)
            # as the boolean true.
            key = str(key_node.value)
            child = (*path, key)
            if key in result:
                first = self.doc.key_positions[child]
                self.problems.add(
                    _mark(key_node),
                    f"key '{key}' appears twice in this mapping (first at line {first.line})",
                    "keep one of them",
                )
                continue
            self.doc.key_positions[child] = _mark(key_node)
            result[key] = self.build(value_node, child)
        return result

    def _scalar(self, node: yaml.ScalarNode) -> Any:
        if node.tag == _STR:
            return node.value
        try:
            value = self.scalars.construct_object(node)
        except yaml.YAMLError:
            self.problems.add(_mark(node), f"cannot read the value {node.value!r}")
            return node.value
        if isinstance(value, float) and not math.isfinite(value):
            self.problems.add(_mark(node), f"{node.value!r} is not a finite number",
                              "write an ordinary number")
        return value


def parse_text(text: str, path: str) -> Document:
    """Parse YAML ``text`` (named ``path`` in messages) into a :class:`Document`."""
    try:
        root = yaml.compose(text, Loader=_Loader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        pos = Position(mark.line + 1, mark.column + 1) if mark else Position(1, 1)
        what = exc.problem or exc.context or "not valid YAML"
        raise InputError.at(path, pos, f"YAML syntax: {what}", "fix the YAML at this spot") from None
    except yaml.YAMLError as exc:
        raise InputError.at(path, Position(1, 1), f"YAML syntax: {exc}") from None
    if root is None:
        raise InputError.at(
            path, Position(1, 1), "the file is empty", "start with 'version: 1' and 'project:'"
        )
    doc = Document(path=path, data=None)
    problems = ProblemCollector(path)
    doc.data = _Builder(doc, problems).build(root, ())
    problems.raise_if_any()
    return doc


def load_file(path: str | Path) -> Document:
    """Read and parse one layout file; unreadable files become input errors."""
    name = str(path)
    try:
        raw = Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError.at(name, Position(1, 1), "no such file", "check the path") from None
    except IsADirectoryError:
        raise InputError.at(name, Position(1, 1), "this is a folder, not a file") from None
    except OSError as exc:
        raise InputError.at(name, Position(1, 1), f"cannot read the file: {exc.strerror}") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError.at(
            name, Position(line, column), "the file is not UTF-8 text", "save it as UTF-8"
        ) from None
    return parse_text(text, name)
