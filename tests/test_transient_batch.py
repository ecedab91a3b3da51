"""Stacked transient runs: several networks advanced together give each network's own result.

``simulate_many`` is the same method-of-characteristics computation as ``simulate``
on arrays that hold several independent networks, each on its own dt and duration
[D]. These tests pin that down to round-off, including the parts that differ per
network (time step, duration, fluid, arresters on and off their stop, cavities), and
that ``check --transient`` gives the same numbers however its events are grouped.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
from test_transient_validation import discontinuous, single_pipe, tee

from rulecheck.physics.transient import (
    ClosingValve,
    GasArrester,
    TransientNetwork,
    TransientPipe,
    TransientResult,
    simulate,
    simulate_many,
)
from rulecheck.pipeline import analyse_file

SAMPLES = Path(__file__).resolve().parent.parent / "samples"


def hot_branch() -> TransientNetwork:
    """Warm water (60 °C properties) in a tee with an arrester away from the valve, precharged
    above the static pressure so that it starts on its stop [D: test network]."""
    d = 0.025
    q = 1.2 * math.pi * d * d / 4
    pipes = (
        TransientPipe(0, 1, 30.0, d, 1250.0, 0.02, q),
        TransientPipe(1, 2, 12.0, d, 1250.0, 0.02, q),
        TransientPipe(1, 3, 4.0, 0.015, 1250.0, 0.02, 0.0),
    )
    return TransientNetwork(
        4,
        pipes,
        (0.0, 1.0, 1.5, 1.2),
        {0: 45.0},
        ClosingValve(2, 0.01, law=((0.0, 1.0), (0.5, 0.2), (1.0, 0.0))),
        arresters=(GasArrester(3, 40e-6, 600e3),),
        density=983.2,  # [kg/m^3] water at 60 °C [S: IAPWS-IF97]
        vapour_pressure=19946.0,  # absolute [Pa] at 60 °C [S: IAPWS-IF97]
    )


CASES = [
    # (network, duration [s], dt [s] or None)
    (single_pipe(), 1.6, 0.01),  # square wave
    (single_pipe(head=10.0, v0=1.0), 1.0, 0.005),  # vapour cavity at the valve and in the pipe
    (single_pipe(30.0, arresters=(GasArrester(1, 2e-3, 2e5),)), 0.5, 0.002),  # arrester at valve
    (tee(0.02, closure=0.05, branches=3), 0.5, None),  # junction, friction, chosen dt
    (hot_branch(), 0.3, None),  # other fluid, arrester off the valve, closure table
    (single_pipe(25.0, arresters=(GasArrester(1, 1e-3, 3e5, stop=False),)), 0.4, 0.0025),
]


def assert_same(a: TransientResult, b: TransientResult) -> None:
    """Every field equal to round-off (1e-9 relative to the field's scale)."""
    for field in dataclasses.fields(a):
        x, y = getattr(a, field.name), getattr(b, field.name)
        if field.name in ("cavity_events", "pipe_cavity_events"):
            assert len(x) == len(y), field.name
            for u, v in zip(x, y, strict=True):
                assert np.allclose(u, v, rtol=1e-9, atol=0.0, equal_nan=True), field.name
            continue
        xs = x if isinstance(x, tuple) and x and isinstance(x[0], np.ndarray) else [x]
        ys = y if isinstance(y, tuple) and y and isinstance(y[0], np.ndarray) else [y]
        assert len(xs) == len(ys), field.name
        for u, v in zip(xs, ys, strict=True):
            u, v = np.asarray(u, dtype=float), np.asarray(v, dtype=float)
            assert u.shape == v.shape, field.name
            scale = max(float(np.max(np.abs(u), initial=0.0)), 1e-300)
            assert np.allclose(u, v, rtol=0.0, atol=1e-9 * scale), field.name


def test_stacked_run_matches_each_network_alone() -> None:
    nets, durations, dts = zip(*CASES, strict=True)
    alone = [simulate(n, d, dt=s) for n, d, s in CASES]
    stacked = simulate_many(nets, durations, dts)
    assert len(stacked) == len(CASES)
    for one, many in zip(alone, stacked, strict=True):
        assert_same(one, many)
    # the cases really differ in what the stack must keep apart
    assert len({r.dt for r in stacked}) >= 4
    assert stacked[1].cavitation and not stacked[0].cavitation
    assert stacked[2].arrester_gas[0].size == stacked[2].t.size
    assert stacked[4].arrester_gas[0][0] == pytest.approx(40e-6)  # started on its stop


def test_order_of_networks_does_not_change_results() -> None:
    nets, durations, dts = zip(*CASES, strict=True)
    forward = simulate_many(nets, durations, dts)
    backward = simulate_many(nets[::-1], durations[::-1], dts[::-1])
    for a, b in zip(forward, backward[::-1], strict=True):
        assert_same(a, b)


def test_nothing_is_recorded_after_a_network_ends() -> None:
    """A network that stops before its cavity forms shows none, though the stack runs on."""
    low = single_pipe(head=10.0, v0=1.0)
    later = simulate(low, 1.0, dt=0.005)
    formed = min(t0 for _, t0, _ in later.cavity_events)
    assert formed > 0.05
    short, long_ = simulate_many([low, single_pipe()], [0.05, 1.6], [0.005, 0.01])
    assert short.t[-1] == pytest.approx(0.05) and len(short.t) == 11
    assert not short.cavitation and short.max_cavity_volume == 0.0
    assert_same(short, simulate(low, 0.05, dt=0.005))
    assert_same(long_, simulate(single_pipe(), 1.6, dt=0.01))


def test_stacked_run_checks_its_arguments() -> None:
    with pytest.raises(ValueError, match="one duration"):
        simulate_many([single_pipe()], [0.1, 0.2])
    with pytest.raises(ValueError, match="duration must be > 0"):
        simulate_many([single_pipe(), single_pipe()], [0.1, 0.0])
    assert simulate_many([], []) == []
    # the second network's node 1 breaks continuity: the message says which
    with pytest.raises(ValueError, match=r"continuity at nodes \[\(1, 1\)\]"):
        simulate_many([single_pipe(), discontinuous()], [0.1, 0.1])


def _transient_numbers(
    monkeypatch: pytest.MonkeyPatch, batch: int, workers: int, whole: bool
) -> list:
    from rulecheck.analysis import AnalysisOptions, transient_run

    monkeypatch.setattr(transient_run, "BATCH_EVENTS", batch)
    options = AnalysisOptions(
        transient=True, whole_tree_pipes=1000 if whole else 0, workers=workers
    )
    analysis = analyse_file(SAMPLES / "fernhill-clinic.yaml", options=options)
    return [
        (e.fixture.id, e.side, e.peak, e.min_pressure, e.column_separation, e.method)
        for e in analysis.valve_events
        if e.quick
    ]


@pytest.mark.parametrize("whole", [True, False], ids=["whole tree", "path model"])
def test_check_transient_does_not_depend_on_grouping_or_workers(
    monkeypatch: pytest.MonkeyPatch, whole: bool
) -> None:
    """Batches of 5 on two workers, one batch on one worker, and one run per event agree."""
    from rulecheck.analysis.result import METHOD_PATH, METHOD_WHOLE
    from rulecheck.analysis.transient_model import run_event

    small = _transient_numbers(monkeypatch, 5, 2, whole)
    one = _transient_numbers(monkeypatch, 1000, 1, whole)
    analysis = analyse_file(SAMPLES / "fernhill-clinic.yaml")
    alone = []
    for e in (e for e in analysis.surge.events if e.quick):
        run = run_event(analysis, e, whole_tree=whole)
        alone.append((e.fixture.id, e.side, run.peak, run.minimum, run.result.cavitation))
    assert len(small) == len(one) == len(alone) > 20
    for a, b, c in zip(small, one, alone, strict=True):
        assert a[:2] == b[:2] == c[:2]
        assert a[2] == pytest.approx(b[2], rel=1e-9) and a[2] == pytest.approx(c[2], rel=1e-9)
        assert a[3] == pytest.approx(b[3], rel=1e-9, abs=1e-3)
        assert a[3] == pytest.approx(c[3], rel=1e-9, abs=1e-3)
        assert a[4] == b[4] == c[4]
        assert a[5] == b[5] == (METHOD_WHOLE if whole else METHOD_PATH)


def test_small_service_trees_are_simulated_whole() -> None:
    """The samples' trees (6-15 pipes) are under the limit: every event runs whole."""
    from rulecheck.analysis import AnalysisOptions
    from rulecheck.analysis.result import METHOD_WHOLE, WHOLE_TREE_PIPES

    options = AnalysisOptions(transient=True, workers=1)
    analysis = analyse_file(SAMPLES / "corner-bistro.yaml", options=options)
    sizes = [len(tree.root_of) - 1 for tree in analysis.network.trees.values()]
    assert max(sizes) <= WHOLE_TREE_PIPES
    assert {e.method for e in analysis.valve_events if e.quick} == {METHOD_WHOLE}
