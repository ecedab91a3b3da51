"""``startup.call_with_room``: the command runs where the Python stack has room.

The outside check is the kernel's own count of minor page faults (``getrusage``): a
function called over and over across a chunk boundary of CPython's frame stack gets a
freshly mapped chunk each time, which faults at least once per call (CPython issue
gh-142183); called inside ``call_with_room`` the same calls at every depth up to 300
frames find room and fault at most a few times in all.
"""

from __future__ import annotations

import sys

import pytest

from rulecheck.cli import startup

resource = pytest.importorskip("resource")  # POSIX only

CALLS = 200


def _leaf() -> None:
    return None


def _down(depth: int) -> None:
    if depth:
        return _down(depth - 1)
    for _ in range(CALLS):
        _leaf()
    return None


def _worst_faults() -> int:
    """The most minor page faults of ``CALLS`` leaf calls at any depth from 0 to 299."""
    worst = 0
    for depth in range(300):
        before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
        _down(depth)
        worst = max(worst, resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before)
    return worst


def test_returns_and_raises_like_a_plain_call() -> None:
    assert startup.call_with_room(lambda: 42) == 42

    def fails() -> None:
        raise KeyError("x")

    with pytest.raises(KeyError):
        startup.call_with_room(fails)


@pytest.mark.skipif(sys.implementation.name != "cpython", reason="CPython's frame stack")
def test_calls_across_a_chunk_boundary_stop_faulting() -> None:
    plain = _worst_faults()
    if plain < CALLS // 2:
        pytest.skip(f"this interpreter keeps a spare stack chunk ({plain} faults at worst)")
    roomy = startup.call_with_room(_worst_faults)
    assert roomy <= 20, (plain, roomy)


@pytest.mark.skipif(sys.implementation.name != "cpython", reason="CPython's frame stack")
def test_the_frame_opens_a_chunk_of_its_own() -> None:
    code = startup.call_with_room.__code__
    assert code.co_stacksize == startup.ROOMY_STACK_WORDS
    # CPython (Python/pystate.c, push_chunk) doubles 16 KiB until the frame and an
    # overhead of 1000 words fit: the roomy frame must need more than half the chunk
    pointer = 8 if sys.maxsize > 2**32 else 4
    asked = pointer * (code.co_stacksize + 1000)
    assert startup.ROOMY_CHUNK // 2 < asked < startup.ROOMY_CHUNK
