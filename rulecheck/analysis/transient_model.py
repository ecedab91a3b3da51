"""One valve event of a layout as a transient network: build it, run it, read it back.

The service tree that holds the valve becomes the MOC network: its root (supply or
heater outlet) is a constant head at the root's static minimum, every other fixture
is a closed dead end, and only the closing valve flows at the start. Sealed arresters
on that tree are gas volumes: their own ``gas_volume`` when given (at the precharge,
or at the static pressure when no precharge is given), otherwise an equivalent volume
at the static pressure sized by the energy method (below) and flagged. A
``precharge`` from the layout puts the piston on a stop below that pressure; without
one the gas follows p·Vⁿ = const both ways (engineering-basis §10), so that an
assumed precharge does not make a piston slam onto its stop.
``simulate`` runs the whole service tree. ``check --transient`` does too for trees of
up to ``WHOLE_TREE_PIPES`` pipes; on larger trees it simulates a path model (the
valve's path to the root plus the pipe to the credited arrester; other branches and
their reflections left out [D]) to keep whole-building runs fast, and says so.
The peak is shifted by (static max − static min) at the valve: exact superposition
of the static head for the linear equations, an approximation once cavities form [D].
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from rulecheck.analysis.result import Analysis, ValveEvent
from rulecheck.analysis.transient_limits import (
    EXTENSIONS,
    RunBounds,
    RunRefused,
    arrester_periods,
    bounds_for,
    check_spread,
    extreme_on_last_step,
    run_length,
    shortest_run,
    start_heads,
)
from rulecheck.physics.arrester import design_column_energy, gas_volume_for_energy
from rulecheck.physics.constants import STANDARD_ATMOSPHERE
from rulecheck.physics.constants import STANDARD_GRAVITY as G
from rulecheck.physics.demand import demand_flow
from rulecheck.physics.friction import friction_factor, reynolds_number
from rulecheck.physics.transient import (
    ClosingValve,
    GasArrester,
    TransientNetwork,
    TransientPipe,
    TransientResult,
    simulate,
)
from rulecheck.physics.transient_grid import choose_time_step
from rulecheck.units import fmt


@dataclass(frozen=True)
class Cavity:
    """A vapour cavity of a run, placed on the layout."""

    point: str | None  # the point it formed at, or None inside a pipe
    pipe: str | None  # the pipe it formed in, or None at a point
    distance: float  # from the pipe's start [m] (0 at a point)
    formed: float  # [s]
    collapsed: float | None  # [s]; None: still open when the run ended


@dataclass
class EventRun:
    event: ValveEvent
    result: TransientResult
    peak: float  # at the valve, static max basis [Pa gauge]
    minimum: float  # at the valve, static min basis [Pa gauge]
    path_max: dict[str, float]  # per path pipe [Pa gauge]
    path_min: dict[str, float]
    sized_arresters: dict[str, float]  # arrester id -> equivalent gas volume [m³] we sized
    unstopped_arresters: list[str]  # no precharge given: a gas volume without a piston stop
    cavities: list[Cavity]  # in the order they formed
    pipe_max: dict[str, float] = field(default_factory=dict)  # every simulated pipe [Pa gauge]
    notes: list[str] = field(default_factory=list)  # bounds the run met (plain words)


def _path_nodes(analysis: Analysis, event: ValveEvent) -> set[str]:
    """The valve's path to the root plus the pipes that join nearby arresters to it."""
    layout, tree = analysis.layout, analysis.network.trees[event.side]
    keep = {event.point} | {layout.pipes[k].start for k in event.path}
    # the arrester the screening credits (nearest sealed one in reach); the others nearby
    # are left out of the path model like the other branches [D]
    if event.protected_by is None:
        return keep
    node = layout.arrester_by_id[event.protected_by].at
    chain = []
    while node not in keep and node in tree.parent:
        chain.append(node)
        node = layout.pipes[tree.parent[node]].start
    if node in keep:
        keep.update(chain)
    return keep


