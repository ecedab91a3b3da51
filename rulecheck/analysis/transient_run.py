"""Run the method-of-characteristics model of every (quick) valve event of an analysis.

Events are independent: they run in stacked batches (one vectorised simulation each), and
a large building spreads the batches over the machine's cores (forked worker processes
that receive the analysis through the pool's initializer). Events that agree on
everything their run depends on run once. The result is one :class:`TransientOutcome`
per screening event (None where no run was asked), in event order; an event the solver
cannot run (``transient_limits``) gets an outcome that says why, and its screening
figures stand.
"""

from __future__ import annotations

import gc
import multiprocessing as mp
import os
from collections import Counter
from concurrent.futures import ProcessPoolExecutor

from rulecheck.analysis.result import (
    METHOD_PATH,
    METHOD_WHOLE,
    Analysis,
    AnalysisOptions,
    TransientOutcome,
    ValveEvent,
)
from rulecheck.analysis.transient_limits import MAX_TRACE_BYTES, RunRefused, stack_bytes
from rulecheck.analysis.transient_model import (
    EventRun,
    EventSetup,
    FrictionTables,
    default_duration,
    prepare_event,
    resolution_step,
    run_on,
)
from rulecheck.physics.transient import simulate_many, step_loop

#: Events run together in one stacked simulation by ``check --transient`` [D: tuned with
#: benchmarks/bench_transient.py; larger batches waste steps on their shorter events].
BATCH_EVENTS = 64


def _cavity_away(run: EventRun) -> str | None:
    """Where the column first separated, when it did not at the valve (None if it did
    there, or nowhere)."""
    if not run.cavities or any(c.point == run.event.point for c in run.cavities):
        return None
    first = run.cavities[0]
    return f"at {first.point}" if first.point else f"in pipe {first.pipe}"


def _stacks(setups: list[tuple[int, EventSetup]]) -> list[list[tuple[int, EventSetup]]]:
    """Setups in stacked runs whose recorded histories stay within ``MAX_TRACE_BYTES``
    (a stacked run records every member over its longest member's steps)."""
    stacks: list[list[tuple[int, EventSetup]]] = []
    for item in sorted(setups, key=lambda js: (-js[1].steps, js[0])):
        if stacks:
            top = [*stacks[-1], item]
            arresters = sum(len(s.network.arresters) for _, s in top)
            if stack_bytes(top[0][1].steps, len(top), arresters) <= MAX_TRACE_BYTES:
                stacks[-1].append(item)
                continue
        stacks.append([item])
    return stacks


class _Work:
    """What a worker process reads: the analysis, set once per process by the pool's
    initializer (forked workers share the parent's memory, nothing is copied)."""

    analysis: Analysis | None = None


def _start_worker(analysis: Analysis) -> None:
    _Work.analysis = analysis


def _run_batch(batch: list[tuple[int, bool]]) -> list[TransientOutcome]:
    """Runs of some of the events (index, whole tree?), stacked into simulations."""
    analysis = _Work.analysis
    if analysis is None:
        raise RuntimeError("transient worker started without its analysis")
    return run_batch(analysis, batch)


def _refused(reason: str) -> TransientOutcome:
    return TransientOutcome(method="screening", ran=False, note=f"not simulated: {reason}")


