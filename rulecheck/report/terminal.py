"""Is the text report going to a terminal, and how wide is it, without importing rich.

rich (some 30 ms of start-up) decides both for the text report. Most runs write to a pipe
or a file with no colour asked for, where rich's answer can be worked out from the
environment alone: these functions give it in that case and ``None`` (ask rich) in every
other. The rules are rich's own (``rich.console.Console``: ``is_terminal``, ``size``, as
of rich 15); ``tests/test_text_plain.py`` holds them equal to a real ``Console`` over the
environment variables and terminals they read.
"""

from __future__ import annotations

import builtins
import os
import sys
from collections.abc import Mapping
from typing import TextIO

#: variables with which rich may call a stream a terminal that ``isatty`` says is not one
_TERMINAL_VARIABLES = ("FORCE_COLOR", "TTY_COMPATIBLE")


def surely_not_terminal(stream: TextIO, environ: Mapping[str, str] | None = None) -> bool:
    """True when rich would certainly not call ``stream`` a terminal (no escape codes);
    False when only rich can tell."""
    environ = os.environ if environ is None else environ
    if sys.platform == "win32" or hasattr(builtins, "get_ipython"):  # Windows, Jupyter
        return False
    if any(name in environ for name in _TERMINAL_VARIABLES):
        return False
    try:
        return not stream.isatty()
    except (AttributeError, ValueError):  # no isatty, or a closed stream: rich decides
        return False


def plain_width(stream: TextIO, environ: Mapping[str, str] | None = None) -> int | None:
    """The width rich would give a console without colour writing to ``stream``, or None
    when only rich can tell (see :func:`surely_not_terminal`): ``COLUMNS`` when it is a
    number, else the width of the first of standard input, output and error that is a
    terminal, else 80. Where rich would say 0 (``COLUMNS=0``), and print nothing at all,
    this says 80 (and the report asks rich for 80 too)."""
    environ = os.environ if environ is None else environ
    if not surely_not_terminal(stream, environ):
        return None
    columns = environ.get("COLUMNS")
    if columns is not None and columns.isdigit():
        return int(columns) or 80
    for descriptor in (0, 1, 2):
        try:
            width = os.get_terminal_size(descriptor).columns
        except (AttributeError, ValueError, OSError):  # not a terminal
            continue
        return width or 80
    return 80
