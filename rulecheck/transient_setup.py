"""Turn one valve event of a layout into a transient network, run it, read the result back.

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

import math
import multiprocessing as mp
import os
from collections import Counter
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field

from rulecheck.analysis import Analysis, G
from rulecheck.physics.demand import demand_flow
from rulecheck.physics.friction import friction_factor, reynolds_number
from rulecheck.physics.surge import STANDARD_ATMOSPHERE
from rulecheck.physics.transient import (
    ClosingValve,
    GasArrester,
    TransientNetwork,
    TransientPipe,
    TransientResult,
    simulate,
    simulate_many,
)
from rulecheck.physics.transient_grid import choose_time_step
from rulecheck.surge_analysis import ValveEvent


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


def equivalent_gas_volume(
    energy: float, p_static_abs: float, p_limit_abs: float, n: float
) -> float:
    """Energy method [D]: the gas volume at ``p_static_abs`` that absorbs ``energy`` [J] in a
    polytropic compression (exponent ``n``) ending at ``p_limit_abs``.

    W = p1·V1·((p2/p1)^((n−1)/n) − 1)/(n − 1)  ⇒  V1 = E·(n − 1) / (p1·((p2/p1)^((n−1)/n) − 1)).
    """
    ratio = (p_limit_abs / p_static_abs) ** ((n - 1) / n) - 1
    return energy * (n - 1) / (p_static_abs * ratio)


# Design column for an arrester class when the layout gives no gas volume [M: PDI-WH 201
# rates arresters on a column moving at 10 ft/s; the 50 ft column length is our assumption
# [D]; verify against the manufacturer's data and give gas_volume/precharge instead].
DESIGN_VELOCITY = 3.048  # 10 ft/s [m/s]
DESIGN_LENGTH = 15.24  # 50 ft [m]


def class_energy(capacity_wsfu: float) -> float:
    """Kinetic energy [J] of the design column of an arrester class: ½·ρ·Q·L·v (ρ = 1000)."""
    flow = float(demand_flow(capacity_wsfu, False))
    return 0.5 * 1000.0 * flow * DESIGN_LENGTH * DESIGN_VELOCITY


def _path_nodes(analysis: Analysis, event: ValveEvent) -> set[str]:
    """The valve's path to the root plus the pipes that join nearby arresters to it."""
    layout, tree = analysis.layout, analysis.network.trees[event.side]
    keep = {event.point} | {layout.pipes[k].start for k in event.path}
    # the arrester the screening credits (nearest sealed one in reach); the others nearby
    # are left out of the path model like the other branches [D]
    if event.protected_by is None:
        return keep
    node = next(a.at for a in layout.arresters if a.id == event.protected_by)
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


