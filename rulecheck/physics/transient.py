"""Water-hammer transient of a pipe tree by the method of characteristics (pure numpy, no I/O).

One closing valve, constant-head roots, closed dead ends, junctions, sealed gas
arresters and vapour cavities (discrete vapour cavity model). ``simulate`` runs one
network; ``simulate_many`` advances several independent networks in the same
vectorised steps, each on its own dt. Input and output are plain SI dataclasses
(:mod:`rulecheck.physics.transient_network`); the layout adapter lives elsewhere.

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
from collections.abc import Callable, Sequence

import numpy as np

from rulecheck.physics import _moc_compiled as moc_compiled
from rulecheck.physics.transient_boundary import (
    CAVITY_ONSET_TOLERANCE,
    CAVITY_WEIGHT,
    GAS_SERIES_STEP,
    NEWTON_TOLERANCE,
    NEWTON_TURNS,
    ORIFICE_FLOOR,
    CavityTracker,
    opening_schedule,
    valve_heads,
)
from rulecheck.physics.transient_grid import (
    DEFAULT_MAX_ADJUSTMENT,
    InteriorUpdate,
    build_grid,
    choose_time_step,
)
from rulecheck.physics.transient_network import (
    POLYTROPIC_EXPONENT,
    STANDARD_ATMOSPHERE,
    VAPOUR_PRESSURE_20C,
    WATER_DENSITY_20C,
    ClosingValve,
    GasArrester,
    TransientNetwork,
    TransientPipe,
    TransientResult,
    validate_network,
)
from rulecheck.physics.transient_stack import NetworkStack, RunRecord

__all__ = [
    "POLYTROPIC_EXPONENT",
    "STANDARD_ATMOSPHERE",
    "VAPOUR_PRESSURE_20C",
    "WATER_DENSITY_20C",
    "ClosingValve",
    "GasArrester",
    "TransientNetwork",
    "TransientPipe",
    "TransientResult",
    "simulate",
    "simulate_many",
    "start_step_loop",
    "step_loop",
]

Monitor = Callable[[float, np.ndarray, np.ndarray], None]


def step_loop() -> str:
    """Which step loop runs the simulations: the compiled C kernel or the numpy loop.

    The kernel (``moc_kernel.c``, the numpy loop of ``_run`` in C) is built with the
    system C compiler at the first call and cached per user; without a compiler the
    numpy loop runs, with the same results. Call it before forking workers so that
    they share one build.

    Returns
    -------
    str
        'compiled C', or 'numpy (reason)' [-].

    References
    ----------
    1. ``rulecheck/physics/moc_kernel.c``; ``tests/test_moc_compiled.py`` ties it to the
       numpy loop [D].
    """
    return moc_compiled.engine()


def start_step_loop() -> None:
    """Start building the compiled step loop in the background, if it is not cached yet.

    The C compiler then runs on another core while the caller reads and screens the
    layout; :func:`step_loop` (or the first simulation) collects the build. Without a
    compiler, or with ``RULECHECK_KERNEL=numpy``, nothing happens.

    Returns
    -------
    None
        Nothing; the build's outcome is :func:`step_loop`'s [-].

    References
    ----------
    1. ``rulecheck/native.py`` (the build and its cache) [D].
    """
    moc_compiled.start()


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
    return _run([network], [duration], [dt], progress, max_adjustment, monitor)[0]


def simulate_many(
    networks: Sequence[TransientNetwork],
    durations: Sequence[float],
    dts: Sequence[float | None] | None = None,
    progress: Callable[[float], None] | None = None,
    *,
    max_adjustment: float = DEFAULT_MAX_ADJUSTMENT,
) -> list[TransientResult]:
    """Water-hammer transients of several independent pipe trees by the method of characteristics.

    The same method as :func:`simulate`, with the networks' sections, nodes,
    valves and arresters stacked into one set of arrays: every time step is one
    pass of vectorised updates over all of them, so many small networks cost
    little more per step than one. Each network keeps its own dt, grid,
    duration and fluid; network i advances by dt_i per step, and nothing is
    recorded for it after its own duration, so each result equals (to
    round-off) that of :func:`simulate` on the network alone.

    Parameters
    ----------
    networks : sequence of TransientNetwork
        Independent networks: pipes, node elevations [m], fixed heads [m],
        valve, arresters, fluid (SI), each as for :func:`simulate`.
    durations : sequence of float
        Simulated time per network [s], > 0.
    dts : sequence of float or None, or None
        Time step per network [s]; None (or a None entry) chooses one as
        :func:`simulate` does.
    progress : callable or None
        Called with the fraction of steps done [-], at most 100 times.
    max_adjustment : float
        Largest accepted |a_adj / a - 1| where dt is chosen [-].

    Returns
    -------
    list of TransientResult
        One per network, in order, as :func:`simulate` returns it: histories
        over the network's own times [s], pressures [Pa], flows [m^3/s].

    Notes
    -----
    The run takes as many steps as the network that needs most: group
    networks of similar step counts (duration / dt) to waste little.

    Examples
    --------
    Two frictionless pipes (a = 1000 m/s, v0 = 0.5 m/s and 1 m/s), closed at
    once: Joukowsky rises rho a v0 of 499.1 and 998.2 kPa [S: Joukowsky]:

    >>> import math
    >>> d = 0.1; area = math.pi * d * d / 4
    >>> nets = [TransientNetwork(2, (TransientPipe(0, 1, 100.0, d, 1000.0, 0.0, v * area),),
    ...                          (0.0, 0.0), {0: 100.0}, ClosingValve(1, 0.0))
    ...         for v in (0.5, 1.0)]
    >>> [round(float(r.peak_pressure - r.node_initial_pressure[1]) / 1e3, 1)
    ...  for r in simulate_many(nets, [0.3, 0.3])]
    [499.1, 998.2]

    References
    ----------
    1. Wylie & Streeter (1993), chapters 3 and 8 [S: engineering-basis §10].
    """
    if len(durations) != len(networks) or (dts is not None and len(dts) != len(networks)):
        raise ValueError("need one duration (and one dt, when given) per network")
    return _run(networks, durations, dts, progress, max_adjustment, None)


def _run(
    networks: Sequence[TransientNetwork],
    durations: Sequence[float],
    dts: Sequence[float | None] | None,
    progress: Callable[[float], None] | None,
    max_adjustment: float,
    monitor: Monitor | None,
) -> list[TransientResult]:
    if not networks:
        return []
    for network in networks:
        validate_network(network)
    if not all(d > 0 for d in durations):
        raise ValueError("duration must be > 0")
    stack = NetworkStack.of(networks)
    arrays, pipe_off = stack.arrays, stack.pipe_off
    travel = arrays["L"] / arrays["a"]
    step = np.array(
        [
            dt
            if dt is not None
            else choose_time_step(travel[pipe_off[i] : pipe_off[i + 1]], max_adjustment)[0]
            for i, dt in enumerate(dts or [None] * len(networks))
        ]
    )
    grid = build_grid(
        arrays["up"],
        arrays["dn"],
        arrays["L"],
        arrays["d"],
        arrays["a"],
        arrays["f"],
        stack.elev,
        step[stack.pipe_net],
    )
    node_h0, sec_h0, sec_q0, q0, dh0 = stack.steady(grid)
    n_steps = np.array(
        [max(1, math.ceil(d / s - 1e-9)) for d, s in zip(durations, step, strict=True)]
    )
    last = int(n_steps.max())
    ks = np.arange(last + 1)
    cv0 = np.where(q0 > 0, q0 / np.sqrt(np.where(q0 > 0, dh0, 1.0)), 0.0)
    cv_t = np.stack(
        [
            opening_schedule(ks * step[i], net.valve.closure_time, net.valve.law) * cv0[i]
            for i, net in enumerate(networks)
        ],
        axis=1,
    )  # (steps + 1, networks): row k is every valve's Cv at step k

    n, n_nodes, n_pipes = grid.n_sections, stack.elev.size, arrays["up"].size
    elev, node_net, sec_net = stack.elev, stack.node_net, stack.pipe_net[grid.sec_pipe]
    node_hv = elev + stack.hv_off[node_net]
    node_hv[list(stack.fixed)] = -np.inf
    sec_hv = np.where(grid.interior, grid.z + stack.hv_off[sec_net], -np.inf)
    sec_x = (np.arange(n) - grid.offset[grid.sec_pipe]) * grid.dx[grid.sec_pipe]
    sec_end = n_steps[sec_net]
    cav = CavityTracker(
        node_hv,
        sec_hv,
        grid.node_SB,
        grid.B,
        grid.sec_pipe,
        sec_x,
        step[node_net],
        step[sec_net],
        n_steps[node_net],
        sec_end,
    )
    bank, arr_net = stack.arresters(node_h0, step)
    v_nodes, zv = stack.valve_node, elev[stack.valve_node]
    bare = np.ones(len(networks), dtype=bool)  # valves without an arrester at their node
    if bank is not None:
        bare[bank.valve[bank.valve >= 0]] = False
        cav.allow_node(bank.node[~bank.on_stop], -np.inf)  # the gas holds those nodes up
        arr_all = np.arange(bank.node.size)
        arr_sb = grid.node_SB[bank.node]
        arr_at_valve = bank.valve >= 0
        arr_zv = np.where(arr_at_valve, zv[bank.valve], 0.0)
        arr_hv = bank.z + stack.hv_off[arr_net]
        gas_rec = np.empty((last + 1, bank.node.size))
        gas_rec[0] = bank.volume
    bare_idx = np.flatnonzero(bare)
    bare_nodes, bare_sb, bare_zv = v_nodes[bare_idx], grid.node_SB[v_nodes[bare_idx]], zv[bare_idx]

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
    fixed_idx = np.array(list(stack.fixed), dtype=np.int64)
    fixed_val = np.array(list(stack.fixed.values()), dtype=float)
    hmax, hmin = H.copy(), H.copy()
    valve_h = np.empty((last + 1, len(networks)))
    valve_q = np.empty((last + 1, len(networks)))
    valve_h[0], valve_q[0] = node_h0[v_nodes], q0
    recording = np.ones(n, dtype=bool)  # sections whose network has not reached its end
    all_recording, next_end = True, int(n_steps.min())
    stride = max(1, math.ceil(last / 100))
    kernel = moc_compiled.load() if monitor is None else None
    if bank is None:
        gas_rec = np.empty((last + 1, 0))
    if kernel is not None:  # the same steps as the loop below, in C
        moc_compiled.run_steps(
            kernel,
            {
                "H": H,
                "Q": Q,
                "C": C,
                "b2": interior.b2,
                "r2": interior.r2,
                "inv2b": grid.inv2B,
                "end_cidx": end_cidx,
                "end_qidx": end_qidx,
                "end_sec": end_sec,
                "end_node": end_node,
                "end_invb": end_invB,
                "end_sinvb": end_sinvB,
                "node_invsb": node_invSB,
                "cend": cend,
                "sc": np.empty(n_nodes),
                "Hn": Hn,
                "fixed_idx": fixed_idx,
                "fixed_val": fixed_val,
                "cv_t": cv_t,
                "bare_idx": bare_idx,
                "bare_node": bare_nodes,
                "bare_sb": bare_sb,
                "bare_zv": bare_zv,
                "v_nodes": v_nodes,
                "zv": zv,
                "hmax": hmax,
                "hmin": hmin,
                "net_end": n_steps,
                "net_sec": np.append(grid.offset, n)[stack.pipe_off],
                "net_pipe": stack.pipe_off,
                "net_node": stack.node_off,
                "a_net": arr_net,
                "runs": np.zeros(2 * len(networks), dtype=np.int64),
                "valve_h": valve_h,
                "valve_q": valve_q,
                "gas": gas_rec,
                "node_sb": cav.node_sb,
                "sec_invb": cav.sec_invb,
                **moc_compiled.arrester_slots(bank, *((arr_sb, arr_zv, arr_hv) if bank else ())),
            },
            {
                "n": n,
                "n_nodes": n_nodes,
                "n_ends": end_sec.size,
                "n_nets": len(networks),
                "n_fixed": fixed_idx.size,
                "n_bare": bare_idx.size,
                "n_arr": bank.node.size if bank else 0,
                "turns": NEWTON_TURNS,
            },
            (
                CAVITY_WEIGHT,
                NEWTON_TOLERANCE,
                CAVITY_ONSET_TOLERANCE,
                ORIFICE_FLOOR,
                GAS_SERIES_STEP,
            ),
            (cav.at_nodes, cav.in_pipes),
            last,
            progress,
        )
    numpy_steps = range(1, last + 1) if kernel is None else range(0)  # else: the kernel ran them
    for k in numpy_steps:
        interior()  # C+, C- and interior sections (pipe ends are overwritten below)
        # Nodes: H = S_C / S_B, then roots, valves, arresters, cavities.
        C.take(end_cidx, out=cend)
        np.multiply(cend, end_invB, out=qend)
        sc = np.bincount(end_node, weights=qend, minlength=n_nodes)
        np.multiply(sc, node_invSB, out=Hn)
        Hn[fixed_idx] = fixed_val
        cv = cv_t[k]
        if bare_idx.size:
            Hn[bare_nodes] = valve_heads(sc[bare_nodes], bare_sb, cv[bare_idx], bare_zv)[0]
        if bank is not None:
            # a cavity holding an arrester's node keeps its piston on the stop
            free = cav.at_nodes.vol[bank.node] <= 0.0
            i = arr_all if free.all() else arr_all[free]
            at = bank.node[i]
            heads, changed = bank.step(
                sc[at], arr_sb[i], np.where(arr_at_valve[i], cv[bank.valve[i]], 0.0), arr_zv[i], i
            )
            Hn[at] = heads
            if changed.any():
                j = i[changed]
                cav.allow_node(bank.node[j], np.where(bank.on_stop[j], arr_hv[j], -np.inf))
        cav.nodes(Hn, sc, k)
        h_v = Hn[v_nodes]
        q_v = cv * np.sqrt(np.maximum(h_v - zv, 0.0))
        cav.sections(H, Qu, Qd, CP, CM, k)
        # Pipe ends take the node head; their flows follow from the characteristics.
        Hn.take(end_node, out=hend)
        H[end_sec] = hend
        np.subtract(cend, hend, out=qend)
        qend *= end_sinvB
        Q[end_qidx] = qend
        if k > next_end:  # some networks have ended: keep their envelopes as they were
            recording = sec_end >= k
            all_recording = False
            later = n_steps[n_steps >= k]
            next_end = int(later.min()) if later.size else last
        if all_recording:
            np.maximum(hmax, H, out=hmax)
            np.minimum(hmin, H, out=hmin)
        else:
            np.maximum(hmax, H, out=hmax, where=recording)
            np.minimum(hmin, H, out=hmin, where=recording)
        valve_h[k] = h_v
        valve_q[k] = q_v
        if bank is not None:
            gas_rec[k] = bank.volume
        if monitor is not None:
            monitor(k * float(step[0]), Hn, qend_view)
        if progress is not None and (k % stride == 0 or k == last):
            progress(k / last)
    record = RunRecord(
        step=step,
        n_steps=n_steps,
        node_h0=node_h0,
        valve_h=valve_h,
        valve_q=valve_q,
        hmax=hmax,
        hmin=hmin,
        cav=cav,
        bank=bank,
        arr_net=arr_net,
        gas=gas_rec if bank is not None else None,
    )
    return stack.split(grid, record)
