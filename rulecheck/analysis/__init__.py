"""The analysis stage: one layout in, one frozen :class:`Analysis` out.

``analyse(layout, options)`` runs, in order: the service trees (``input.network``), the
steady hydraulics (``steady``), the water-hammer screening (``screening``) and, when
``options.transient`` asks for it, the method-of-characteristics runs (``transient_run``
over ``transient_model``). Each stage reads the ones before it and nothing writes back.
"""

from __future__ import annotations

from rulecheck.analysis.result import (
    Analysis,
    AnalysisOptions,
    SteadyState,
    SurgeScreening,
    TransientOutcome,
    ValveEvent,
)
from rulecheck.analysis.screening import screen_surges
from rulecheck.analysis.steady import steady_state
from rulecheck.input.model import Layout
from rulecheck.input.network import build_network

__all__ = [
    "Analysis",
    "AnalysisOptions",
    "SteadyState",
    "SurgeScreening",
    "TransientOutcome",
    "ValveEvent",
    "analyse",
]


def analyse(layout: Layout, options: AnalysisOptions | None = None) -> Analysis:
    """Analyse one layout: steady hydraulics, surge screening and, if asked, transients."""
    options = options or AnalysisOptions()
    steady = steady_state(layout, build_network(layout))
    surge = screen_surges(steady)
    screened = Analysis.of(steady, surge, options=options)
    if not options.transient:
        return screened
    from rulecheck.analysis.transient_run import simulate_valves  # numpy solver, on demand

    return Analysis.of(steady, surge, simulate_valves(screened, options), options)
