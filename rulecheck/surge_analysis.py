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
from dataclasses import dataclass, field

import numpy as np

from rulecheck.analysis import Analysis
from rulecheck.model import Arrester, Fixture
from rulecheck.physics.surge import (
    STANDARD_ATMOSPHERE,
    column_separates,
    critical_time,
    joukowsky,
    min_safe_closure_time,
    screening_minimum,
    surge_pressure,
)
from rulecheck.physics.wavespeed import wave_speed


@dataclass
class ValveEvent:
    """One valve closing on one side of one fixture."""

    fixture: Fixture
    side: str  # cold | hot
    point: str
    path: list[int]  # pipe indices from the valve to the root, nearest first
    flow: float  # flow stopped [m³/s]
    closure_time: float  # [s]
    critical_time: float  # Σ 2L/a [s]
    quick: bool  # closes quickly by its type or within the critical time
    surge: float  # pressure rise [Pa]
    static_max: float  # [Pa]
    static_min: float  # [Pa]
    unprotected_peak: float  # static max + surge [Pa]
    peak: float  # as credited (capped at the design limit when protected) [Pa]
    min_pressure: float  # max(static min − surge, vapour pressure − p_atm), gauge [Pa]
    min_safe_closure: float  # closure time keeping the peak at the design limit [s]
    protected_by: str | None
    column_separation: bool  # unprotected minimum reaches vapour pressure
    joukowsky: float = 0.0  # screening ρ·a₁·Δv₁ [Pa]; kept when a simulation replaces surge
    surge_formula: str = "joukowsky"  # screening formula of ``surge``: joukowsky | slow-closure
    # peak pressure per pipe id [Pa gauge]: screening, the valve's surge on every path pipe
    # (pipe_peaks_on_path); a simulation, each simulated pipe's own envelope maximum
    pipe_peaks: dict[str, float] = field(default_factory=dict)
    method: str = "screening"
    nearby_air_chambers: list[str] = field(default_factory=list)
    # where a simulated column separated away from the valve ("at X" / "in pipe P");
    # None at the valve itself, and for the screening
    cavity_at: str | None = None


@dataclass
class SurgeAnalysis:
    wave_speed: np.ndarray  # per pipe [m/s]
    events: list[ValveEvent]
    served: dict[str, list[tuple[Fixture, str, float]]]  # arrester id -> (fixture, side, WSFU)
    within_reach: dict[
        tuple[str, str], list[tuple[float, str]]
    ]  # (point, service) -> (dist, arrester)
    side_index: dict[str, tuple] = field(default_factory=dict)  # memo for wsfu_within
    # allowable pressure of each pipe (by id), its material and size at its service
    # temperature [Pa]
    pipe_rating: dict[str, float] = field(default_factory=dict)


def pipe_ratings(analysis: Analysis) -> dict[str, float]:
    """Allowable working pressure of every pipe at its own service temperature [Pa]."""
    layout = analysis.layout
    return {p.id: p.rating_at(layout.temperature(p.service)) for p in layout.pipes}


def pipe_peaks_on_path(
    analysis: Analysis, path: list[int], surge: float, cap: float | None
) -> dict[str, float]:
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
    return peaks


def pipes_over_rating(event: ValveEvent, ratings: dict[str, float]) -> list[tuple[str, float]]:
    """The pipes whose own peak exceeds their own rating: (pipe id, peak), the largest
    ratio of peak to rating first (then by id, for a stable order)."""
    over = [(pid, peak) for pid, peak in event.pipe_peaks.items() if peak > ratings[pid]]
    return sorted(over, key=lambda item: (-item[1] / ratings[item[0]], item[0]))


def pipe_wave_speeds(analysis: Analysis) -> np.ndarray:
    """Korteweg–Halliwell wave speed of each pipe at its service temperature."""
    layout = analysis.layout
    speeds = np.zeros(len(layout.pipes))
    for i, pipe in enumerate(layout.pipes):
        water = analysis.water_for(pipe.service)
        speeds[i] = wave_speed(
            water.bulk_modulus,
            water.density,
            pipe.material.modulus_at(layout.temperature(pipe.service)),
            pipe.material.poisson,
            pipe.inner_diameter,
            pipe.wall,
            pipe.anchoring,
        )
    return speeds


def _adjacency(analysis: Analysis, service: str) -> dict[str, list[tuple[str, float]]]:
    tree = analysis.network.trees[service]
    adjacent: dict[str, list[tuple[str, float]]] = {}
    for node, index in tree.parent.items():
        pipe = analysis.layout.pipes[index]
        adjacent.setdefault(node, []).append((pipe.start, pipe.length))
        adjacent.setdefault(pipe.start, []).append((node, pipe.length))
    return adjacent


