"""Arresters to add: one sealed arrester at each quick-closing valve side left unprotected.

The placement follows the screening's own rule (``screening.arresters_within``): a valve
side is protected by the nearest sealed arrester within the profile's placement distance
(pipe path). A proposal sits at the valve's own point (distance 0), so it protects that
side and any other unprotected quick side within the distance; its class is the smallest
A–F covering the fixture units (that side) within the distance, as the surge rules'
suggestion counts them (``screening.wsfu_within``). Once the proposals are in, the
analysis is run again and each proposal's class is raised to what it actually serves
(``SurgeScreening.served``); above class F a second arrester goes to the farthest point it
serves, so the ratings add up (``arrester-capacity``). Bounded: at most one pass per
proposal, plus one.
"""

from __future__ import annotations

import heapq
from collections.abc import Callable
from dataclasses import dataclass, replace

from rulecheck.analysis.result import Analysis
from rulecheck.analysis.screening import wsfu_within
from rulecheck.input.model import Arrester, Layout
from rulecheck.input.profiles import arrester_classes, smallest_class_for


@dataclass(frozen=True)
class Proposal:
    id: str
    at: str
    side: str
    rating: str  # class letter
    serves: float  # fixture units served, that side [WSFU]
    fixtures: tuple[str, ...]  # quick valves it was placed for


def _new_id(point: str, taken: set[str]) -> str:
    base = f"WHA-{point}"
    name, n = base, 2
    while name in taken:
        name, n = f"{base}-{n}", n + 1
    taken.add(name)
    return name


def _within(analysis: Analysis, point: str, side: str, reach: float) -> dict[str, float]:
    """Points of ``side``'s tree within ``reach`` of ``point`` (pipe path) and their distance."""
    adjacent, _ = analysis.surge.side_index[side]
    best = {point: 0.0}
    queue = [(0.0, point)]
    while queue:
        dist, node = heapq.heappop(queue)
        if dist > best[node]:
            continue
        for other, length in adjacent.get(node, ()):
            if dist + length <= reach + 1e-9 and dist + length < best.get(other, float("inf")):
                best[other] = dist + length
                heapq.heappush(queue, (dist + length, other))
    return best


def _arrester(layout: Layout, p: Proposal) -> Arrester:
    cls = arrester_classes()[p.rating]
    return Arrester(
        p.id,
        p.at,
        p.rating,
        cls.max_wsfu,
        "sealed",
        None,
        None,
        layout.positions.get(p.at) or layout.pipes[0].pos,
    )


def with_proposals(layout: Layout, proposals: list[Proposal]) -> Layout:
    """``layout`` with the proposed arresters added after its own."""
    extra = [_arrester(layout, p) for p in proposals]
    positions = dict(layout.positions)
    for a in extra:
        positions[a.id] = a.pos
    return replace(layout, arresters=[*layout.arresters, *extra], positions=positions)


def propose_arresters(
    analysis: Analysis, analyse: Callable[[Layout], Analysis]
) -> tuple[list[Proposal], Analysis]:
    """The proposals for ``analysis`` (of the sized layout) and the analysis with them."""
    reach = analysis.profile.arrester_distance
    layout = analysis.layout
    taken = {p.id for p in layout.pipes} | {x.id for x in layout.points}
    taken |= {x.id for x in layout.supplies} | {x.id for x in layout.heaters}
    taken |= {x.id for x in layout.fixtures} | {x.id for x in layout.arresters}
    taken |= {x.id for x in layout.devices}
    covered: set[tuple[str, str]] = set()
    proposals: list[Proposal] = []
    for e in analysis.valve_events:
        if not e.quick or e.protected_by or (e.point, e.side) in covered:
            continue
        units = wsfu_within(analysis.surge, e.point, e.side, reach)
        rating = smallest_class_for(units) or "F"
        near = [e.fixture.id]
        proposals.append(
            Proposal(_new_id(e.point, taken), e.point, e.side, rating, units, tuple(near))
        )
        covered |= {(node, e.side) for node in _within(analysis, e.point, e.side, reach)}
    if not proposals:
        return [], analysis
    result = analyse(with_proposals(layout, proposals))
    for _ in range(len(proposals) + 1):
        changed = False
        for n, p in enumerate(proposals):
            served = result.surge.served.get(p.id, ())
            total = sum(units for _, _, units in served)
            rating = smallest_class_for(total) or ""
            if not rating:  # over class F: a second arrester at the farthest served point
                far = _farthest(result, p, [f.side_point(s) for f, s, _ in served])
                proposals.append(Proposal(_new_id(far, taken), far, p.side, "F", 0.0, ()))
                rating = "F"
                changed = True
            if rating != p.rating or abs(total - p.serves) > 1e-9:
                proposals[n] = replace(p, rating=rating, serves=total)
                changed = changed or rating != p.rating
        if not changed:
            break
        result = analyse(with_proposals(layout, proposals))
    return proposals, result


def _farthest(analysis: Analysis, p: Proposal, points: list[str | None]) -> str:
    dist = _within(analysis, p.at, p.side, analysis.profile.arrester_distance)
    known = [(dist.get(q, 0.0), q) for q in points if q is not None]
    return max(known)[1] if known else p.at
