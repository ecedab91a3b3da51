"""Steady hydraulics of a layout: demand flow, velocity, friction, static and residual pressure.

Method per engineering-basis §3–5: water-supply fixture units accumulate down
each tree (cold pipes count a fixture's total WSFU where they serve both of its
sides through a heater), Hunter's curve turns them into flow, Darcy–Weisbach
with Colebrook–White gives the friction, and pressures are carried from each
root outward with elevation, devices and the heater.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from rulecheck.analysis.result import SteadyState, frozen_array, frozen_map
from rulecheck.input.model import Device, Fixture, Layout
from rulecheck.input.network import Network, Tree
from rulecheck.input.profiles import get_profile
from rulecheck.physics.constants import STANDARD_ATMOSPHERE, STANDARD_GRAVITY
from rulecheck.physics.demand import (
    demand_flow,
    flushometer_column,
    hunter_table,
    loading_unit_flow,
)
from rulecheck.physics.friction import darcy_pressure_drop
from rulecheck.physics.water import WaterProperties, water_properties


def steady_state(layout: Layout, network: Network) -> SteadyState:
    """The steady hydraulics of one layout (engineering-basis §3–5)."""
    profile = get_profile(layout.profile)
    water = {
        "cold": water_properties(layout.cold_temperature),
        "hot": water_properties(layout.hot_temperature),
    }
    n = len(layout.pipes)
    wsfu, served, largest, flush_units, continuous = _accumulate(layout, network)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(wsfu > 0, flush_units / np.where(wsfu > 0, wsfu, 1.0), 0.0)
    if profile.demand_method == "loading-units":  # EN 806-3: LU, no flushometer column
        flush = np.zeros(n, dtype=bool)
        flow = np.asarray(loading_unit_flow(wsfu), dtype=float)
    else:
        flush = flushometer_column(flush_units, wsfu, layout.demand_curve)
        flow = np.asarray(demand_flow(wsfu, flush), dtype=float)
    flow = np.where(served == 1, largest, np.maximum(flow, largest))
    flow = np.where(served == 0, 0.0, flow) + continuous
    for i, pipe in enumerate(layout.pipes):
        if pipe.demand is not None:
            flow[i] = pipe.demand
        elif pipe.service == "hot-return":
            flow[i] = 0.0
    area = np.array([p.area for p in layout.pipes]) if n else np.zeros(0)
    diameter = np.array([p.inner_diameter for p in layout.pipes]) if n else np.zeros(0)
    props = [water["cold" if p.service == "cold" else "hot"] for p in layout.pipes]
    drop = (
        np.asarray(
            darcy_pressure_drop(
                flow,
                diameter,
                np.array([p.length + p.fittings_length for p in layout.pipes]),
                np.array([p.material.roughness for p in layout.pipes]),
                np.array([w.density for w in props]),
                np.array([w.viscosity for w in props]),
            ),
            dtype=float,
        )
        if n
        else np.zeros(0)
    )
    velocity = flow / area if n else np.zeros(0)
    static_max, static_min, separated, residual = _pressures(layout, network, water, drop)
    return SteadyState(
        layout=layout,
        network=network,
        profile=profile,
        water=frozen_map(water),
        wsfu=frozen_array(wsfu),
        fixtures_served=frozen_array(served, int),
        flow=frozen_array(flow),
        velocity=frozen_array(velocity),
        friction_drop=frozen_array(drop),
        demand_curve=layout.demand_curve,
        flushometer_share=frozen_array(np.clip(share, 0.0, 1.0)),
        flushometer_column=frozen_array(flush & (wsfu >= _first_flushometer_row()), bool),
        static_max=frozen_map(static_max),
        static_min=frozen_map(static_min),
        static_separated=frozenset(separated),
        residual=frozen_map(residual),
    )


def _accumulate(layout: Layout, network: Network) -> tuple[np.ndarray, ...]:
    """Fixture units (the profile's: WSFU or LU), fixture count, largest fixture flow,
    fixture units on flushometer valves and continuous flow carried by each pipe, by
    deposits at nodes summed over subtrees."""
    n = len(layout.pipes)
    wsfu, served = np.zeros(n), np.zeros(n, dtype=int)
    largest, flush, continuous = np.zeros(n), np.zeros(n), np.zeros(n)
    cold, hot = network.trees["cold"], network.trees["hot"]
    inlet_of = {h.outlet: h.inlet for h in layout.heaters}
    deposits: dict[str, dict[str, list[float]]] = {"cold": {}, "hot": {}}

    def deposit(service: str, node: str, units: float, count: int, fx: Fixture) -> None:
        slot = deposits[service].setdefault(node, [0.0, 0, 0.0, 0.0, 0.0])
        if fx.continuous:
            slot[4] += fx.flow * count
            return
        slot[0] += units
        slot[1] += count
        slot[2] = max(slot[2], fx.flow)
        if fx.type.flushometer:
            slot[3] += units

    for fx in layout.fixtures:
        inlet = inlet_of.get(hot.root_of.get(fx.hot, "")) if fx.hot else None
        if fx.cold:
            deposit("cold", fx.cold, fx.units.cold, 1, fx)
        if fx.hot:
            deposit("hot", fx.hot, fx.units.hot, 1, fx)
            if inlet is not None:
                deposit("cold", inlet, fx.units.hot, 1, fx)
        if fx.cold and inlet is not None and cold.root_of.get(fx.cold) == cold.root_of.get(inlet):
            meet = _meeting_point(cold, network, fx.cold, inlet)
            deposit("cold", meet, fx.units.total - fx.units.cold - fx.units.hot, -1, fx)

    for service, tree in network.trees.items():
        totals = {node: list(slot) for node, slot in deposits[service].items()}
        for node in reversed(tree.order):
            index = tree.parent.get(node)
            if index is None:
                continue
            slot = totals.get(node, [0.0, 0, 0.0, 0.0, 0.0])
            wsfu[index], served[index], largest[index] = slot[0], slot[1], slot[2]
            flush[index], continuous[index] = slot[3], slot[4]
            up = totals.setdefault(layout.pipes[index].start, [0.0, 0, 0.0, 0.0, 0.0])
            up[0] += slot[0]
            up[1] += slot[1]
            up[2] = max(up[2], slot[2])
            up[3] += slot[3]
            up[4] += slot[4]
    return np.maximum(wsfu, 0.0), served, largest, np.maximum(flush, 0.0), continuous


def _first_flushometer_row() -> float:
    """WSFU of the flushometer column's first row (5): below it the tank column is read."""
    table = hunter_table()
    return float(table.wsfu[~np.isnan(table.flushometer)][0])


def _meeting_point(tree: Tree, network: Network, a: str, b: str) -> str:
    """Lowest common ancestor of nodes ``a`` and ``b`` in ``tree``."""
    pipes = network.pipes
    while tree.depth[a] > tree.depth[b]:
        a = pipes[tree.parent[a]].start
    while tree.depth[b] > tree.depth[a]:
        b = pipes[tree.parent[b]].start
    while a != b:
        a, b = pipes[tree.parent[a]].start, pipes[tree.parent[b]].start
    return a


def device_effect(devices: Sequence[Device]) -> tuple[float, float]:
    """What a pipe's inline devices, in their order, do to the flowing pressure:
    ``p_out = min(p_in − loss, cap)`` [Pa] (each device takes its loss; a reducing valve
    caps what passes at its set pressure, less the losses of the devices after it)."""
    loss, cap = 0.0, math.inf
    for device in devices:
        loss += device.loss
        cap -= device.loss
        if device.kind == "pressure-reducing" and device.set_pressure is not None:
            cap = min(cap, device.set_pressure)
    return loss, cap


Pressures = tuple[dict[str, float], dict[str, float], set[str], dict[str, float]]


def _pressures(
    layout: Layout, network: Network, water: dict[str, WaterProperties], friction: np.ndarray
) -> Pressures:
    """Static max/min and residual pressure at every node, root outward (§4), and the
    points whose static column cannot stand.

    The static pressures are carried as head balances and then floored at the vapour
    pressure of that service (gauge p_v − p_atm): below it the water column separates.
    """
    devices: dict[str, list] = {}
    for device in layout.devices:
        devices.setdefault(device.on, []).append(device)
    smax: dict[str, float] = {}
    smin: dict[str, float] = {}
    res: dict[str, float] = {}
    z = network.elevation
    for supply in layout.supplies:
        smax[supply.id], smin[supply.id] = supply.pressure_max, supply.pressure_min
        res[supply.id] = supply.pressure_min
    for service in ("cold", "hot"):
        tree = network.trees[service]
        rho_g = water[service].density * STANDARD_GRAVITY
        for node in tree.order:
            index = tree.parent.get(node)
            if index is None:
                heater = network.heater_at_outlet.get(node)
                if heater is None or heater.inlet not in smax:
                    continue
                lift = rho_g * (z[node] - z[heater.inlet])
                smax[node] = smax[heater.inlet] - lift
                smin[node] = smin[heater.inlet] - lift
                res[node] = res[heater.inlet] - lift - heater.loss
                continue
            pipe = layout.pipes[index]
            lift = rho_g * (z[node] - z[pipe.start])
            hi, lo = smax[pipe.start] - lift, smin[pipe.start] - lift
            on_pipe = devices.get(pipe.id, ())
            for device in on_pipe:
                if device.kind == "pressure-reducing" and device.set_pressure is not None:
                    hi, lo = min(hi, device.set_pressure), min(lo, device.set_pressure)
            loss, cap = device_effect(on_pipe)
            smax[node], smin[node] = hi, lo
            res[node] = min(res[pipe.start] - lift - friction[index] - loss, cap)
    return (*_floor_static(network, water, smax, smin), res)


def _floor_static(
    network: Network,
    water: dict[str, WaterProperties],
    smax: dict[str, float],
    smin: dict[str, float],
) -> tuple[dict[str, float], dict[str, float], set[str]]:
    """Static pressures as water can hold them: never below p_v − p_atm (gauge)."""
    floored_max, floored_min, separated = {}, {}, set()
    for node in smax:
        service = "hot" if network.service_of(node) == "hot" else "cold"
        floor = water[service].vapour_pressure - STANDARD_ATMOSPHERE
        floored_max[node] = max(smax[node], floor)
        floored_min[node] = max(smin[node], floor)
        if smin[node] < floor:
            separated.add(node)
    return floored_max, floored_min, separated
