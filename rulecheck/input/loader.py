"""Read a YAML layout into plain Python data plus the position of every node.

The data is built in one pass, together with a table from each JSON path (a
tuple of keys and indices) to its 1-based :class:`Position`. Later stages
report problems against these paths, so every message can name a line and a
column.

Two readers give the same result. The fast one reads the parser's event stream
(with the C parser when present) straight into dicts and lists, resolving plain
scalars with the loader's own implicit-resolver table; it skips PyYAML's
composer, whose node objects and per-node resolver calls cost more than the
parsing itself. It hands over to the second reader, which walks PyYAML's
composed node graph, on anything it does not handle itself: anchors, aliases,
explicit tags, several documents, and every error (so errors and their
positions come from one place).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from rulecheck.errors import InputError, Position, ProblemCollector
from rulecheck.files import MAX_LAYOUT_BYTES, read_text
from rulecheck.input.yaml_guard import LOADER as _Loader
from rulecheck.input.yaml_guard import check_aliases, syntax_error

JsonPath = tuple[str | int, ...]

_MAP = "tag:yaml.org,2002:map"
_SEQ = "tag:yaml.org,2002:seq"
_STR = "tag:yaml.org,2002:str"


_COLUMN_BITS = 32  # packed position: line << 32 | column (both 1-based; columns < 2**32)
_COLUMN_MASK = (1 << _COLUMN_BITS) - 1


def _pack(mark: Any) -> int:
    """A YAML mark (0-based) as one packed 1-based position."""
    return (mark.line + 1) << _COLUMN_BITS | (mark.column + 1)


def _unpack(packed: int) -> Position:
    return Position(packed >> _COLUMN_BITS, packed & _COLUMN_MASK)


@dataclass
class Document:
    """A parsed layout: the data, where each value sits, and where each key sits.

    Positions are kept packed in ints (a 100k-pipe file has millions of them;
    as objects they cost more to make and to keep than the data itself) and
    become :class:`Position` objects when asked for.
    """

    path: str
    data: Any
    marks: dict[JsonPath, int] = field(default_factory=dict)  # node path -> packed position
    key_marks: dict[JsonPath, int] = field(default_factory=dict)  # key of that path -> packed

    @property
    def positions(self) -> dict[JsonPath, Position]:
        """Every node's position, by path (built on each access; prefer :meth:`where`)."""
        return {path: _unpack(packed) for path, packed in self.marks.items()}

    @property
    def key_positions(self) -> dict[JsonPath, Position]:
        """Every mapping key's position, by the path it names (built on each access)."""
        return {path: _unpack(packed) for path, packed in self.key_marks.items()}

    def where(self, path: JsonPath) -> Position:
        """Position of the node at ``path``, or of its nearest ancestor that has one."""
        marks = self.marks
        while path:
            found = marks.get(path)
            if found is not None:
                return _unpack(found)
            path = path[:-1]
        found = marks.get(())
        return Position(1, 1) if found is None else _unpack(found)

    def key_where(self, path: JsonPath) -> Position:
        """Position of the mapping key that names ``path`` (falls back to the value)."""
        found = self.key_marks.get(path)
        return self.where(path) if found is None else _unpack(found)


def _mark(node: yaml.Node) -> Position:
    return Position(node.start_mark.line + 1, node.start_mark.column + 1)


class _Builder:
    def __init__(self, doc: Document, problems: ProblemCollector) -> None:
        self.doc = doc
        self.problems = problems
        self.scalars = yaml.constructor.SafeConstructor()
        self.active: set[int] = set()

    def build(self, node: yaml.Node, path: JsonPath) -> Any:
        self.doc.marks[path] = _pack(node.start_mark)
        if isinstance(node, yaml.ScalarNode):
            return self._scalar(node)
        if id(node) in self.active:
            self.problems.add(_mark(node), "a recursive alias refers to itself", "remove the alias")
            return None
        self.active.add(id(node))
        try:
            if isinstance(node, yaml.SequenceNode):
                return [self.build(item, (*path, i)) for i, item in enumerate(node.value)]
            if isinstance(node, yaml.MappingNode):
                return self._mapping(node, path)
            return None  # the composer makes no other kind of node
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
                first = self.doc.key_marks[child] >> _COLUMN_BITS
                self.problems.add(
                    _mark(key_node),
                    f"key '{key}' appears twice in this mapping (first at line {first})",
                    "keep one of them",
                )
                continue
            self.doc.key_marks[child] = _pack(key_node.start_mark)
            result[key] = self.build(value_node, child)
        return result

    def _scalar(self, node: yaml.ScalarNode) -> Any:
        if node.tag == _STR:
            return node.value
        return _construct(self.scalars, node, self.problems)


