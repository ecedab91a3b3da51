"""Water-hammer transient of a pipe tree by the method of characteristics (pure numpy, no I/O).

One closing valve, constant-head roots, closed dead ends, junctions, sealed gas
arresters and vapour cavities (discrete vapour cavity model). Input and output
are plain SI dataclasses; the layout adapter lives elsewhere.

References
----------
1. Wylie, E. B. & Streeter, V. L. (1993). Fluid Transients in Systems
   [S: engineering-basis §10].
2. Chaudhry, M. H. Applied Hydraulic Transients [S: engineering-basis §10].
3. Bergant, A., Simpson, A. R. & Tijsseling, A. S. (2006). Water hammer with
   column separation: a historical review. J. Fluids Struct. 22, 135–171
   [S: engineering-basis §7, §10].
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from rulecheck.physics.transient_boundary import (
    ArresterState,
    CavityTracker,
    opening_schedule,
    valve_node_head,
)
from rulecheck.physics.transient_grid import (
    DEFAULT_MAX_ADJUSTMENT,
    STANDARD_GRAVITY,
    Grid,
    InteriorUpdate,
    build_grid,
    steady_node_heads,
)

__all__ = [
    "ClosingValve",
    "GasArrester",
    "TransientNetwork",
    "TransientPipe",
    "TransientResult",
    "simulate",
]

STANDARD_ATMOSPHERE = 101325.0  # [Pa] [S: ISO 2533]
WATER_DENSITY_20C = 998.2  # [kg/m^3] [S: LSBU water data, 20 °C; engineering-basis §2]
VAPOUR_PRESSURE_20C = 2339.0  # absolute [Pa] [S: IAPWS-IF97, 20 °C; engineering-basis §2]
POLYTROPIC_EXPONENT = 1.2  # [-] [CP: engineering-basis §10]

#: Steady continuity must hold at every node but the roots and the valve within
#: this fraction of the largest pipe flow [D: numerical tolerance].
_CONTINUITY_TOLERANCE = 1e-9


@dataclass(frozen=True)
class TransientPipe:
    """One pipe: ends, geometry, wave speed, quasi-steady Darcy friction, initial flow (SI)."""

    upstream: int  # node index (end nearer the fixed-head root)
    downstream: int  # node index
    length: float  # [m]
    diameter: float  # inside diameter [m]
    wave_speed: float  # [m/s]
    friction_factor: float  # Darcy [-], quasi-steady
    flow: float  # initial steady flow [m^3/s], positive upstream -> downstream


@dataclass(frozen=True)
class ClosingValve:
    """The valve that closes: an orifice to atmosphere at ``node``'s elevation."""

    node: int
    closure_time: float  # [s]; 0 = instantaneous, math.inf = never moves
    law: tuple[tuple[float, float], ...] | None = None  # (t / closure_time, tau); None = linear


@dataclass(frozen=True)
class GasArrester:
    """A sealed gas arrester at a node: polytropic gas p_abs V^n = const behind a piston."""

    node: int
    gas_volume: float  # gas volume at precharge (piston on its stop) [m^3]
    precharge: float  # absolute gas pressure at that volume [Pa]
    polytropic_exponent: float = POLYTROPIC_EXPONENT  # [-] [CP]


@dataclass(frozen=True)
class TransientNetwork:
    """A pipe tree with fixed-head roots, one closing valve and optional arresters (SI)."""

    n_nodes: int
    pipes: tuple[TransientPipe, ...]
    elevation: tuple[float, ...]  # per node [m]
    fixed_heads: dict[int, float]  # node -> constant piezometric head [m]
    valve: ClosingValve
    arresters: tuple[GasArrester, ...] = ()
    density: float = WATER_DENSITY_20C  # [kg/m^3]
    vapour_pressure: float = VAPOUR_PRESSURE_20C  # absolute [Pa]
    atmospheric: float = STANDARD_ATMOSPHERE  # [Pa]


