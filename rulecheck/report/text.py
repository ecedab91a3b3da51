"""The terminal report (rich): findings grouped by file, then element, then the sources,
the summary and the caution.

The report is made as lines of styled pieces (:func:`check_lines`), then printed through
rich (:func:`print_rich`, colour) or written as plain text (:func:`write_plain`, no colour:
rich is not imported, some 30 ms of start-up).

Each element is a heading once (its id and line); under it each finding is a block: the
severity word, the rule id and the source number ``[n]``, then the message wrapped to the
width with a hanging indent, then the fix on its own line after our marker ``⇢``. A waived
finding is dim throughout (never in its severity colour) with the waiver's reason. The
sources are listed once, numbered, after the findings. Wrapping is ours, at spaces only;
a word longer than the line is not cut but left to overflow (a path is never folded). The
one-line form for editors and grep is :func:`render_lines`.
"""

from __future__ import annotations

from collections import Counter
from typing import TYPE_CHECKING, TextIO

from rulecheck.errors import visible
from rulecheck.findings import SEVERITIES, Finding
from rulecheck.report import CAUTION

if TYPE_CHECKING:  # rich is imported when text is written (json_report imports this module)
    from rich.console import Console

_STYLE = {
    "hazard": "bold magenta",
    "violation": "bold red",
    "caution": "bold yellow",
    "advisory": "bold cyan",
}
#: marks the fix, the line people act on (our own symbol)
FIX_MARK = "⇢"
_INDENT = 4  # the message under its severity line


#: one piece of an output line: its text and its rich style ("" for none)
Piece = tuple[str, str]
#: one output line, as pieces (an empty list is an empty line)
Line = list[Piece]


def summary_counts(findings: list[Finding]) -> Counter[str]:
    return Counter(f.severity for f in findings if f.waived is None)


def _words(text: str, width: int, indent: int, style: str = "", lead: str = "") -> list[Line]:
    """``lead`` + ``text`` wrapped at spaces to ``width``, ``indent`` columns in; lines
    after the first hang under the text, past the ``lead``."""
    hang = indent + len(lead)
    return [
        [((" " * indent + lead if k == 0 else " " * hang) + line, style)]
        for k, line in enumerate(_wrap(visible(text), max(width - hang, 20)))
    ]


def _block(f: Finding, number: int, width: int) -> list[Line]:
    waived = f.waived is not None
    head: Line = [
        ("  ", ""),
        (f.severity, "dim" if waived else _STYLE[f.severity]),
        ("  ", ""),
        (visible(f.rule), "dim" if waived else "bold"),
        (f"  [{number}]", "dim"),
    ]
    if waived:
        head.append(("  waived", "dim italic"))
    dim = "dim" if waived else ""
    lines = [head, *_words(f.message, width, _INDENT, dim)]
    if f.fix:
        lines += _words(f.fix, width, _INDENT, dim, lead=f"{FIX_MARK} ")
    if waived:
        lines += _words(f.waived or "", width, _INDENT, "dim italic", lead="waived: ")
    return lines


def check_lines(
    results: list[tuple[str, list[Finding]]],
    failed: list[str],
    width: int,
    hidden: int = 0,
    unread: int = 0,
) -> list[Line]:
    """The grouped findings, the sources, then the summary and the caution, wrapped to
    ``width``; ``unread`` of the ``failed`` files could not be read."""
    every: list[Finding] = []
    sources: dict[str, int] = {}
    out: list[Line] = []
    for path, findings in results:
        every.extend(findings)
        if not findings:
            continue
        out.append([(visible(path), "bold underline")])
        elements: dict[str, list[Finding]] = {}
        for f in sorted(findings, key=Finding.sort_key):
            elements.setdefault(f.element, []).append(f)
        # elements in file order (the line of their first finding)
        for element, these in sorted(elements.items(), key=lambda kv: kv[1][0].sort_key()):
            out.append([(visible(element), "bold"), (f"  line {these[0].line}", "dim")])
            for f in these:
                out += _block(f, sources.setdefault(f.source, len(sources) + 1), width)
        out.append([])
    if sources:
        out.append([("Sources", "bold")])
        for source, number in sources.items():
            out += _hanging(f"[{number}]", source, width)
        out.append([])
    files = len(results) + len(failed) - unread
    summary = summary_line(every, files, hidden, len(failed) - unread, unread)
    out += _words(summary, width, 0, "bold")
    out += _words(f"Caution: {CAUTION}", width, 0)
    return out


