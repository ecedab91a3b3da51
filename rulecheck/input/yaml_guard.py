"""Guards on reading YAML: the alias budget against "alias bombs", and YAML syntax errors
in plain words (a tab in the indentation, a key that does not line up, a missing colon).

Both work on the text and the parser's events or error marks; the loader calls them.
"""

from __future__ import annotations

import yaml

from rulecheck.errors import InputError, Position

try:  # the C parser is several times faster; fall back quietly without libyaml
    LOADER: type = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on the PyYAML build
    LOADER = yaml.SafeLoader

#: Nodes that aliases may add, per four characters of the file, and on top for any file.
#: Nodes written out are bounded by the file itself (each takes at least a character);
#: what aliases repeat is not, and an "alias bomb" (anchors that each repeat the one
#: before: nine lines expand to 10**9 nodes) would take minutes and gigabytes. Shared
#: blocks reused a few times over stay far below the bound; at 1 MB it allows 260,000
#: repeated nodes, which build in about a second.
ALIAS_CHARS_PER_NODE = 4
ALIAS_NODES_FLOOR = 10_000


def alias_budget(text: str) -> int:
    """How many nodes the aliases of a file of ``text`` may add when they are followed."""
    return ALIAS_NODES_FLOOR + len(text) // ALIAS_CHARS_PER_NODE


def check_aliases(text: str, path: str) -> None:
    """Refuse, at the alias, a file whose aliases would add more than :func:`alias_budget`.

    One pass over the parser's events, before anything is built: each anchored node
    records how many nodes it holds once expanded (an alias inside it counts as the
    whole node it names), and each alias adds its anchor's count to what aliases
    have added so far. The first alias that takes that past the budget is the error.
    Syntax errors are left to the composer, which words them.
    """
    budget = alias_budget(text)
    loader = LOADER(text)
    sizes: dict[str, int] = {}  # anchor -> expanded node count of its node
    open_anchors: list[tuple[str | None, int]] = []  # per open collection: anchor, total at start
    total = 0  # nodes so far, aliases expanded
    added = 0  # of which aliases added
    try:
        while True:
            event = loader.get_event()
            if event is None or isinstance(event, yaml.StreamEndEvent):
                return
            if isinstance(event, yaml.AliasEvent):
                size = sizes.get(event.anchor or "", 1)  # unknown or open: the composer decides
                total += size
                added += size
                if added > budget:
                    mark = event.start_mark
                    raise InputError.at(
                        path,
                        Position(mark.line + 1, mark.column + 1) if mark else Position(1, 1),
                        f"the alias *{event.anchor} would take what the file's aliases repeat "
                        f"past {budget:,} values (anchors that repeat other anchors multiply)",
                        "write the repeated data out, or reuse each anchor only a few times",
                    )
            elif isinstance(event, yaml.ScalarEvent):
                total += 1
                if event.anchor is not None:
                    sizes[event.anchor] = 1
            elif isinstance(event, yaml.CollectionStartEvent):
                total += 1
                sizes.pop(event.anchor or "", None)  # a redefined anchor is a new node
                open_anchors.append((event.anchor, total - 1))
            elif isinstance(event, yaml.CollectionEndEvent):
                anchor, start = open_anchors.pop()
                if anchor is not None:
                    sizes[anchor] = total - start
    except yaml.YAMLError:
        return  # the composer reports it, in its own words
    finally:
        loader.dispose()


def syntax_error(exc: yaml.MarkedYAMLError, text: str) -> tuple[Position, str, str]:
    """Position, plain-words message and hint for a YAML syntax error.

    The parser's own words ("found character that cannot start any token") name the
    parser's state, not the mistake; the common mistakes are recognised from them and
    said plainly. Anything else keeps the parser's words.
    """
    problem, context = exc.problem or "", exc.context or ""
    mark = exc.problem_mark or exc.context_mark
    opened = exc.context_mark
    pos = Position(mark.line + 1, mark.column + 1) if mark else Position(1, 1)
    at = mark.index if mark is not None else -1
    char = text[at] if 0 <= at < len(text) else ""
    if "tab" in problem or (char == "\t" and "cannot start any token" in problem):
        return (
            pos,
            "a tab character in the indentation; YAML indents with spaces only",
            "replace the tab with spaces",
        )
    if "cannot start any token" in problem:
        return (
            pos,
            f"a value cannot start with {char!r} unquoted",
            f"put the value in quotes, e.g. '{char}…'",
        )
    if "quoted scalar" in context and "end of stream" in problem and opened is not None:
        return (
            Position(opened.line + 1, opened.column + 1),
            f"this quote never closes (the file ends at line {pos.line} without it)",
            "add the closing quote on the same line",
        )
    if "flow sequence" in context or "flow mapping" in context:
        bracket, closing = ("[", "]") if "sequence" in context else ("{", "}")
        where = f" at line {opened.line + 1}" if opened is not None else ""
        return (
            pos,
            f"the '{bracket}'{where} is not closed here: "
            f"a missing ',' between items or a missing '{closing}'",
            f"separate items with ', ' and close the list with '{closing}' on the same line",
        )
    if "could not find expected ':'" in problem:
        line = opened.line + 1 if opened is not None else pos.line
        return (
            Position(line, opened.column + 1) if opened is not None else pos,
            f"a key without its colon on line {line}",
            "write 'key: value', with a space after the colon",
        )
    if "did not find expected key" in problem or "expected '-' indicator" in problem:
        above = f" (the block starts at line {opened.line + 1})" if opened is not None else ""
        return (
            pos,
            f"this line's indentation does not line up with the keys above it{above}",
            "indent it by exactly as many spaces as the key it belongs beside",
        )
    if "mapping values are not allowed" in problem:
        key_line = _over_indented(text, pos.line)
        if key_line:
            here = text.split("\n")[pos.line - 1]
            return (
                Position(pos.line, len(here) - len(here.lstrip(" ")) + 1),
                f"this line is indented further than the key above it (line {key_line}), "
                "which already has its value",
                "indent it by exactly as many spaces as the key it belongs beside",
            )
        return (
            pos,
            "a ':' where no key can start: a line above may lack its colon, "
            "or a value holds ': ' and needs quotes",
            "write 'key: value' on each line, and quote values that contain ': '",
        )
    if "undefined alias" in problem:
        return (
            pos,
            "this alias (*name) names no anchor (&name) above it",
            "define the anchor first, or write the value out",
        )
    if "another document" in problem:
        return pos, "a second document ('---') in the file", "a layout is one YAML document"
    what = exc.problem or exc.context or "not valid YAML"
    return pos, what, "fix the YAML at this spot"


def _over_indented(text: str, line: int) -> int:
    """The line above ``line`` (1-based) if ``line`` is indented deeper than it while that
    line already holds a value (``key: value``), else 0."""
    lines = text.split("\n")
    if not 1 <= line <= len(lines):
        return 0
    here = lines[line - 1]
    for number in range(line - 1, 0, -1):
        above = lines[number - 1]
        body = above.strip()
        if not body or body.startswith("#"):
            continue
        deeper = len(here) - len(here.lstrip(" ")) > len(above) - len(above.lstrip(" "))
        has_value = ":" in body and not body.endswith(":")
        return number if deeper and has_value else 0
    return 0
