"""Pipe sizing: the least material whose sizes meet velocity, pressure, code minimum and order.

The problem (docs/sizing.md). Every pipe of the cold and hot trees gets one size of its own
material. Design flows do not depend on the sizes (Hunter's curve reads fixture units), so
each (pipe, size) has one friction drop, computed with the analysis's own Darcy–Weisbach
(:func:`rulecheck.physics.friction.darcy_pressure_drop`, same fittings allowance, water
properties and inner diameter as :mod:`rulecheck.analysis.steady`). A size is a candidate
when it keeps the velocity under the pipe's limit and is not below the code minimum;
sizes never grow downstream (nominal size of a pipe at most that of the pipe feeding it,
common practice); a ``keep_size`` pipe has its size as its only candidate (and the order
is not asked across it). The cost is Σ length × outside diameter (material, a proxy for
price). Every fixture needs its minimum flow pressure at its point.

The method is exact: a dynamic programme over the tree (the hot tree hangs from its
heater's inlet, through the heater's loss and lift). For every pipe and candidate size it
keeps the Pareto frontier of (pressure needed at the pipe's upstream end, cost of the pipe
and everything below it). Frontiers merge at a junction (need = the larger, cost = the
sum); a point that needs more than the node can get with every pipe above at its largest
is dropped, and of the points that need no more than the node gets with every pipe above
at its smallest only the cheapest is kept (both exact). The sizes are then read top-down:
each pipe takes the cheapest point its actual pressure affords.
"""

from __future__ import annotations

import math
from bisect import bisect_right

import numpy as np

from rulecheck.analysis.result import SteadyState
from rulecheck.analysis.sizing_data import (
    _TOL,
    MARGIN,
    Change,
    Front,
    Minimum,
    SizingResult,
    TooFast,
    _Edge,
    area,
    catalog_order,
    inch_labelled,
    nominal,
    nominal_inches,
    sized_layout,
)
from rulecheck.analysis.sizing_why import binding, find_shortfalls
from rulecheck.analysis.steady import device_effect
from rulecheck.input.model import Pipe
from rulecheck.physics.constants import STANDARD_GRAVITY
from rulecheck.physics.friction import darcy_pressure_drop

__all__ = [
    "Minimum",
    "SizingResult",
    "catalog_order",
    "inch_labelled",
    "nominal_inches",
    "size_pipes",
    "sized_layout",
]


def size_pipes(
    steady: SteadyState,
    velocity_limit: list[float],
    minimum: dict[str, Minimum],
) -> SizingResult:
    """The least-material sizes of ``steady.layout`` (see the module text).

    ``velocity_limit[i]``: pipe i's limit [m/s] (the velocity-limit rule's, with the
    configuration's overrides); ``minimum``: code minimum per pipe id.
    """
    layout, network = steady.layout, steady.network
    pipes = layout.pipes
    order = [label for p in pipes for label in catalog_order(p)]
    owner = [i for i, p in enumerate(pipes) for _ in p.material.sizes]
    drops = _drops(steady, order, owner)
    z = network.elevation
    rho_g = {s: steady.water_for(s).density * STANDARD_GRAVITY for s in ("cold", "hot")}
    devices: dict[str, list] = {}
    for device in layout.devices:
        devices.setdefault(device.on, []).append(device)
    children: dict[str, list[_Edge]] = {}
    edges: dict[int, _Edge] = {}
    too_fast: list[TooFast] = []
    reasons: dict[str, str] = {}
    offset = 0
    starts = []
    for p in pipes:
        starts.append(offset)
        offset += len(p.material.sizes)
    for service in ("cold", "hot"):
        tree = network.trees[service]
        for node, i in tree.parent.items():
            pipe = pipes[i]
            labels = catalog_order(pipe)
            drop = drops[starts[i] : starts[i] + len(labels)]
            lift = rho_g[service] * (z[node] - z[pipe.start])
            loss, cap = device_effect(devices.get(pipe.id, ()))
            flow = float(steady.flow[i])
            keep = pipe.keep_size or (flow <= 0.0 and int(steady.fixtures_served[i]) == 0)
            if keep:
                chosen = [labels.index(pipe.size)]
                reasons[pipe.id] = (
                    "kept (keep_size)" if pipe.keep_size else "kept: carries no design flow"
                )
            else:
                chosen = _candidates(pipe, labels, flow, velocity_limit[i], minimum.get(pipe.id))
                if not chosen:
                    big = pipe.material.sizes[labels[-1]]
                    too_fast.append(
                        TooFast(pipe.id, flow, labels[-1], flow / area(*big), velocity_limit[i])
                    )
                    chosen = [len(labels) - 1]
            inch = inch_labelled(pipe)
            edge = _Edge(
                i,
                pipe.start,
                node,
                [labels[k] for k in chosen],
                [nominal(pipe, labels[k], inch) for k in chosen],
                [lift + float(drop[k]) + loss for k in chosen],
                [pipe.length * pipe.material.sizes[labels[k]][0] for k in chosen],
                cap,
                not keep,
            )
            edges[i] = edge
            children.setdefault(pipe.start, []).append(edge)
    for heater in layout.heaters:
        lift = rho_g["hot"] * (z[heater.outlet] - z[heater.inlet])
        edge = _Edge(
            -1,
            heater.inlet,
            heater.outlet,
            [""],
            [0.0],
            [lift + heater.loss],
            [0.0],
            math.inf,
            False,
        )
        children.setdefault(heater.inlet, []).append(edge)
    need: dict[str, float] = {}
    need_by: dict[str, str] = {}
    for fx in layout.fixtures:
        for point in (fx.cold, fx.hot):
            if point is not None and fx.min_pressure + MARGIN > need.get(point, -math.inf):
                need[point], need_by[point] = fx.min_pressure + MARGIN, fx.id
    roots = [(s.id, s.pressure_min) for s in layout.supplies]
    topo = _topological(roots, children)
    lo, hi = _bounds(roots, topo, children)
    _solve(topo, children, need, lo, hi)
    chosen_k = _read_off(roots, children)
    sizes = {p.id: p.size for p in pipes}
    for i, edge in edges.items():
        sizes[pipes[i].id] = edge.labels[chosen_k.get(id(edge), 0)]
    shortfalls = find_shortfalls(layout, steady, need, need_by, hi, roots, children)
    notes: list[str] = []
    unsolved = len(chosen_k) < len(edges) + len(layout.heaters) and not shortfalls and not too_fast
    if unsolved:
        notes.append(
            "no combination of sizes meets the pressures with the order of sizes and the "
            "kept sizes; lift a keep_size or check the fixtures' minimum pressures"
        )
    residual = _forward(roots, topo, children, chosen_k)
    if not shortfalls and not too_fast and not notes:
        reasons.update(
            binding(
                steady,
                edges,
                chosen_k,
                children,
                residual,
                need,
                need_by,
                drops,
                starts,
                velocity_limit,
                minimum,
            )
        )
    changes = tuple(
        Change(p.id, p.size, sizes[p.id], reasons.get(p.id, ""))
        for p in pipes
        if sizes[p.id] != p.size
    )
    return SizingResult(
        sizes=sizes,
        reasons=reasons,
        changes=changes,
        material_before=sum(p.length * p.outside_diameter for p in pipes),
        material_after=sum(p.length * p.material.sizes[sizes[p.id]][0] for p in pipes),
        shortfalls=tuple(shortfalls),
        too_fast=tuple(too_fast),
        notes=tuple(notes),
        residual=residual,
        unsolved=unsolved,
    )


