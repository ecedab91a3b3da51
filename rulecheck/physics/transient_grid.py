"""Method-of-characteristics grid: time step, reaches, flat section arrays, steady state.

Helpers of :mod:`rulecheck.physics.transient`. Every pipe k is split into N_k
reaches of length dx_k = L_k / N_k and stored as N_k + 1 consecutive entries of
flat per-section arrays; pipe ends map to network nodes through index arrays,
so the time step touches no Python loop over pipes or reaches.

References
----------
1. Wylie, E. B. & Streeter, V. L. (1993). Fluid Transients in Systems,
   chapter 3 (characteristics, grid, wave-speed adjustment) [S: engineering-basis §10].
2. Chaudhry, M. H. Applied Hydraulic Transients, chapter 3 [S: engineering-basis §10].
"""

from __future__ import annotations

import math
from collections import deque
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from rulecheck.physics.constants import STANDARD_GRAVITY

#: Default largest wave-speed adjustment |a_adj / a - 1| [-]; "a few percent"
#: [S: engineering-basis §10; 5 % is CP].
DEFAULT_MAX_ADJUSTMENT = 0.05


#: Divisors m tried per numpy pass by ``choose_time_step`` [D: tuned on the tower benchmark].
_DIVISORS_AT_ONCE = 4


def choose_time_step(
    travel_times: Sequence[float], max_adjustment: float = DEFAULT_MAX_ADJUSTMENT
) -> tuple[float, np.ndarray, float]:
    """Pick one time step for a pipe network by integer division of the shortest travel time.

    dt = min_k(L_k / a_k) / m * (1 + e),  N_k = max(1, round(L_k / (a_k dt))),
    adjustment_k = L_k / (a_k N_k dt) - 1

    For m = 1, 2, ... a fine grid of e in [-max_adjustment, +max_adjustment] is
    tried; the first m with a candidate whose largest |adjustment| is within
    ``max_adjustment`` wins, taking the candidate with the smallest adjustment.
    m <= 10 always succeeds for 5 % (every pipe then has N >= 10, so the
    rounding error is at most 0.5 / 10) [D].

    Parameters
    ----------
    travel_times : sequence of float
        One-way wave travel time L_k / a_k of each pipe [s], > 0.
    max_adjustment : float
        Largest accepted |a_adj / a - 1| [-].

    Returns
    -------
    tuple
        (dt [s], reaches per pipe N_k [-] as an int array, largest |adjustment| [-]).

    Notes
    -----
    The cost of a run grows as 1 / dt, set by the shortest pipe: very short
    stubs make every run slow, merge them upstream of this solver.

    Examples
    --------
    Travel times 0.1 s and 0.25 s: m = 1 leaves the second pipe at
    N = round(2.5) with a 25 % adjustment; m = 2 gives dt = 0.05 s, N = (2, 5),
    no adjustment [D]:

    >>> dt, n, adj = choose_time_step([0.1, 0.25])
    >>> round(dt, 6), n.tolist(), round(adj, 6)
    (0.05, [2, 5], 0.0)

    References
    ----------
    1. Wylie & Streeter (1993), section 3.x, wave-speed adjustment
       [S: engineering-basis §10; M for the section number].
    """
    tt = np.asarray(travel_times, dtype=float)
    if tt.ndim != 1 or tt.size == 0 or not np.all(tt > 0) or not np.all(np.isfinite(tt)):
        raise ValueError("travel times must be a non-empty sequence of positive finite floats")
    if not 0.0 <= max_adjustment < 1.0:
        raise ValueError("max_adjustment must be in [0, 1)")
    tmin = float(tt.min())
    # e = 0 first so that an exact grid wins ties.
    shifts = np.concatenate(([0.0], np.linspace(-max_adjustment, max_adjustment, 41)))
    best: tuple[float, np.ndarray, float] | None = None
    for first in range(1, 1001, _DIVISORS_AT_ONCE):  # several m per numpy pass, tried in order
        ms = np.arange(first, min(first + _DIVISORS_AT_ONCE, 1001), dtype=float)
        dts = tmin / ms[:, None] * (1.0 + shifts)  # (m, shift)
        x = tt[:, None, None] / dts[None, :, :]
        n = np.maximum(1.0, np.rint(x))
        adj = np.abs(x / n - 1.0).max(axis=0)
        for row, j in enumerate(np.argmin(adj, axis=1).tolist()):
            cand = (float(dts[row, j]), n[:, row, j].astype(np.int64), float(adj[row, j]))
            if best is None or cand[2] < best[2]:
                best = cand
            if adj[row, j] <= max_adjustment:
                return cand
    assert best is not None
    return best