def _construct(
    scalars: yaml.constructor.SafeConstructor, node: yaml.ScalarNode, problems: ProblemCollector
) -> Any:
    """The value of a scalar node whose tag is not ``str`` (shared by both readers)."""
    try:
        value = scalars.construct_object(node)
    except yaml.YAMLError:
        problems.add(_mark(node), f"cannot read the value {node.value!r}")
        return node.value
    except ValueError:  # an integer past Python's digit limit (int_max_str_digits)
        problems.add(
            _mark(node), f"the number {_short(node.value)} is too large", "write an ordinary number"
        )
        return 0
    if isinstance(value, float) and not math.isfinite(value):
        problems.add(
            _mark(node), f"{node.value!r} is not a finite number", "write an ordinary number"
        )
    elif isinstance(value, int) and not isinstance(value, bool) and abs(value) > _LARGEST:
        problems.add(
            _mark(node), f"the number {_short(node.value)} is too large", "write an ordinary number"
        )
        return 0
    return value


_LARGEST = 10**15  # far beyond any plumbing quantity, well inside a float's exact range


def _short(text: str) -> str:
    return text if len(text) <= 20 else f"{text[:8]}…({len(text)} digits)"


class _Fallback(Exception):
    """The event reader met something that it leaves to the node-graph reader."""


_ScalarEvent = yaml.ScalarEvent
_MappingStartEvent = yaml.MappingStartEvent
_MappingEndEvent = yaml.MappingEndEvent
_SequenceStartEvent = yaml.SequenceStartEvent
_SequenceEndEvent = yaml.SequenceEndEvent
_START_EVENTS = (_MappingStartEvent, _SequenceStartEvent)


class _EventReader:
    """Build data and positions straight from the parser's events (see the module docstring).

    Produces exactly what :class:`_Builder` produces from the composed graph of
    the same text: the same values, positions, key positions and problems, in
    the same order. Raises :class:`_Fallback` where it cannot promise that.
    """

    def __init__(self, doc: Document, problems: ProblemCollector, loader: Any) -> None:
        self.doc = doc
        self.problems = problems
        self.next_event = loader.get_event
        self.scalars = yaml.constructor.SafeConstructor()
        # The resolver's table, read now (it is mutable class data): the candidates for
        # each first character, then the wildcard ones, in the resolver's own order.
        loader_class: Any = _Loader
        table: dict[Any, list[tuple[str, Any]]] = loader_class.yaml_implicit_resolvers
        self.wildcard = list(table.get(None, []))
        self.by_first = {k: list(v) + self.wildcard for k, v in table.items() if k is not None}
        self.resolved: dict[str, str] = {}  # plain scalar text -> tag (memo)

    def resolve_plain(self, value: str) -> str:
        """Tag of a plain scalar, as ``BaseResolver.resolve`` finds it (no path resolvers)."""
        tag = self.resolved.get(value)
        if tag is None:
            tag = _STR
            for candidate, regexp in self.by_first.get(value[0] if value else "", self.wildcard):
                if regexp.match(value):
                    tag = candidate
                    break
            self.resolved[value] = tag
        return tag

    def node(self, event: Any, path: JsonPath) -> Any:
        mark = event.start_mark
        self.doc.marks[path] = (mark.line + 1) << _COLUMN_BITS | (mark.column + 1)
        kind = event.__class__
        if kind is _ScalarEvent:
            if event.tag is not None or event.anchor is not None:
                raise _Fallback
            value = event.value
            if event.implicit[0]:  # plain: resolved by the table; quoted: always a string
                tag = self.resolve_plain(value)
                if tag != _STR:
                    node = yaml.ScalarNode(
                        tag, value, event.start_mark, event.end_mark, event.style
                    )
                    return _construct(self.scalars, node, self.problems)
            return value
        if kind is _MappingStartEvent and event.tag is None and event.anchor is None:
            return self.mapping(path)
        if kind is _SequenceStartEvent and event.tag is None and event.anchor is None:
            return self.sequence(path)
        raise _Fallback  # an alias, or a collection with an anchor or a tag

    def sequence(self, path: JsonPath) -> list[Any]:
        result: list[Any] = []
        next_event, node = self.next_event, self.node
        index = 0
        while True:
            event = next_event()
            if event.__class__ is _SequenceEndEvent:
                return result
            result.append(node(event, (*path, index)))
            index += 1

    def mapping(self, path: JsonPath) -> dict[str, Any]:
        result: dict[str, Any] = {}
        next_event, key_marks = self.next_event, self.doc.key_marks
        while True:
            event = next_event()
            kind = event.__class__
            if kind is _MappingEndEvent:
                return result
            mark = event.start_mark
            if kind is not _ScalarEvent or event.tag is not None or event.anchor is not None:
                if not isinstance(event, _START_EVENTS):
                    raise _Fallback  # an alias or a tagged or anchored key
                self.skip(event)
                self.problems.add(
                    Position(mark.line + 1, mark.column + 1), "a mapping key must be plain text"
                )
                self.skip(next_event())
                continue
            key = event.value
            child = (*path, key)
            if key in result:
                first = key_marks[child] >> _COLUMN_BITS
                self.problems.add(
                    Position(mark.line + 1, mark.column + 1),
                    f"key '{key}' appears twice in this mapping (first at line {first})",
                    "keep one of them",
                )
                self.skip(next_event())
                continue
            key_marks[child] = (mark.line + 1) << _COLUMN_BITS | (mark.column + 1)
            result[key] = self.node(next_event(), child)

    def skip(self, event: Any) -> None:
        """Consume the node that starts with ``event`` (the composer would still see its
        anchors and aliases, so those hand over)."""
        depth = 0
        while True:
            if getattr(event, "anchor", None) is not None or getattr(event, "tag", None):
                raise _Fallback
            kind = event.__class__
            if kind is _MappingStartEvent or kind is _SequenceStartEvent:
                depth += 1
            elif kind is _MappingEndEvent or kind is _SequenceEndEvent:
                depth -= 1
            elif kind is not _ScalarEvent:
                raise _Fallback
            if depth == 0:
                return
            event = self.next_event()


