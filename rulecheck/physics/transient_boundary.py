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
from dataclasses import dataclass

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


def valve_node_head(sc: float, sb: float, cv: float, z: float) -> tuple[float, float]:
    """Head and outflow at a node discharging through an orifice to atmosphere.

    S_B H + Cv sqrt(H - z) = S_C; with y = sqrt(H - z):
    y = (-c + sqrt(c^2 + 4 d)) / 2,  c = Cv / S_B,  d = S_C / S_B - z;
    no outflow when d <= 0 (no backflow through the valve).

    Parameters
    ----------
    sc : float
        S_C = sum(C / B) of the pipe ends at the node [m^3/s].
    sb : float
        S_B = sum(1 / B) [m^2 s].
    cv : float
        Orifice coefficient Cv = tau Q0 / sqrt(dH0) [m^2.5/s].
    z : float
        Elevation of the valve outlet [m].

    Returns
    -------
    tuple of float
        (piezometric head [m], valve outflow [m^3/s]).

    Examples
    --------
    S_B = 1, Cv = 1, S_C = z + 2: y^2 + y - 2 = 0, y = 1, H = z + 1, Q = 1 [D]:

    >>> valve_node_head(12.0, 1.0, 1.0, 10.0)
    (11.0, 1.0)

    References
    ----------
    1. Wylie & Streeter (1993), valve at the downstream end of a pipe: orifice
       equation with tau [S: engineering-basis §10; M for the section].
    """
    d = sc / sb - z
    if cv <= 0.0 or d <= 0.0:
        return sc / sb, 0.0
    c = cv / sb
    y = 2.0 * d / (c + math.sqrt(c * c + 4.0 * d))  # = (-c + sqrt(c^2 + 4d)) / 2, no cancellation
    return z + y * y, cv * y


@dataclass
class ArresterState:
    """Gas arrester at a node: polytropic gas p V^n = const behind a piston with a stop.

    The gas volume cannot exceed its precharge volume (piston on its stop); on
    the stop the arrester takes no flow until the liquid pressure exceeds the
    precharge. Off the stop, continuity with the trapezoidal rule,
    V - V_old = -dt/2 (Q_a + Q_a_old) (Q_a = liquid flow into the arrester), and
    the node head from the gas pressure, solved by Newton on V:

        S_C - S_B H(V) - Q_valve(H(V)) + 2 (V - V_old) / dt + Q_a_old = 0,
        H(V) = z + (K V^-n - p_atm) / (rho g)

    References: Wylie & Streeter (1993), air chamber boundary (polytropic gas)
    [S: engineering-basis §10; M for the section]; n = 1.2 [CP].
    """

    node: int
    z: float  # [m]
    constant: float  # p_abs V^n [Pa m^3n]
    exponent: float  # n [-]
    v_max: float  # [m^3]
    volume: float  # [m^3]
    flow: float = 0.0  # liquid flow into the arrester at the last step [m^3/s]
    on_stop: bool = False
    previous: float = math.nan  # gas volume one step before ``volume`` [m^3]

    def __post_init__(self) -> None:
        if math.isnan(self.previous):
            self.previous = self.volume

    def head_of(self, volume: float, rho_g: float, p_atm: float) -> float:
        """Node head [m] for a gas volume [m^3]."""
        return self.z + (self.constant * volume**-self.exponent - p_atm) / rho_g

    def step(
        self,
        sc: float,
        sb: float,
        dt: float,
        rho_g: float,
        p_atm: float,
        cv: float = 0.0,
        zv: float = 0.0,
    ) -> float:
        """Advance one step; return the node head [m] (a valve at the node when cv > 0)."""
        if self.on_stop:
            h0, _ = valve_node_head(sc, sb, cv, zv)
            if rho_g * (h0 - self.z) + p_atm <= self.constant * self.v_max**-self.exponent:
                self.flow = 0.0
                return h0
            self.on_stop = False
            self.flow = 0.0
            self.previous = self.volume
        v_old, q_old, n, k = self.volume, self.flow, self.exponent, self.constant
        # start from the trend of the last two steps: Newton then needs one or two turns
        v = min(max(v_old + (v_old - self.previous), 0.5 * v_old), self.v_max)
        self.previous = v_old
        for _ in range(60):
            h = self.head_of(v, rho_g, p_atm)
            dh_dv = -n * k * v ** (-n - 1.0) / rho_g
            qv, dqv = 0.0, 0.0
            if cv > 0.0 and h > zv:
                s = math.sqrt(h - zv)
                qv, dqv = cv * s, 0.5 * cv / max(s, 1e-9)
            f = sc - sb * h - qv + 2.0 * (v - v_old) / dt + q_old
            df = -(sb + dqv) * dh_dv + 2.0 / dt
            v_new = v - f / df
            if v_new <= 0.0:
                v_new = 0.5 * v
            done = abs(v_new - v) <= 1e-11 * self.v_max  # relative pressure error ~1e-11
            v = v_new
            if done:
                break
        if v >= self.v_max:  # back on the stop: implicit Euler for this step
            self.on_stop = True
            q = -(self.v_max - v_old) / dt
            self.volume, self.flow = self.v_max, 0.0
            h, _ = valve_node_head(sc - q, sb, cv, zv)
            return h
        self.flow = -2.0 * (v - v_old) / dt - q_old
        self.volume = v
        return self.head_of(v, rho_g, p_atm)