def render_check(
    console: Console,
    results: list[tuple[str, list[Finding]]],
    failed: list[str],
    hidden: int = 0,
    unread: int = 0,
) -> None:
    """:func:`check_lines` at the console's width, printed through rich (styles)."""
    print_rich(console, check_lines(results, failed, console.width, hidden, unread))


def print_rich(console: Console, lines: list[Line]) -> None:
    """Each line through rich, as it is: never wrapped again, cut or folded (a word longer
    than the line overflows it)."""
    from rich.text import Text

    for line in lines:
        if not line:
            console.print()
            continue
        (first, style), *rest = line
        text = Text(first, style=style)
        for piece, piece_style in rest:
            text.append(piece, style=piece_style)
        console.print(text, overflow="ignore", crop=False)


def write_plain(stream: TextIO, lines: list[Line]) -> None:
    """Each line's text without styles: the bytes :func:`print_rich` writes with colour
    off (``tests/test_text_plain.py``), without importing rich."""
    stream.write("".join("".join(piece for piece, _ in line) + "\n" for line in lines))


def summary_line(every: list[Finding], files: int, hidden: int, bad: int, unread: int) -> str:
    """``N files checked: counts; waived; hidden; with input errors; could not be read``."""
    counts = summary_counts(every)
    waived = sum(1 for f in every if f.waived is not None)
    line = f"{files} file{'s' if files != 1 else ''} checked: " + ", ".join(
        _plural(counts.get(s, 0), s) for s in SEVERITIES
    )
    if waived:
        line += f"; {waived} waived"
    if hidden:
        line += f"; {hidden} hidden by the baseline"
    if bad:
        line += f"; {bad} with input errors"
    if unread:
        line += f"; {unread} could not be read"
    return line


def _hanging(label: str, text: str, width: int) -> list[Line]:
    """``  [n] text`` with the text's later lines under its first word."""
    indent = len(label) + 3
    return [
        [(f"  {label} ", "dim") if k == 0 else (" " * indent, ""), (line, "")]
        for k, line in enumerate(_wrap(visible(text), max(width - indent, 20)))
    ]


def _wrap(text: str, width: int) -> list[str]:
    """Words into lines of at most ``width`` (a longer word has a line to itself)."""
    lines: list[str] = []
    current = ""
    for word in text.split():
        if current and len(current) + 1 + len(word) > width:
            lines.append(current)
            current = word
        else:
            current = f"{current} {word}" if current else word
    if current:
        lines.append(current)
    return lines


def finding_line(f: Finding) -> str:
    """``path:line:col: severity: rule-id: message`` (plain text, one line)."""
    waived = f" (waived: {f.waived})" if f.waived is not None else ""
    return visible(f"{f.path}:{f.line}:{f.column}: {f.severity}: {f.rule}: {f.message}{waived}")


def render_lines(
    results: list[tuple[str, list[Finding]]],
    failed: list[str],
    hidden: int = 0,
    unread: int = 0,
) -> str:
    """One line per finding for editors and grep, then the summary line and the caution."""
    every = [f for _, findings in results for f in findings]
    out = [finding_line(f) for f in sorted(every, key=Finding.sort_key)]
    files = len(results) + len(failed) - unread
    out.append(summary_line(every, files, hidden, len(failed) - unread, unread))
    out.append(f"Caution: {CAUTION}")
    return "\n".join(out) + "\n"


def _plural(count: int, word: str) -> str:
    if count == 1:
        return f"1 {word}"
    return f"{count} {word[:-1] + 'ies' if word.endswith('y') else word + 's'}"