def _drops(steady: SteadyState, labels: list[str], owner: list[int]) -> np.ndarray:
    """Friction drop of every (pipe, size) at the pipe's design flow [Pa], by the analysis's
    own Darcy–Weisbach with the same equivalent length and water properties."""
    pipes = steady.layout.pipes
    if not labels:
        return np.zeros(0)
    own = [pipes[i] for i in owner]
    dims = [p.material.sizes[label] for p, label in zip(own, labels, strict=True)]
    water = [steady.water_for(p.service) for p in own]
    return np.asarray(
        darcy_pressure_drop(
            np.array([float(steady.flow[i]) for i in owner]),
            np.array([od - 2.0 * wall for od, wall in dims]),
            np.array([p.length + p.fittings_length for p in own]),
            np.array([p.material.roughness for p in own]),
            np.array([w.density for w in water]),
            np.array([w.viscosity for w in water]),
        ),
        dtype=float,
    )


def _candidates(
    pipe: Pipe, labels: list[str], flow: float, limit: float, minimum: Minimum | None
) -> list[int]:
    """Indices of the sizes that meet the velocity limit and the code minimum."""
    inch = inch_labelled(pipe)
    found = []
    for k, label in enumerate(labels):
        if flow / area(*pipe.material.sizes[label]) > limit:
            continue
        if minimum is not None and inch and (nominal_inches(label) or 0.0) < minimum.inches - _TOL:
            continue
        found.append(k)
    return found


def _topological(roots: list[tuple[str, float]], children: dict[str, list[_Edge]]) -> list[str]:
    """Nodes reachable from the supplies, parents first (iterative: trees can be deep)."""
    out: list[str] = []
    stack = [r for r, _ in reversed(roots)]
    while stack:
        node = stack.pop()
        out.append(node)
        stack.extend(e.end for e in reversed(children.get(node, ())))
    return out


def _bounds(
    roots: list[tuple[str, float]], topo: list[str], children: dict[str, list[_Edge]]
) -> tuple[dict[str, float], dict[str, float]]:
    """Residual at every node with every pipe at its smallest (lo) and largest (hi) candidate."""
    lo = dict(roots)
    hi = dict(roots)
    for node in topo:
        for e in children.get(node, ()):
            lo[e.end] = min(lo[node] - e.loss[0], e.cap)
            hi[e.end] = min(hi[node] - e.loss[-1], e.cap)
    return lo, hi


