"""Several independent transient networks held as one: stacked arrays in, one result each out.

Helpers of :mod:`rulecheck.physics.transient`. Nodes and pipes of network i
keep their order and are shifted by the sizes of the networks before it, so a
run of one network uses the indices the caller gave.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from rulecheck.physics.constants import STANDARD_GRAVITY
from rulecheck.physics.transient_boundary import ArresterBank, CavityTracker
from rulecheck.physics.transient_grid import Grid, steady_node_heads
from rulecheck.physics.transient_network import TransientNetwork, TransientResult

#: Steady continuity must hold at every node but the roots and the valve within
#: this fraction of the network's largest pipe flow [D: numerical tolerance].
_CONTINUITY_TOLERANCE = 1e-9


@dataclass
class NetworkStack:
    """Several networks as one: per-pipe, per-node and per-network arrays (combined indices)."""

    networks: Sequence[TransientNetwork]
    node_off: np.ndarray  # first combined node of each network, then the total
    pipe_off: np.ndarray  # first combined pipe of each network, then the total
    node_net: np.ndarray  # network of each combined node
    pipe_net: np.ndarray  # network of each combined pipe
    arrays: dict[str, np.ndarray]  # up, dn, L, d, a, f, flow per combined pipe
    elev: np.ndarray  # per combined node [m]
    fixed: dict[int, float]  # combined node -> head [m]
    valve_node: np.ndarray  # combined valve node of each network
    rho_g: np.ndarray  # per network [N/m^3]
    p_atm: np.ndarray  # per network [Pa]
    hv_off: np.ndarray  # vapour head above elevation, per network [m]

    @classmethod
    def of(cls, networks: Sequence[TransientNetwork]) -> NetworkStack:
        sizes = np.array([net.n_nodes for net in networks], dtype=np.int64)
        counts = np.array([len(net.pipes) for net in networks], dtype=np.int64)
        node_off = np.concatenate(([0], np.cumsum(sizes)))
        pipe_off = np.concatenate(([0], np.cumsum(counts)))
        pipes = [(p, int(node_off[i])) for i, net in enumerate(networks) for p in net.pipes]
        arrays = {
            "up": np.array([p.upstream + o for p, o in pipes], dtype=np.int64),
            "dn": np.array([p.downstream + o for p, o in pipes], dtype=np.int64),
            "L": np.array([p.length for p, _ in pipes], dtype=float),
            "d": np.array([p.diameter for p, _ in pipes], dtype=float),
            "a": np.array([p.wave_speed for p, _ in pipes], dtype=float),
            "f": np.array([p.friction_factor for p, _ in pipes], dtype=float),
            "flow": np.array([p.flow for p, _ in pipes], dtype=float),
        }
        rho_g = np.array([net.density * STANDARD_GRAVITY for net in networks])
        p_atm = np.array([net.atmospheric for net in networks])
        p_vap = np.array([net.vapour_pressure for net in networks])
        return cls(
            networks=networks,
            node_off=node_off,
            pipe_off=pipe_off,
            node_net=np.repeat(np.arange(len(networks)), sizes),
            pipe_net=np.repeat(np.arange(len(networks)), counts),
            arrays=arrays,
            elev=np.concatenate([np.asarray(net.elevation, dtype=float) for net in networks]),
            fixed={
                int(node_off[i]) + n: h
                for i, net in enumerate(networks)
                for n, h in net.fixed_heads.items()
            },
            valve_node=np.array([net.valve.node for net in networks]) + node_off[:-1],
            rho_g=rho_g,
            p_atm=p_atm,
            hv_off=(p_vap - p_atm) / rho_g,
        )

    def local(self, nodes: np.ndarray) -> str:
        """Combined node indices as the user numbered them (with the network when several)."""
        if len(self.networks) == 1:
            return str(nodes.tolist())
        net = self.node_net[nodes]
        return str([(int(i), int(n - self.node_off[i])) for i, n in zip(net, nodes, strict=True)])

    def steady(
        self, grid: Grid
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Steady node heads, section heads and flows, valve flows and head margins."""
        arrays, n_nodes = self.arrays, self.elev.size
        up, dn, flow = arrays["up"], arrays["dn"], arrays["flow"]
        g = STANDARD_GRAVITY
        area = 0.25 * math.pi * arrays["d"] ** 2
        r_pipe = arrays["f"] * arrays["L"] / (2.0 * g * arrays["d"] * area**2)
        net_in = np.bincount(dn, weights=flow, minlength=n_nodes) - np.bincount(
            up, weights=flow, minlength=n_nodes
        )
        largest = np.maximum(np.maximum.reduceat(np.abs(flow), self.pipe_off[:-1]), 1e-12)
        tol = _CONTINUITY_TOLERANCE * largest[self.node_net]
        check = np.ones(n_nodes, dtype=bool)
        check[list(self.fixed)] = False
        check[self.valve_node] = False
        bad = np.flatnonzero(check & (np.abs(net_in) > tol))
        if bad.size:
            raise ValueError(f"steady flows violate continuity at nodes {self.local(bad)}")
        node_h = steady_node_heads(n_nodes, up, dn, r_pipe, flow, self.fixed)
        v = self.valve_node
        q0, dh0 = net_in[v], node_h[v] - self.elev[v]
        if np.any((q0 < -tol[v]) | ((q0 > tol[v]) & (dh0 <= 0))):
            raise ValueError("the valve must discharge (Q0 >= 0) under a positive head")
        sp = grid.sec_pipe
        local = np.arange(grid.n_sections) - grid.offset[sp]
        r_reach = r_pipe / grid.reaches
        sec_h = node_h[up[sp]] - local * (r_reach * flow * np.abs(flow))[sp]
        return node_h, sec_h, flow[sp], np.maximum(q0, 0.0), dh0

    def arresters(
        self, node_h0: np.ndarray, step: np.ndarray
    ) -> tuple[ArresterBank | None, np.ndarray]:
        """The arresters of all networks as one bank, and the network of each."""
        found = [
            (i, a, int(self.node_off[i]) + a.node)
            for i, net in enumerate(self.networks)
            for a in net.arresters
        ]
        if not found:
            return None, np.zeros(0, dtype=np.int64)
        net = np.array([i for i, _, _ in found], dtype=np.int64)
        node = np.array([n for _, _, n in found], dtype=np.int64)
        gas = np.array([a.gas_volume for _, a, _ in found])
        stop = np.array([a.stop for _, a, _ in found], dtype=bool)
        precharge = np.array([a.precharge for _, a, _ in found])
        n = np.array([a.polytropic_exponent for _, a, _ in found])
        const = precharge * gas**n
        p0 = self.rho_g[net] * (node_h0[node] - self.elev[node]) + self.p_atm[net]
        on_stop = stop & (p0 <= precharge)
        if np.any(~on_stop & (p0 <= 0.0)):
            raise ValueError("an arrester's node starts at an absolute pressure <= 0")
        volume = np.where(on_stop, gas, (const / np.where(on_stop, precharge, p0)) ** (1.0 / n))
        bank = ArresterBank(
            node=node,
            z=self.elev[node],
            constant=const,
            exponent=n,
            v_max=np.where(stop, gas, np.inf),
            volume=volume,
            on_stop=on_stop,
            dt=step[net],
            rho_g=self.rho_g[net],
            p_atm=self.p_atm[net],
            valve=np.where(self.valve_node[net] == node, net, -1),
        )
        return bank, net

    def split(self, grid: Grid, record: RunRecord) -> list[TransientResult]:
        """Split the stacked histories and envelopes back into one result per network."""
        elev, node_off, pipe_off = self.elev, self.node_off, self.pipe_off
        step, n_steps, cav, bank = record.step, record.n_steps, record.cav, record.bank
        valve_h, valve_q, arr_net, gas_rec = (
            record.valve_h,
            record.valve_q,
            record.arr_net,
            record.gas,
        )
        sec_rho_g = self.rho_g[self.pipe_net[grid.sec_pipe]]
        sec_pmax = sec_rho_g * (record.hmax - grid.z)
        sec_pmin = sec_rho_g * (record.hmin - grid.z)
        _, first = np.unique(grid.end_node, return_index=True)
        node_sec = grid.end_sec[first]
        node_pmax, node_pmin = sec_pmax[node_sec], sec_pmin[node_sec]
        pipe_pmax = np.maximum.reduceat(sec_pmax, grid.offset)
        pipe_pmin = np.minimum.reduceat(sec_pmin, grid.offset)
        node_events: list[list[tuple[int, float, float]]] = [[] for _ in self.networks]
        for node, t0, t1 in cav.at_nodes.events:
            i = int(self.node_net[int(node)])
            node_events[i].append((int(node) - int(node_off[i]), float(t0), float(t1)))
        pipe_events: list[list[tuple[int, float, float, float]]] = [[] for _ in self.networks]
        for pipe, x, t0, t1 in cav.in_pipes.events:
            i = int(self.pipe_net[int(pipe)])
            pipe_events[i].append((int(pipe) - int(pipe_off[i]), float(x), float(t0), float(t1)))
        sec_off = np.append(grid.offset, grid.n_sections)[pipe_off]
        # per-network figures in one pass each (reduceat over each network's slice)
        largest_at = np.maximum(
            np.maximum.reduceat(cav.at_nodes.largest, node_off[:-1]),
            np.maximum.reduceat(cav.in_pipes.largest, sec_off[:-1]),
        ).tolist()
        adjustment = np.maximum.reduceat(np.abs(grid.adjustment), pipe_off[:-1]).tolist()
        reaches = grid.reaches.tolist()
        arresters_of: list[list[int]] = [[] for _ in self.networks]
        for j, i in enumerate(arr_net.tolist()):
            arresters_of[i].append(j)
        laws = (
            list(zip(bank.constant.tolist(), bank.exponent.tolist(), strict=True))
            if bank is not None
            else []
        )
        results = []
        for i in range(len(self.networks)):
            n, nodes, pipes = (
                int(n_steps[i]),
                slice(node_off[i], node_off[i + 1]),
                slice(pipe_off[i], pipe_off[i + 1]),
            )
            rho_g, v = float(self.rho_g[i]), int(self.valve_node[i])
            valve_p = rho_g * (valve_h[: n + 1, i] - elev[v])
            times = np.arange(n + 1) * step[i]
            i_peak = int(np.argmax(valve_p))
            gas: tuple[np.ndarray, ...] = ()
            law: tuple[tuple[float, float], ...] = ()
            mine = arresters_of[i]
            if mine and gas_rec is not None:
                gas = tuple(np.ascontiguousarray(gas_rec[: n + 1, mine].T))
                law = tuple(laws[j] for j in mine)
            results.append(
                TransientResult(
                    t=times,
                    valve_pressure=valve_p,
                    valve_flow=valve_q[: n + 1, i].copy(),
                    node_initial_pressure=rho_g * (record.node_h0[nodes] - elev[nodes]),
                    node_max_pressure=node_pmax[nodes].copy(),
                    node_min_pressure=node_pmin[nodes].copy(),
                    pipe_max_pressure=pipe_pmax[pipes].copy(),
                    pipe_min_pressure=pipe_pmin[pipes].copy(),
                    peak_pressure=float(valve_p[i_peak]),
                    min_pressure=float(valve_p.min()),
                    time_of_peak=float(times[i_peak]),
                    cavitation=bool(node_events[i] or pipe_events[i]),
                    cavity_events=tuple(node_events[i]),
                    pipe_cavity_events=tuple(pipe_events[i]),
                    max_cavity_volume=largest_at[i],
                    dt=float(step[i]),
                    max_wave_speed_adjustment=adjustment[i],
                    reaches=tuple(reaches[pipe_off[i] : pipe_off[i + 1]]),
                    arrester_gas=gas,
                    arrester_gas_law=law,
                )
            )
        return results


@dataclass
class RunRecord:
    """What a stacked run records (combined indices; histories are (steps + 1, ...) arrays)."""

    step: np.ndarray  # dt per network [s]
    n_steps: np.ndarray  # steps per network
    node_h0: np.ndarray  # steady node heads [m]
    valve_h: np.ndarray  # valve node head per step and network [m]
    valve_q: np.ndarray  # valve outflow per step and network [m^3/s]
    hmax: np.ndarray  # largest head per section [m]
    hmin: np.ndarray  # smallest head per section [m]
    cav: CavityTracker
    bank: ArresterBank | None
    arr_net: np.ndarray  # network of each arrester
    gas: np.ndarray | None  # gas volume per step and arrester [m^3]