def arresters_within(analysis: Analysis, reach: float) -> dict[tuple[str, str], list]:
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


def screen_surges(analysis: Analysis) -> SurgeAnalysis:
    """Screen every fixture valve of the layout, per side."""
    layout, profile = analysis.layout, analysis.profile
    speeds = pipe_wave_speeds(analysis)
    reach = arresters_within(analysis, profile.arrester_distance)
    arresters = {a.id: a for a in layout.arresters}
    events: list[ValveEvent] = []
    served: dict[str, list[tuple[Fixture, str, float]]] = {a.id: [] for a in layout.arresters}
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
            event = _screen_one(analysis, speeds, fixture, side, point, protector)
            event.nearby_air_chambers = [a for _, a in nearby if arresters[a].kind != "sealed"]
            events.append(event)
    return SurgeAnalysis(speeds, events, served, reach, pipe_rating=pipe_ratings(analysis))


def _screen_one(
    analysis: Analysis,
    speeds: np.ndarray,
    fixture: Fixture,
    side: str,
    point: str,
    protector: str | None,
) -> ValveEvent:
    layout, profile = analysis.layout, analysis.profile
    water = analysis.water_for(side)
    path = analysis.network.path_up(point, side)
    pipes = [layout.pipes[i] for i in path]
    lengths = [p.length for p in pipes]
    a = [float(speeds[i]) for i in path]
    dv = [fixture.flow / p.area for p in pipes]
    t_c = critical_time(lengths, a) if path else 0.0
    t = fixture.closure_time
    surge = surge_pressure(water.density, lengths, a, dv, t) if path else 0.0
    smax, smin = analysis.static_max[point], analysis.static_min[point]
    unprotected = smax + surge
    # static min − surge; below the vapour pressure it is not a pressure: the column
    # separates and the water stays at p_v (engineering-basis §7)
    drawn_down = smin - surge
    rise = float(joukowsky(water.density, a[0], dv[0])) if path else 0.0
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
            min_safe_closure_time(water.density, lengths, dv, smax, profile.surge_limit)
            if path
            else 0.0
        ),
        protected_by=protector,
        joukowsky=rise,
        surge_formula="joukowsky" if surge >= rise * (1 - 1e-12) else "slow-closure",
        pipe_peaks=pipe_peaks_on_path(analysis, path, surge, cap),
        column_separation=protector is None
        and column_separates(drawn_down, water.vapour_pressure, STANDARD_ATMOSPHERE),
    )


def wsfu_within(analysis: Analysis, point: str, side: str, reach: float) -> float:
    """Fixture units (that side) of the fixtures whose point lies within ``reach`` of ``point``."""
    adjacent, units_at = _side_index(analysis, side)
    best = {point: 0.0}
    queue = [(0.0, point)]
    while queue:
        dist, node = heapq.heappop(queue)
        for other, length in adjacent.get(node, ()):
            if dist + length <= reach + 1e-9 and dist + length < best.get(other, np.inf):
                best[other] = dist + length
                heapq.heappush(queue, (dist + length, other))
    return sum(units_at.get(node, 0.0) for node in best)


def _side_index(analysis: Analysis, side: str) -> tuple[dict, dict[str, float]]:
    """Adjacency of one service tree and the fixture units at each of its points, built
    once per analysis (a suggestion is asked for on every finding)."""
    cache = analysis.surge.side_index if analysis.surge is not None else {}
    if side not in cache:
        units_at: dict[str, float] = {}
        for fixture in analysis.layout.fixtures:
            node = fixture.side_point(side)
            if node is not None:
                units = fixture.wsfu.cold if side == "cold" else fixture.wsfu.hot
                units_at[node] = units_at.get(node, 0.0) + units
        cache[side] = (_adjacency(analysis, side), units_at)
    return cache[side]


def arrester_capacity_ok(
    arrester: Arrester, served: list[tuple[Fixture, str, float]], appliance_types: frozenset[str]
) -> bool:
    """Whether the fixtures an arrester serves fit its class (AA: one residential appliance)."""
    total = sum(units for _, _, units in served)
    if arrester.rating_class == "AA":
        fixtures = {f.id for f, _, _ in served}
        return len(fixtures) <= 1 and all(
            f.type.id in appliance_types and f.occupancy == "private" for f, _, _ in served
        )
    return total <= arrester.capacity + 1e-9