@dataclass
class EventModel:
    """The MOC network of one valve event, and how its parts map back to the layout."""

    network: TransientNetwork
    pipe_ids: list[str]  # layout pipe id of each transient pipe
    point_ids: list[str]  # layout point of each transient node
    sized_arresters: dict[str, float]  # arrester id -> equivalent gas volume [m³] we sized
    unstopped_arresters: list[str]  # no precharge given: a gas volume without a piston stop
    left_out: list[str] = field(default_factory=list)  # points the supply cannot fill


@functools.lru_cache(maxsize=256)
def _design_flow(fixture_units: float) -> float:
    """Hunter's design flow of an arrester's rated fixture units [m³/s] (a pure function of
    its argument, asked for every event an unsized arrester takes part in)."""
    return float(demand_flow(fixture_units, False))


class FrictionTables:
    """Darcy factors of every pipe of a layout with the event's flow through it, one table
    per (service, flow): one vectorised Colebrook solve over all pipes, shared by the
    events of that flow (a batch of events, or one), instead of a solve per event. The
    table of a (service, flow) is the same whichever events ask for it."""

    def __init__(self, analysis: Analysis) -> None:
        self.analysis = analysis
        self._tables: dict[tuple[str, float], list[float]] = {}

    def factors(self, service: str, flow: float) -> list[float]:
        """Friction factor of each layout pipe (layout order) at ``flow`` [m³/s]."""
        key = (service, flow)
        if key not in self._tables:
            pipes, water = self.analysis.layout.pipes, self.analysis.water_for(service)
            inner = np.array([p.inner_diameter for p in pipes])
            area = np.array([p.area for p in pipes])
            roughness = np.array([p.material.roughness for p in pipes])
            re = reynolds_number(flow / area, inner, water.density, water.viscosity)
            self._tables[key] = np.atleast_1d(friction_factor(re, roughness / inner)).tolist()
        return self._tables[key]