def reaches_for_time_step(
    travel_times: Sequence[float] | np.ndarray, dt: float | np.ndarray
) -> tuple[np.ndarray, float]:
    """Reaches per pipe for a given time step: N_k = max(1, round(L_k / (a_k dt))).

    Parameters
    ----------
    travel_times : sequence of float
        One-way wave travel time L_k / a_k of each pipe [s].
    dt : float or ndarray
        Time step [s], > 0: one for all, or one per travel time.

    Returns
    -------
    tuple
        (reaches per pipe [-] as an int array, largest |a_adj / a - 1| [-]).

    Examples
    --------
    >>> n, adj = reaches_for_time_step([0.1, 0.25], 0.05)
    >>> n.tolist(), adj
    ([2, 5], 0.0)

    References
    ----------
    1. Wylie & Streeter (1993), wave-speed adjustment [S: engineering-basis §10].
    """
    step = np.asarray(dt, dtype=float)
    if not np.all(step > 0):
        raise ValueError("dt must be > 0")
    x = np.asarray(travel_times, dtype=float) / step
    n = np.maximum(1.0, np.rint(x))
    return n.astype(np.int64), float(np.abs(x / n - 1.0).max())


@dataclass
class Grid:
    """Flat section arrays of a discretised network (internal to the transient solver).

    Per section s (size n): ``B`` = a_adj / (g A) [s/m^2], ``R`` = f dx / (2 g D A^2)
    [s^2/m^5], ``z`` elevation [m]. ``Bp``/``Rp`` (size n-1) hold B, R of section s
    for the C+ line from s to s+1, zeroed where s is a pipe's last section;
    ``Bm``/``Rm`` hold those of section s+1 for the C- line from s+1 to s, zeroed
    where s+1 is a pipe's first section (so the unused cross-pipe entries stay
    bounded). Pipe ends: first the upstream end of every pipe, then the downstream
    end of every pipe (2P entries).
    """

    dt: np.ndarray  # time step per pipe [s] (pipes of different networks may differ)
    reaches: np.ndarray  # [-] per pipe
    adjustment: np.ndarray  # a_adj / a - 1 per pipe [-]
    offset: np.ndarray  # first section of each pipe
    sec_pipe: np.ndarray  # pipe of each section
    dx: np.ndarray  # reach length per pipe [m]
    B: np.ndarray
    R: np.ndarray
    inv2B: np.ndarray
    Bp: np.ndarray
    Rp: np.ndarray
    Bm: np.ndarray
    Rm: np.ndarray
    z: np.ndarray
    interior: np.ndarray  # bool per section: not a pipe end
    end_sec: np.ndarray  # section of each pipe end
    end_node: np.ndarray  # node of each pipe end
    end_cidx: np.ndarray  # index into the stacked (CP, CM) array
    end_qidx: np.ndarray  # index into the stacked (Qu, Qd) array
    end_invB: np.ndarray  # 1 / B at each end [m^2 s]
    end_sinvB: np.ndarray  # +1/B downstream ends, -1/B upstream ends
    node_invSB: np.ndarray  # 1 / sum(1/B) over the ends at each node [s/m^2]
    node_SB: np.ndarray  # sum(1/B) [m^2 s]

    @property
    def n_sections(self) -> int:
        return int(self.B.size)


