"""``rulecheck explain RULE``: worked examples and snippet comments computed, not typed.

The worked example runs the same pipeline that checks user layouts on the built-in
layout ``rules/examples/dishwasher-run.yaml`` (every rule fires there once), and prints
the steps behind the rule's finding in the reader's units, then the finding itself.
Snippet comments in the rule data may hold catalog references, ``{fixture:TYPE:FIELD}``
(``min_pressure``, ``closure_time``, ``flow``) or ``{arrester:CLASS:max_wsfu}``, filled
here from the catalog in the reader's units. ``report/explain.py`` only formats.
"""

from __future__ import annotations

import argparse
import re
import sys
from collections.abc import Callable
from functools import cache
from typing import TYPE_CHECKING

from rulecheck.analysis import Analysis
from rulecheck.analysis.result import ValveEvent
from rulecheck.cli.common import UsageError
from rulecheck.engine.run import run_rules
from rulecheck.errors import EXIT_OK
from rulecheck.findings import Finding
from rulecheck.input.catalog import builtin_catalog
from rulecheck.input.profiles import arrester_classes, default_profile_id, profile_ids
from rulecheck.input.rulebook import RuleSpec, rule_specs
from rulecheck.physics.constants import STANDARD_ATMOSPHERE
from rulecheck.physics.constants import STANDARD_GRAVITY as G
from rulecheck.report.explain import explain_text
from rulecheck.resources import data_dir
from rulecheck.suggest import suggest
from rulecheck.units import fmt

if TYPE_CHECKING:  # rich is imported only by the text output
    from rich.console import Console

EXAMPLE = "examples/dishwasher-run.yaml"

Steps = Callable[[Analysis, list[Finding], str], list[str]]


@cache
def _example(units: str) -> tuple[Analysis, tuple[Finding, ...]]:
    """The built-in example analysed and checked once per unit system."""
    from dataclasses import replace

    from rulecheck.analysis import analyse
    from rulecheck.input import load_layout

    layout = load_layout(str(data_dir("rules") / EXAMPLE))
    analysis = analyse(replace(layout, units=units, path=f"rules/{EXAMPLE}"))
    return analysis, tuple(run_rules(analysis))


def example_findings(rule_id: str, units: str) -> list[Finding]:
    """What the engine reports for ``rule_id`` on the built-in example."""
    return [f for f in _example(units)[1] if f.rule == rule_id]


def _event(analysis: Analysis, fixture: str, side: str) -> ValveEvent:
    return next(e for e in analysis.surge.events if e.fixture.id == fixture and e.side == side)


def _surge_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    e = _event(a, "DW1", "hot")
    water = a.water_for("hot")
    pipe = a.layout.pipes[e.path[0]]
    speed = float(a.surge.wave_speed[e.path[0]])
    dv = e.flow / pipe.area

    def f(value: float, kind: str) -> str:
        return fmt(value, kind, units)

    quick = e.closure_time <= e.critical_time
    return [
        f"Dishwasher DW1 (solenoid, closes in {e.closure_time * 1000:.0f} ms) at the end of "
        f"pipe {pipe.id}: {f(pipe.length, 'length')} of {pipe.material.id} {pipe.size}, "
        f"hot water at {f(a.layout.hot_temperature, 'temperature')}.",
        f"water: ρ = {water.density:.1f} kg/m³, K = {water.bulk_modulus / 1e9:.3f} GPa, "
        f"vapour pressure {water.vapour_pressure / 1000:.2f} kPa abs",
        f"wave speed a = {f(speed, 'velocity')} (Korteweg–Halliwell, anchored throughout)",
        f"flow stopped {f(e.flow, 'flow')} → Δv = {f(dv, 'velocity')}",
        f"critical time T_c = Σ2L/a = {e.critical_time * 1000:.1f} ms",
        f"Joukowsky ρ·a·Δv = {f(e.joukowsky, 'pressure')}; closure "
        f"{e.closure_time * 1000:.0f} ms {'≤' if quick else '>'} T_c, so the surge is "
        f"{f(e.surge, 'pressure')}"
        + ("" if quick else " (slow-closure 2ρ·ΣL·Δv/t, capped at ρ·a·Δv)"),
        f"peak = static max {f(e.static_max, 'pressure')} + surge = "
        f"{f(e.unprotected_peak, 'pressure')}"
        f" (limit {f(a.profile.surge_limit, 'pressure')})",
        _minimum_step(a, e, units),
        f"minimum safe closure time for the limit, 2ρ·ΣL·Δv/(limit − static max): "
        f"{e.min_safe_closure * 1000:.0f} ms",
    ]