def build_event_network(
    analysis: Analysis,
    event: ValveEvent,
    whole_tree: bool = True,
    friction: FrictionTables | None = None,
) -> EventModel:
    """The MOC network of the event's service tree (or of its path model); ``friction``
    shares friction tables between the events of a batch."""
    layout, network = analysis.layout, analysis.network
    tree = network.trees[event.side]
    root = tree.root_of[event.point]
    wanted = None if whole_tree else _path_nodes(analysis, event)
    water = analysis.water_for(event.side)

    def filled(node: str) -> bool:  # the supply's minimum pressure holds water there
        return analysis.static_min[node] + STANDARD_ATMOSPHERE > water.vapour_pressure

    for node in [event.point, *(layout.pipes[k].start for k in event.path)]:
        if not filled(node):
            raise RunRefused(
                f"the supply's minimum pressure does not fill point {node} on the valve's "
                "path: its static pressure is at or below the vapour pressure",
                node,
            )
    nodes, empty = [], set()  # points the supply cannot fill, and all beyond them
    # in the tree's order (parents before children), so that nodes are numbered alike
    candidates = tree.order if wanted is None else sorted(wanted, key=tree.position.__getitem__)
    for n in candidates:
        if tree.root_of.get(n) != root:
            continue
        if n != root and (layout.pipes[tree.parent[n]].start in empty or not filled(n)):
            empty.add(n)
            continue
        nodes.append(n)
    index = {n: i for i, n in enumerate(nodes)}
    on_path = set(event.path)
    pipes, ids = [], []
    tree_pipes = [layout.pipes[tree.parent[node]] for node in nodes[1:]]
    table = (friction or FrictionTables(analysis)).factors(event.side, event.flow)
    factors = [table[tree.parent[node]] for node in nodes[1:]]
    for node, pipe, f in zip(nodes[1:], tree_pipes, factors, strict=True):
        k = tree.parent[node]
        # physical length for the waves; the fittings allowance goes into the friction [D]
        pipes.append(
            TransientPipe(
                index[pipe.start],
                index[node],
                pipe.length,
                pipe.inner_diameter,
                float(analysis.surge.wave_speed[k]),
                float(f) * (pipe.length + pipe.fittings_length) / pipe.length,
                event.flow if k in on_path else 0.0,
            )
        )
        ids.append(pipe.id)
    elevation = tuple(network.elevation[n] for n in nodes)
    head = analysis.static_min[root] / (water.density * G) + network.elevation[root]
    sized: dict[str, float] = {}
    unstopped: list[str] = []
    gas = []
    # the kinetic energy of the valve's column, which an unsized arrester must absorb [D]
    energy = (
        0.5
        * water.density
        * sum(
            layout.pipes[k].area * layout.pipes[k].length * (event.flow / layout.pipes[k].area) ** 2
            for k in event.path
        )
    )
    here = sorted(x for n in nodes for x in layout.sealed_arresters_at.get(n, ()))
    for _, arrester in here:  # in the layout's order
        p_static = analysis.static_min[arrester.at] + STANDARD_ATMOSPHERE
        precharge = (
            arrester.precharge + STANDARD_ATMOSPHERE if arrester.precharge is not None else p_static
        )
        volume = arrester.gas_volume
        if volume is None:
            limit = analysis.profile.surge_limit + STANDARD_ATMOSPHERE
            if not limit > p_static:
                raise RunRefused(
                    f"arrester {arrester.id} has no gas_volume and its static pressure is "
                    "already at the surge limit, so no equivalent volume can be sized; "
                    "give its gas_volume and precharge",
                    arrester.id,
                )
            class_flow = _design_flow(arrester.capacity)
            volume = gas_volume_for_energy(
                max(energy, design_column_energy(class_flow, water.density)),
                p_static,
                limit,
                analysis.profile.polytropic_exponent,
            )
            if not (math.isfinite(volume) and volume > 0):
                raise RunRefused(
                    f"arrester {arrester.id}: no finite equivalent gas volume could be "
                    "sized; give its gas_volume and precharge",
                    arrester.id,
                )
            sized[arrester.id] = volume
        if arrester.precharge is None:
            unstopped.append(arrester.id)
        # a precharge from the layout is a piston on its stop below that pressure; without
        # one, the gas volume follows p V^n = const both ways (engineering-basis §10)
        gas.append(
            GasArrester(
                index[arrester.at],
                volume,
                precharge,
                analysis.profile.polytropic_exponent,
                stop=arrester.precharge is not None,
            )
        )
    net = TransientNetwork(
        n_nodes=len(nodes),
        pipes=tuple(pipes),
        elevation=elevation,
        fixed_heads={index[root]: head},
        valve=ClosingValve(index[event.point], event.closure_time),
        arresters=tuple(gas),
        density=water.density,
        vapour_pressure=water.vapour_pressure,
        atmospheric=STANDARD_ATMOSPHERE,
    )
    return EventModel(net, ids, nodes, sized, unstopped, sorted(empty))


# Time resolution asked of every run, besides whole reaches in each pipe [D]:
CLOSURE_STEPS = 10  # steps over the valve's closure
ROUND_TRIP_STEPS = 20  # steps over the path's round trip 2L/a


def resolution_step(event: ValveEvent) -> float:
    """The largest time step [s] that resolves the event's round trip and closure; a
    closure shorter than a twentieth of the round trip is instantaneous at that step [D]."""
    trip = max(event.critical_time, 1e-4)
    step = trip / ROUND_TRIP_STEPS
    if event.closure_time > 0:
        step = min(step, max(event.closure_time, trip / ROUND_TRIP_STEPS) / CLOSURE_STEPS)
    return step


def default_duration(event: ValveEvent) -> float:
    """Closure plus ten round trips of the path, at least 0.1 s [D] (the arresters'
    oscillation, which needs the network, is added by ``prepare_event``)."""
    return run_length(event.closure_time, event.critical_time, ())


