"""Human-readable output with rich: one line per finding, then a summary and the caution."""

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
    "caution": "yellow",
    "advisory": "cyan",
}


def _shown(text: str) -> str:
    """Text from the layout as rich markup: control characters visible, markup escaped."""
    from rich.markup import escape

    return escape(visible(text))


def finding_line(f: Finding) -> str:
    """``path:line:col  severity  rule-id  message  [source]`` as rich markup."""
    waived = f" [dim](waived: {_shown(f.waived)})[/dim]" if f.waived is not None else ""
    fix = f" [dim]→ {_shown(f.fix)}[/dim]" if f.fix else ""
    return (
        f"{_shown(f.path)}:{f.line}:{f.column}  [{_STYLE[f.severity]}]{f.severity}[/]  "
        f"{_shown(f.rule)}  {_shown(f.message)}{fix}{waived}  [dim]\\[{_shown(f.source)}][/dim]"
    )


def summary_counts(findings: list[Finding]) -> Counter[str]:
    return Counter(f.severity for f in findings if f.waived is None)


def render_check(
    console: Console,
    results: list[tuple[str, list[Finding]]],
    failed: list[str],
    hidden: int = 0,
    unread: int = 0,
) -> None:
    """Finding lines, then the summary; ``unread`` of the ``failed`` files could not be read."""
    every: list[Finding] = []
    for _path, findings in results:
        for f in findings:
            console.print(finding_line(f), soft_wrap=True, highlight=False)
        every.extend(findings)
    counts = summary_counts(every)
    waived = sum(1 for f in every if f.waived is not None)
    parts = [f"{_plural(counts.get(s, 0), s)}" for s in SEVERITIES]
    files = len(results) + len(failed) - unread
    line = f"{files} file{'s' if files != 1 else ''} checked: " + ", ".join(parts)
    if waived:
        line += f"; {waived} waived"
    if hidden:
        line += f"; {hidden} hidden by the baseline"
    if len(failed) > unread:
        line += f"; {len(failed) - unread} with input errors"
    if unread:
        line += f"; {unread} could not be read"
    console.print()
    console.print(line, soft_wrap=True, highlight=False)
    console.print(f"[dim]Caution: {CAUTION}[/dim]", soft_wrap=True, highlight=False)


def _plural(count: int, word: str) -> str:
    if count == 1:
        return f"1 {word}"
    return f"{count} {word[:-1] + 'ies' if word.endswith('y') else word + 's'}"