def _minimum_step(a: Analysis, e: ValveEvent, units: str) -> str:
    """The minimum, floored at the vapour pressure: below it the column separates."""
    vapour = a.water_for(e.side).vapour_pressure - STANDARD_ATMOSPHERE
    drop = f"minimum = static min {fmt(e.static_min, 'pressure', units)} − surge"
    if e.static_min - e.surge > vapour:
        return f"{drop} = {fmt(e.min_pressure, 'pressure', units)} gauge → column separation: no"
    return (
        f"{drop} would fall below the vapour pressure, {fmt(vapour, 'pressure', units)} "
        "gauge: water goes no lower, the column separates"
        + ("" if e.column_separation else f" unless arrester {e.protected_by} holds it")
    )


def _velocity_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    index = next(i for i, p in enumerate(a.layout.pipes) if p.id == "P3")
    pipe = a.layout.pipes[index]
    return [
        f"pipe P3, {pipe.material.id} {pipe.size}, inside diameter "
        f"{fmt(pipe.inner_diameter, 'diameter', units)}, carries {a.wsfu[index]:.1f} WSFU "
        "(two flushometer closets and a lavatory, public)",
        f"Hunter demand (flushometer column) → Q = {fmt(float(a.flow[index]), 'flow', units)}",
        f"v = Q/A = {fmt(float(a.velocity[index]), 'velocity', units)}",
    ]


def _static_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    node = found[0].element
    supply = a.layout.supplies[0]
    water = a.water_for("cold")
    rise = a.network.elevation[node] - supply.elevation
    return [
        f"supply {supply.id}: static pressure up to {fmt(supply.pressure_max, 'pressure', units)}"
        f" at elevation {fmt(supply.elevation, 'length', units)}, no reducing valve",
        f"{node}: {fmt(rise, 'length', units)} above it → p = p_max − ρ·g·Δz = "
        f"{fmt(supply.pressure_max, 'pressure', units)} − {water.density:.1f} kg/m³ · {G} m/s² · "
        f"{rise:.2f} m = {fmt(a.static_max[node], 'pressure', units)}",
    ]


def _residual_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    fixture = next(x for x in a.layout.fixtures if x.id == found[0].element)
    pressure, side = a.fixture_residual(fixture)
    point = fixture.side_point(side) or ""
    path = a.network.path_up(point, side)
    root = a.layout.pipes[path[-1]].start if path else point
    lines = [
        f"{fixture.id} ({fixture.type.id}) on the {side} side at {point}; the catalog asks "
        f"{fmt(fixture.type.min_pressure, 'pressure', units)} flowing",
        f"lowest static pressure at {root}: {fmt(a.static_min[root], 'pressure', units)}",
    ]
    lines += [
        f"friction in {a.layout.pipes[k].id} ({fmt(float(a.flow[k]), 'flow', units)}, "
        f"{fmt(float(a.velocity[k]), 'velocity', units)}): "
        f"−{fmt(float(a.friction_drop[k]), 'pressure', units)}"
        for k in reversed(path)
    ]
    lines.append(f"left at {point} at design flow: {fmt(pressure, 'pressure', units)}")
    return lines


def _waiver_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    waiver = a.layout.waivers[0]
    index = next(i for i, p in enumerate(a.layout.pipes) if p.id == waiver.element)
    return [
        f"waiver: {waiver.rule} on {waiver.element} ({waiver.reason})",
        f"{waiver.element} runs at {fmt(float(a.velocity[index]), 'velocity', units)}, under "
        "its limit: no velocity-limit finding on it, so the waiver matches nothing",
    ]


