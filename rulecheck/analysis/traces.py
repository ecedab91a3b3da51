"""Pressure traces of a few valve events, for the plots of the HTML report.

The analysis keeps only each run's peaks; a plot needs the pressure at the valve
against time and the envelope along the valve's path. :func:`valve_traces` re-runs the
one-event model (:func:`rulecheck.analysis.transient_model.run_event`) for the valve
sides a report plots and returns plain records (SI, read-only arrays) a reporter can
draw without importing the solver. :func:`trace_of` turns a run already made (``simulate``)
into the same record.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace

import numpy as np

from rulecheck.analysis.result import (
    METHOD_SCREENING,
    METHOD_WHOLE,
    Analysis,
    ValveEvent,
    frozen_array,
)
from rulecheck.analysis.transient_limits import RunRefused
from rulecheck.analysis.transient_model import EventRun, build_event_network, run_event
from rulecheck.analysis.transient_run import same_run

#: At most this many valve sides are plotted per layout (the flagged ones first); each
#: plot is one more run of the solver, and a reviewer reads a handful, not hundreds [D].
MOST_PLOTS = 12
#: Without a flagged valve side, the sides with the highest peaks are plotted (the issue's
#: "worst five").
WORST = 5


@dataclass(frozen=True)
class PathPipe:
    """One pipe of the valve's path, root first, with its envelope from the run."""

    pipe: str
    start: float  # distance of its upstream end from the root [m]
    length: float  # [m]
    max_pressure: float  # [Pa gauge], static max basis (as the peak is judged)
    min_pressure: float  # [Pa gauge]
    rating: float  # allowable working pressure of its material and size [Pa]


@dataclass(frozen=True)
class ValveTrace:
    """The pressure at one valve against time and the envelope along its path."""

    fixture: str
    side: str
    point: str
    method: str  # the model run, e.g. "simulation, whole service tree"
    flagged: bool  # a violation or hazard names this fixture
    t: np.ndarray  # [s]
    pressure: np.ndarray  # at the valve as simulated (supply at its static minimum) [Pa]
    shift: float  # static max − static min at the valve: added to judge the peak [Pa]
    peak: float  # judged peak at the valve, static max basis [Pa gauge]
    minimum: float  # [Pa gauge]
    design_limit: float  # the profile's surge limit [Pa gauge]
    rating: float  # allowable pressure of the pipe at the valve [Pa]
    path: tuple[PathPipe, ...]
    dt: float  # [s]
    wave_speed_adjustment: float  # largest |a_adj/a − 1| [-]
    reaches: int  # reaches in all simulated pipes
    sized_arresters: tuple[tuple[str, float], ...]  # (arrester, gas volume we sized [m³])
    gas_volumes: tuple[tuple[str, float], ...]  # (arrester, gas volume at the start [m³])
    notes: tuple[str, ...]


def trace_of(analysis: Analysis, run: EventRun, method: str, flagged: bool = False) -> ValveTrace:
    """The plot record of a run already made."""
    event, result = run.event, run.result
    pipes = analysis.layout.pipes
    ratings = analysis.surge.pipe_rating
    path: list[PathPipe] = []
    distance = 0.0
    for index in reversed(event.path):  # root first
        pipe = pipes[index]
        if pipe.id in run.path_max:
            path.append(
                PathPipe(
                    pipe.id,
                    distance,
                    pipe.length,
                    run.path_max[pipe.id],
                    run.path_min[pipe.id],
                    ratings.get(pipe.id, float("inf")),
                )
            )
        distance += pipe.length
    nearest = pipes[event.path[0]].id if event.path else ""
    return ValveTrace(
        fixture=event.fixture.id,
        side=event.side,
        point=event.point,
        method=method,
        flagged=flagged,
        t=frozen_array(result.t),
        pressure=frozen_array(result.valve_pressure),
        shift=event.static_max - event.static_min,
        peak=run.peak,
        minimum=run.minimum,
        design_limit=analysis.profile.surge_limit,
        rating=ratings.get(nearest, float("inf")),
        path=tuple(path),
        dt=float(result.dt),
        wave_speed_adjustment=float(result.max_wave_speed_adjustment),
        reaches=int(sum(result.reaches)),
        sized_arresters=tuple(sorted(run.sized_arresters.items())),
        gas_volumes=_gas_volumes(analysis, run, "whole" in method),
        notes=tuple(run.notes),
    )


def _gas_volumes(
    analysis: Analysis, run: EventRun, whole_tree: bool
) -> tuple[tuple[str, float], ...]:
    """Each simulated arrester's gas volume at the start of the run [m³], by arrester id
    (the model is rebuilt, without running it, to learn which node each one sits on)."""
    model = build_event_network(analysis, run.event, whole_tree)
    sealed: dict[str, list[str]] = {}
    for arrester in analysis.layout.arresters:
        if arrester.kind == "sealed":
            sealed.setdefault(arrester.at, []).append(arrester.id)
    taken: dict[str, int] = {}
    volumes = []
    for gas, history in zip(model.network.arresters, run.result.arrester_gas, strict=False):
        point = model.point_ids[gas.node]
        k = taken.get(point, 0)
        taken[point] = k + 1
        names = sealed.get(point, [])
        name = names[k] if k < len(names) else f"at {point}"
        if len(history):
            volumes.append((name, float(history[0])))
    return tuple(volumes)


def _worst_first(analysis: Analysis, indices: Iterable[int]) -> list[int]:
    events = analysis.valve_events
    return sorted(indices, key=lambda i: (-events[i].peak, events[i].fixture.id, events[i].side))


def chosen_events(analysis: Analysis, flagged_fixtures: set[str]) -> list[tuple[int, bool]]:
    """The valve sides to plot, as (event index, flagged): the simulated sides of fixtures
    a violation or hazard names (worst first, at most :data:`MOST_PLOTS`), else the
    :data:`WORST` sides with the highest simulated peaks."""
    simulated = [
        i
        for i, (e, out) in enumerate(zip(analysis.valve_events, analysis.transient, strict=True))
        if out is not None and out.ran and e.method != METHOD_SCREENING
    ]
    flagged = [i for i in simulated if analysis.valve_events[i].fixture.id in flagged_fixtures]
    if flagged:
        return [(i, True) for i in _worst_first(analysis, flagged)[:MOST_PLOTS]]
    return [(i, False) for i in _worst_first(analysis, simulated)[:WORST]]


def valve_traces(analysis: Analysis, flagged_fixtures: set[str]) -> tuple[ValveTrace, ...]:
    """Re-run the chosen valve events with the model ``check --transient`` used for each
    (whole tree or path model) and return their traces; a run refused now is left out."""
    traces = []
    runs: dict[tuple, EventRun | None] = {}  # events that agree on their run share it
    for index, flagged in chosen_events(analysis, flagged_fixtures):
        event: ValveEvent = analysis.surge.events[index]
        method = analysis.valve_events[index].method
        whole = method == METHOD_WHOLE
        key = (same_run(event), whole)
        if key not in runs:
            try:
                runs[key] = run_event(analysis, event, whole_tree=whole)
            except RunRefused:
                runs[key] = None
        run = runs[key]
        if run is None:
            continue
        traces.append(trace_of(analysis, replace(run, event=event), method, flagged))
    return tuple(traces)