@dataclass(frozen=True)
class TransientResult:
    """Histories and envelopes of one transient run (pressures gauge unless named absolute)."""

    t: np.ndarray  # [s], t[0] = 0 is the steady state
    valve_pressure: np.ndarray  # at the valve node vs t [Pa]
    valve_flow: np.ndarray  # valve outflow vs t [m^3/s]
    node_initial_pressure: np.ndarray  # steady pressure per node [Pa]
    node_max_pressure: np.ndarray  # per node [Pa]
    node_min_pressure: np.ndarray  # per node [Pa]
    pipe_max_pressure: np.ndarray  # per pipe, over all its sections [Pa]
    pipe_min_pressure: np.ndarray  # per pipe, over all its sections [Pa]
    peak_pressure: float  # at the valve node [Pa]
    min_pressure: float  # at the valve node [Pa]
    time_of_peak: float  # [s]
    cavitation: bool  # any vapour cavity formed, at a node or inside a pipe
    cavity_events: tuple[tuple[int, float, float], ...]  # (node, t_formed, t_collapsed or nan)
    pipe_cavity_events: tuple[tuple[int, float, float, float], ...]  # (pipe, x [m], t0, t1|nan)
    max_cavity_volume: float  # largest single cavity [m^3]
    dt: float  # [s]
    max_wave_speed_adjustment: float  # largest |a_adj / a - 1| [-]
    reaches: tuple[int, ...]  # reaches per pipe
    arrester_gas: tuple[np.ndarray, ...]  # per arrester: gas volume vs t [m^3]
    arrester_gas_pressure: tuple[np.ndarray, ...]  # per arrester: absolute gas pressure vs t [Pa]


Monitor = Callable[[float, np.ndarray, np.ndarray], None]


def _validate(net: TransientNetwork) -> None:
    n = net.n_nodes
    if n < 2 or len(net.elevation) != n or not net.pipes:
        raise ValueError("need n_nodes >= 2, one elevation per node and at least one pipe")
    for k, p in enumerate(net.pipes):
        if not (0 <= p.upstream < n and 0 <= p.downstream < n) or p.upstream == p.downstream:
            raise ValueError(f"pipe {k}: bad node indices")
        if not (p.length > 0 and p.diameter > 0 and p.wave_speed > 0 and p.friction_factor >= 0):
            raise ValueError(f"pipe {k}: length, diameter, wave speed must be > 0, friction >= 0")
        if not math.isfinite(p.flow):
            raise ValueError(f"pipe {k}: flow must be finite")
    if not net.fixed_heads or any(not 0 <= i < n for i in net.fixed_heads):
        raise ValueError("need at least one fixed-head node, with a valid index")
    v = net.valve.node
    if not 0 <= v < n or v in net.fixed_heads:
        raise ValueError("the valve node must be a valid node without a fixed head")
    nodes = [a.node for a in net.arresters]
    if len(set(nodes)) != len(nodes) or any(not 0 <= i < n or i in net.fixed_heads for i in nodes):
        raise ValueError("arresters: at most one per node, none at a fixed-head node")
    for a in net.arresters:
        if not (a.gas_volume > 0 and a.precharge > 0 and a.polytropic_exponent > 0):
            raise ValueError("arrester gas volume, precharge and exponent must be > 0")
    if not (net.density > 0 and net.atmospheric > net.vapour_pressure >= 0):
        raise ValueError("need density > 0 and atmospheric > vapour pressure >= 0")


def _steady(
    net: TransientNetwork, grid: Grid, arrays: dict[str, np.ndarray]
) -> tuple[np.ndarray, np.ndarray, np.ndarray, float, float]:
    """Steady node heads, section heads and flows, valve flow and head margin."""
    up, dn, flow = arrays["up"], arrays["dn"], arrays["flow"]
    g = STANDARD_GRAVITY
    area = 0.25 * math.pi * arrays["d"] ** 2
    r_pipe = arrays["f"] * arrays["L"] / (2.0 * g * arrays["d"] * area**2)
    net_in = np.bincount(dn, weights=flow, minlength=net.n_nodes) - np.bincount(
        up, weights=flow, minlength=net.n_nodes
    )
    tol = _CONTINUITY_TOLERANCE * max(float(np.abs(flow).max()), 1e-12)
    check = np.ones(net.n_nodes, dtype=bool)
    check[list(net.fixed_heads)] = False
    check[net.valve.node] = False
    if np.any(np.abs(net_in[check]) > tol):
        bad = np.flatnonzero(check & (np.abs(net_in) > tol)).tolist()
        raise ValueError(f"steady flows violate continuity at nodes {bad}")
    node_h = steady_node_heads(net.n_nodes, up, dn, r_pipe, flow, net.fixed_heads)
    q0 = float(net_in[net.valve.node])
    dh0 = float(node_h[net.valve.node] - net.elevation[net.valve.node])
    if q0 < -tol or (q0 > tol and dh0 <= 0):
        raise ValueError("the valve must discharge (Q0 >= 0) under a positive head")
    sp = grid.sec_pipe
    local = np.arange(grid.n_sections) - grid.offset[sp]
    r_reach = r_pipe / grid.reaches
    sec_h = node_h[up[sp]] - local * (r_reach * flow * np.abs(flow))[sp]
    return node_h, sec_h, flow[sp], max(q0, 0.0), dh0


