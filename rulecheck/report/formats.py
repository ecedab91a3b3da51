"""The output formats of ``rulecheck check``, in one table.

Every format is one function with one signature, ``write(report, stream, colour)``: the
check report, the text stream to write to, and whether escape codes may be used (only
``text`` uses them). The command line takes its ``--format`` choices and its dispatch
from :data:`FORMATS`; to add a format, write its function and add a row.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, TextIO

from rulecheck.errors import InputError
from rulecheck.findings import Finding


@dataclass(frozen=True)
class CheckReport:
    """What a ``check`` run found, for the reporters to format (they only read it)."""

    results: list[tuple[str, str, list[Finding]]]  # (path, profile, findings) per file
    errors: list[InputError]  # files that could not be checked
    hidden: int | None = None  # findings a baseline hid (None: no baseline)
    unread: int = 0  # of ``errors``, the files that could not even be read
    # formats with ``detail`` (html): per checked path its report.html.FileDetail
    details: Mapping[str, Any] = field(default_factory=lambda: MappingProxyType({}))
    fail_on: str = "violation"
    date: str = ""  # the report's date (YYYY-MM-DD), pinned by SOURCE_DATE_EPOCH


def _text(report: CheckReport, stream: TextIO, colour: bool) -> None:
    from rulecheck.report.terminal import plain_width
    from rulecheck.report.text import check_lines, print_rich, write_plain

    results = [(p, f) for p, _, f in report.results]
    failed = [e.problems[0].path for e in report.errors]
    width = None if colour else plain_width(stream)
    if width is not None:  # no colour, and the width known without rich
        write_plain(stream, check_lines(results, failed, width, report.hidden or 0, report.unread))
        return
    from rich.console import Console

    console = Console(
        file=stream,
        highlight=False,
        color_system="auto" if colour else None,
        force_terminal=colour or None,
    )
    console.width = console.width or 80  # rich prints nothing at width 0 (COLUMNS=0)
    lines = check_lines(results, failed, console.width, report.hidden or 0, report.unread)
    print_rich(console, lines)


def _lines(report: CheckReport, stream: TextIO, colour: bool) -> None:
    from rulecheck.report.text import render_lines

    stream.write(
        render_lines(
            [(p, f) for p, _, f in report.results],
            [e.problems[0].path for e in report.errors],
            report.hidden or 0,
            report.unread,
        )
    )


def _json(report: CheckReport, stream: TextIO, colour: bool) -> None:
    from rulecheck.report.json_report import check_document, dumps

    stream.write(dumps(check_document(report.results, report.errors, report.hidden)))


def _sarif(report: CheckReport, stream: TextIO, colour: bool) -> None:
    from rulecheck.report.json_report import dumps
    from rulecheck.report.sarif import sarif_document

    stream.write(dumps(sarif_document(report.results, report.errors, report.hidden)))


def _html(report: CheckReport, stream: TextIO, colour: bool) -> None:
    from rulecheck.report.html import render_html

    render_html(
        stream,
        report.results,
        report.errors,
        report.details,
        report.fail_on,
        report.hidden,
        report.date,
    )


@dataclass(frozen=True)
class Format:
    name: str
    summary: str
    write: Callable[[CheckReport, TextIO, bool], None]
    #: whether the report says input errors itself (else the CLI prints them on stderr)
    carries_errors: bool
    #: whether the report shows the analyses (the CLI keeps them and prepares plot data)
    detail: bool = False
    #: file name suffix of the report when ``--output`` names a folder
    suffix: str = ".txt"


FORMATS: dict[str, Format] = {
    f.name: f
    for f in (
        Format("text", "findings for people, with a summary and the caution", _text, False),
        Format(
            "lines",
            "one line per finding, path:line:col: severity: rule-id: message (editors, grep)",
            _lines,
            False,
        ),
        Format("json", "findings and input errors as JSON (SI units)", _json, True, False, ".json"),
        Format("sarif", "SARIF 2.1.0 for code-scanning tools", _sarif, True, False, ".sarif"),
        Format(
            "html",
            "a self-contained submittal report: drawing, tables, plots with --transient "
            "(SOURCE_DATE_EPOCH pins its date)",
            _html,
            True,
            True,
            ".html",
        ),
    )
}
