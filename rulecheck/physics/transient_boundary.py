"""Boundary conditions of the transient solver: valve orifice, gas arrester, vapour cavities.

Helpers of :mod:`rulecheck.physics.transient`. A node joining pipe ends sees,
from each end, a characteristic H = C -/+ B Q; continuity with an outflow
Q_ext gives the node head

    H = (S_C - Q_ext) / S_B,  S_C = sum(C / B),  S_B = sum(1 / B)

(downstream ends carry C+, upstream ends C-) [S: Wylie & Streeter 1993, ch. 3,
series/branching junctions; M for the S_C / S_B notation].

References
----------
1. Wylie, E. B. & Streeter, V. L. (1993). Fluid Transients in Systems
   [S: engineering-basis §10].
2. Bergant, A., Simpson, A. R. & Tijsseling, A. S. (2006). Water hammer with
   column separation: a historical review. J. Fluids Struct. 22, 135–171
   [S: engineering-basis §7, §10].
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

#: Weighting factor psi of the discrete vapour cavity volume update; 1.0 (fully
#: implicit) damps the spurious pressure spikes of psi = 0.5
#: [M: Bergant, Simpson & Tijsseling 2006, section on the DVCM; from memory;
#: verify against the adopted edition].
CAVITY_WEIGHT = 1.0

#: A liquid section turns to a cavity only when its head falls below the vapour
#: head by more than this [m]: ignores round-off in a rarefaction held exactly at
#: vapour head [D: numerical tolerance].
CAVITY_ONSET_TOLERANCE = 1e-7


def opening_schedule(
    times: np.ndarray, closure_time: float, law: tuple[tuple[float, float], ...] | None
) -> np.ndarray:
    """Relative valve opening tau at the given times from a closure law.

    tau(t) = 1 - t / t_c (linear, default) or the table (t / t_c, tau)
    interpolated linearly; after t_c the last tau holds; t_c = 0 closes at t = 0+.

    Parameters
    ----------
    times : ndarray
        Times [s], >= 0.
    closure_time : float
        Closure time t_c [s]; 0 = instantaneous, inf = never moves.
    law : tuple of (float, float) or None
        (t / t_c [-], tau [-]) pairs, t / t_c increasing.

    Returns
    -------
    ndarray
        tau [-] at each time.

    Examples
    --------
    >>> opening_schedule(np.array([0.0, 0.5, 1.0, 2.0]), 1.0, None).tolist()
    [1.0, 0.5, 0.0, 0.0]

    References
    ----------
    1. engineering-basis §10: closing valve, linear in time by default.
    """
    if closure_time < 0:
        raise ValueError("closure_time must be >= 0")
    if law is None:
        xs, taus = np.array([0.0, 1.0]), np.array([1.0, 0.0])
    else:
        table = np.asarray(law, dtype=float)
        if table.ndim != 2 or table.shape[1] != 2 or table.shape[0] < 1:
            raise ValueError("law must be a table of (t / closure_time, tau) pairs")
        xs, taus = table[:, 0], table[:, 1]
        if np.any(np.diff(xs) <= 0) or np.any(taus < 0):
            raise ValueError("law: t / closure_time must increase and tau be >= 0")
    if closure_time == 0:
        rel = np.where(times > 0, np.inf, 0.0)
    elif math.isinf(closure_time):
        rel = np.zeros_like(times)
    else:
        rel = times / closure_time
    return np.interp(rel, xs, taus, left=taus[0], right=taus[-1])


def valve_heads(
    sc: np.ndarray, sb: np.ndarray, cv: np.ndarray, z: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Head and outflow at nodes discharging through an orifice to atmosphere (vectorised).

    S_B H + Cv sqrt(H - z) = S_C; with y = sqrt(H - z):
    y = (-c + sqrt(c^2 + 4 d)) / 2,  c = Cv / S_B,  d = S_C / S_B - z;
    no outflow when d <= 0 or Cv <= 0 (no backflow through the valve).

    Parameters
    ----------
    sc : ndarray
        S_C = sum(C / B) of the pipe ends at each node [m^3/s].
    sb : ndarray
        S_B = sum(1 / B) [m^2 s].
    cv : ndarray
        Orifice coefficient Cv = tau Q0 / sqrt(dH0) [m^2.5/s].
    z : ndarray
        Elevation of each valve outlet [m].

    Returns
    -------
    tuple of ndarray
        (piezometric head [m], valve outflow [m^3/s]) per node.

    Examples
    --------
    S_B = 1, Cv = 1, S_C = z + 2: y^2 + y - 2 = 0, y = 1, H = z + 1, Q = 1; a shut
    valve (Cv = 0) leaves H = S_C / S_B [D]:

    >>> h, q = valve_heads(np.array([12.0, 12.0]), np.ones(2), np.array([1.0, 0.0]),
    ...                    np.full(2, 10.0))
    >>> h.tolist(), q.tolist()
    ([11.0, 12.0], [1.0, 0.0])

    References
    ----------
    1. Wylie & Streeter (1993), valve at the downstream end of a pipe: orifice
       equation with tau [S: engineering-basis §10; M for the section].
    """
    liquid = sc / sb
    d = liquid - z
    flowing = (cv > 0.0) & (d > 0.0)
    d = np.where(flowing, d, 0.0)
    c = cv / sb
    # y = (-c + sqrt(c^2 + 4d)) / 2 without cancellation; y = 0 where nothing flows
    y = 2.0 * d / np.where(flowing, c + np.sqrt(c * c + 4.0 * d), 1.0)
    return np.where(flowing, z + y * y, liquid), cv * y