def _read_events(text: str, path: str) -> Document | None:
    """The fast reader: the document, or ``None`` for an empty stream; raises
    :class:`_Fallback` (or any error) where the node-graph reader must decide."""
    loader = _Loader(text)
    try:
        next_event = loader.get_event
        if not isinstance(next_event(), yaml.StreamStartEvent):
            raise _Fallback
        event = next_event()
        if isinstance(event, yaml.StreamEndEvent):
            return None
        if not isinstance(event, yaml.DocumentStartEvent):
            raise _Fallback
        doc = Document(path=path, data=None)
        problems = ProblemCollector(path)
        doc.data = _EventReader(doc, problems, loader).node(next_event(), ())
        if not isinstance(next_event(), yaml.DocumentEndEvent):
            raise _Fallback
        if not isinstance(next_event(), yaml.StreamEndEvent):
            raise _Fallback  # a second document: the composer words that error
    finally:
        loader.dispose()
    problems.raise_if_any()
    return doc


def parse_text(text: str, path: str) -> Document:
    """Parse YAML ``text`` (named ``path`` in messages) into a :class:`Document`."""
    try:
        doc = _read_events(text, path)
    except InputError:
        raise
    except Exception:  # noqa: BLE001 - anything unusual: the node-graph reader decides
        return _parse_composed(text, path)
    if doc is None:
        raise InputError.at(
            path, Position(1, 1), "the file is empty", "start with 'version: 1' and 'project:'"
        )
    return doc


def _too_deep(path: str) -> InputError:
    return InputError.at(
        path,
        Position(1, 1),
        "the YAML is nested too deeply",
        "a layout needs only a few levels of nesting",
    )


def _parse_composed(text: str, path: str) -> Document:
    """The node-graph reader (PyYAML's composer), for what the event reader hands over."""
    try:
        check_aliases(text, path)
        root = yaml.compose(text, Loader=_Loader)
    except yaml.MarkedYAMLError as exc:
        pos, message, hint = syntax_error(exc, text)
        raise InputError.at(path, pos, f"YAML syntax: {message}", hint) from None
    except yaml.reader.ReaderError as exc:  # a character YAML does not allow; no mark
        line = text.count("\n", 0, exc.position) + 1
        column = exc.position - (text.rfind("\n", 0, exc.position) + 1) + 1
        raise InputError.at(
            path,
            Position(line, column),
            f"the control character {exc.character!r} is not allowed in YAML",
            "delete it, or write it as an escape inside a double-quoted string",
        ) from None
    except yaml.YAMLError as exc:
        raise InputError.at(path, Position(1, 1), f"YAML syntax: {exc}") from None
    except RecursionError:
        raise _too_deep(path) from None
    if root is None:
        raise InputError.at(
            path, Position(1, 1), "the file is empty", "start with 'version: 1' and 'project:'"
        )
    doc = Document(path=path, data=None)
    problems = ProblemCollector(path)
    try:
        doc.data = _Builder(doc, problems).build(root, ())
    except RecursionError:
        raise _too_deep(path) from None
    problems.raise_if_any()
    return doc


def load_file(path: str | Path) -> Document:
    """Read and parse one layout file; unreadable files become input errors."""
    name = str(path)
    text = read_text(path, MAX_LAYOUT_BYTES, "layout")
    return parse_text(text, name)
