"""The pipe network as two trees: cold (rooted at supplies) and hot (rooted at heater outlets).

Checks the topology the format demands: every pipe of a service hangs from a
root of that service, no loops, no second feeds, no hot water without a heater,
fixtures connected to points of the right service. ``hot-return`` pipes are
left out of the trees (they carry no demand and may close loops).
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

from rulecheck.errors import ProblemCollector
from rulecheck.input.model import Heater, Layout, Pipe

SERVICES = ("cold", "hot")


@dataclass
class Tree:
    """One service's pipes as a rooted forest."""

    service: str
    roots: list[str]
    parent: dict[str, int] = field(default_factory=dict)  # node -> index of the pipe feeding it
    order: list[str] = field(default_factory=list)  # nodes, roots first, parents before children
    root_of: dict[str, str] = field(default_factory=dict)
    depth: dict[str, int] = field(default_factory=dict)
    position: dict[str, int] = field(default_factory=dict)  # node -> its index in ``order``


@dataclass
class Network:
    layout: Layout
    pipes: list[Pipe]
    elevation: dict[str, float]
    trees: dict[str, Tree]
    heater_at_outlet: dict[str, Heater]

    def service_of(self, node: str) -> str | None:
        for service, tree in self.trees.items():
            if node in tree.root_of:
                return service
        return None

    def path_up(self, node: str, service: str) -> list[int]:
        """Indices of the pipes from ``node`` up to its root, nearest first."""
        tree = self.trees[service]
        path = []
        while node in tree.parent:
            index = tree.parent[node]
            path.append(index)
            node = self.pipes[index].start
        return path


def build_network(layout: Layout) -> Network:
    """Arrange the layout's pipes into trees; raise an InputError on bad topology."""
    problems = ProblemCollector(layout.path)
    elevation = {p.id: p.elevation for p in layout.points}
    elevation.update({s.id: s.elevation for s in layout.supplies})
    heaters: dict[str, Heater] = {}
    for heater in layout.heaters:
        first = heaters.setdefault(heater.outlet, heater)
        if first is not heater:
            problems.add(
                heater.pos,
                f"heaters {first.id} (line {first.pos.line}) and "
                f"{heater.id} both feed outlet {heater.outlet}",
                "each heater needs its own outlet point",
            )
    roots = {"cold": [s.id for s in layout.supplies], "hot": list(heaters)}
    trees = {svc: Tree(svc, roots[svc]) for svc in SERVICES}
    children: dict[str, dict[str, list[int]]] = {svc: {} for svc in SERVICES}
    is_root = {svc: set(roots[svc]) for svc in SERVICES}  # a tower has hundreds of roots
    pipes = layout.pipes

    feeders: dict[str, dict[str, list[int]]] = {svc: {} for svc in SERVICES}
    explained: dict[str, set[str]] = {svc: set() for svc in SERVICES}  # causes already told
    for index, pipe in enumerate(pipes):
        if pipe.start == pipe.end:
            problems.add(
                pipe.pos,
                f"pipe {pipe.id} starts and ends at {pipe.start}",
                "a pipe must join two different points",
            )
            continue
        if pipe.service not in SERVICES:
            continue
        if pipe.end in is_root[pipe.service]:
            problems.add(
                pipe.pos,
                f"{pipe.service} pipe {pipe.id} runs into {pipe.end}, "
                f"which is a source of the {pipe.service} service",
                f"'from' is the upstream end, nearer the source: "
                f"write {pipe.id} as 'from: {pipe.end}, to: {pipe.start}'",
            )
            explained[pipe.service].add(pipe.start)
            continue
        feeders[pipe.service].setdefault(pipe.end, []).append(index)

    for svc, by_end in feeders.items():
        tree = trees[svc]
        second: list[tuple[str, int]] = []
        for end, indices in by_end.items():
            # Of several pipes into one point, keep one that is itself fed from upstream.
            keep = next(
                (i for i in indices if pipes[i].start in is_root[svc] or pipes[i].start in by_end),
                indices[0],
            )
            tree.parent[end] = keep
            children[svc].setdefault(pipes[keep].start, []).append(keep)
            second.extend((end, i) for i in indices if i != keep)
        for end, index in second:
            _report_second_feed(
                tree, pipes, end, index, is_root[svc], by_end, explained[svc], problems
            )

    for svc, tree in trees.items():
        _walk(tree, children[svc], pipes)
        _report_unreached(tree, pipes, layout, problems, explained[svc])
    _check_services_meet_properly(trees, layout, problems)
    _check_heaters_and_fixtures(trees, layout, problems, explained["cold"] | explained["hot"])
    problems.raise_if_any()
    return Network(layout, pipes, elevation, trees, heaters)


def _walk(tree: Tree, children: dict[str, list[int]], pipes: list[Pipe]) -> None:
    queue = deque(tree.roots)
    for root in tree.roots:
        tree.root_of[root] = root
        tree.depth[root] = 0
    while queue:
        node = queue.popleft()
        tree.position[node] = len(tree.order)
        tree.order.append(node)
        for index in children.get(node, ()):
            child = pipes[index].end
            tree.root_of[child] = tree.root_of[node]
            tree.depth[child] = tree.depth[node] + 1
            queue.append(child)


