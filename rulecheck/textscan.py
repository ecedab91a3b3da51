"""Find, in TOML or JSON text, where a parser gave up without saying where.

``tomllib`` and ``json`` raise a plain ``ValueError`` for an integer past Python's
digit limit (``sys.get_int_max_str_digits()``, 4300 by default) and
``RecursionError`` for brackets nested past the interpreter's stack. Neither names a
position, so these scans find the spot in the text, for an input error that does.
"""

from __future__ import annotations

import re
import sys

from rulecheck.errors import NO_POSITION, InputError, Position

#: Bracket depth reported as "too deep"; configurations and baselines need three or four.
NESTING_LIMIT = 100

# A quoted string (skipped: digits and brackets inside text do not count), a comment
# (TOML), or a run of digits (``_`` between them is TOML's digit separator).
_TOKENS = re.compile(r'"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#[^\n]*|[0-9][0-9_]*|[\[\]{}]')


def _position(text: str, index: int) -> Position:
    line = text.count("\n", 0, index) + 1
    return Position(line, index - (text.rfind("\n", 0, index) + 1) + 1)


def digit_limit() -> int:
    """Python's limit on the digits of an integer read from text (0 means none)."""
    get = getattr(sys, "get_int_max_str_digits", None)
    return int(get()) if get is not None else 0


def long_number(text: str) -> Position | None:
    """Where the first integer with more digits than Python reads starts, if any."""
    limit = digit_limit() or 4300
    for match in _TOKENS.finditer(text):
        token = match.group()
        if token[0].isdigit() and len(token.replace("_", "")) > limit:
            return _position(text, match.start())
    return None


def deep_nesting(text: str, limit: int = NESTING_LIMIT) -> Position:
    """Where brackets first nest deeper than ``limit`` (line 1, column 1 if nowhere)."""
    depth = 0
    for match in _TOKENS.finditer(text):
        token = match.group()
        if token in "[{":
            depth += 1
            if depth > limit:
                return _position(text, match.start())
        elif token in "]}":
            depth -= 1
    return NO_POSITION


def unplaced_error(
    exc: RecursionError | ValueError, text: str, path: str, language: str, hint: str
) -> InputError:
    """The input error, at its spot in ``text``, for what a ``language`` (TOML, JSON) parser
    raised without a position: brackets nested too deep, or a number past the digit limit."""
    if isinstance(exc, RecursionError):
        return InputError.at(path, deep_nesting(text), f"the {language} is nested too deeply", hint)
    return InputError.at(
        path,
        long_number(text) or NO_POSITION,
        f"a number with more than {digit_limit()} digits",
        hint,
    )