def run_batch(analysis: Analysis, batch: list[tuple[int, bool]]) -> list[TransientOutcome]:
    """The outcomes of some of ``analysis``'s events (index, whole tree?), in batch order."""
    outcomes: list[TransientOutcome] = [_refused("not run")] * len(batch)
    setups = []
    friction = FrictionTables(analysis)
    for j, (i, whole) in enumerate(batch):
        event = analysis.surge.events[i]
        try:
            setups.append((j, prepare_event(analysis, event, None, whole, friction)))
        except RunRefused as refusal:
            outcomes[j] = _refused(refusal.reason)
            if whole:  # a pipe off the valve's path may be what passed a bound
                try:
                    setups.append((j, prepare_event(analysis, event, None, False, friction)))
                except RunRefused as again:
                    outcomes[j] = _refused(again.reason)
    for stack in _stacks(setups):
        results = simulate_many(
            [s.network for _, s in stack], [s.duration for _, s in stack], [s.dt for _, s in stack]
        )
        for (j, setup), result in zip(stack, results, strict=True):
            try:
                run = run_on(analysis, setup, result)
            except RunRefused as refusal:
                outcomes[j] = _refused(refusal.reason)
                continue
            method = METHOD_WHOLE if setup.whole_tree else METHOD_PATH
            outcomes[j] = TransientOutcome(
                method="; ".join([method, *run.notes]),
                ran=True,
                peak=run.peak,
                minimum=run.minimum,
                column_separation=bool(run.result.cavitation),
                cavity_at=_cavity_away(run),
                pipe_peaks=tuple(sorted(run.pipe_max.items())),
                note="; ".join(run.notes) or None,
            )
    return outcomes


def _whole_tree(analysis: Analysis, todo: list[int], limit: int) -> dict[int, bool]:
    """Whether each event's service tree has at most ``limit`` pipes (simulated whole)."""
    sizes = {side: Counter(tree.root_of.values()) for side, tree in analysis.network.trees.items()}
    found = {}
    for i in todo:
        event = analysis.surge.events[i]
        root = analysis.network.trees[event.side].root_of[event.point]
        found[i] = sizes[event.side][root] - 1 <= limit  # nodes - 1 = pipes
    return found


def _batches(analysis: Analysis, todo: list[int], limit: int) -> list[list[tuple[int, bool]]]:
    """Events in runs of ``BATCH_EVENTS``, grouped by about how many steps they take (the
    stacked run lasts as long as its longest member); fixed by the layout alone, so the
    results do not depend on the number of workers."""
    whole = _whole_tree(analysis, todo, limit)

    def steps(i: int) -> float:  # about: the shortest pipe may ask for a finer step
        event = analysis.surge.events[i]
        return default_duration(event) / resolution_step(event)

    ordered = [(i, whole[i]) for i in sorted(todo, key=lambda i: (-steps(i), i))]
    # longest first, so that the workers end together
    return [ordered[j : j + BATCH_EVENTS] for j in range(0, len(ordered), BATCH_EVENTS)]


def same_run(event: ValveEvent) -> tuple:
    """What decides an event's run: events that agree on it (several fixtures of one type
    on one point) run once."""
    return (
        event.side,
        event.point,
        event.flow,
        event.closure_time,
        event.critical_time,
        tuple(event.path),
        event.protected_by,
    )


def simulate_valves(
    analysis: Analysis, options: AnalysisOptions
) -> tuple[TransientOutcome | None, ...]:
    """One outcome per event of ``analysis.surge.events``: the run of each quick valve (of
    every valve with ``options.all_valves``), None for the others."""
    events = analysis.surge.events
    wanted = [i for i, e in enumerate(events) if e.quick or options.all_valves]
    first: dict[tuple, int] = {}
    for i in wanted:
        first.setdefault(same_run(events[i]), i)
    batches = _batches(analysis, sorted(first.values()), options.whole_tree_pipes)
    workers = min(options.workers or os.cpu_count() or 1, 8, len(batches))
    step_loop()  # the compiled loop built (or found in the cache) once, before workers fork
    if workers > 1 and "fork" in mp.get_all_start_methods():
        gc.freeze()  # the collector then leaves the pages the workers share uncopied
        try:
            with ProcessPoolExecutor(
                workers,
                mp_context=mp.get_context("fork"),
                initializer=_start_worker,
                initargs=(analysis,),
            ) as pool:
                outcomes = list(pool.map(_run_batch, batches))
        finally:
            gc.unfreeze()
    else:
        outcomes = [run_batch(analysis, batch) for batch in batches]
    found = {
        i: out
        for batch, outs in zip(batches, outcomes, strict=True)
        for (i, _), out in zip(batch, outs, strict=True)
    }
    wanted_set = set(wanted)
    return tuple(
        found[first[same_run(e)]] if i in wanted_set else None for i, e in enumerate(events)
    )