def simulate(
    network: TransientNetwork,
    duration: float,
    dt: float | None = None,
    progress: Callable[[float], None] | None = None,
    *,
    max_adjustment: float = DEFAULT_MAX_ADJUSTMENT,
    monitor: Monitor | None = None,
) -> TransientResult:
    """Water-hammer transient of a pipe tree by the method of characteristics.

    With B = a / (g A), R = f dx / (2 g D A^2), along dx/dt = +a and -a:

        C+:  H_P = C_P - B Q_P,  C_P = H_A + B Q_A - R Q_A |Q_A|
        C-:  H_P = C_M + B Q_P,  C_M = H_B - B Q_B + R Q_B |Q_B|

    interior sections H_P = (C_P + C_M) / 2, Q_P = (C_P - C_M) / (2B); nodes
    H = (S_C - Q_ext) / S_B (junction continuity, common head; dead end Q_ext = 0);
    roots H = const; valve Q = tau Q0 sqrt((H - z) / dH0) to atmosphere; gas
    arrester p_abs V^n = const; vapour cavities by the DVCM. H = p / (rho g) + z.

    Parameters
    ----------
    network : TransientNetwork
        Pipes, node elevations [m], fixed heads [m], valve, arresters, fluid (SI).
        The initial state is steady: node heads are walked from the roots with
        Darcy–Weisbach losses for the given pipe flows [m^3/s].
    duration : float
        Simulated time [s], > 0.
    dt : float or None
        Time step [s]; None picks dt = min(L/a) / m (see ``choose_time_step``)
        so that no wave speed is adjusted by more than ``max_adjustment``.
    progress : callable or None
        Called with the fraction done [-], at most 100 times.
    max_adjustment : float
        Largest accepted |a_adj / a - 1| when dt is None [-].
    monitor : callable or None
        Debug hook, called every step with (t [s], node heads [m] (n_nodes,),
        pipe-end flows [m^3/s] (2, n_pipes): row 0 upstream ends, row 1
        downstream ends, positive upstream -> downstream). The arrays are
        reused buffers: copy what you keep.

    Returns
    -------
    TransientResult
        Valve pressure and flow histories, node and pipe envelopes [Pa], peak,
        minimum and time of peak at the valve [Pa, Pa, s], cavity events,
        dt [s], reaches and the largest wave-speed adjustment [-], arrester gas
        volumes [m^3] and absolute pressures [Pa].

    Notes
    -----
    Quasi-steady friction (no unsteady friction damping); one-phase liquid
    with vapour cavities only at computational sections (DVCM); the valve
    does not pass backflow; arrester gas cannot expand beyond its precharge
    volume. Run time grows with 1/dt, set by the shortest pipe.

    Examples
    --------
    Frictionless 100 m pipe, a = 1000 m/s, v0 = 0.5 m/s, instantaneous closure:
    the valve pressure jumps by the Joukowsky rho a v0 = 499.1 kPa [S: Massoud,
    Engineering Thermofluids §IIIb.7; Joukowsky]:

    >>> import math
    >>> d = 0.1; q = 0.5 * math.pi * d * d / 4
    >>> net = TransientNetwork(2, (TransientPipe(0, 1, 100.0, d, 1000.0, 0.0, q),),
    ...                        (0.0, 0.0), {0: 100.0}, ClosingValve(1, 0.0))
    >>> r = simulate(net, 0.3)
    >>> round(float(r.peak_pressure - r.node_initial_pressure[1]) / 1e3, 1)
    499.1

    References
    ----------
    1. Wylie & Streeter (1993), chapters 3 and 8 (characteristics, boundaries,
       column separation) [S: engineering-basis §10; M for chapter numbers].
    2. Chaudhry, Applied Hydraulic Transients [S: engineering-basis §10].
    3. Bergant, Simpson & Tijsseling (2006), J. Fluids Struct. 22, 135–171 (DVCM).
    """
    _validate(network)
    if not duration > 0:
        raise ValueError("duration must be > 0")
    g = STANDARD_GRAVITY
    rho_g = network.density * g
    p_atm = network.atmospheric
    pipes = network.pipes
    arrays = {
        "up": np.array([p.upstream for p in pipes], dtype=np.int64),
        "dn": np.array([p.downstream for p in pipes], dtype=np.int64),
        "L": np.array([p.length for p in pipes], dtype=float),
        "d": np.array([p.diameter for p in pipes], dtype=float),
        "a": np.array([p.wave_speed for p in pipes], dtype=float),
        "f": np.array([p.friction_factor for p in pipes], dtype=float),
        "flow": np.array([p.flow for p in pipes], dtype=float),
    }
    elev = np.asarray(network.elevation, dtype=float)
    grid = build_grid(
        arrays["up"],
        arrays["dn"],
        arrays["L"],
        arrays["d"],
        arrays["a"],
        arrays["f"],
        elev,
        dt,
        max_adjustment,
    )
    step = grid.dt
    node_h0, sec_h0, sec_q0, q0, dh0 = _steady(network, grid, arrays)
    n_steps = max(1, math.ceil(duration / step - 1e-9))
    times = np.arange(n_steps + 1) * step
    valve = network.valve
    v_node, zv = valve.node, float(elev[valve.node])
    cv_t = opening_schedule(times, valve.closure_time, valve.law) * (
        q0 / math.sqrt(dh0) if q0 > 0 else 0.0
    )

    n, n_nodes, n_pipes = grid.n_sections, network.n_nodes, len(pipes)
    hv_off = (network.vapour_pressure - p_atm) / rho_g  # vapour head above elevation [m]
    node_hv = elev + hv_off
    node_hv[list(network.fixed_heads)] = -np.inf
    sec_hv = np.where(grid.interior, grid.z + hv_off, -np.inf)
    sec_x = (np.arange(n) - grid.offset[grid.sec_pipe]) * grid.dx[grid.sec_pipe]
    cav = CavityTracker(node_hv, sec_hv, grid.node_SB, grid.B, grid.sec_pipe, sec_x, step)

    arresters: list[ArresterState] = []
    for a in network.arresters:
        const = a.precharge * a.gas_volume**a.polytropic_exponent
        p0 = rho_g * (node_h0[a.node] - elev[a.node]) + p_atm
        on_stop = p0 <= a.precharge
        vol = a.gas_volume if on_stop else (const / p0) ** (1.0 / a.polytropic_exponent)
        arresters.append(
            ArresterState(
                a.node,
                float(elev[a.node]),
                const,
                a.polytropic_exponent,
                a.gas_volume,
                vol,
                0.0,
                on_stop,
            )
        )
        if not on_stop:
            cav.allow_node(a.node, -np.inf)
    arr_at_valve = next((s for s in arresters if s.node == v_node), None)
    gas_rec = np.empty((len(arresters), n_steps + 1))
    gas_rec[:, 0] = [s.volume for s in arresters]

    # State: heads per section; stacked flows (Qu, Qd) and characteristics (CP, CM).
    H = sec_h0.copy()
    Q = np.concatenate((sec_q0, sec_q0))
    Qu, Qd = Q[:n], Q[n:]
    C = np.zeros(2 * n)
    CP, CM = C[:n], C[n:]
    interior = InteriorUpdate(grid, H, Q, C)
    end_cidx, end_qidx, end_sec, end_node = (
        grid.end_cidx,
        grid.end_qidx,
        grid.end_sec,
        grid.end_node,
    )
    end_invB, end_sinvB, node_invSB = grid.end_invB, grid.end_sinvB, grid.node_invSB
    cend, qend, hend = np.empty(2 * n_pipes), np.empty(2 * n_pipes), np.empty(2 * n_pipes)
    Hn = np.empty(n_nodes)
    qend_view = qend.reshape(2, n_pipes)
    fixed_idx = np.array(list(network.fixed_heads), dtype=np.int64)
    fixed_val = np.array(list(network.fixed_heads.values()), dtype=float)
    sb_v = float(grid.node_SB[v_node])
    hmax, hmin = H.copy(), H.copy()
    valve_h = np.empty(n_steps + 1)
    valve_q = np.empty(n_steps + 1)
    valve_h[0], valve_q[0] = node_h0[v_node], q0
    stride = max(1, math.ceil(n_steps / 100))

    for k in range(1, n_steps + 1):
        t = k * step
        interior()  # C+, C- and interior sections (pipe ends are overwritten below)
        # Nodes: H = S_C / S_B, then roots, valve, arresters, cavities.
        C.take(end_cidx, out=cend)
        np.multiply(cend, end_invB, out=qend)
        sc = np.bincount(end_node, weights=qend, minlength=n_nodes)
        np.multiply(sc, node_invSB, out=Hn)
        Hn[fixed_idx] = fixed_val
        cv = float(cv_t[k])
        if arr_at_valve is None:
            Hn[v_node] = valve_node_head(float(sc[v_node]), sb_v, cv, zv)[0]
        for s in arresters:
            if cav.node_vol[s.node] > 0.0:  # a cavity holds the node; the piston is on its stop
                continue
            was = s.on_stop
            sc_a, sb_a = float(sc[s.node]), float(grid.node_SB[s.node])
            if s is arr_at_valve:
                Hn[s.node] = s.step(sc_a, sb_a, step, rho_g, p_atm, cv, zv)
            else:
                Hn[s.node] = s.step(sc_a, sb_a, step, rho_g, p_atm)
            if s.on_stop != was:
                cav.allow_node(s.node, s.z + hv_off if s.on_stop else -np.inf)
        cav.nodes(Hn, sc, t)
        h_v = float(Hn[v_node])
        q_v = cv * math.sqrt(h_v - zv) if h_v > zv else 0.0
        cav.sections(H, Qu, Qd, CP, CM, t)
        # Pipe ends take the node head; their flows follow from the characteristics.
        Hn.take(end_node, out=hend)
        H[end_sec] = hend
        np.subtract(cend, hend, out=qend)
        qend *= end_sinvB
        Q[end_qidx] = qend
        np.maximum(hmax, H, out=hmax)
        np.minimum(hmin, H, out=hmin)
        valve_h[k] = h_v
        valve_q[k] = q_v
        for i, s in enumerate(arresters):
            gas_rec[i, k] = s.volume
        if monitor is not None:
            monitor(t, Hn, qend_view)
        if progress is not None and (k % stride == 0 or k == n_steps):
            progress(k / n_steps)

    return _result(
        network,
        grid,
        elev,
        rho_g,
        times,
        valve_h,
        valve_q,
        node_h0,
        hmax,
        hmin,
        cav,
        arresters,
        gas_rec,
    )