#: Newton on the arrester gas volume stops when a step moves it by less than this
#: fraction of the gas volume (relative pressure error ~1e-11) [D: numerical
#: tolerance]; it gives up after ``NEWTON_TURNS`` turns.
NEWTON_TOLERANCE = 1e-11
NEWTON_TURNS = 60

#: Smallest (H - z_valve) taken in the orifice's slope dQ/dH = Cv / (2 sqrt(H - z)), so
#: a valve at zero head gives a finite slope [m] [D: numerical tolerance].
ORIFICE_FLOOR = 1e-18


#: Largest relative change of the gas volume for which ``gas_pressure`` takes the series
#: instead of a new power: the series' first neglected term, about
#: n(n+1)(n+2)(n+3)/24 x^4, stays under 2e-16 relative for n <= 1.4 [D: Taylor remainder].
GAS_SERIES_STEP = 1e-4


def gas_pressure(
    p: np.ndarray,
    v_at: np.ndarray,
    v: np.ndarray,
    k: np.ndarray,
    m: np.ndarray,
    c2: np.ndarray,
    c3: np.ndarray,
) -> np.ndarray:
    """Polytropic gas pressure p = K V^m (m = -n) at volume v, from p at v_at (vectorised).

    Within a Newton solve the volume moves little from turn to turn, so with
    x = v / v_at - 1 the binomial series p_new = p (1 + m x + c2 x^2 + c3 x^3),
    c2 = m (m - 1) / 2, c3 = m (m - 1) (m - 2) / 6, gives K v^m to round-off for
    |x| <= GAS_SERIES_STEP, without the power; larger moves take K v^m.

    Parameters
    ----------
    p : ndarray
        Gas pressure at ``v_at`` [Pa].
    v_at : ndarray
        Volume ``p`` belongs to [m^3].
    v : ndarray
        Volume wanted [m^3].
    k : ndarray
        K = p V^n [Pa m^3n].
    m : ndarray
        -n, minus the polytropic exponent [-].
    c2 : ndarray
        m (m - 1) / 2 [-].
    c3 : ndarray
        m (m - 1) (m - 2) / 6 [-].

    Returns
    -------
    ndarray
        Absolute gas pressure at ``v`` [Pa].

    Examples
    --------
    >>> m = np.array([-1.2]); c2 = m * (m - 1.0) * 0.5; c3 = m * (m - 1.0) * (m - 2.0) / 6.0
    >>> p = gas_pressure(np.array([2e5]), np.array([1e-4]), np.array([1.00001e-4]),
    ...                  np.array([2e5 * 1e-4**1.2]), m, c2, c3)
    >>> bool(abs(p[0] / (2e5 * 1.00001**-1.2) - 1) < 1e-15)
    True

    References
    ----------
    1. Binomial series (1 + x)^m = sum C(m, j) x^j, |x| < 1 [S: Abramowitz & Stegun,
       Handbook of Mathematical Functions, 3.6.8; from memory; verify against the
       adopted edition].
    """
    x = (v - v_at) / v_at
    near = np.abs(x) <= GAS_SERIES_STEP
    return np.where(near, p * (1.0 + x * (m + x * (c2 + x * c3))), k * v**m)