class CavityTracker:
    """Discrete vapour cavity model (DVCM) at nodes and interior sections, vectorised by masks.

    Where the liquid head would fall below the vapour head H_v, the head is held
    at H_v, inflow and outflow follow separately from the C+ and C- lines and the
    cavity volume grows:

        V = V_old + dt [psi (Q_out - Q_in) + (1 - psi) (Q_out - Q_in)_old]

    When V <= 0 the cavity collapses and the liquid solution is used again
    [S: Bergant, Simpson & Tijsseling 2006, DVCM; Wylie & Streeter 1993].
    """

    def __init__(
        self,
        node_hv: np.ndarray,
        sec_hv: np.ndarray,
        node_sb: np.ndarray,
        sec_b: np.ndarray,
        sec_pipe: np.ndarray,
        sec_x: np.ndarray,
        dt: float,
    ) -> None:
        self.node_hv = node_hv  # -inf where no cavity may form
        self.node_hv_onset = node_hv - CAVITY_ONSET_TOLERANCE
        self.sec_hv = sec_hv  # -inf at pipe ends
        self.sec_hv_onset = sec_hv - CAVITY_ONSET_TOLERANCE
        self.node_sb = node_sb
        self.sec_invb = 1.0 / sec_b
        self.sec_pipe = sec_pipe
        self.sec_x = sec_x
        self.dt = dt
        self.node_vol = np.zeros(node_hv.size)
        self.node_net = np.zeros(node_hv.size)
        self.sec_vol = np.zeros(sec_hv.size)
        self.sec_net = np.zeros(sec_hv.size)
        self.n_node = 0  # open cavities
        self.n_sec = 0
        self.node_events: list[list[float]] = []
        self.sec_events: list[list[float]] = []
        self._node_open: dict[int, int] = {}
        self._sec_open: dict[int, int] = {}
        self.max_volume = 0.0

    def allow_node(self, node: int, hv: float) -> None:
        """Let a cavity form at ``node`` (hv = vapour head) or forbid it (hv = -inf)."""
        self.node_hv[node] = hv
        self.node_hv_onset[node] = hv - CAVITY_ONSET_TOLERANCE

    def nodes(self, head: np.ndarray, sc: np.ndarray, t: float) -> None:
        """Apply the DVCM at nodes: ``head`` (liquid solution) is overwritten in place."""
        if not self.n_node and not (head < self.node_hv_onset).any():
            return
        cand = np.flatnonzero((self.node_vol > 0.0) | (head < self.node_hv_onset))
        hv = self.node_hv[cand]
        net = hv * self.node_sb[cand] - sc[cand]  # outflow minus inflow at head hv
        old = self.node_vol[cand]
        vol = old + self.dt * (CAVITY_WEIGHT * net + (1.0 - CAVITY_WEIGHT) * self.node_net[cand])
        keep = vol > 0.0
        kept = cand[keep]
        head[kept] = hv[keep]
        self.node_vol[cand] = np.where(keep, vol, 0.0)
        self.node_net[cand] = np.where(keep, net, 0.0)
        self.n_node = int(kept.size)
        self._events(cand, old, keep, t, self._node_open, self.node_events, None)
        if kept.size:
            self.max_volume = max(self.max_volume, float(vol[keep].max()))

    def sections(
        self,
        head: np.ndarray,
        qu: np.ndarray,
        qd: np.ndarray,
        cp: np.ndarray,
        cm: np.ndarray,
        t: float,
    ) -> None:
        """Apply the DVCM at interior sections: head, qu, qd overwritten in place."""
        if not self.n_sec and not (head < self.sec_hv_onset).any():
            return
        cand = np.flatnonzero((self.sec_vol > 0.0) | (head < self.sec_hv_onset))
        hv = self.sec_hv[cand]
        invb = self.sec_invb[cand]
        q_in = (cp[cand] - hv) * invb
        q_out = (hv - cm[cand]) * invb
        net = q_out - q_in
        old = self.sec_vol[cand]
        vol = old + self.dt * (CAVITY_WEIGHT * net + (1.0 - CAVITY_WEIGHT) * self.sec_net[cand])
        keep = vol > 0.0
        kept = cand[keep]
        head[kept] = hv[keep]
        qu[kept] = q_in[keep]
        qd[kept] = q_out[keep]
        self.sec_vol[cand] = np.where(keep, vol, 0.0)
        self.sec_net[cand] = np.where(keep, net, 0.0)
        self.n_sec = int(kept.size)
        self._events(cand, old, keep, t, self._sec_open, self.sec_events, self.sec_x)
        if kept.size:
            self.max_volume = max(self.max_volume, float(vol[keep].max()))

    def _events(
        self,
        cand: np.ndarray,
        old: np.ndarray,
        keep: np.ndarray,
        t: float,
        open_: dict[int, int],
        events: list[list[float]],
        sec_x: np.ndarray | None,
    ) -> None:
        for i in cand[(old <= 0.0) & keep].tolist():
            open_[i] = len(events)
            if sec_x is None:
                events.append([i, t, math.nan])
            else:
                events.append([int(self.sec_pipe[i]), float(sec_x[i]), t, math.nan])
        for i in cand[(old > 0.0) & ~keep].tolist():
            events[open_.pop(i)][-1] = t
