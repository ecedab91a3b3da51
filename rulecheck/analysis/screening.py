"""Water-hammer screening of every fixture valve, per side (engineering-basis §6–8).

For each fixture side: the path to its service root, the wave speed of each
pipe, the critical time Σ2L/a, the surge (Joukowsky, or Michaud capped at
Joukowsky for slower closure), peak and minimum pressure, column separation,
the minimum safe closure time, and which sealed arrester (if any) protects it.
Arrester service (which arrester serves which fixtures' WSFU) is worked out
here too, so the rules only compare numbers.
"""

from __future__ import annotations

import heapq
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from rulecheck.analysis.result import (
    SteadyState,
    SurgeScreening,
    ValveEvent,
    frozen_array,
    frozen_map,
)
from rulecheck.input.model import Arrester, Fixture
from rulecheck.physics.constants import STANDARD_ATMOSPHERE
from rulecheck.physics.surge import (
    closure_time_for_limit,
    column_separates,
    screening_minimum,
)
from rulecheck.physics.surge_paths import path_surges
from rulecheck.physics.wavespeed import wave_speed


def pipe_ratings(analysis: SteadyState) -> dict[str, float]:
    """Allowable working pressure of every pipe at its own service temperature [Pa]."""
    layout = analysis.layout
    return {p.id: p.rating_at(layout.temperature(p.service)) for p in layout.pipes}


def pipe_peaks_on_path(
    analysis: SteadyState, path: tuple[int, ...], surge: float, cap: float | None
) -> MappingProxyType[str, float]:
    """Screening peak in each pipe of a valve's path [Pa gauge].

    Each pipe gets the higher static maximum of its two ends plus the full surge at the
    valve, capped at ``cap`` (the design limit, when an arrester protects the valve) [D].
    Conservative: the wave is taken not to weaken where it passes into a larger pipe or a
    junction (a transmission factor below one there), nor by friction.
    """
    layout, static = analysis.layout, analysis.static_max
    peaks = {}
    for k in path:
        pipe = layout.pipes[k]
        peak = max(static[pipe.start], static[pipe.end]) + surge
        peaks[pipe.id] = min(peak, cap) if cap is not None else peak
    return MappingProxyType(peaks)


def pipes_over_rating(event: ValveEvent, ratings: Mapping[str, float]) -> list[tuple[str, float]]:
    """The pipes whose own peak exceeds their own rating: (pipe id, peak), the largest
    ratio of peak to rating first (then by id, for a stable order)."""
    over = [(pid, peak) for pid, peak in event.pipe_peaks.items() if peak > ratings[pid]]
    return sorted(over, key=lambda item: (-item[1] / ratings[item[0]], item[0]))


def pipe_wave_speeds(analysis: SteadyState) -> np.ndarray:
    """Korteweg–Halliwell wave speed of each pipe at its service temperature (one
    vectorised call per kind of anchoring)."""
    layout = analysis.layout
    pipes = layout.pipes
    water = [analysis.water_for(p.service) for p in pipes]
    columns = (
        [w.bulk_modulus for w in water],
        [w.density for w in water],
        [p.material.modulus_at(layout.temperature(p.service), p.size) for p in pipes],
        [p.material.poisson for p in pipes],
        [p.inner_diameter for p in pipes],
        [p.wall for p in pipes],
    )
    values = [np.array(c, dtype=float) for c in columns]
    anchoring = np.array([p.anchoring for p in pipes], dtype=object)
    speeds = np.zeros(len(pipes))
    for kind in sorted(set(anchoring.tolist())):
        sel = anchoring == kind
        k, rho, modulus, poisson, inner, wall = (v[sel] for v in values)
        speeds[sel] = wave_speed(k, rho, modulus, poisson, inner, wall, kind)
    return frozen_array(speeds)


def _adjacency(analysis: SteadyState, service: str) -> dict[str, list[tuple[str, float]]]:
    tree = analysis.network.trees[service]
    adjacent: dict[str, list[tuple[str, float]]] = {}
    for node, index in tree.parent.items():
        pipe = analysis.layout.pipes[index]
        adjacent.setdefault(node, []).append((pipe.start, pipe.length))
        adjacent.setdefault(pipe.start, []).append((node, pipe.length))
    return adjacent