def build_event_network(
    analysis: Analysis,
    event: ValveEvent,
    whole_tree: bool = True,
) -> EventModel:
    """The MOC network of the event's service tree (or of its path model)."""
    layout, network = analysis.layout, analysis.network
    tree = network.trees[event.side]
    root = tree.root_of[event.point]
    wanted = None if whole_tree else _path_nodes(analysis, event)
    nodes = [
        n for n in tree.order if tree.root_of.get(n) == root and (wanted is None or n in wanted)
    ]
    index = {n: i for i, n in enumerate(nodes)}
    water = analysis.water_for(event.side)
    on_path = set(event.path)
    pipes, ids = [], []
    for node in nodes[1:]:
        k = tree.parent[node]
        pipe = layout.pipes[k]
        velocity = event.flow / pipe.area
        re = reynolds_number(velocity, pipe.inner_diameter, water.density, water.viscosity)
        f = friction_factor(re, pipe.material.roughness / pipe.inner_diameter)
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
    energy = (
        0.5
        * water.density
        * sum(
            layout.pipes[k].area * layout.pipes[k].length * (event.flow / layout.pipes[k].area) ** 2
            for k in event.path
        )
    )
    for arrester in layout.arresters:
        if arrester.kind != "sealed" or arrester.at not in index:
            continue
        p_static = analysis.static_min[arrester.at] + STANDARD_ATMOSPHERE
        precharge = (
            arrester.precharge + STANDARD_ATMOSPHERE if arrester.precharge is not None else p_static
        )
        volume = arrester.gas_volume
        if volume is None:
            volume = equivalent_gas_volume(
                max(energy, class_energy(arrester.capacity)),
                p_static,
                analysis.profile.surge_limit + STANDARD_ATMOSPHERE,
                analysis.profile.polytropic_exponent,
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
    return EventModel(net, ids, nodes, sized, unstopped)


# Time resolution asked of every run, besides whole reaches in each pipe [D]:
CLOSURE_STEPS = 10  # steps over the valve's closure
ROUND_TRIP_STEPS = 20  # steps over the path's round trip 2L/a


def resolution_step(event: ValveEvent) -> float:
    """The largest time step [s] that resolves the event's round trip and closure."""
    step = max(event.critical_time, 1e-4) / ROUND_TRIP_STEPS
    if event.closure_time > 0:
        step = min(step, event.closure_time / CLOSURE_STEPS)
    return step


def default_duration(event: ValveEvent) -> float:
    """Closure plus ten round trips of the path, at least 0.1 s [D]."""
    return max(0.1, event.closure_time + 10 * max(event.critical_time, 1e-3))


@dataclass
class EventSetup:
    """One valve event ready to run: its network, time step and duration."""

    event: ValveEvent
    model: EventModel
    dt: float  # [s]
    duration: float  # [s]

    @property
    def network(self) -> TransientNetwork:
        return self.model.network


def prepare_event(
    analysis: Analysis,
    event: ValveEvent,
    duration: float | None = None,
    whole_tree: bool = True,
) -> EventSetup:
    """The event's network with the time step its path and closure ask for."""
    model = build_event_network(analysis, event, whole_tree)
    net = model.network
    wanted = min(min(p.length / p.wave_speed for p in net.pipes), resolution_step(event))
    # the solver's own search, with the wanted step as one more travel time: dt stays at or
    # under it (within the search's few percent) and no pipe's wave speed moves more than that
    travel = [p.length / p.wave_speed for p in net.pipes]
    dt, _, _ = choose_time_step([*travel, wanted])
    return EventSetup(event, model, dt, duration or default_duration(event))


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
    )


def run_event(
    analysis: Analysis,
    event: ValveEvent,
    duration: float | None = None,
    progress: Callable[[float], None] | None = None,
    whole_tree: bool = True,
) -> EventRun:
    """Simulate one valve event (``simulate``; the whole service tree by default)."""
    setup = prepare_event(analysis, event, duration, whole_tree)
    result = simulate(setup.network, setup.duration, dt=setup.dt, progress=progress)
    return read_back(analysis, setup, result)


#: Events run together in one stacked simulation by ``check --transient`` [D: tuned with
#: benchmarks/bench_transient.py; larger batches waste steps on their shorter events].
BATCH_EVENTS = 64

#: ``check --transient`` simulates service trees of up to this many pipes whole, larger
#: ones by the path model [D]. Measured (2026-12-02, ``python
#: benchmarks/path_vs_whole.py``: every quick valve of the samples and every 19th of
#: the benchmark tower, 101 events): the path model's peak was 0.97 to 1.14 times the
#: whole tree's (median 1.02), with the same cavitation verdicts. Whole 200-pipe riser
#: trees of the tower would cost about 50 times their path models (section-steps), beyond
#: the 10 s budget of a 500-fixture building.
WHOLE_TREE_PIPES = 60

METHOD_WHOLE = "simulation, whole service tree"
METHOD_PATH = "simulation, path model"

_WORK: Analysis | None = None  # the analysis a forked worker process reads


# peak, minimum, cavitation, cavity away, peak per simulated pipe
Outcome = tuple[float, float, bool, str | None, dict[str, float]]


