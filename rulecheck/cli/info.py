"""``rulecheck rules`` (the rule list) and ``rulecheck schema`` (where the schema is)."""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

from rulecheck.errors import EXIT_OK

if TYPE_CHECKING:  # rich is imported only by the text output
    from rich.console import Console


def add_rules_parser(sub: argparse._SubParsersAction) -> None:
    sub.add_parser("rules", help="list the rules")


def run_rules(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.report.explain import rules_table

    sys.stdout.write(rules_table())
    return EXIT_OK


def add_schema_parser(sub: argparse._SubParsersAction) -> None:
    sub.add_parser("schema", help="print the path of the installed layout JSON Schema")


def run_schema(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.input.schema import schema_path

    print(schema_path())
    return EXIT_OK