def _capacity_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    arrester = next(x for x in a.layout.arresters if x.id == found[0].element)
    served = a.surge.served[arrester.id]
    parts = ", ".join(f"{fx.id} {side} {units_:.1f}" for fx, side, units_ in served)
    total = sum(u for _, _, u in served)
    return [
        f"{arrester.id} (class {arrester.rating_class}) at {arrester.at} is the nearest sealed "
        f"arrester within {fmt(a.profile.arrester_distance, 'length', units)} of: {parts} WSFU",
        f"total {total:.1f} WSFU against the class maximum {arrester.capacity:g} WSFU",
    ]


def _kind_steps(a: Analysis, found: list[Finding], units: str) -> list[str]:
    arrester = next(x for x in a.layout.arresters if x.id == found[0].element)
    return [
        f"{arrester.id} at {arrester.at}: kind {arrester.kind}; profile {a.profile.id} gives "
        f"air chambers severity {a.profile.air_chamber_severity} and no surge credit",
    ]


STEPS: dict[str, Steps] = {
    "closure-time": _surge_steps,
    "surge-peak": _surge_steps,
    "column-separation": _surge_steps,
    "arrester-required": _surge_steps,
    "velocity-limit": _velocity_steps,
    "static-pressure": _static_steps,
    "residual-pressure": _residual_steps,
    "waiver-unused": _waiver_steps,
    "arrester-capacity": _capacity_steps,
    "arrester-kind": _kind_steps,
}


def worked_example(rule_id: str, units: str) -> str:
    """Steps and findings for ``rule_id`` on the built-in example, in ``units``."""
    analysis, _ = _example(units)
    found = example_findings(rule_id, units)
    lines = STEPS[rule_id](analysis, found, units) if rule_id in STEPS and found else []
    if found:
        lines.append("rulecheck reports:")
        lines += [f"  {f.severity}: {f.message}" + (f" → {f.fix}" if f.fix else "") for f in found]
    return "\n".join(lines)


REFERENCE = re.compile(r"\{(fixture|arrester):([\w-]+):(\w+)\}")
FIXTURE_FIELDS = {"min_pressure": "pressure", "closure_time": "time", "flow": "flow"}


def fill_snippet(text: str, units: str) -> str:
    """A snippet with its catalog references replaced by the catalog's values in ``units``
    (``us``, ``si``, or ``both``: US with SI in brackets, as docs/rules.md shows limits)."""

    def value(match: re.Match[str]) -> str:
        table, key, name = match.groups()
        if table == "arrester":
            return f"{getattr(arrester_classes()[key], name):g} WSFU"
        kind = FIXTURE_FIELDS[name]
        number = getattr(builtin_catalog().fixture_types[key], name)
        if kind == "time":
            return f"{number * 1000:.0f} ms"
        if units == "both":
            us, si = fmt(number, kind, "us"), fmt(number, kind, "si")
            return us if us == si else f"{us} ({si})"
        return fmt(number, kind, units)

    return REFERENCE.sub(value, text)


def explain(spec: RuleSpec, profile: str, units: str) -> str:
    """The whole ``explain`` text of one rule."""
    snippets = {key: fill_snippet(raw, units) for key, raw in spec.examples.items()}
    return explain_text(spec, profile, units, worked_example(spec.id, units), snippets)


def add_parser(sub: argparse._SubParsersAction) -> None:
    explain = sub.add_parser("explain", help="why a rule exists, its formula, limits and source")
    explain.add_argument("rule", metavar="RULE")
    explain.add_argument("--profile", choices=profile_ids(), default=default_profile_id())
    explain.add_argument("--units", choices=("us", "si"), default="us")


def run(args: argparse.Namespace, console: Console) -> int:
    spec = rule_specs().get(args.rule)
    if spec is None:
        hint = suggest(args.rule, rule_specs(), "`rulecheck rules`")
        raise UsageError(f"rulecheck explain: unknown rule '{args.rule}' ({hint})")
    sys.stdout.write(explain(spec, args.profile, args.units))
    return EXIT_OK