def build_grid(
    upstream: np.ndarray,
    downstream: np.ndarray,
    length: np.ndarray,
    diameter: np.ndarray,
    wave_speed: np.ndarray,
    friction: np.ndarray,
    elevation: np.ndarray,
    dt: float | np.ndarray,
) -> Grid:
    """Discretise a pipe network into MOC sections on one time step (a :class:`Grid`).

    N_i = round(L_i / (a_i dt)) >= 1 reaches per pipe, a_i adjusted to L_i / (N_i dt).

    Parameters
    ----------
    upstream, downstream : ndarray
        Node index at each end of each pipe [-].
    length : ndarray
        Pipe lengths [m].
    diameter : ndarray
        Inside diameters [m].
    wave_speed : ndarray
        Wave speeds before adjustment [m/s].
    friction : ndarray
        Darcy friction factors [-].
    elevation : ndarray
        Node elevations [m].
    dt : float or ndarray
        Time step [s]: one for all pipes, or one per pipe (a run of several
        independent networks); ``choose_time_step`` picks one that keeps the
        wave-speed adjustment small.

    Returns
    -------
    Grid
        Flat section arrays and index maps (all SI) [-].

    References
    ----------
    1. Wylie, E. B. & Streeter, V. L. (1993). Fluid Transients in Systems
       (from memory; verify against the adopted edition for the section numbers).
    """
    n_nodes = elevation.size
    reaches, _ = reaches_for_time_step(length / wave_speed, dt)
    a_adj = length / (reaches * dt)
    adjustment = a_adj / wave_speed - 1.0
    area = 0.25 * math.pi * diameter**2
    dx = length / reaches
    b_pipe = a_adj / (STANDARD_GRAVITY * area)
    r_pipe = friction * dx / (2.0 * STANDARD_GRAVITY * diameter * area**2)

    counts = reaches + 1
    offset = np.concatenate(([0], np.cumsum(counts)[:-1])).astype(np.int64)
    n = int(counts.sum())
    sec_pipe = np.repeat(np.arange(reaches.size), counts)
    local = np.arange(n) - offset[sec_pipe]
    frac = local / reaches[sec_pipe]
    z = elevation[upstream[sec_pipe]] + frac * (
        elevation[downstream[sec_pipe]] - elevation[upstream[sec_pipe]]
    )
    first = offset
    last = offset + reaches
    B = b_pipe[sec_pipe]
    R = r_pipe[sec_pipe]
    Bp, Rp = B[:-1].copy(), R[:-1].copy()
    Bm, Rm = B[1:].copy(), R[1:].copy()
    Bp[last[last < n - 1]] = 0.0
    Rp[last[last < n - 1]] = 0.0
    Bm[first[first > 0] - 1] = 0.0
    Rm[first[first > 0] - 1] = 0.0
    interior = np.ones(n, dtype=bool)
    interior[first] = False
    interior[last] = False

    end_sec = np.concatenate((first, last))
    end_node = np.concatenate((upstream, downstream)).astype(np.int64)
    end_cidx = np.concatenate((first + n, last))  # CM at upstream ends, CP at downstream ends
    end_qidx = end_cidx  # (Qu, Qd) stack like (CP, CM): Qd upstream, Qu downstream
    end_invB = 1.0 / B[end_sec]
    end_sinvB = np.concatenate((-end_invB[: reaches.size], end_invB[reaches.size :]))
    node_SB = np.bincount(end_node, weights=end_invB, minlength=n_nodes)
    if np.any(node_SB == 0):
        bad = np.flatnonzero(node_SB == 0).tolist()
        raise ValueError(f"nodes {bad} have no pipe")
    return Grid(
        dt=np.broadcast_to(np.asarray(dt, dtype=float), reaches.shape).copy(),
        reaches=reaches,
        adjustment=adjustment,
        offset=offset,
        sec_pipe=sec_pipe,
        dx=dx,
        B=B,
        R=R,
        inv2B=0.5 / B,
        Bp=Bp,
        Rp=Rp,
        Bm=Bm,
        Rm=Rm,
        z=z,
        interior=interior,
        end_sec=end_sec,
        end_node=end_node,
        end_cidx=end_cidx,
        end_qidx=end_qidx,
        end_invB=end_invB,
        end_sinvB=end_sinvB,
        node_invSB=1.0 / node_SB,
        node_SB=node_SB,
    )