def _cavity_away(run: EventRun) -> str | None:
    """Where the column first separated, when it did not at the valve (None if it did
    there, or nowhere)."""
    if not run.cavities or any(c.point == run.event.point for c in run.cavities):
        return None
    first = run.cavities[0]
    return f"at {first.point}" if first.point else f"in pipe {first.pipe}"


def _run_batch(batch: list[tuple[int, bool]]) -> list[Outcome]:
    """Runs of some of ``_WORK``'s events (index, whole tree?), stacked into one simulation."""
    assert _WORK is not None
    analysis = _WORK
    setups = [
        prepare_event(analysis, analysis.surge.events[i], whole_tree=whole) for i, whole in batch
    ]
    results = simulate_many(
        [s.network for s in setups], [s.duration for s in setups], [s.dt for s in setups]
    )
    runs = [read_back(analysis, s, r) for s, r in zip(setups, results, strict=True)]
    return [
        (
            run.peak,
            run.minimum,
            bool(run.result.cavitation),
            _cavity_away(run),
            run.pipe_max,
        )
        for run in runs
    ]


def _whole_tree(analysis: Analysis, todo: list[int]) -> dict[int, bool]:
    """Whether each event's service tree is small enough to simulate whole."""
    sizes = {side: Counter(tree.root_of.values()) for side, tree in analysis.network.trees.items()}
    found = {}
    for i in todo:
        event = analysis.surge.events[i]
        root = analysis.network.trees[event.side].root_of[event.point]
        found[i] = sizes[event.side][root] - 1 <= WHOLE_TREE_PIPES  # nodes - 1 = pipes
    return found


def _batches(analysis: Analysis, todo: list[int]) -> list[list[tuple[int, bool]]]:
    """Events in runs of ``BATCH_EVENTS``, grouped by about how many steps they take (the
    stacked run lasts as long as its longest member); fixed by the layout alone, so the
    results do not depend on the number of workers."""
    whole = _whole_tree(analysis, todo)

    def steps(i: int) -> float:  # about: the shortest pipe may ask for a finer step
        event = analysis.surge.events[i]
        return default_duration(event) / resolution_step(event)

    ordered = [(i, whole[i]) for i in sorted(todo, key=lambda i: (-steps(i), i))]
    # longest first, so that the workers end together
    return [ordered[j : j + BATCH_EVENTS] for j in range(0, len(ordered), BATCH_EVENTS)]


def apply_transient(
    analysis: Analysis, quick_only: bool = True, workers: int | None = None
) -> None:
    """Replace the screening peak/min of each (quick) valve event with the simulated ones.

    Events are independent: they run in stacked batches (one vectorised simulation each),
    and a large building spreads the batches over the machine's cores (forked workers).
    Results are applied in event order.
    """
    global _WORK
    todo = [i for i, e in enumerate(analysis.surge.events) if e.quick or not quick_only]
    batches = _batches(analysis, todo)
    workers = min(workers or os.cpu_count() or 1, 8, len(batches))
    _WORK = analysis
    try:
        if workers > 1 and "fork" in mp.get_all_start_methods():
            context = mp.get_context("fork")
            with ProcessPoolExecutor(workers, mp_context=context) as pool:
                outcomes = list(pool.map(_run_batch, batches))
        else:
            outcomes = [_run_batch(batch) for batch in batches]
    finally:
        _WORK = None
    found = {
        i: (whole, out)
        for batch, outs in zip(batches, outcomes, strict=True)
        for (i, whole), out in zip(batch, outs, strict=True)
    }
    for index in todo:
        whole, (peak, minimum, cavitation, cavity_at, pipe_max) = found[index]
        event = analysis.surge.events[index]
        if not math.isfinite(peak):
            raise RuntimeError(f"transient run for {event.fixture.id} diverged")
        event.method = METHOD_WHOLE if whole else METHOD_PATH
        event.unprotected_peak = event.peak = peak
        event.surge = peak - event.static_max
        event.min_pressure = minimum
        event.column_separation = cavitation
        event.cavity_at = cavity_at
        event.pipe_peaks = pipe_max
