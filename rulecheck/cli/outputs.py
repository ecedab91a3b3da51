"""Which files a ``check`` run may write: nothing the user wrote is replaced.

An output (``--output``, ``--write-baseline``) is refused when it is the same file
as an input layout, the configuration, the baseline read, or the other output of
the same run -- compared by device and inode (so hard links, symbolic links and
another spelling of the path are caught) and by resolved path (the two outputs
also ignoring letter case, for case-insensitive file systems) -- and when it is an
existing file with a ``.yaml``/``.yml`` suffix in any letter case (it may be a
layout). An existing regular file is replaced only when it looks like one of our
own reports or baselines (or is empty), unless ``--replace-any`` is given.
"""

from __future__ import annotations

import os
import re
import stat
from collections.abc import Iterable
from functools import cache
from pathlib import Path

from rulecheck.files import file_identity, read_ends, special_kind

LAYOUT_SUFFIXES = (".yaml", ".yml")
REPLACE_OPTION = "--replace-any"


@cache
def _ours() -> tuple[tuple[re.Pattern[bytes], ...], re.Pattern[bytes]]:
    """What the first bytes of each of our outputs look like, and (text and lines: the
    summary and the caution end the report, wrapped to the width) the last; see
    report/*.py. Compiled on first use: most runs write no output file."""
    heads = (
        re.compile(rb'\A\s*\{\s*"version":\s*1,\s*"files":'),  # --format json
        re.compile(rb'\A\s*\{\s*"version":\s*1,\s*"tool":\s*"rulecheck"'),  # baseline
        re.compile(  # --format sarif: the driver's name comes within the first lines
            rb'\A\s*\{\s*"\$schema":\s*"[^"]*sarif[^"]*",\s*"version":\s*"2\.1\.0".*?'
            rb'"driver":\s*\{\s*"name":\s*"rulecheck"',
            re.DOTALL,
        ),
        re.compile(
            rb'\A<!DOCTYPE html>\s*<html lang="en">\s*<head>\s*<meta charset="utf-8">\s*'
            rb'<meta name="generator" content="rulecheck '
        ),  # --format html
    )
    tail = re.compile(
        rb"\d+ files? checked: [^\n]*(?:\n[^\n]*){0,4}\nCaution: [^\n]*(?:\n[^\n]*){0,24}\n?\Z"
    )
    return heads, tail


_SNIFF = 4096


class OutputRefused(Exception):
    """An output that would replace something the user wrote; the message says which."""


def _same_place(a: str | Path, b: str | Path, fold: bool = False) -> bool:
    """Same device and inode, or the same resolved path (``fold``: ignoring letter case)."""
    if (ida := file_identity(a)) is not None and ida == file_identity(b):
        return True
    real_a, real_b = os.path.normcase(os.path.realpath(a)), os.path.normcase(os.path.realpath(b))
    return real_a.casefold() == real_b.casefold() if fold else real_a == real_b


def looks_like_ours(path: str | Path) -> bool:
    """True when the regular file ``path`` is empty or is a rulecheck report or baseline."""
    try:
        head, tail = read_ends(path, _SNIFF)
    except OSError:
        return False
    if not head.strip():
        return True
    heads, ends = _ours()
    return any(p.match(head) for p in heads) or ends.search(tail) is not None


def guard_outputs(
    outputs: Iterable[tuple[str, str]],
    protected: Iterable[tuple[str, str | Path]],
    replace_any: bool = False,
) -> None:
    """Raise :class:`OutputRefused` for the first output that must not be written.

    ``outputs`` are (option, path) pairs; ``protected`` are (what, path) pairs of
    the run's inputs ("layout", "configuration", "baseline").
    """
    outputs = list(outputs)
    protected = list(protected)
    for number, (option, target) in enumerate(outputs):
        for what, path in protected:
            if _same_place(target, path):
                raise OutputRefused(
                    f"refusing to write over the {what} {path}: {option} {target} is that file"
                )
        for other_option, other in outputs[:number]:
            if _same_place(target, other, fold=True):
                raise OutputRefused(
                    f"{other_option} {other} and {option} {target} are the same file; "
                    "give each output its own file"
                )
        try:
            mode = os.stat(target).st_mode
        except OSError:
            continue  # not there yet (or not reachable: writing it will say why)
        if stat.S_ISDIR(mode):
            raise OutputRefused(f"cannot write {option} {target}: it is a folder, not a file")
        if not stat.S_ISREG(mode):
            if stat.S_ISCHR(mode) or stat.S_ISFIFO(mode):
                continue  # /dev/null, /dev/stdout, a pipe: written directly
            raise OutputRefused(f"cannot write {option} {target}: it is {special_kind(mode)}")
        if Path(target).suffix.lower() in LAYOUT_SUFFIXES:
            raise OutputRefused(
                f"refusing to write over the layout {target}: {option} names an existing "
                "YAML file; write the report to a .txt, .json or .sarif file"
            )
        if not replace_any and not looks_like_ours(target):
            raise OutputRefused(
                f"refusing to replace {target}: it is not a rulecheck report or baseline "
                f"(give {option} another file, or add {REPLACE_OPTION} to replace it)"
            )
