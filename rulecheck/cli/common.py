"""What every command shares: the usage error, the parser class, input-error printing."""

from __future__ import annotations

import argparse
import sys
from typing import Any

from rulecheck.errors import InputError, visible

#: the global switch that adds the traceback to an internal error's message
DEBUG_OPTION = "--debug"


class LazyConsole:
    """A ``rich.console.Console`` made on first use: rich costs some 50 ms of start-up, and
    the JSON and SARIF outputs never need it."""

    def __init__(self, **options: Any) -> None:
        self._options = options
        self._console: Any = None

    def __getattr__(self, name: str) -> Any:
        if self._console is None:
            from rich.console import Console

            self._console = Console(**self._options)
        return getattr(self._console, name)


class UsageError(Exception):
    """A mistake in the command line itself."""


class Parser(argparse.ArgumentParser):
    """argparse that raises :class:`UsageError` instead of exiting."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(f"{self.prog}: {message}")


def print_input_error(error: InputError) -> None:
    for problem in error.problems:
        print(problem.render(), file=sys.stderr)
    if error.omitted:
        print(
            visible(f"… and {error.omitted} more problems in {error.problems[0].path}"),
            file=sys.stderr,
        )
