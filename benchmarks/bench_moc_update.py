"""Micro-benchmark: vectorised MOC interior update vs a plain-Python loop of the same update.

Builds a random pipe tree of about ``--reaches`` reaches (copper-like wave
speed, building-scale lengths), then times, for ``--steps`` time steps:

- ``numpy``: :class:`rulecheck.physics.transient_grid.InteriorUpdate`, the
  update that :func:`rulecheck.physics.transient.simulate` calls every step;
- ``python``: the same C+/C- and interior formulas as a plain loop over
  sections on Python lists (written here only, for comparison);
- ``simulate``: a whole run of ``simulate`` on the same tree (valve closing at
  a leaf), for the cost of a full step with junctions, valve and cavity checks.

Node-updates per second = sections updated x steps / seconds. Wall-clock
figures depend on the machine; this is a script, not a test.

Run::

    python benchmarks/bench_moc_update.py --reaches 1000 --steps 2000 --repeat 3 --closure 0.05
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np

from rulecheck.physics.transient import (
    ClosingValve,
    TransientNetwork,
    TransientPipe,
    simulate,
)
from rulecheck.physics.transient_grid import Grid, InteriorUpdate, build_grid


def random_tree(
    n_pipes: int, seed: int, head: float = 40.0, closure: float = 0.0
) -> TransientNetwork:
    """A random tree: node 0 is the root (fixed head), each new node hangs off an earlier one."""
    rng = np.random.default_rng(seed)
    parent = [int(rng.integers(0, max(1, i))) for i in range(1, n_pipes + 1)]
    lengths = rng.uniform(1.0, 8.0, n_pipes)
    diameters = rng.choice([0.0134, 0.0198, 0.0261, 0.0326], n_pipes)  # copper-L-like [m]
    speeds = rng.uniform(1250.0, 1350.0, n_pipes)
    children = {p for p in parent}
    leaves = [i for i in range(1, n_pipes + 1) if i not in children]
    valve_node = leaves[-1]
    # Flow only on the path root -> valve.
    on_path = set()
    node = valve_node
    while node != 0:
        on_path.add(node - 1)  # pipe index = child node - 1
        node = parent[node - 1]
    q = 0.25e-3  # [m^3/s]
    pipes = tuple(
        TransientPipe(
            parent[k],
            k + 1,
            float(lengths[k]),
            float(diameters[k]),
            float(speeds[k]),
            0.025,
            q if k in on_path else 0.0,
        )
        for k in range(n_pipes)
    )
    return TransientNetwork(
        n_nodes=n_pipes + 1,
        pipes=pipes,
        elevation=tuple(0.0 for _ in range(n_pipes + 1)),
        fixed_heads={0: head},
        valve=ClosingValve(valve_node, closure),
    )


def grid_of(net: TransientNetwork, dt: float) -> Grid:
    """The solver's grid of ``net`` for time step ``dt`` [s]."""
    p = net.pipes
    return build_grid(
        np.array([x.upstream for x in p], dtype=np.int64),
        np.array([x.downstream for x in p], dtype=np.int64),
        np.array([x.length for x in p]),
        np.array([x.diameter for x in p]),
        np.array([x.wave_speed for x in p]),
        np.array([x.friction_factor for x in p]),
        np.asarray(net.elevation, dtype=float),
        dt,
    )


def python_update(
    h: list[float],
    qu: list[float],
    qd: list[float],
    cp: list[float],
    cm: list[float],
    bp: list[float],
    rp: list[float],
    bm: list[float],
    rm: list[float],
    inv2b: list[float],
) -> None:
    """The same update as InteriorUpdate, one section at a time (plain Python)."""
    n = len(h)
    for s in range(1, n):
        q = qd[s - 1]
        cp[s] = h[s - 1] + q * (bp[s - 1] - rp[s - 1] * abs(q))
    for s in range(n - 1):
        q = qu[s + 1]
        cm[s] = h[s + 1] - q * (bm[s] - rm[s] * abs(q))
    for s in range(n):
        h[s] = 0.5 * (cp[s] + cm[s])
        qu[s] = (cp[s] - cm[s]) * inv2b[s]
        qd[s] = qu[s]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--reaches", type=int, default=1000, help="target reaches (default 1000)")
    ap.add_argument("--steps", type=int, default=2000, help="time steps timed (default 2000)")
    ap.add_argument("--repeat", type=int, default=3, help="best of N (default 3)")
    ap.add_argument("--closure", type=float, default=0.05, help="valve closure time [s]")
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()

    n_pipes = max(2, args.reaches // 10)
    net = random_tree(n_pipes, args.seed, closure=args.closure)
    tmin = min(p.length / p.wave_speed for p in net.pipes)
    total_tt = sum(p.length / p.wave_speed for p in net.pipes)
    dt = total_tt / args.reaches  # about `reaches` reaches in all
    dt = min(dt, tmin)
    grid = grid_of(net, dt)
    n = grid.n_sections
    rng = np.random.default_rng(args.seed)
    h0 = 40.0 + rng.normal(0.0, 1.0, n)
    q0 = rng.normal(0.0, 1e-4, n)

    def fresh() -> tuple[np.ndarray, ...]:
        return h0.copy(), np.concatenate((q0, q0)), np.zeros(2 * n)

    rows = []
    best = math.inf
    for _ in range(args.repeat):
        h, q, c = fresh()
        upd = InteriorUpdate(grid, h, q, c)
        t0 = time.perf_counter()
        for _ in range(args.steps):
            upd()
        best = min(best, time.perf_counter() - t0)
    h_np = h.copy()
    rows.append(("numpy (InteriorUpdate)", best))

    best = math.inf
    lists = [
        grid.Bp.tolist(),
        grid.Rp.tolist(),
        grid.Bm.tolist(),
        grid.Rm.tolist(),
        grid.inv2B.tolist(),
    ]
    for _ in range(args.repeat):
        h_a, q_a, c_a = fresh()
        h, qu, qd = h_a.tolist(), q_a[:n].tolist(), q_a[n:].tolist()
        cp, cm = c_a[:n].tolist(), c_a[n:].tolist()
        t0 = time.perf_counter()
        for _ in range(args.steps):
            python_update(h, qu, qd, cp, cm, *lists)
        best = min(best, time.perf_counter() - t0)
    rows.append(("python loop", best))
    diff = float(np.max(np.abs(np.array(h) - h_np)))

    duration = args.steps * dt
    best = math.inf
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        res = simulate(net, duration, dt=dt)
        best = min(best, time.perf_counter() - t0)
    rows.append(("simulate (full step)", best))

    print(
        f"tree: {n_pipes} pipes, {int(grid.reaches.sum())} reaches, {n} sections, "
        f"dt = {dt * 1e3:.4f} ms, {args.steps} steps, best of {args.repeat}"
    )
    print(f"max |H numpy - H python| after {args.steps} steps: {diff:.2e} m")
    print(
        f"simulate: {len(res.t) - 1} steps, valve closing in {args.closure} s, "
        f"peak at valve {res.peak_pressure / 1e3:.0f} kPa, cavitation {res.cavitation}"
    )
    print(f"{'update':<24}{'seconds':>10}{'us/step':>10}{'node-updates/s':>16}{'speed-up':>10}")
    ref = rows[1][1]
    for name, sec in rows:
        print(
            f"{name:<24}{sec:>10.3f}{sec / args.steps * 1e6:>10.1f}"
            f"{n * args.steps / sec:>16.3e}{ref / sec:>10.1f}"
        )


if __name__ == "__main__":
    main()