def arresters_within(analysis: SteadyState, reach: float) -> dict[tuple[str, str], list]:
    """For every (point, service): the arresters within ``reach`` of pipe path, nearest first.

    A bounded Dijkstra from each arrester over its service tree (developed lengths).
    """
    found: dict[tuple[str, str], list[tuple[float, str]]] = {}
    network = analysis.network
    for service in ("cold", "hot"):
        adjacent = _adjacency(analysis, service)
        for arrester in analysis.layout.arresters:
            if network.service_of(arrester.at) != service:
                continue
            best = {arrester.at: 0.0}
            queue = [(0.0, arrester.at)]
            while queue:
                dist, node = heapq.heappop(queue)
                if dist > best.get(node, np.inf):
                    continue
                found.setdefault((node, service), []).append((dist, arrester.id))
                for other, length in adjacent.get(node, ()):
                    step = dist + length
                    if step <= reach + 1e-9 and step < best.get(other, np.inf):
                        best[other] = step
                        heapq.heappush(queue, (step, other))
    for entries in found.values():
        entries.sort()
    return found


def screen_surges(analysis: SteadyState) -> SurgeScreening:
    """Screen every fixture valve of the layout, per side.

    Two passes: the first finds each side's path, protector and the per-pipe figures of
    its path; the formulas then run once over all paths (``physics.surge_paths``, bit for
    bit the per-path functions of ``physics.surge``); the second builds the events.
    """
    layout, profile = analysis.layout, analysis.profile
    speeds = pipe_wave_speeds(analysis)
    speed_of = speeds.tolist()
    area_of = [pipe.area for pipe in layout.pipes]
    reach = arresters_within(analysis, profile.arrester_distance)
    arresters = {a.id: a for a in layout.arresters}
    served: dict[str, list[tuple[Fixture, str, float]]] = {a.id: [] for a in layout.arresters}
    sides: list[_Side] = []
    lengths: list[float] = []
    wave: list[float] = []
    stopped: list[float] = []
    for fixture in layout.fixtures:
        for side in ("cold", "hot"):
            point = fixture.side_point(side)
            if point is None:
                continue
            nearby = reach.get((point, side), [])
            sealed = [a for _, a in nearby if arresters[a].kind == "sealed"]
            protector = sealed[0] if sealed else None
            if protector is not None:
                units = fixture.wsfu.cold if side == "cold" else fixture.wsfu.hot
                served[protector].append((fixture, side, units))
            chambers = tuple(a for _, a in nearby if arresters[a].kind != "sealed")
            path = tuple(analysis.network.path_up(point, side))
            sides.append(_Side(fixture, side, point, protector, chambers, path, len(lengths)))
            for i in path:
                lengths.append(layout.pipes[i].length)
                wave.append(speed_of[i])
                stopped.append(fixture.flow / area_of[i])
    piped = [s for s in sides if s.path]
    critical, rise, surge, column = path_surges(
        [analysis.water_for(s.side).density for s in piped],
        lengths,
        wave,
        stopped,
        [s.fixture.closure_time for s in piped],
        [s.first for s in piped],
    )
    figures = dict(
        zip(
            (id(s) for s in piped),
            zip(critical.tolist(), rise.tolist(), surge.tolist(), column.tolist(), strict=True),
            strict=True,
        )
    )
    events = [
        _event(analysis, s, figures.get(id(s), (0.0, 0.0, 0.0, 0.0)), lengths, stopped)
        for s in sides
    ]
    return SurgeScreening(
        wave_speed=speeds,
        events=tuple(events),
        served=frozen_map({k: tuple(v) for k, v in served.items()}),
        within_reach=frozen_map({k: tuple(v) for k, v in reach.items()}),
        side_index=frozen_map({side: _side_index(analysis, side) for side in ("cold", "hot")}),
        pipe_rating=frozen_map(pipe_ratings(analysis)),
    )


@dataclass(frozen=True)
class _Side:
    """One fixture side as the first pass finds it; ``first``: where its path's pipes
    begin in the flat per-pipe lists."""

    fixture: Fixture
    side: str
    point: str
    protector: str | None
    chambers: tuple[str, ...]
    path: tuple[int, ...]
    first: int