def check_start(model: EventModel, event: ValveEvent, units: str) -> np.ndarray:
    """The steady node heads [m] the solver starts from; RunRefused unless the valve
    discharges at its design flow there (a fixture with no flow at design demand is a
    residual-pressure finding, not a transient)."""
    net = model.network
    head = start_heads(net)
    v = net.valve.node
    if event.flow > 0 and not head[v] - net.elevation[v] > 0:
        raise RunRefused(
            f"fixture {event.fixture.id} gets no flow at design demand: the supply's minimum "
            f"pressure cannot push its {fmt(event.flow, 'flow', units)} to {event.point} even "
            "with no other fixture open, so there is no flowing column to stop",
            event.fixture.id,
        )
    for gas in net.arresters:
        if not net.density * G * (head[gas.node] - net.elevation[gas.node]) + net.atmospheric > 0:
            raise RunRefused(
                f"point {model.point_ids[gas.node]} starts below absolute zero at design flow",
                model.point_ids[gas.node],
            )
    return head


@dataclass
class EventSetup:
    """One valve event ready to run: its network, time step, duration and bounds."""

    event: ValveEvent
    model: EventModel
    dt: float  # [s]
    duration: float  # [s]
    bounds: RunBounds
    asked: bool = False  # the duration was given (``simulate --duration``), not chosen
    whole_tree: bool = True  # the whole service tree (else the path model)
    notes: list[str] = field(default_factory=list)

    @property
    def network(self) -> TransientNetwork:
        return self.model.network

    @property
    def steps(self) -> int:
        return int(self.bounds.steps(self.duration, self.dt))


def prepare_event(
    analysis: Analysis,
    event: ValveEvent,
    duration: float | None = None,
    whole_tree: bool = True,
    friction: FrictionTables | None = None,
) -> EventSetup:
    """The event's network with the time step its path and closure ask for, and a run
    length within the bounds of ``transient_limits`` (RunRefused when the run cannot be
    made within them, or the layout gives the solver no steady state to start from)."""
    model = build_event_network(analysis, event, whole_tree, friction)
    net = model.network
    travel = [p.length / p.wave_speed for p in net.pipes]
    if not all(math.isfinite(t) and t > 0 for t in travel):
        raise RunRefused("a pipe's wave travel time is not a positive finite number")
    heads = check_start(model, event, analysis.layout.units)
    check_spread(travel, model.pipe_ids)
    wanted = min(min(travel), resolution_step(event))
    # the solver's own search, with the wanted step as one more travel time: dt stays at or
    # under it (within the search's few percent) and no pipe's wave speed moves more than that
    dt, _, _ = choose_time_step([*travel, wanted])
    bounds = bounds_for(travel, dt, len(net.arresters), model.pipe_ids)
    longest = bounds.longest(dt)
    if duration is not None:
        if bounds.steps(duration, dt) > bounds.max_steps:
            raise RunRefused(
                f"a {duration:.6g} s run takes {bounds.steps(duration, dt):.3g} steps of "
                f"{dt * 1000:.4g} ms, over the {bounds.max_steps:,}-step bound of this "
                "network",
                hint=f"give --duration {longest:.4g} or less",
            )
        setup = EventSetup(event, model, dt, duration, bounds, asked=True)
    else:
        shortest = shortest_run(event.closure_time, event.critical_time)
        if shortest > longest:
            short = min(range(len(travel)), key=lambda k: travel[k])
            raise RunRefused(
                f"its run would take {bounds.steps(shortest, dt):.3g} steps of "
                f"{dt * 1e3:.3g} ms, over the {bounds.max_steps:,}-step bound: the step is "
                f"set by pipe {model.pipe_ids[short]}, the shortest, and the closure of "
                f"{event.closure_time:.3g} s",
                model.pipe_ids[short],
            )
        wanted_length = run_length(
            event.closure_time, event.critical_time, arrester_periods(net, heads)
        )
        setup = EventSetup(event, model, dt, min(wanted_length, longest), bounds)
        if wanted_length > longest:
            setup.notes.append(f"run cut at the {bounds.max_steps:,}-step bound")
    setup.whole_tree = whole_tree
    if model.left_out:
        setup.notes.append(
            f"{len(model.left_out)} point(s) the supply cannot fill left out: "
            + ", ".join(model.left_out[:5])
            + (", ..." if len(model.left_out) > 5 else "")
        )
    return setup