class InteriorUpdate:
    """Vectorised characteristics and interior-section update of all pipes for one time step.

    C_P(s) = H(s-1) + Q(s-1) (B - R |Q(s-1)|),  C_M(s) = H(s+1) - Q(s+1) (B - R |Q(s+1)|),
    H(s) = (C_P + C_M) / 2,  Q(s) = (C_P - C_M) / (2B)

    on flat arrays, with no Python loop over pipes or reaches; the values at
    pipe ends are left for the node update to overwrite. ``Qd`` is the flow
    leaving a section downstream, ``Qu`` the flow reaching it from upstream (they
    differ only at a vapour cavity). Arrays are updated in place.

    References
    ----------
    1. Wylie & Streeter (1993), chapter 3, eqs. for C+ and C- with
       quasi-steady friction [S: engineering-basis §10; M for equation numbers].
    """

    def __init__(self, grid: Grid, head: np.ndarray, q: np.ndarray, c: np.ndarray) -> None:
        """Bind the state: ``head`` (n,), ``q`` = (Qu, Qd) stacked (2n,), ``c`` = (CP, CM) (2n,)."""
        n = grid.n_sections
        self.head, self.q, self.c = head, q, c
        self.qu, self.qd, self.cp, self.cm = q[:n], q[n:], c[:n], c[n:]
        # q[1 : 2n-1] is (Qu[1:], Qd[:-1]): both characteristics' flows in one slice.
        self._q2 = q[1 : 2 * n - 1]
        # (Bm, Bp) and (Rm, Rp) stacked like q[1 : 2n-1]; the compiled loop reads them too
        self.b2 = np.concatenate((grid.Bm, grid.Bp))
        self.r2 = np.concatenate((grid.Rm, grid.Rp))
        self._w = np.empty(2 * n - 2)
        self._wm, self._wp = self._w[: n - 1], self._w[n - 1 :]
        self._h_lo, self._h_hi = head[:-1], head[1:]
        self._cp_hi, self._cm_lo = self.cp[1:], self.cm[:-1]
        self._inv2b = grid.inv2B

    def __call__(self) -> None:
        w, q2 = self._w, self._q2
        np.abs(q2, out=w)
        w *= self.r2
        np.subtract(self.b2, w, out=w)
        w *= q2  # (Qu (B - R|Qu|))[1:] then (Qd (B - R|Qd|))[:-1]
        np.subtract(self._h_hi, self._wm, out=self._cm_lo)
        np.add(self._h_lo, self._wp, out=self._cp_hi)
        np.add(self.cp, self.cm, out=self.head)
        self.head *= 0.5
        np.subtract(self.cp, self.cm, out=self.qu)
        self.qu *= self._inv2b
        np.copyto(self.qd, self.qu)


def steady_node_heads(
    n_nodes: int,
    upstream: np.ndarray,
    downstream: np.ndarray,
    loss_coefficient: np.ndarray,
    flow: np.ndarray,
    fixed_heads: dict[int, float],
) -> np.ndarray:
    """Steady node heads of a tree, walked outward from the fixed-head nodes by Darcy–Weisbach.

    H_downstream = H_upstream - r Q |Q|,  r = f L / (2 g D A^2)

    Parameters
    ----------
    n_nodes : int
        Number of nodes [-].
    upstream : ndarray
        Upstream node index of each pipe [-].
    downstream : ndarray
        Downstream node index of each pipe [-].
    loss_coefficient : ndarray
        r of each pipe [s^2/m^5].
    flow : ndarray
        Steady flow of each pipe, positive upstream -> downstream [m^3/s].
    fixed_heads : dict
        Node index -> piezometric head [m].

    Returns
    -------
    ndarray
        Piezometric head of each node [m].

    Raises
    ------
    ValueError
        A node not connected to a fixed head, or a loop / two fixed heads whose
        heads disagree with the given flows (beyond 1e-6 m).

    Examples
    --------
    One pipe, r = 1000 s^2/m^5, Q = 0.01 m^3/s, root head 30 m: 30 - 0.1 [D]:

    >>> steady_node_heads(2, np.array([0]), np.array([1]), np.array([1000.0]),
    ...                   np.array([0.01]), {0: 30.0}).tolist()
    [30.0, 29.9]

    References
    ----------
    1. Wylie & Streeter (1993), steady state of the characteristics grid
       [S: engineering-basis §10].
    """
    # plain lists in the walk: it visits every pipe once, one scalar at a time
    head: list[float | None] = [None] * n_nodes
    adjacency: list[list[tuple[int, int, float]]] = [[] for _ in range(n_nodes)]
    drop = (loss_coefficient * flow * np.abs(flow)).tolist()
    for k, (u, d) in enumerate(zip(upstream.tolist(), downstream.tolist(), strict=True)):
        adjacency[u].append((d, k, -drop[k]))
        adjacency[d].append((u, k, drop[k]))
    queue: deque[int] = deque()
    for node, h in fixed_heads.items():
        head[node] = float(h)
        queue.append(node)
    seen_pipe = [False] * upstream.size
    while queue:
        node = queue.popleft()
        here = head[node]
        assert here is not None  # queued nodes have a head
        for other, k, delta in adjacency[node]:
            if seen_pipe[k]:
                continue
            seen_pipe[k] = True
            h = here + delta
            there = head[other]
            if there is None or math.isnan(there):
                head[other] = h
                queue.append(other)
            elif abs(there - h) > 1e-6:
                raise ValueError(
                    f"node {other}: steady heads disagree by {abs(there - h):.3g} m "
                    "(a loop, or fixed heads inconsistent with the given flows)"
                )
    found = np.array([math.nan if h is None else h for h in head], dtype=float)
    if np.any(np.isnan(found)):
        raise ValueError(f"nodes {np.flatnonzero(np.isnan(found)).tolist()} reach no fixed head")
    return found
