"""Why each size: the constraints the next size down would break, and the fixtures no
size can serve (see :mod:`rulecheck.analysis.sizing`)."""

from __future__ import annotations

import math

import numpy as np

from rulecheck.analysis.result import SteadyState
from rulecheck.analysis.sizing_data import (
    _TOL,
    MARGIN,
    Minimum,
    Shortfall,
    _Edge,
    area,
    catalog_order,
    inch_labelled,
    nominal,
    nominal_inches,
)
from rulecheck.input.model import Layout
from rulecheck.physics.constants import STANDARD_GRAVITY
from rulecheck.units import fmt


def find_shortfalls(
    layout: Layout,
    steady: SteadyState,
    need: dict[str, float],
    need_by: dict[str, str],
    hi: dict[str, float],
    roots: list[tuple[str, float]],
    children: dict[str, list[_Edge]],
) -> list[Shortfall]:
    """Fixtures short even with every pipe at its largest candidate, with the path's lift
    and device losses (what a booster, a lower fixture or lower-loss devices must recover)."""
    parent: dict[str, _Edge] = {e.end: e for es in children.values() for e in es}
    z = steady.network.elevation
    devices: dict[str, float] = {}
    for d in layout.devices:
        devices[d.on] = devices.get(d.on, 0.0) + d.loss
    out = []
    for point, required in sorted(need.items()):
        if point not in hi or hi[point] >= required - MARGIN - _TOL:
            continue
        node, losses = point, 0.0
        while node in parent:
            e = parent[node]
            if e.index < 0:
                heater = next(h for h in layout.heaters if h.outlet == node)
                losses += heater.loss
            else:
                losses += devices.get(layout.pipes[e.index].id, 0.0)
            node = e.start
        supply = next(s for s in layout.supplies if s.id == node)
        rho_g = steady.water_for(steady.network.service_of(point) or "cold").density * (
            STANDARD_GRAVITY
        )
        out.append(
            Shortfall(
                need_by[point],
                point,
                required - MARGIN,
                hi[point],
                rho_g * (z[point] - z[node]),
                losses,
                supply.id,
            )
        )
    return out


def binding(
    steady: SteadyState,
    edges: dict[int, _Edge],
    chosen: dict[int, int],
    children: dict[str, list[_Edge]],
    residual: dict[str, float],
    need: dict[str, float],
    need_by: dict[str, str],
    drops: np.ndarray,
    starts: list[int],
    velocity_limit: list[float],
    minimum: dict[str, Minimum],
) -> dict[str, str]:
    """Per sized pipe, every constraint the next size down in its catalog would break."""
    margin = _margins(children, chosen, residual, need, need_by)
    pipes = steady.layout.pipes
    out = {}
    for i, e in edges.items():
        if not e.ordered:
            continue
        pipe = pipes[i]
        labels = catalog_order(pipe)
        k = labels.index(e.labels[chosen.get(id(e), 0)])
        if k == 0:
            out[pipe.id] = "smallest catalog size"
            continue
        smaller = labels[k - 1]
        flow = float(steady.flow[i])
        why = []
        velocity = flow / area(*pipe.material.sizes[smaller])
        if velocity > velocity_limit[i]:
            why.append(
                f"velocity ({smaller} would run at "
                f"{fmt(velocity, 'velocity', steady.layout.units)})"
            )
        rule = minimum.get(pipe.id)
        if rule and inch_labelled(pipe) and (nominal_inches(smaller) or 0.0) < rule.inches - _TOL:
            why.append(rule.reason)
        inch = inch_labelled(pipe)
        for c in children.get(e.end, ()):
            if c.ordered and c.nominal[chosen.get(id(c), 0)] > nominal(pipe, smaller, inch) + _TOL:
                why.append(f"downstream order ({pipes[c.index].id} is {c.labels[chosen[id(c)]]})")
        more = float(drops[starts[i] + k - 1] - drops[starts[i] + k])
        slack, fixture = margin.get(e.end, (math.inf, ""))
        if more > slack:
            why.append(f"pressure at fixture {fixture}")
        out[pipe.id] = "; ".join(why) or "none"
    return out


def _margins(
    children: dict[str, list[_Edge]],
    chosen: dict[int, int],
    residual: dict[str, float],
    need: dict[str, float],
    need_by: dict[str, str],
) -> dict[str, tuple[float, str]]:
    """How far the pressure at each node may fall before a fixture below it falls short,
    and that fixture (a reducing valve holding back pressure gives its surplus first)."""
    margin: dict[str, tuple[float, str]] = {}
    for node in reversed(list(residual)):
        best = (
            (residual[node] - need[node] + MARGIN, need_by[node])
            if node in need
            else (math.inf, "")
        )
        for c in children.get(node, ()):
            below = margin.get(c.end, (math.inf, ""))
            k = chosen.get(id(c), 0)
            surplus = max(0.0, residual[node] - c.loss[k] - c.cap)
            best = min(best, (below[0] + surplus, below[1]))
        margin[node] = best
    return margin