def _report_second_feed(
    tree: Tree,
    pipes: list[Pipe],
    end: str,
    index: int,
    roots: set[str],
    by_end: dict[str, list[int]],
    explained: set[str],
    problems: ProblemCollector,
) -> None:
    """A second pipe into ``end``: drawn backwards (its start is fed by nothing), or a loop
    or second feed of the service."""
    pipe, first = pipes[index], pipes[tree.parent[end]]
    svc = tree.service
    if pipe.start not in roots and pipe.start not in by_end:
        explained.add(pipe.start)  # what hangs from its start is this one mistake
        problems.add(
            pipe.pos,
            f"{svc} pipe {pipe.id} runs from {pipe.start} into {end}, which {first.id} "
            f"(line {first.pos.line}) already feeds; nothing feeds {pipe.start}, so {pipe.id} "
            "looks drawn against the flow",
            f"'from' is the upstream end, nearer the source: "
            f"write {pipe.id} as 'from: {end}, to: {pipe.start}'",
        )
        return
    loop: list[str] = []
    node = pipe.start
    while node in tree.parent and node != end and len(loop) <= len(pipes):
        loop.append(pipes[tree.parent[node]].id)
        node = pipes[tree.parent[node]].start
    closes = (
        f"; {' → '.join([*reversed(loop), pipe.id])} close a loop back to {end}"
        if node == end
        else ""
    )
    hint = (
        "each point has one feeding pipe; mark a recirculation pipe 'hot-return'"
        if svc == "hot"
        else "each point has one feeding pipe and cold water may not loop: remove one of "
        "them, or check that its 'from' is the upstream end"
    )
    problems.add(
        pipe.pos,
        f"point {end} is fed by two {svc} pipes, {first.id} (line {first.pos.line}) "
        f"and {pipe.id}{closes}",
        hint,
    )


def _report_unreached(
    tree: Tree, pipes: list[Pipe], layout: Layout, problems: ProblemCollector, explained: set[str]
) -> None:
    """One problem per cause: a loop, or the top of a chain no source feeds; the points
    below a cause already reported (``explained``) are its echoes and get none."""
    reported_loops: set[str] = set()
    unreached = [(node, index) for node, index in tree.parent.items() if node not in tree.root_of]
    by_top: dict[str, list[int]] = {}
    for node, index in sorted(unreached, key=lambda kv: kv[1]):
        pipe = pipes[index]
        loop = _find_loop(node, tree, pipes)
        explained.add(node)
        if loop:
            key = min(loop)
            if key not in reported_loops:
                reported_loops.add(key)
                hint = (
                    "a supply network must be a tree; mark a recirculation pipe 'hot-return'"
                    if tree.service == "hot"
                    else "cold water may not loop, and no source feeds these pipes: connect one "
                    "point to a supply, and check that each 'from' is the upstream end"
                )
                problems.add(
                    pipe.pos, f"the {tree.service} pipes {' → '.join(loop)} form a loop", hint
                )
            continue
        top = pipe.start
        while top in tree.parent:
            top = pipes[tree.parent[top]].start
        if top not in explained:
            by_top.setdefault(top, []).append(index)
    for top, indices in by_top.items():
        pipe = pipes[min(indices, key=lambda i: (pipes[i].start != top, i))]
        if tree.service == "hot":
            if top in {s.id for s in layout.supplies} or top in tree.root_of:
                msg = f"hot pipe {pipe.id} is fed from {top}, which is not a heater outlet"
            else:
                msg = f"hot pipe {pipe.id} hangs from {top}, which no heater outlet feeds"
            problems.add(
                pipe.pos,
                msg + " (hot water needs a heater upstream)",
                "start the hot network at a heater's 'outlet' point",
            )
        else:
            problems.add(
                pipe.pos,
                f"cold pipe {pipe.id} hangs from {top}, which no supply feeds",
                "connect it to a supply, or swap 'from' and 'to' if it is drawn backwards: "
                "'from' is the upstream end",
            )


def _find_loop(node: str, tree: Tree, pipes: list[Pipe]) -> list[str]:
    seen: list[str] = []
    while node in tree.parent and node not in seen:
        seen.append(node)
        node = pipes[tree.parent[node]].start
    if node in seen:
        start = seen.index(node)
        return [pipes[tree.parent[n]].id for n in reversed(seen[start:])]
    return []


def _check_services_meet_properly(
    trees: dict[str, Tree], layout: Layout, problems: ProblemCollector
) -> None:
    cold, hot = trees["cold"].root_of, trees["hot"].root_of
    for point in layout.points:
        if point.id in cold and point.id in hot:
            problems.add(
                point.pos,
                f"point {point.id} joins cold and hot pipes",
                "cold and hot water meet only through a heater",
            )
    on_return = {p.start for p in layout.pipes} | {p.end for p in layout.pipes}
    for point in layout.points:
        if point.id not in cold and point.id not in hot and point.id not in on_return:
            problems.add(
                point.pos,
                f"point {point.id} is not connected to any pipe",
                "connect it or remove it",
            )


def _check_heaters_and_fixtures(
    trees: dict[str, Tree], layout: Layout, problems: ProblemCollector, explained: set[str]
) -> None:
    """Heater inlets and fixture sides on the right network; one on a point whose trouble
    is already reported (``explained``) would only echo it."""
    cold, hot = trees["cold"].root_of, trees["hot"].root_of
    for heater in layout.heaters:
        if heater.inlet not in cold and heater.inlet not in explained:
            problems.add(
                heater.pos,
                f"heater {heater.id} inlet {heater.inlet} is not on the cold network",
                "feed the heater inlet from a cold pipe",
            )
    for fixture in layout.fixtures:
        for side, point, members in (("cold", fixture.cold, cold), ("hot", fixture.hot, hot)):
            if point is not None and point not in members and point not in explained:
                where = (
                    "the hot network"
                    if point in hot
                    else ("the cold network" if point in cold else "no network")
                )
                problems.add(
                    fixture.pos,
                    f"fixture {fixture.id}: its {side} side is at {point}, which is on {where}",
                    f"connect '{side}' to a point on the {side} network",
                )
