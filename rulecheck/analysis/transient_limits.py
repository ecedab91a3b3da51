"""How fine and how long one transient run may be, and when a valve is not simulated.

The layout decides a run's cost: its shortest pipe sets the time step, its longest pipe
the number of sections, the closure, the round trips and the arrester–column
oscillation its length. Every run is bounded here before anything is allocated:

- at most ``MAX_SECTIONS`` computational sections per network,
- at most ``MAX_STEPS`` time steps per run, and at most ``MAX_SECTION_STEPS``
  sections × steps (the work of the vectorised update),
- at most ``MAX_TRACE_BYTES`` of recorded histories per stacked run (valve head, flow
  and opening, each arrester's gas volume and pressure, per step).

A valve whose run would pass a bound even at its shortest useful length (the closure
and ``MIN_ROUND_TRIPS`` round trips), or whose layout the solver cannot start from (no
flow at design demand, a point the supply cannot fill, an arrester that cannot be
sized), is not simulated: ``check --transient`` keeps its screening numbers and says
why in the finding's method, ``simulate`` refuses with the reason (exit 2).

Run length [S: engineering-basis §10; multiples D]: the closure plus the longer of
``ROUND_TRIPS`` round trips 2L/a of the valve's path and ``ARRESTER_PERIODS`` periods
of the slowest arrester–column oscillation T = 2π·√(ρ·L·V/(n·p·A)) (its peak comes
near T/4 after the closure and its minimum near 3T/4). A run whose maximum or minimum
at the valve falls on its last step is run again twice as long, up to the bounds;
where a bound stops it, the result says so.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from rulecheck.physics.column import column_period
from rulecheck.physics.transient_grid import STANDARD_GRAVITY, steady_node_heads
from rulecheck.physics.transient_network import TransientNetwork

#: Time steps of one run [D: 13 times the longest sample run (1,526 steps); the step
#: loop costs 0.1–0.4 ms a step on a shared 2-core machine (measured 2026-12-02), so
#: a run at the bound takes 2–8 s].
MAX_STEPS = 20_000
#: Computational sections of one network [D: 100 times the largest sample (196)].
MAX_SECTIONS = 20_000
#: Sections × steps of one run [D: 100 times the clinic's longest run (196 × 2,405);
#: the vectorised update's share of a step grows with the sections].
MAX_SECTION_STEPS = 50_000_000
#: Recorded histories of one stacked run [bytes] [D].
MAX_TRACE_BYTES = 64 * 2**20
#: Floats recorded per step for each network and for each arrester [D: the solver's
#: valve head, flow and opening plus the result's time, pressure and flow copies; the
#: gas volume, its copy and its pressure].
FLOATS_PER_NETWORK_STEP = 6
FLOATS_PER_ARRESTER_STEP = 3

ROUND_TRIPS = 10  # round trips 2L/a after the closure [D]
MIN_ROUND_TRIPS = 2  # the shortest run worth making: the first wave and its return [D]
ARRESTER_PERIODS = 1.0  # arrester–column periods after the closure [D: peak and minimum]
MIN_DURATION = 0.1  # [s] [D]
EXTENSIONS = 6  # doublings of a run whose extreme sits on its last step [D]


class RunRefused(Exception):
    """A valve event the solver does not run: ``reason`` is plain words, ``element`` the
    layout id it is about (a pipe, point, fixture or arrester) or None, ``hint`` what to
    do (or empty)."""

    def __init__(self, reason: str, element: str | None = None, hint: str = "") -> None:
        super().__init__(reason)
        self.reason = reason
        self.element = element
        self.hint = hint


@dataclass(frozen=True)
class RunBounds:
    """What one run may take, from its network and time step."""

    sections: int
    max_steps: int  # the most steps this network may take [-]

    def steps(self, duration: float, dt: float) -> float:
        """Steps the solver takes for ``duration`` [s] (a float: inf for an absurd one)."""
        return max(1.0, math.ceil(duration / dt - 1e-9)) if duration / dt < 1e15 else math.inf

    def longest(self, dt: float) -> float:
        """The longest run [s] the bounds allow at ``dt``."""
        return self.max_steps * dt


def bounds_for(
    travel_times: Sequence[float], dt: float, arresters: int, pipe_ids: Sequence[str]
) -> RunBounds:
    """Sections and the most steps of a network whose pipes take ``travel_times`` [s] one
    way at time step ``dt`` [s]; RunRefused when its sections alone pass the bound."""
    x = np.asarray(travel_times, dtype=float) / dt
    reaches = np.maximum(1.0, np.rint(x))
    sections = float(reaches.sum() + reaches.size)
    if not math.isfinite(sections) or sections > MAX_SECTIONS:
        raise RunRefused(
            f"its run would need {sections:.3g} computational sections, over the "
            f"{MAX_SECTIONS:,} bound: {_spread(travel_times, pipe_ids)}",
            pipe_ids[int(np.argmin(x))],
        )
    per_step = 8 * (FLOATS_PER_NETWORK_STEP + FLOATS_PER_ARRESTER_STEP * arresters)
    steps = min(MAX_STEPS, MAX_SECTION_STEPS // int(sections), MAX_TRACE_BYTES // per_step)
    return RunBounds(int(sections), int(steps))


def check_spread(travel_times: Sequence[float], pipe_ids: Sequence[str]) -> None:
    """RunRefused when the longest pipe's wave travel time [s] is more than
    ``MAX_SECTIONS`` times the shortest's (every pipe has at least one reach, so the
    longest alone would then pass the bound), before a time step is searched for."""
    tt = np.asarray(travel_times, dtype=float)
    if not float(tt.max()) <= MAX_SECTIONS * float(tt.min()):
        raise RunRefused(
            f"its run would need more computational sections than the {MAX_SECTIONS:,} bound: "
            + _spread(travel_times, pipe_ids),
            pipe_ids[int(np.argmin(tt))],
        )


def _spread(travel_times: Sequence[float], pipe_ids: Sequence[str]) -> str:
    tt = np.asarray(travel_times, dtype=float)
    short, long = int(np.argmin(tt)), int(np.argmax(tt))
    return (
        f"the time step follows pipe {pipe_ids[short]}, whose wave crosses it in "
        f"{tt[short]:.3g} s, and pipe {pipe_ids[long]} takes {tt[long]:.3g} s; "
        "merge or lengthen the short pipe"
    )


def stack_bytes(steps: int, networks: int, arresters: int) -> int:
    """Bytes [bytes] the histories of ``networks`` networks with ``arresters`` arresters
    in all take over ``steps`` steps of one stacked run."""
    per_step = FLOATS_PER_NETWORK_STEP * networks + FLOATS_PER_ARRESTER_STEP * arresters
    return 8 * (steps + 1) * per_step


def start_heads(net: TransientNetwork) -> np.ndarray:
    """The steady node heads [m] the solver starts from (Darcy–Weisbach from the roots)."""
    up = np.array([p.upstream for p in net.pipes])
    dn = np.array([p.downstream for p in net.pipes])
    d = np.array([p.diameter for p in net.pipes])
    area = 0.25 * math.pi * d**2
    f_l = np.array([p.friction_factor * p.length for p in net.pipes])
    loss = f_l / (2 * STANDARD_GRAVITY * d * area**2)
    flow = np.array([p.flow for p in net.pipes])
    return steady_node_heads(net.n_nodes, up, dn, loss, flow, net.fixed_heads)


def arrester_periods(net: TransientNetwork, heads: np.ndarray) -> list[float]:
    """The arrester–column oscillation period T [s] of each arrester of ``net``: the
    column from the arrester to its root on the gas volume at the start (``heads`` [m])."""
    parent = {p.downstream: p for p in net.pipes}
    periods = []
    for gas in net.arresters:
        inertance, node = 0.0, gas.node
        while node in parent and node not in net.fixed_heads:
            pipe = parent[node]
            inertance += pipe.length / (0.25 * math.pi * pipe.diameter**2)
            node = pipe.upstream
        rho_g = net.density * STANDARD_GRAVITY
        p_rest = rho_g * (heads[gas.node] - net.elevation[gas.node]) + net.atmospheric
        volume = gas.gas_volume
        if not (gas.stop and p_rest <= gas.precharge):
            volume = gas.gas_volume * (gas.precharge / p_rest) ** (1.0 / gas.polytropic_exponent)
        periods.append(
            column_period(net.density, inertance, volume, p_rest, gas.polytropic_exponent)
        )
    return periods


def run_length(closure: float, round_trip: float, periods: Sequence[float]) -> float:
    """Default run length [s]: closure + max(ROUND_TRIPS·2L/a, ARRESTER_PERIODS·T_max)."""
    after = max(ROUND_TRIPS * max(round_trip, 1e-3), ARRESTER_PERIODS * max(periods, default=0.0))
    return max(MIN_DURATION, closure + after)


def shortest_run(closure: float, round_trip: float) -> float:
    """The shortest run [s] worth making: the closure and the first waves' return."""
    return closure + MIN_ROUND_TRIPS * max(round_trip, 1e-3)


def extreme_on_last_step(pressure: np.ndarray) -> bool:
    """Whether the largest or smallest of a valve trace [Pa] is its last value, and still
    moving (a flat trace never is)."""
    if pressure.size < 3:
        return False
    head, last = pressure[:-1], float(pressure[-1])
    span = float(np.ptp(pressure))
    tol = 1e-9 * max(span, 1.0)
    return span > 0 and (last > float(head.max()) + tol or last < float(head.min()) - tol)