def _prune(points: list[tuple[float, float, int]], lo: float, hi: float) -> Front:
    """The Pareto frontier of (need, cost) points: needs above ``hi`` cannot be met, and of
    the needs at or below ``lo`` (always met) only the cheapest matters."""
    points.sort()
    reqs: list[float] = []
    costs: list[float] = []
    tags: list[int] = []
    for req, cost, tag in points:
        if req > hi + _TOL:
            break
        if costs and cost >= costs[-1] - 1e-15:
            continue
        if reqs and req <= lo and reqs[-1] <= lo:
            reqs[-1], costs[-1], tags[-1] = req, cost, tag
            continue
        reqs.append(req)
        costs.append(cost)
        tags.append(tag)
    return reqs, costs, tags


def _merge(fronts: list[Front], need: float, lo: float, hi: float) -> Front:
    """Frontier at a node: the larger need of its children (and its own fixtures), the sum
    of their costs."""
    if not fronts:
        return _prune([(need, 0.0, -1)], lo, hi)
    if any(not f[0] for f in fronts):
        return [], [], []
    if len(fronts) == 1:
        reqs, costs, _ = fronts[0]
        return _prune([(max(r, need), c, -1) for r, c in zip(reqs, costs, strict=True)], lo, hi)
    events = sorted((r, c, j) for c, f in enumerate(fronts) for j, r in enumerate(f[0]))
    current: list[float | None] = [None] * len(fronts)
    have, total = 0, 0.0
    points = []
    for r, c, j in events:
        cost = fronts[c][1][j]
        if current[c] is None:
            have += 1
            total += cost
        else:
            total += cost - current[c]  # type: ignore[operator]
        current[c] = cost
        if have == len(fronts):
            points.append((max(r, need), math.fsum(x for x in current if x is not None), -1))
    return _prune(points, lo, hi)


def _compatible(edge: _Edge | None, k: int, child: _Edge) -> int:
    """The last size index of ``child`` its parent ``edge`` at size ``k`` allows."""
    if edge is None or not (edge.ordered and child.ordered):
        return len(child.labels) - 1
    return bisect_right(child.nominal, edge.nominal[k] + _TOL) - 1


def _node_front(
    node: str,
    edge: _Edge | None,
    k: int,
    children: dict[str, list[_Edge]],
    need: dict[str, float],
    lo: dict[str, float],
    hi: dict[str, float],
    cache: dict[tuple[int, ...], Front],
) -> Front:
    kids = children.get(node, ())
    key = tuple(_compatible(edge, k, c) for c in kids)
    if key in cache:
        return cache[key]
    if any(j < 0 for j in key):
        front: Front = ([], [], [])
    else:
        front = _merge(
            [c.prefix[j] for c, j in zip(kids, key, strict=True)],
            need.get(node, -math.inf),
            lo[node],
            hi[node],
        )
    cache[key] = front
    return front


def _solve(
    topo: list[str],
    children: dict[str, list[_Edge]],
    need: dict[str, float],
    lo: dict[str, float],
    hi: dict[str, float],
) -> None:
    """Fill every edge's prefix frontiers, leaves first."""
    for node in reversed(topo):
        for e in children.get(node, ()):
            cache: dict[tuple[int, ...], Front] = {}
            prefix: list[Front] = []
            points: list[tuple[float, float, int]] = []
            for k in range(len(e.labels)):
                reqs, costs, _ = _node_front(e.end, e, k, children, need, lo, hi, cache)
                for r, c in zip(reqs, costs, strict=True):
                    if r <= e.cap + _TOL:
                        points.append((r + e.loss[k], c + e.cost[k], k))
                front = _prune(list(points), lo[e.start], hi[e.start])
                prefix.append(front)
                points = [(r, c, t) for r, c, t in zip(*front, strict=True)]
            e.prefix = prefix


def _read_off(roots: list[tuple[str, float]], children: dict[str, list[_Edge]]) -> dict[int, int]:
    """Top-down: each edge takes the cheapest frontier point its actual pressure affords."""
    chosen: dict[int, int] = {}
    stack: list[tuple[str, float, _Edge | None, int]] = [(r, p, None, 0) for r, p in roots]
    while stack:
        node, x, edge, k = stack.pop()
        for c in children.get(node, ()):
            j = _compatible(edge, k, c)
            if j < 0:
                continue
            reqs, _, tags = c.prefix[j]
            i = bisect_right(reqs, x + _TOL) - 1
            if i < 0:
                continue
            kc = tags[i]
            chosen[id(c)] = kc
            stack.append((c.end, min(x - c.loss[kc], c.cap), c, kc))
    return chosen


def _forward(
    roots: list[tuple[str, float]],
    topo: list[str],
    children: dict[str, list[_Edge]],
    chosen: dict[int, int],
) -> dict[str, float]:
    res = dict(roots)
    for node in topo:
        for e in children.get(node, ()):
            k = chosen.get(id(e), len(e.labels) - 1)
            res[e.end] = min(res[node] - e.loss[k], e.cap)
    return res
