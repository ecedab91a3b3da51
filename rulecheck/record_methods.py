"""Start-up: the methods ``dataclasses`` writes for each record class, compiled once.

A frozen dataclass gets six methods (``__init__``, ``__repr__``, ``__eq__``, ``__hash__``,
``__setattr__``, ``__delattr__``) that :mod:`dataclasses` writes out as source text and
compiles with ``exec`` when the class is defined: about 1 ms a class on Python 3.11, some
45 ms of a small ``rulecheck check`` (40 record classes of ours and rich's on the path).
The ``.pyc`` files keep the bytecode of everything else; this module does the same for
those methods. :func:`install` (run by :mod:`rulecheck.cli` before it imports anything
else) gives :mod:`dataclasses` an ``exec`` that looks the source text up in a table of
compiled code read from the per-user cache, compiles only a text it has not seen, and
writes the table back at exit when it grew.

The code for a text is what ``exec`` itself would compile (``compile(text, "<string>",
"exec")`` with no inherited ``__future__`` flags: :mod:`dataclasses` has none), so every
class is the same as without the table; ``tests/test_record_methods.py`` compares the
methods' code. The file is named by the Python version and optimisation level (marshal's
format and the bytecode belong to one interpreter); one that is not the user's own, is
torn or is not such a table is ignored and written again. Library use (``import
rulecheck.pipeline``) does not install it.
"""

from __future__ import annotations

import atexit
import builtins
import dataclasses
import marshal
import sys
from pathlib import Path
from types import CodeType
from typing import Any

from rulecheck.cache import read_own, user_cache_dir, write_atomically

#: past this many texts the table keeps only those of the run that writes it (bounds the
#: file when record classes keep changing, as they do while the code is being edited)
LIMIT = 4000


class MethodTable:
    """Compiled code by source text, read from ``path`` and written back by :meth:`save`."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self.codes = _read_table(path)
        self.used: set[str] = set()
        self.grew = False

    def exec(self, source: Any, globals: Any = None, locals: Any = None, /) -> None:  # noqa: A002
        """``exec(source, globals, locals)``, with the code of a text from the table."""
        if type(source) is not str:
            return builtins.exec(source, globals, locals)
        code = self.codes.get(source)
        if code is None:
            code = compile(source, "<string>", "exec", dont_inherit=True)
            self.codes[source] = code
            self.grew = True
        self.used.add(source)
        return builtins.exec(code, globals, locals)

    def save(self) -> bool:
        """Write the table back when this run compiled a text it did not have."""
        if not self.grew:
            return False
        codes = self.codes
        if len(codes) > LIMIT:
            codes = {text: code for text, code in codes.items() if text in self.used}
        return write_atomically(self.path, marshal.dumps(codes))


def table_path() -> Path:
    """Where the table of this interpreter lives in the per-user cache."""
    version = "-".join(map(str, sys.version_info[:3]))
    name = f"record-methods-{sys.implementation.name}-{version}-O{sys.flags.optimize}"
    return user_cache_dir() / f"{name}.marshal"


def install() -> MethodTable:
    """Give :mod:`dataclasses` the table's ``exec`` (once per process) and save the table
    at exit."""
    table = getattr(dataclasses, "exec", None)
    if isinstance(getattr(table, "__self__", None), MethodTable):
        return table.__self__  # type: ignore[union-attr, no-any-return]
    found = MethodTable(table_path())
    dataclasses.exec = found.exec  # type: ignore[attr-defined]
    atexit.register(found.save)
    return found


def _read_table(path: Path) -> dict[str, CodeType]:
    """The table at ``path``, or an empty one: missing, not the user's own, torn, or not a
    table of texts and code."""
    data = read_own(path)
    if data is None:
        return {}
    try:
        table = marshal.loads(data)
    except (EOFError, ValueError, TypeError):
        return {}
    if not isinstance(table, dict) or not all(
        type(text) is str and type(code) is CodeType for text, code in table.items()
    ):
        return {}
    return table