def _event(
    analysis: SteadyState,
    at: _Side,
    figures: tuple[float, float, float, float],
    all_lengths: list[float],
    all_stopped: list[float],
) -> ValveEvent:
    """The screening event of one side from its path figures (T_c, Joukowsky, surge,
    sum L dv)."""
    profile = analysis.profile
    fixture, side, point, protector, path = at.fixture, at.side, at.point, at.protector, at.path
    water = analysis.water_for(side)
    lengths = all_lengths[at.first : at.first + len(path)]
    dv = all_stopped[at.first : at.first + len(path)]
    t_c, rise, surge, column = figures
    t = fixture.closure_time
    smax, smin = analysis.static_max[point], analysis.static_min[point]
    unprotected = smax + surge
    # static min − surge; below the vapour pressure it is not a pressure: the column
    # separates and the water stays at p_v (engineering-basis §7)
    drawn_down = smin - surge
    cap = profile.surge_limit if protector else None
    return ValveEvent(
        fixture=fixture,
        side=side,
        point=point,
        path=path,
        flow=fixture.flow,
        closure_time=t,
        critical_time=t_c,
        quick=bool(path) and (fixture.closing == "quick" or t <= t_c),  # no pipe: no column
        surge=surge,
        static_max=smax,
        static_min=smin,
        unprotected_peak=unprotected,
        peak=min(unprotected, profile.surge_limit) if protector else unprotected,
        min_pressure=screening_minimum(smin, surge, water.vapour_pressure, STANDARD_ATMOSPHERE),
        min_safe_closure=(
            # physics.surge.min_safe_closure_time of the path, its sum L dv already made
            closure_time_for_limit(water.density * column, smax, profile.surge_limit)
            if path
            else 0.0
        ),
        column_momentum=water.density * sum(x * v for x, v in zip(lengths, dv, strict=True)),
        protected_by=protector,
        nearby_air_chambers=at.chambers,
        joukowsky=rise,
        surge_formula="joukowsky" if surge >= rise * (1 - 1e-12) else "slow-closure",
        pipe_peaks=pipe_peaks_on_path(analysis, path, surge, cap),
        column_separation=protector is None
        and column_separates(drawn_down, water.vapour_pressure, STANDARD_ATMOSPHERE),
    )


def wsfu_within(surge: SurgeScreening, point: str, side: str, reach: float) -> float:
    """Fixture units (that side) of the fixtures whose point lies within ``reach`` of ``point``."""
    adjacent, units_at = surge.side_index[side]
    best = {point: 0.0}
    queue = [(0.0, point)]
    while queue:
        dist, node = heapq.heappop(queue)
        for other, length in adjacent.get(node, ()):
            if dist + length <= reach + 1e-9 and dist + length < best.get(other, np.inf):
                best[other] = dist + length
                heapq.heappush(queue, (dist + length, other))
    return sum(units_at.get(node, 0.0) for node in best)


def _side_index(analysis: SteadyState, side: str) -> tuple[Mapping[str, Any], Mapping[str, float]]:
    """Adjacency of one service tree and the fixture units at each of its points, built
    once per analysis (a suggestion is asked for on every finding)."""
    units_at: dict[str, float] = {}
    for fixture in analysis.layout.fixtures:
        node = fixture.side_point(side)
        if node is not None:
            units = fixture.wsfu.cold if side == "cold" else fixture.wsfu.hot
            units_at[node] = units_at.get(node, 0.0) + units
    return frozen_map(_adjacency(analysis, side)), frozen_map(units_at)


def arrester_capacity_ok(
    arrester: Arrester,
    served: Sequence[tuple[Fixture, str, float]],
    appliance_types: frozenset[str],
) -> bool:
    """Whether the fixtures an arrester serves fit its class (AA: one residential appliance)."""
    total = sum(units for _, _, units in served)
    if arrester.rating_class == "AA":
        fixtures = {f.id for f, _, _ in served}
        return len(fixtures) <= 1 and all(
            f.type.id in appliance_types and f.occupancy == "private" for f, _, _ in served
        )
    return total <= arrester.capacity + 1e-9