def read_back(analysis: Analysis, setup: EventSetup, result: TransientResult) -> EventRun:
    """The run's peak and minimum on the layout's basis, per path pipe."""
    event = setup.event
    shift = event.static_max - event.static_min
    path_ids = {analysis.layout.pipes[k].id for k in event.path}
    model = setup.model
    on_path = [(i, pid) for i, pid in enumerate(model.pipe_ids) if pid in path_ids]
    path_max = {pid: float(result.pipe_max_pressure[i]) + shift for i, pid in on_path}
    path_min = {pid: float(result.pipe_min_pressure[i]) for i, pid in on_path}
    peak = float(result.peak_pressure) + shift

    def ended(t: float) -> float | None:
        return None if math.isnan(t) else t

    cavities = [
        Cavity(model.point_ids[node], None, 0.0, t0, ended(t1))
        for node, t0, t1 in result.cavity_events
    ] + [
        Cavity(None, model.pipe_ids[pipe], x, t0, ended(t1))
        for pipe, x, t0, t1 in result.pipe_cavity_events
    ]
    cavities.sort(key=lambda c: (c.formed, c.point is None, c.point or c.pipe or "", c.distance))
    return EventRun(
        event,
        result,
        peak,
        float(result.min_pressure),
        path_max,
        path_min,
        model.sized_arresters,
        model.unstopped_arresters,
        cavities,
        pipe_max={
            pid: float(result.pipe_max_pressure[i]) + shift for i, pid in enumerate(model.pipe_ids)
        },
        notes=list(setup.notes),
    )


def run_on(
    analysis: Analysis,
    setup: EventSetup,
    result: TransientResult,
    progress: Callable[[float], None] | None = None,
) -> EventRun:
    """``result`` read back; run again, twice as long each time within the bounds, while
    its maximum or minimum at the valve sits on the last step (a run too short to see it).
    A duration that was asked for is kept, and a trailing extreme only noted."""
    for _ in range(EXTENSIONS):
        if setup.asked or not extreme_on_last_step(result.valve_pressure):
            break
        if setup.steps >= setup.bounds.max_steps:
            break
        setup.duration = min(2 * setup.duration, setup.bounds.longest(setup.dt))
        result = simulate(setup.network, setup.duration, dt=setup.dt, progress=progress)
    run = read_back(analysis, setup, result)
    if extreme_on_last_step(result.valve_pressure):
        run.notes.append(
            "its extreme at the valve is on the last step"
            + (
                ", a longer --duration would show more"
                if setup.asked
                else f" of a run cut at the {setup.bounds.max_steps:,}-step bound"
            )
        )
    if not (math.isfinite(run.peak) and math.isfinite(run.minimum)):
        raise RunRefused("the run did not stay finite (friction dominates the time step)")
    return run


def run_event(
    analysis: Analysis,
    event: ValveEvent,
    duration: float | None = None,
    progress: Callable[[float], None] | None = None,
    whole_tree: bool = True,
) -> EventRun:
    """Simulate one valve event (``simulate``; the whole service tree by default).
    RunRefused when it is not simulated (see ``prepare_event``)."""
    setup = prepare_event(analysis, event, duration, whole_tree)
    result = simulate(setup.network, setup.duration, dt=setup.dt, progress=progress)
    return run_on(analysis, setup, result, progress)
