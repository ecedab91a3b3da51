"""One layout sized: load, size the pipes, add arresters, check the result.

``size_file(path, settings)`` → :class:`SizedFile`. The sizing itself is
:func:`rulecheck.analysis.sizing.size_pipes` (pure); this module gathers what it holds
— each pipe's velocity limit as the velocity-limit rule reads it (its data in
``rules/hydraulic-rules.yaml`` with the ``rulecheck.toml`` overrides) and the code minimum
sizes (``rules/code-sizes.yaml``) — then adds the arresters
(:mod:`rulecheck.analysis.arrester_plan`) and runs the rules on the sized layout.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

import yaml

from rulecheck.analysis import Analysis, analyse
from rulecheck.analysis.arrester_plan import Proposal, propose_arresters
from rulecheck.analysis.sizing import (
    Minimum,
    SizingResult,
    nominal_inches,
    size_pipes,
    sized_layout,
)
from rulecheck.analysis.steady import steady_state
from rulecheck.checks.hydraulic import velocity_limit_for
from rulecheck.engine.context import RuleContext, Settings
from rulecheck.engine.run import run_rules
from rulecheck.findings import Finding
from rulecheck.input import load_layout
from rulecheck.input.model import Layout
from rulecheck.input.network import build_network
from rulecheck.input.rulebook import rule_specs
from rulecheck.pipeline import _collector_paused
from rulecheck.resources import read_text


@dataclass(frozen=True)
class SizedFile:
    path: str
    layout: Layout  # as read
    sizing: SizingResult
    proposals: tuple[Proposal, ...]
    analysis: Analysis | None  # of the sized layout with its arresters (None: infeasible)
    findings: tuple[Finding, ...]


@cache
def code_sizes() -> dict:
    """``rules/code-sizes.yaml``: the water-service and fixture-supply minimums."""
    return yaml.safe_load(read_text("rules", "code-sizes.yaml"))


def code_minimums(layout: Layout) -> dict[str, Minimum]:
    """Per pipe id, the largest code minimum that applies to it (IPC 603.1 for a pipe
    leaving a supply; IPC Table 604.5 for the pipe ending at a fixture's point)."""
    data = code_sizes()
    supplies = {s.id for s in layout.supplies}
    service = data["water_service"]
    table = data["fixture_supply"]["sizes"]
    source = data["fixture_supply"]["source"]
    at_point: dict[str, Minimum] = {}
    for fx in layout.fixtures:
        label = table.get(fx.type.id)
        if label is None:
            continue
        inches = nominal_inches(str(label)) or 0.0
        for point in (fx.cold, fx.hot):
            if point is not None and inches > at_point.get(point, Minimum(0.0, "")).inches:
                at_point[point] = Minimum(
                    inches, f"code minimum {label} in for {fx.type.id} {fx.id} ({source})"
                )
    found: dict[str, Minimum] = {}
    for pipe in layout.pipes:
        options = []
        if pipe.start in supplies and pipe.service == "cold":
            inches = nominal_inches(str(service["size"])) or 0.0
            options.append(
                Minimum(
                    inches,
                    f"code minimum {service['size']} in, water service ({service['source']})",
                )
            )
        if pipe.end in at_point:
            options.append(at_point[pipe.end])
        if options:
            found[pipe.id] = max(options, key=lambda m: m.inches)
    return found


def velocity_limits(analysis_like: Analysis, settings: Settings) -> list[float]:
    """Each pipe's velocity limit [m/s], exactly as the velocity-limit rule reads it."""
    ctx = RuleContext(analysis_like, rule_specs()["velocity-limit"], settings)
    return [velocity_limit_for(ctx, p, i) for i, p in enumerate(analysis_like.layout.pipes)]


def size_file(
    path: str | Path, settings: Settings | None = None, profile: str | None = None
) -> SizedFile:
    """Size one layout file (``InputError`` for a bad file)."""
    settings = settings or Settings()
    with _collector_paused():
        layout = load_layout(path, profile)
        steady = steady_state(layout, build_network(layout))
        limits = velocity_limits(steady, settings)  # type: ignore[arg-type]
        sizing = size_pipes(steady, limits, code_minimums(layout))
        if not sizing.feasible:
            return SizedFile(layout.path, layout, sizing, (), None, ())
        sized = analyse(sized_layout(layout, sizing.sizes))
        proposals, final = propose_arresters(sized, analyse)
        findings = run_rules(final, settings)
    return SizedFile(layout.path, layout, sizing, tuple(proposals), final, tuple(findings))
