"""What every command shares: the usage error, the parser class, input-error printing."""

from __future__ import annotations

import argparse
import sys

from rulecheck.errors import InputError, visible

#: the global switch that adds the traceback to an internal error's message
DEBUG_OPTION = "--debug"


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
