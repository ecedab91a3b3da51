"""Steady hydraulics of a layout: demand flow, velocity, friction, static and residual pressure.

Method per engineering-basis §3–5: water-supply fixture units accumulate down
each tree (cold pipes count a fixture's total WSFU where they serve both of its
sides through a heater), Hunter's curve turns them into flow, Darcy–Weisbach
with Colebrook–White gives the friction, and pressures are carried from each
root outward with elevation, devices and the heater.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from rulecheck.model import Fixture, Layout
from rulecheck.network import Network, Tree
from rulecheck.physics.demand import demand_flow, flushometer_column, hunter_table
from rulecheck.physics.friction import darcy_pressure_drop
from rulecheck.physics.surge import STANDARD_ATMOSPHERE
from rulecheck.physics.water import WaterProperties, water_properties
from rulecheck.profiles import Profile, get_profile

G = 9.80665  # standard gravity [m/s²] [S: CGPM 1901]


@dataclass
class Analysis:
    """Everything the rules read; arrays are indexed like ``layout.pipes``."""

    layout: Layout
    network: Network
    profile: Profile
    water: dict[str, WaterProperties]
    wsfu: np.ndarray  # fixture units carried [WSFU]
    fixtures_served: np.ndarray  # count of fixtures downstream [-]
    flow: np.ndarray  # design flow [m³/s]
    velocity: np.ndarray  # [m/s]
    friction_drop: np.ndarray  # friction pressure drop incl. fittings allowance [Pa]
    # demand curve (engineering-basis §3.2): the project's setting, each pipe's share of
    # fixture units on flushometer valves [-] and whether it reads the flushometer column
    demand_curve: str = "auto"
    flushometer_share: np.ndarray = field(default_factory=lambda: np.zeros(0))
    flushometer_column: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    static_max: dict[str, float] = field(default_factory=dict)  # per node, gauge [Pa]
    static_min: dict[str, float] = field(default_factory=dict)  # both floored at p_v − p_atm
    # points where the static column cannot stand (static min at the vapour pressure: the
    # supply cannot lift water there at rest, the column separates)
    static_separated: set[str] = field(default_factory=set)
    # pressure left at design flow [Pa]: static min less lift, friction and device losses.
    # Below zero it is not a pressure but a shortfall: the design flow cannot be delivered.
    residual: dict[str, float] = field(default_factory=dict)
    surge: Any = None  # rulecheck.surge_analysis.SurgeAnalysis, filled in by the pipeline

    def water_for(self, service: str) -> WaterProperties:
        return self.water["cold" if service == "cold" else "hot"]

    def fixture_residual(self, fixture: Fixture) -> tuple[float, str]:
        """The lower residual pressure of the fixture's sides and which side it is."""
        sides = [
            (self.residual[p], s)
            for s, p in (("cold", fixture.cold), ("hot", fixture.hot))
            if p is not None and p in self.residual
        ]
        return min(sides)


def analyse(layout: Layout, network: Network) -> Analysis:
    """Run the steady analysis of one layout."""
    profile = get_profile(layout.profile)
    water = {
        "cold": water_properties(layout.cold_temperature),
        "hot": water_properties(layout.hot_temperature),
    }
    n = len(layout.pipes)
    wsfu, served, largest, flush_units, continuous = _accumulate(layout, network)
    flush = flushometer_column(flush_units, wsfu, layout.demand_curve)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(wsfu > 0, flush_units / np.where(wsfu > 0, wsfu, 1.0), 0.0)
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
    result = Analysis(
        layout,
        network,
        profile,
        water,
        wsfu,
        served,
        flow,
        flow / area if n else np.zeros(0),
        drop,
        demand_curve=layout.demand_curve,
        flushometer_share=np.clip(share, 0.0, 1.0),
        flushometer_column=flush & (wsfu >= _first_flushometer_row()),
    )
    _pressures(result)
    return result


def _accumulate(layout: Layout, network: Network) -> tuple[np.ndarray, ...]:
    """Fixture units, fixture count, largest fixture flow, fixture units on flushometer
    valves and continuous flow carried by each pipe, by deposits at nodes summed over
    subtrees."""
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
            deposit("cold", fx.cold, fx.wsfu.cold, 1, fx)
        if fx.hot:
            deposit("hot", fx.hot, fx.wsfu.hot, 1, fx)
            if inlet is not None:
                deposit("cold", inlet, fx.wsfu.hot, 1, fx)
        if fx.cold and inlet is not None and cold.root_of.get(fx.cold) == cold.root_of.get(inlet):
            meet = _meeting_point(cold, network, fx.cold, inlet)
            deposit("cold", meet, fx.wsfu.total - fx.wsfu.cold - fx.wsfu.hot, -1, fx)

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


def _pressures(result: Analysis) -> None:
    """Static max/min and residual pressure at every node, root outward (§4).

    The static pressures are carried as head balances and then floored at the vapour
    pressure of that service (gauge p_v − p_atm): below it the water column separates.
    """
    layout, network = result.layout, result.network
    devices: dict[str, list] = {}
    for device in layout.devices:
        devices.setdefault(device.on, []).append(device)
    smax: dict[str, float] = {}
    smin: dict[str, float] = {}
    res = result.residual
    z = network.elevation
    for supply in layout.supplies:
        smax[supply.id], smin[supply.id] = supply.pressure_max, supply.pressure_min
        res[supply.id] = supply.pressure_min
    for service in ("cold", "hot"):
        tree = network.trees[service]
        rho_g = result.water[service].density * G
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
            flowing = res[pipe.start] - lift - result.friction_drop[index]
            for device in devices.get(pipe.id, ()):
                flowing -= device.loss
                if device.kind == "pressure-reducing" and device.set_pressure is not None:
                    hi, lo = min(hi, device.set_pressure), min(lo, device.set_pressure)
                    flowing = min(flowing, device.set_pressure)
            smax[node], smin[node], res[node] = hi, lo, flowing
    _floor_static(result, smax, smin)


def _floor_static(result: Analysis, smax: dict[str, float], smin: dict[str, float]) -> None:
    """Static pressures as water can hold them: never below p_v − p_atm (gauge)."""
    service_of = result.network.service_of
    for node in smax:
        service = "hot" if service_of(node) == "hot" else "cold"
        floor = result.water[service].vapour_pressure - STANDARD_ATMOSPHERE
        result.static_max[node] = max(smax[node], floor)
        result.static_min[node] = max(smin[node], floor)
        if smin[node] < floor:
            result.static_separated.add(node)