class ArresterBank:
    """Gas arresters at nodes: polytropic gas p V^n = const behind a piston with a stop.

    The gas volume cannot exceed its precharge volume (piston on its stop); on
    the stop an arrester takes no flow until the liquid pressure exceeds the
    precharge. Off the stop, continuity with the trapezoidal rule,
    V - V_old = -dt/2 (Q_a + Q_a_old) (Q_a = liquid flow into the arrester), and
    the node head from the gas pressure, solved by Newton on V:

        S_C - S_B H(V) - Q_valve(H(V)) + 2 (V - V_old) / dt + Q_a_old = 0,
        H(V) = z + (K V^-n - p_atm) / (rho g)

    All arresters of a run (of several networks at once) are held as arrays of
    one entry per arrester and advanced together; each keeps its own dt, fluid
    and, when it sits at the closing valve, that valve's orifice.

    References: Wylie & Streeter (1993), air chamber boundary (polytropic gas)
    [S: engineering-basis §10; M for the section]; n = 1.2 [CP].
    """

    def __init__(
        self,
        node: np.ndarray,
        z: np.ndarray,
        constant: np.ndarray,
        exponent: np.ndarray,
        v_max: np.ndarray,
        volume: np.ndarray,
        on_stop: np.ndarray,
        dt: np.ndarray,
        rho_g: np.ndarray,
        p_atm: np.ndarray,
        valve: np.ndarray,
    ) -> None:
        """Per arrester: node, elevation z [m], K = p_abs V^n [Pa m^3n], n [-], volume at
        the piston stop [m^3] (inf: no stop), volume [m^3], on its stop [bool], dt [s],
        rho g [N/m^3], p_atm [Pa], index of the valve at its node or -1."""
        self.node = node
        self.z = z
        self.constant = constant
        self.exponent = exponent
        self.v_max = v_max
        self.precharge = constant * v_max**-exponent  # absolute gas pressure on the stop [Pa]
        self.volume = volume.astype(float)
        self.previous = self.volume.copy()  # gas volume one step before ``volume`` [m^3]
        self.flow = np.zeros(node.size)  # liquid flow into the arrester, last step [m^3/s]
        self.on_stop = on_stop.astype(bool)
        self.dt = dt
        self.rho_g = rho_g
        self.p_atm = p_atm
        self.valve = valve

    def step(
        self, sc: np.ndarray, sb: np.ndarray, cv: np.ndarray, zv: np.ndarray, i: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Advance arresters ``i`` one step; return their node heads [m] and which of them
        changed between on and off the stop.

        ``sc``, ``sb`` are the nodes' S_C, S_B; ``cv``, ``zv`` the orifice of a valve at
        the node (cv = 0 where there is none), all aligned with ``i``.
        """
        was = self.on_stop[i]
        if not was.any():  # all off the stop (the common case during a surge)
            return self._off_stop(sc, sb, cv, zv, i), self.on_stop[i] != was
        head, _ = valve_heads(sc, sb, cv, zv)
        pressure = self.rho_g[i] * (head - self.z[i]) + self.p_atm[i]
        moving = ~(was & (pressure <= self.precharge[i]))
        self.flow[i[~moving]] = 0.0
        leaving = i[was & moving]
        self.on_stop[leaving] = False
        self.flow[leaving] = 0.0
        self.previous[leaving] = self.volume[leaving]
        if moving.any():
            head[moving] = self._off_stop(sc[moving], sb[moving], cv[moving], zv[moving], i[moving])
        return head, self.on_stop[i] != was

    def _off_stop(
        self, sc: np.ndarray, sb: np.ndarray, cv: np.ndarray, zv: np.ndarray, i: np.ndarray
    ) -> np.ndarray:
        v_old, q_old, two_dt = self.volume[i], self.flow[i], 2.0 / self.dt[i]
        v_max, n, k, z = self.v_max[i], self.exponent[i], self.constant[i], self.z[i]
        p_atm, inv_rho_g = self.p_atm[i], 1.0 / self.rho_g[i]
        # H(V) = base + p(V) / (rho g), p = K V^-n; dH/dV = -n p / (V rho g)
        base, neg_n, slope_of = z - p_atm * inv_rho_g, -n, -n * inv_rho_g
        rest = sc + q_old - two_dt * v_old  # f(V) = rest - S_B H - Q_valve + 2 V / dt
        half_cv, tol = 0.5 * cv, NEWTON_TOLERANCE * v_old
        any_valve = bool((cv > 0.0).any())
        # start from the trend of the last two steps: Newton then needs one or two turns
        v = np.minimum(np.maximum(v_old + (v_old - self.previous[i]), 0.5 * v_old), v_max)
        self.previous[i] = v_old
        going = np.ones(i.size, dtype=bool)
        c2, c3 = neg_n * (neg_n - 1.0) * 0.5, neg_n * (neg_n - 1.0) * (neg_n - 2.0) / 6.0
        p, v_at = k * v**neg_n, v  # gas pressure, and the volume it is for
        for turn in range(NEWTON_TURNS):
            if turn:
                p, v_at = gas_pressure(p, v_at, v, k, neg_n, c2, c3), v
            h = base + p * inv_rho_g
            f = rest - sb * h + two_dt * v
            ds = sb  # d(S_B H + Q_valve)/dH
            if any_valve:  # orifice Q = Cv sqrt(H - zv) where H > zv, else closed
                s = np.sqrt(np.maximum(h - zv, 0.0))
                f -= cv * s
                ds = sb + half_cv * s / np.maximum(s * s, ORIFICE_FLOOR)
            v_new = v - f / (two_dt - ds * (slope_of * p / v))
            v_new = np.where(going, np.where(v_new <= 0.0, 0.5 * v, v_new), v)
            going &= np.abs(v_new - v) > tol
            v = v_new
            if not going.any():
                break
        back = v >= v_max  # back on the stop: implicit Euler for this step
        head = base + gas_pressure(p, v_at, v, k, neg_n, c2, c3) * inv_rho_g
        if back.any():
            q = -(v_max[back] - v_old[back]) / self.dt[i[back]]
            self.on_stop[i[back]] = True
            v[back] = v_max[back]
            head[back] = valve_heads(sc[back] - q, sb[back], cv[back], zv[back])[0]
        self.flow[i] = np.where(back, 0.0, -two_dt * (v - v_old) - q_old)
        self.volume[i] = v
        return head


class CavityPlaces:
    """Vapour cavities of one kind of place (nodes, or interior pipe sections): per place
    its vapour head, dt, last recorded step, cavity volume and largest volume, and the
    cavity events (formed, collapsed) up to each place's last recorded step."""

    def __init__(
        self,
        hv: np.ndarray,
        dt: np.ndarray,
        end: np.ndarray,
        label: Callable[[int], list[float]],
    ) -> None:
        self.hv = hv  # vapour head [m]; -inf where no cavity may form
        self.onset = hv - CAVITY_ONSET_TOLERANCE
        self.dt = dt  # [s]
        self.end = end  # last recorded step
        self.vol = np.zeros(hv.size)  # cavity volume [m^3]
        self.net = np.zeros(hv.size)  # outflow minus inflow at the last step [m^3/s]
        self.largest = np.zeros(hv.size)  # largest cavity volume [m^3]
        self.n_open = 0
        self.events: list[list[float]] = []  # [*label, t formed, t collapsed or nan]
        self._label = label
        self._open: dict[int, int] = {}

    def candidates(self, head: np.ndarray) -> np.ndarray | None:
        """Places holding a cavity or whose liquid head fell below vapour; None if none."""
        if not self.n_open and not (head < self.onset).any():
            return None
        return np.flatnonzero((self.vol > 0.0) | (head < self.onset))

    def advance(self, cand: np.ndarray, net: np.ndarray, k: int) -> np.ndarray:
        """Grow or shrink the cavities at ``cand`` by ``net`` outflow [m^3/s] after step
        ``k``; return which of them hold a cavity now."""
        old = self.vol[cand]
        vol = old + self.dt[cand] * (CAVITY_WEIGHT * net + (1.0 - CAVITY_WEIGHT) * self.net[cand])
        keep = vol > 0.0
        self.vol[cand] = np.where(keep, vol, 0.0)
        self.net[cand] = np.where(keep, net, 0.0)
        self.n_open = int(keep.sum())
        recorded = self.end[cand] >= k
        live = keep & recorded
        if live.any():
            j = cand[live]
            self.largest[j] = np.maximum(self.largest[j], vol[live])
        for i in cand[(old <= 0.0) & live].tolist():
            self._open[i] = len(self.events)
            self.events.append([*self._label(i), k * float(self.dt[i]), math.nan])
        for i in cand[(old > 0.0) & ~keep & recorded].tolist():
            if i in self._open:
                self.events[self._open.pop(i)][-1] = k * float(self.dt[i])
        return keep

    def record(self, events: np.ndarray, open_event: np.ndarray) -> None:
        """Take the events of a run of the compiled step loop: rows (place, step formed,
        step collapsed or -1), and the event still open at each place (or -1)."""
        self.events = [
            [
                *self._label(i),
                k0 * float(self.dt[i]),
                k1 * float(self.dt[i]) if k1 >= 0 else math.nan,
            ]
            for i, k0, k1 in events.tolist()
        ]
        self._open = {i: int(e) for i, e in enumerate(open_event.tolist()) if e >= 0}
        self.n_open = int((self.vol > 0.0).sum())


class CavityTracker:
    """Discrete vapour cavity model (DVCM) at nodes and interior sections, vectorised by masks.

    Where the liquid head would fall below the vapour head H_v, the head is held
    at H_v, inflow and outflow follow separately from the C+ and C- lines and the
    cavity volume grows:

        V = V_old + dt [psi (Q_out - Q_in) + (1 - psi) (Q_out - Q_in)_old]

    When V <= 0 the cavity collapses and the liquid solution is used again
    [S: Bergant, Simpson & Tijsseling 2006, DVCM; Wylie & Streeter 1993].

    Every node and section carries its own dt and last step (networks of one
    run may differ in both); cavity events and the largest volume are recorded
    up to that last step only. Node events are [node, t0, t1], section events
    [pipe, x, t0, t1].
    """

    def __init__(
        self,
        node_hv: np.ndarray,
        sec_hv: np.ndarray,
        node_sb: np.ndarray,
        sec_b: np.ndarray,
        sec_pipe: np.ndarray,
        sec_x: np.ndarray,
        node_dt: np.ndarray,
        sec_dt: np.ndarray,
        node_end: np.ndarray,
        sec_end: np.ndarray,
    ) -> None:
        self.at_nodes = CavityPlaces(node_hv, node_dt, node_end, lambda i: [i])
        self.in_pipes = CavityPlaces(  # sec_hv is -inf at pipe ends
            sec_hv, sec_dt, sec_end, lambda i: [int(sec_pipe[i]), float(sec_x[i])]
        )
        self.node_sb = node_sb
        self.sec_invb = 1.0 / sec_b

    def allow_node(self, node: np.ndarray, hv: np.ndarray | float) -> None:
        """Let cavities form at ``node`` (hv = vapour head) or forbid them (hv = -inf)."""
        self.at_nodes.hv[node] = hv
        self.at_nodes.onset[node] = hv - CAVITY_ONSET_TOLERANCE

    def nodes(self, head: np.ndarray, sc: np.ndarray, k: int) -> None:
        """Apply the DVCM at nodes after step ``k``: ``head`` (liquid solution) is
        overwritten in place."""
        cand = self.at_nodes.candidates(head)
        if cand is None:
            return
        hv = self.at_nodes.hv[cand]
        net = hv * self.node_sb[cand] - sc[cand]  # outflow minus inflow at head hv
        keep = self.at_nodes.advance(cand, net, k)
        head[cand[keep]] = hv[keep]

    def sections(
        self,
        head: np.ndarray,
        qu: np.ndarray,
        qd: np.ndarray,
        cp: np.ndarray,
        cm: np.ndarray,
        k: int,
    ) -> None:
        """Apply the DVCM at interior sections after step ``k``: head, qu, qd overwritten
        in place."""
        cand = self.in_pipes.candidates(head)
        if cand is None:
            return
        hv = self.in_pipes.hv[cand]
        invb = self.sec_invb[cand]
        q_in = (cp[cand] - hv) * invb
        q_out = (hv - cm[cand]) * invb
        keep = self.in_pipes.advance(cand, q_out - q_in, k)
        kept = cand[keep]
        head[kept] = hv[keep]
        qu[kept] = q_in[keep]
        qd[kept] = q_out[keep]
