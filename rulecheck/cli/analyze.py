"""``rulecheck analyze FILE``: flows, velocities, pressures, wave speeds and surges."""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

from rulecheck.errors import EXIT_OK
from rulecheck.input.profiles import profile_ids

if TYPE_CHECKING:  # rich is imported only by the text output
    from rich.console import Console


def add_parser(sub: argparse._SubParsersAction) -> None:
    analyze = sub.add_parser("analyze", help="print flows, velocities and pressures")
    analyze.add_argument("path", metavar="FILE")
    analyze.add_argument("--format", choices=("text", "json"), default="text")
    analyze.add_argument("--profile", choices=profile_ids())


def run(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.pipeline import analyse_file
    from rulecheck.report.analysis_text import render_analysis
    from rulecheck.report.json_report import analysis_document, dumps

    analysis = analyse_file(args.path, args.profile)
    if args.format == "json":
        sys.stdout.write(dumps(analysis_document(analysis)))
    else:
        console.print(render_analysis(analysis), soft_wrap=True, highlight=False, markup=False)
    return EXIT_OK
