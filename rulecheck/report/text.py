"""The terminal report (rich): findings grouped by file, then element, then the sources,
the summary and the caution.

Each element is a heading once (its id and line); under it each finding is a block: the
severity word, the rule id and the source number ``[n]``, then the message wrapped to the
width with a hanging indent, then the fix on its own line after our marker ``⇢``. A waived
finding is dim throughout (never in its severity colour) with the waiver's reason. The
sources are listed once, numbered, after the findings. Wrapping is at spaces only (rich
word wrap); a word longer than the line is not cut but left to overflow. The one-line form
for editors and grep is :func:`render_lines`.
"""

from __future__ import annotations

from collections import Counter
from typing import TYPE_CHECKING

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


def summary_counts(findings: list[Finding]) -> Counter[str]:
    return Counter(f.severity for f in findings if f.waived is None)


def _words(console: Console, text: str, indent: int, style: str = "", lead: str = "") -> None:
    """``lead`` + ``text`` wrapped at spaces to the console width, ``indent`` columns in;
    lines after the first hang under the text, past the ``lead``."""
    from rich.text import Text

    hang = indent + len(lead)
    for k, line in enumerate(_wrap(visible(text), max(console.width - hang, 20))):
        start = " " * indent + lead if k == 0 else " " * hang
        console.print(Text(start + line, style=style), no_wrap=True, crop=False)


def _block(console: Console, f: Finding, number: int) -> None:
    from rich.text import Text

    waived = f.waived is not None
    head = Text("  ")
    head.append(f.severity, style="dim" if waived else _STYLE[f.severity])
    head.append("  ")
    head.append(visible(f.rule), style="dim" if waived else "bold")
    head.append(f"  [{number}]", style="dim")
    if waived:
        head.append("  waived", style="dim italic")
    console.print(head, overflow="ignore", crop=False)
    dim = "dim" if waived else ""
    _words(console, f.message, _INDENT, dim)
    if f.fix:
        _words(console, f.fix, _INDENT, dim, lead=f"{FIX_MARK} ")
    if waived:
        _words(console, f.waived or "", _INDENT, "dim italic", lead="waived: ")


def render_check(
    console: Console,
    results: list[tuple[str, list[Finding]]],
    failed: list[str],
    hidden: int = 0,
    unread: int = 0,
) -> None:
    """The grouped findings, the sources, then the summary and the caution; ``unread`` of
    the ``failed`` files could not be read."""
    from rich.text import Text

    every: list[Finding] = []
    sources: dict[str, int] = {}
    for path, findings in results:
        every.extend(findings)
        if not findings:
            continue
        console.print(Text(visible(path), style="bold underline"), overflow="fold")
        elements: dict[str, list[Finding]] = {}
        for f in sorted(findings, key=Finding.sort_key):
            elements.setdefault(f.element, []).append(f)
        # elements in file order (the line of their first finding)
        for element, these in sorted(elements.items(), key=lambda kv: kv[1][0].sort_key()):
            heading = Text(visible(element), style="bold")
            heading.append(f"  line {these[0].line}", style="dim")
            console.print(heading, overflow="ignore", crop=False)
            for f in these:
                _block(console, f, sources.setdefault(f.source, len(sources) + 1))
        console.print()
    if sources:
        console.print(Text("Sources", style="bold"))
        for source, number in sources.items():
            _hanging(console, f"[{number}]", source)
        console.print()
    files = len(results) + len(failed) - unread
    _words(console, summary_line(every, files, hidden, len(failed) - unread, unread), 0, "bold")
    _words(console, f"Caution: {CAUTION}", 0)


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


def _hanging(console: Console, label: str, text: str) -> None:
    """``  [n] text`` with the text's later lines under its first word."""
    from rich.text import Text

    indent = len(label) + 3
    for k, line in enumerate(_wrap(visible(text), max(console.width - indent, 20))):
        out = Text(f"  {label} ", style="dim") if k == 0 else Text(" " * indent)
        out.append(line)
        console.print(out, no_wrap=True, crop=False)


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
