"""The analysis result: one typed record per layout, built once by ``analyse``, then only read.

Three stages fill it, each from the one before (engineering-basis §3–10):

- :class:`SteadyState`: demand, velocity, friction, static and residual pressure;
- :class:`SurgeScreening`: per quick-closing valve side, the screening formulas
  (:class:`ValveEvent`), arrester reach and service;
- :class:`TransientOutcome`: where the method-of-characteristics solver ran, its figures
  for that valve side, kept beside the screening event, never written over it.

:class:`Analysis` holds all three, and :attr:`Analysis.valve_events` the events as the
rules judge them: the screening event, or a copy carrying the simulated figures and the
simulation's method where one ran. Every record is frozen, arrays are read-only and
mappings are read-only views, so a rule or a reporter cannot change what another reads.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, fields, replace
from types import MappingProxyType
from typing import Any

import numpy as np

from rulecheck.input.model import Fixture, Layout
from rulecheck.input.network import Network
from rulecheck.input.profiles import Profile
from rulecheck.physics.water import WaterProperties

#: method labels a figure carries (messages, JSON ``method``)
METHOD_SCREENING = "screening"
METHOD_WHOLE = "simulation, whole service tree"
METHOD_PATH = "simulation, path model"

#: ``check --transient`` simulates service trees of up to this many pipes whole, larger
#: ones by the path model (the default of ``AnalysisOptions.whole_tree_pipes``) [D].
#: Measured (2026-12-02, ``python benchmarks/path_vs_whole.py``: every quick valve of
#: the samples and every 19th of the benchmark tower, 101 events): the path model's peak
#: was 0.97 to 1.14 times the whole tree's (median 1.02), with the same cavitation
#: verdicts. Whole 200-pipe riser trees of the tower would cost about 50 times their path
#: models (section-steps), beyond the 10 s budget of a 500-fixture building.
WHOLE_TREE_PIPES = 60


@dataclass(frozen=True)
class AnalysisOptions:
    """What to compute; separate from the rule settings (which judge, not compute).

    ``transient``: simulate the quick-closing valves (method of characteristics) and let
    the surge rules judge the simulated figures; ``all_valves``: simulate every valve, not
    only the quick ones; ``whole_tree_pipes``: service trees up to this many pipes are
    simulated whole, larger ones as path models; ``workers``: processes for the transient
    runs (``None``: the machine's cores, at most 8).
    """

    transient: bool = False
    all_valves: bool = False
    whole_tree_pipes: int = WHOLE_TREE_PIPES
    workers: int | None = None


def frozen_array(values: Any, dtype: Any = float) -> np.ndarray:
    """``values`` as a numpy array nobody can write to."""
    array = np.array(values, dtype=dtype)
    array.flags.writeable = False
    return array


def frozen_map(values: Mapping[Any, Any]) -> Mapping[Any, Any]:
    """A read-only view of a fresh copy of ``values``."""
    return MappingProxyType(dict(values))


@dataclass(frozen=True)
class SteadyState:
    """Steady hydraulics; arrays are indexed like ``layout.pipes``, mappings by point id."""

    layout: Layout
    network: Network
    profile: Profile
    water: Mapping[str, WaterProperties]  # "cold" / "hot"
    wsfu: np.ndarray  # fixture units carried, in profile.fixture_unit (WSFU or LU)
    fixtures_served: np.ndarray  # count of fixtures downstream [-]
    flow: np.ndarray  # design flow [m³/s]
    velocity: np.ndarray  # [m/s]
    friction_drop: np.ndarray  # friction pressure drop incl. fittings allowance [Pa]
    # demand curve (engineering-basis §3.2): the project's setting, each pipe's share of
    # fixture units on flushometer valves [-] and whether it reads the flushometer column
    demand_curve: str
    flushometer_share: np.ndarray
    flushometer_column: np.ndarray
    static_max: Mapping[str, float]  # per node, gauge [Pa], floored at p_v − p_atm
    static_min: Mapping[str, float]
    # points where the static column cannot stand (static min at the vapour pressure: the
    # supply cannot lift water there at rest, the column separates)
    static_separated: frozenset[str]
    # pressure left at design flow [Pa]: static min less lift, friction and device losses.
    # Below zero it is not a pressure but a shortfall: the design flow cannot be delivered.
    residual: Mapping[str, float]

    def water_for(self, service: str) -> WaterProperties:
        return self.water["cold" if service == "cold" else "hot"]

    def fixture_residual(self, fixture: Fixture) -> tuple[float, str]:
        """The lower residual pressure of the fixture's sides and which side it is."""
        sides = [
            (self.residual[p], s)
            for s, p in (("cold", fixture.cold), ("hot", fixture.hot))
            if p is not None and p in self.residual
        ]
        return min(sides)


@dataclass(frozen=True)
class ValveEvent:
    """One valve closing on one side of one fixture, as the screening formulas see it."""

    fixture: Fixture
    side: str  # cold | hot
    point: str
    path: tuple[int, ...]  # pipe indices from the valve to the root, nearest first
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
    column_momentum: float  # ρ·Σ(L·Δv) of the stopped column [Pa·s] (closure time for a limit)
    protected_by: str | None
    column_separation: bool  # unprotected minimum reaches vapour pressure
    joukowsky: float = 0.0  # screening ρ·a₁·Δv₁ [Pa]
    surge_formula: str = "joukowsky"  # screening formula of ``surge``: joukowsky | slow-closure
    # peak pressure per pipe id [Pa gauge]: screening, the valve's surge on every path pipe
    # (pipe_peaks_on_path); a simulation, each simulated pipe's own envelope maximum
    pipe_peaks: Mapping[str, float] = field(default_factory=lambda: MappingProxyType({}))
    method: str = METHOD_SCREENING
    nearby_air_chambers: tuple[str, ...] = ()
    # where a simulated column separated away from the valve ("at X" / "in pipe P");
    # None at the valve itself, and for the screening
    cavity_at: str | None = None
    # why a simulation was asked for but the screening figures stand (None: not asked)
    screening_reason: str | None = None


@dataclass(frozen=True)
class SurgeScreening:
    """Screening of every valve side, with arrester reach and service."""

    wave_speed: np.ndarray  # per pipe [m/s]
    events: tuple[ValveEvent, ...]
    served: Mapping[str, tuple[tuple[Fixture, str, float], ...]]  # arrester -> (fx, side, WSFU)
    within_reach: Mapping[tuple[str, str], tuple[tuple[float, str], ...]]  # (point, service)
    # per service: adjacency of its tree and the fixture units at each point (wsfu_within)
    side_index: Mapping[str, tuple[Mapping[str, Any], Mapping[str, float]]]
    # allowable pressure of each pipe (by id), its material and size at its service
    # temperature [Pa]
    pipe_rating: Mapping[str, float]


@dataclass(frozen=True)
class TransientOutcome:
    """What the method-of-characteristics run gave for one valve event.

    ``method`` names the model (:data:`METHOD_WHOLE` or :data:`METHOD_PATH`); when the
    run could not be made or was cut short, ``ran`` is False, ``note`` says why, and the
    screening figures stand for that valve.
    """

    method: str
    ran: bool
    peak: float = 0.0  # [Pa gauge]
    minimum: float = 0.0  # [Pa gauge]
    column_separation: bool = False
    cavity_at: str | None = None
    pipe_peaks: tuple[tuple[str, float], ...] = ()  # (pipe id, its own peak [Pa gauge])
    note: str | None = None


def judged_event(event: ValveEvent, outcome: TransientOutcome | None) -> ValveEvent:
    """The event as the rules judge it: the screening one, or a copy with the simulated
    peak, minimum, rise, cavitation and per-pipe peaks and the simulation's method.

    The copy keeps the screening-only figures (critical time, Joukowsky ρ·a·Δv, minimum
    safe closure time), whose labels say they come from the screening formulas.
    """
    if outcome is None:
        return event
    if not outcome.ran:
        return replace(event, screening_reason=outcome.note)
    return replace(
        event,
        method=outcome.method,
        unprotected_peak=outcome.peak,
        peak=outcome.peak,
        surge=outcome.peak - event.static_max,
        min_pressure=outcome.minimum,
        column_separation=outcome.column_separation,
        cavity_at=outcome.cavity_at,
        pipe_peaks=MappingProxyType(dict(outcome.pipe_peaks)),
    )


@dataclass(frozen=True)
class Analysis(SteadyState):
    """Everything the rules and reporters read about one layout (build it with :meth:`of`)."""

    surge: SurgeScreening
    # aligned with ``surge.events``: the run for that event, None where none was asked
    transient: tuple[TransientOutcome | None, ...]
    # the valve events as judged (see :func:`judged_event`), aligned with ``surge.events``
    valve_events: tuple[ValveEvent, ...]
    options: AnalysisOptions

    @classmethod
    def of(
        cls,
        steady: SteadyState,
        surge: SurgeScreening,
        transient: tuple[TransientOutcome | None, ...] | None = None,
        options: AnalysisOptions | None = None,
    ) -> Analysis:
        """The full analysis from its stages."""
        outcomes = transient if transient is not None else (None,) * len(surge.events)
        if len(outcomes) != len(surge.events):
            raise ValueError("transient outcomes must align with the screening events")
        judged = tuple(judged_event(e, o) for e, o in zip(surge.events, outcomes, strict=True))
        parts = {f.name: getattr(steady, f.name) for f in fields(SteadyState)}
        return cls(
            **parts,
            surge=surge,
            transient=tuple(outcomes),
            valve_events=judged,
            options=options or AnalysisOptions(),
        )
