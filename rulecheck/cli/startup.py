"""Imported by :mod:`rulecheck.cli` before any other module of ours.

Two things that make the command line start faster and that library use does without:

* the record classes defined after this module take their generated methods' code from
  the per-user cache (:mod:`rulecheck.record_methods`) instead of compiling it every run;
* :func:`call_with_room` runs the command in a Python stack with room to spare.
  CPython keeps Python frames in 16 KiB chunks and, up to 3.13 (fixed in 3.14 and in
  later 3.13 releases by keeping one spare chunk, CPython issue gh-142183), frees a chunk
  as soon as the frame at its base returns. A run whose call depth goes back and forth
  across a chunk boundary then maps and unmaps memory on every crossing: a small
  ``check`` made some 900-1 350 ``munmap`` calls of 16 KiB, most of them while numpy's
  typing module was imported, where ``python -c "import yaml, numpy"`` makes 17 (``strace
  -c -e trace=munmap``). The frame of :func:`call_with_room` claims a stack of ~58 KiB
  it never uses, so it opens a chunk of 128 KiB of its own and everything the command
  calls has the other ~70 KiB (some 400 frames) before it reaches the next boundary.
  ``benchmarks/README.md`` (start-up) has the figures.
"""

from __future__ import annotations

import struct
import sys
from collections.abc import Callable
from typing import TypeVar

from rulecheck.record_methods import install

install()

T = TypeVar("T")

#: CPython's chunk size and the overhead a new chunk must leave (Python/pystate.c,
#: DATA_STACK_CHUNK_SIZE and MINIMUM_OVERHEAD in 3.11-3.13): a frame asking for more than
#: half of ``ROOMY_CHUNK`` less the overhead gets a chunk of ``ROOMY_CHUNK`` to itself
ROOMY_CHUNK = 128 * 1024
_POINTER = struct.calcsize("P")
_OVERHEAD_WORDS = 1000
#: evaluation-stack slots claimed by the roomy frame (64 over the threshold covers the
#: frame's own header and locals)
ROOMY_STACK_WORDS = ROOMY_CHUNK // 2 // _POINTER - _OVERHEAD_WORDS + 64


def call_with_room(function: Callable[[], T]) -> T:
    """``function()``, called from a frame that opens a fresh 128 KiB stack chunk on
    CPython (elsewhere a plain call)."""
    return function()


if sys.implementation.name == "cpython":
    # a larger evaluation stack than the code needs is always safe: only the frame grows
    call_with_room.__code__ = call_with_room.__code__.replace(co_stacksize=ROOMY_STACK_WORDS)
