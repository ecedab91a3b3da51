"""The solver's step loop compiled from C (``moc_kernel.c``), with the numpy loop as fallback.

The step loop of :mod:`rulecheck.physics.transient` costs tens of numpy calls per time
step on short arrays; ``moc_kernel.c`` does the same update, operation for operation
and in the same order, in one call per run. :mod:`rulecheck.native` builds it at first
use (about a third of a second) and keeps it in a per-user cache; where no C compiler
is found, or the build fails, the numpy loop runs instead and gives the same results
(``tests/test_moc_compiled.py``). ``RULECHECK_KERNEL=numpy`` always uses the numpy loop.

This module only passes arrays: the physics and its sources are in ``transient.py`` and
``transient_boundary.py``, whose numpy loop is the reference.
"""

from __future__ import annotations

import ctypes
import os
from collections.abc import Callable
from pathlib import Path

import numpy as np

from rulecheck.native import load_library, start_building
from rulecheck.physics.transient_boundary import ArresterBank, CavityPlaces

SOURCE = Path(__file__).with_name("moc_kernel.c")

#: Array slots, in the order of the kernel's ``P_*`` enum (then the cavity places).
POINTERS = (
    "H Q C b2 r2 inv2b end_cidx end_qidx end_sec end_node end_invb end_sinvb node_invsb "
    "cend sc Hn fixed_idx fixed_val cv_t bare_idx bare_node bare_sb bare_zv v_nodes zv "
    "a_node a_valve a_z a_k a_n a_vmax a_dt a_rhog a_patm a_sb a_zv a_hv a_vol a_prev "
    "a_flow a_stop a_pre hmax hmin net_sec net_pipe net_node net_end a_net runs valve_h "
    "valve_q gas node_sb sec_invb"
).split()
#: Slots of one kind of cavity place (``CV_*`` enum).
PLACE_SLOTS = ("hv", "onset", "vol", "net", "largest", "dt", "end", "open", "events")
INTS = ("n", "n_nodes", "n_ends", "n_nets", "n_fixed", "n_bare", "n_arr", "turns")
INTS_EVENTS = ("ev0", "cap0", "ev1", "cap1")
#: Rows of an event table beyond one per place (a step opens at most one event per place;
#: the table grows when a step might not fit) [D].
SPARE_EVENTS = 1024


class _Loaded:
    """The kernel of this process: loaded once, or the reason it could not be."""

    library: ctypes.CDLL | None = None
    reason: str | None = None
    tried = False


def _bind(library: ctypes.CDLL) -> ctypes.CDLL:
    library.moc_slots.restype = ctypes.c_int64
    library.moc_slots.argtypes = [ctypes.c_void_p]
    library.moc_steps.restype = ctypes.c_int64
    library.moc_steps.argtypes = [ctypes.c_void_p] * 3 + [ctypes.c_int64] * 2
    counts = np.zeros(3, dtype=np.int64)
    library.moc_slots(counts.ctypes.data)
    wanted = [len(POINTERS) + 2 * len(PLACE_SLOTS), len(INTS) + len(INTS_EVENTS), 5]
    if counts.tolist() != wanted:
        raise OSError(f"kernel slots {counts.tolist()}, expected {wanted}")
    return library


def _numpy_asked() -> bool:
    return os.environ.get("RULECHECK_KERNEL", "").lower() == "numpy"


def load() -> ctypes.CDLL | None:
    """The compiled kernel (built on first use), or None: then :func:`reason` says why."""
    if not _Loaded.tried:
        _Loaded.tried = True
        if _numpy_asked():
            _Loaded.reason = "RULECHECK_KERNEL=numpy"
        else:
            library, _Loaded.reason = load_library(SOURCE)
            try:
                _Loaded.library = _bind(library) if library is not None else None
            except (OSError, AttributeError) as error:
                _Loaded.reason = f"the C kernel does not match this version: {error}"
    return _Loaded.library


def start() -> None:
    """Start building the kernel in the background (see :func:`rulecheck.native.start_building`)."""
    if not _Loaded.tried and not _numpy_asked():
        start_building(SOURCE)


def reason() -> str | None:
    """Why the numpy loop runs instead of the compiled kernel (None when the kernel runs)."""
    load()
    return _Loaded.reason


def engine() -> str:
    """Which step loop simulations use: 'compiled C' or 'numpy (reason)'."""
    return "compiled C" if load() is not None else f"numpy ({reason()})"