def _result(
    net: TransientNetwork,
    grid: Grid,
    elev: np.ndarray,
    rho_g: float,
    times: np.ndarray,
    valve_h: np.ndarray,
    valve_q: np.ndarray,
    node_h0: np.ndarray,
    hmax: np.ndarray,
    hmin: np.ndarray,
    cav: CavityTracker,
    arresters: list[ArresterState],
    gas_rec: np.ndarray,
) -> TransientResult:
    zv = elev[net.valve.node]
    valve_p = rho_g * (valve_h - zv)
    i_peak = int(np.argmax(valve_p))
    _, first = np.unique(grid.end_node, return_index=True)
    node_sec = grid.end_sec[first]
    sec_pmax = rho_g * (hmax - grid.z)
    sec_pmin = rho_g * (hmin - grid.z)
    node_events = tuple((int(e[0]), float(e[1]), float(e[2])) for e in cav.node_events)
    pipe_events = tuple((int(e[0]), float(e[1]), float(e[2]), float(e[3])) for e in cav.sec_events)
    pressures = tuple(s.constant * gas_rec[i] ** -s.exponent for i, s in enumerate(arresters))
    return TransientResult(
        t=times,
        valve_pressure=valve_p,
        valve_flow=valve_q,
        node_initial_pressure=rho_g * (node_h0 - elev),
        node_max_pressure=sec_pmax[node_sec],
        node_min_pressure=sec_pmin[node_sec],
        pipe_max_pressure=np.maximum.reduceat(sec_pmax, grid.offset),
        pipe_min_pressure=np.minimum.reduceat(sec_pmin, grid.offset),
        peak_pressure=float(valve_p[i_peak]),
        min_pressure=float(valve_p.min()),
        time_of_peak=float(times[i_peak]),
        cavitation=bool(node_events or pipe_events),
        cavity_events=node_events,
        pipe_cavity_events=pipe_events,
        max_cavity_volume=cav.max_volume,
        dt=grid.dt,
        max_wave_speed_adjustment=float(np.abs(grid.adjustment).max()),
        reaches=tuple(int(x) for x in grid.reaches),
        arrester_gas=tuple(gas_rec[i].copy() for i in range(len(arresters))),
        arrester_gas_pressure=pressures,
    )
