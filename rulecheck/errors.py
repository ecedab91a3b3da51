"""Input errors with positions, and the process exit codes.

Every problem with what the user wrote becomes an :class:`InputProblem` with the
file, 1-based line and column, a plain message and what to do about it. The
CLI prints them and exits with :data:`EXIT_INPUT`; no traceback reaches the user.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

EXIT_OK = 0  #: nothing reached the --fail-on threshold
EXIT_FINDINGS = 1  #: at least one finding reached the threshold
EXIT_INPUT = 2  #: input or usage error, or an output that cannot or may not be written
EXIT_INTERNAL = 3  #: internal error: a bug in rulecheck, not a problem with the input
EXIT_INTERRUPTED = 130  #: interrupted (Ctrl-C): 128 + SIGINT, the shells' convention
EXIT_BROKEN_PIPE = 141  #: the reader of the output went away (`| head`): 128 + SIGPIPE

MAX_PROBLEMS = 50  #: problems reported per file before the rest are counted only


@dataclass(frozen=True, order=True)
class Position:
    """A 1-based line and column in a source file."""

    line: int
    column: int


NO_POSITION = Position(1, 1)

# C0 and C1 control characters, DEL, and the Unicode bidirectional overrides and isolates
# (which reorder what a terminal or editor shows).
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def visible(text: str, keep_newlines: bool = False) -> str:
    """``text`` with every control character written out as its Python escape.

    What a layout holds (keys, ids, waiver reasons, file names) reaches the terminal
    in messages and the text report; an ESC there would be obeyed by the terminal
    (retitle the window, clear the screen). Each control character shows as ``\\xNN``
    (``\\uNNNN`` for the bidirectional controls): ESC as ``\\x1b``, a tab as
    ``\\x09``, a newline as ``\\x0a`` unless ``keep_newlines`` (multi-line text).
    """
    if keep_newlines:
        return "\n".join(_CONTROL.sub(_escape, line) for line in text.split("\n"))
    return _CONTROL.sub(_escape, text)


@dataclass(frozen=True)
class InputProblem:
    """One thing wrong with an input file."""

    path: str
    position: Position
    message: str
    hint: str = ""

    def render(self) -> str:
        text = f"{self.path}:{self.position.line}:{self.position.column}: error: {self.message}"
        if self.hint:
            text += f" ({self.hint})"
        return visible(text)


class InputError(Exception):
    """One or more problems that stop a file from being checked."""

    def __init__(self, problems: list[InputProblem], omitted: int = 0) -> None:
        super().__init__(problems[0].render() if problems else "input error")
        self.problems = problems
        self.omitted = omitted

    def __reduce__(self) -> tuple[type[InputError], tuple[list[InputProblem], int]]:
        # rebuilt from its problems when it comes back from a worker process (folders)
        return (self.__class__, (self.problems, self.omitted))

    @classmethod
    def at(cls, path: str, position: Position, message: str, hint: str = "") -> InputError:
        return cls([InputProblem(path, position, message, hint)])


class ProblemCollector:
    """Gather problems for one file, then raise them all at once."""

    def __init__(self, path: str) -> None:
        self.path = path
        self.problems: list[InputProblem] = []
        self.omitted = 0

    def add(self, position: Position, message: str, hint: str = "") -> None:
        if len(self.problems) < MAX_PROBLEMS:
            self.problems.append(InputProblem(self.path, position, message, hint))
        else:
            self.omitted += 1

    def raise_if_any(self) -> None:
        if self.problems:
            ordered = sorted(self.problems, key=lambda p: (p.position, p.message))
            raise InputError(ordered, self.omitted)