class _PlaceBuffers:
    """Event bookkeeping of one kind of cavity place for the kernel: the event open at
    each place and a growable (place, step formed, step collapsed) table."""

    def __init__(self, size: int) -> None:
        self.open = np.full(size, -1, dtype=np.int64)
        self.events = np.zeros((size + SPARE_EVENTS, 3), dtype=np.int64)

    def grow(self) -> None:
        self.events = np.concatenate((self.events, np.zeros_like(self.events)))


#: Slots holding int64 arrays (``a_stop`` is uint8, every other slot float64).
INT_SLOTS = frozenset(
    "end_cidx end_qidx end_sec end_node fixed_idx bare_idx bare_node v_nodes a_node a_valve "
    "net_sec net_pipe net_node net_end a_net runs end open events".split()
)


#: Kernel slot -> ArresterBank attribute.
_BANK = {
    "a_node": "node", "a_valve": "valve", "a_z": "z", "a_k": "constant", "a_n": "exponent",
    "a_vmax": "v_max", "a_dt": "dt", "a_rhog": "rho_g", "a_patm": "p_atm", "a_vol": "volume",
    "a_prev": "previous", "a_flow": "flow", "a_pre": "precharge",
}  # fmt: skip


def arrester_slots(bank: ArresterBank | None, *at_nodes: np.ndarray) -> dict[str, np.ndarray]:
    """The kernel's arrester slots: the bank's arrays, and per arrester its node's S_B,
    the elevation of a valve at its node and its vapour head (``at_nodes``); empty
    arrays when there is no bank."""
    if bank is None:
        names = [*_BANK, "a_sb", "a_zv", "a_hv"]
        empty = {s: np.zeros(0, dtype=np.int64 if s in INT_SLOTS else float) for s in names}
        return {**empty, "a_stop": np.zeros(0, dtype=np.uint8)}
    found = {slot: getattr(bank, attr) for slot, attr in _BANK.items()}
    found.update(zip(("a_sb", "a_zv", "a_hv"), at_nodes, strict=True))
    return {**found, "a_stop": bank.on_stop.view(np.uint8)}


def _address(name: str, array: np.ndarray) -> int:
    wanted = np.uint8 if name == "a_stop" else np.int64 if name in INT_SLOTS else np.float64
    if array.dtype != wanted or not array.flags.c_contiguous:
        raise ValueError(f"kernel slot {name}: {array.dtype} array, {wanted.__name__} needed")
    return int(array.ctypes.data)


def run_steps(
    library: ctypes.CDLL,
    arrays: dict[str, np.ndarray],
    ints: dict[str, int],
    constants: tuple[float, float, float, float, float],
    places: tuple[CavityPlaces, CavityPlaces],
    last: int,
    progress: Callable[[float], None] | None,
) -> None:
    """Run steps 1 .. ``last`` in the kernel, updating ``arrays`` (named as in
    ``POINTERS``) and the two cavity places (nodes, sections) in place; their events are
    recorded at the end as the numpy loop records them."""
    buffers = (_PlaceBuffers(places[0].vol.size), _PlaceBuffers(places[1].vol.size))
    counts = np.array([ints[name] for name in INTS] + [0, 0, 0, 0], dtype=np.int64)
    ev0, cap0, ev1, cap1 = (len(INTS) + j for j in range(4))
    dv = np.array(constants, dtype=float)
    fixed = [_address(name, arrays[name]) for name in POINTERS]
    stride = max(1, -(-last // 100)) if progress is not None else last
    k = 1
    while k <= last:
        counts[cap0], counts[cap1] = (b.events.shape[0] for b in buffers)
        table = (ctypes.c_void_p * (len(POINTERS) + 2 * len(PLACE_SLOTS)))(
            *fixed,
            *(
                _address(name, getattr(buf if name in ("open", "events") else place, name))
                for place, buf in zip(places, buffers, strict=True)
                for name in PLACE_SLOTS
            ),
        )
        k1 = min(last, -(-k // stride) * stride) + 1  # up to the next progress report
        got = int(library.moc_steps(table, counts.ctypes.data, dv.ctypes.data, k, k1))
        if got < k1:  # an event table might fill up in step ``got``: grow both, go on
            for buf in buffers:
                buf.grow()
        elif progress is not None:
            progress((k1 - 1) / last)
        k = got
    for place, buf, n_ev in zip(places, buffers, (counts[ev0], counts[ev1]), strict=True):
        place.record(buf.events[: int(n_ev)], buf.open)
