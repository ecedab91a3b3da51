"""Worked examples for ``rulecheck explain``: the engine's own numbers on a built-in layout.

The layout is ``rules/examples/dishwasher-run.yaml``; every figure printed here is
computed by the same pipeline that checks user layouts, then shown in the reader's units.
"""

from __future__ import annotations

from collections.abc import Callable

from rulecheck.analysis import Analysis
from rulecheck.engine import run_rules
from rulecheck.physics.surge import STANDARD_ATMOSPHERE
from rulecheck.resources import data_dir
from rulecheck.surge_analysis import ValveEvent
from rulecheck.units import fmt

EXAMPLE = "examples/dishwasher-run.yaml"


def _event(analysis: Analysis, fixture: str, side: str) -> ValveEvent:
    return next(e for e in analysis.surge.events if e.fixture.id == fixture and e.side == side)


def _surge_steps(a: Analysis, units: str) -> list[str]:
    e = _event(a, "DW1", "hot")
    water = a.water_for("hot")
    pipe = a.layout.pipes[e.path[0]]
    speed = float(a.surge.wave_speed[e.path[0]])
    dv = e.flow / pipe.area

    def f(value: float, kind: str) -> str:
        return fmt(value, kind, units)

    joukowsky = water.density * speed * dv
    return [
        f"Dishwasher DW1 (solenoid, closes in {e.closure_time * 1000:.0f} ms) at the end of "
        f"pipe {pipe.id}: {f(pipe.length, 'length')} of {pipe.material.id} {pipe.size}, "
        f"hot water at {a.layout.hot_temperature - 273.15:.0f} °C.",
        f"water: ρ = {water.density:.1f} kg/m³, K = {water.bulk_modulus / 1e9:.3f} GPa, "
        f"vapour pressure {water.vapour_pressure / 1000:.2f} kPa abs",
        f"wave speed a = {f(speed, 'velocity')} (Korteweg–Halliwell, anchored throughout)",
        f"flow stopped {f(e.flow, 'flow')} → Δv = {f(dv, 'velocity')}",
        f"critical time T_c = 2L/a = {e.critical_time * 1000:.1f} ms",
        f"Joukowsky ρ·a·Δv = {f(joukowsky, 'pressure')}; closure {e.closure_time * 1000:.0f} ms "
        f"{'≤' if e.closure_time <= e.critical_time else '>'} T_c, so the surge is "
        f"{f(e.surge, 'pressure')}",
        f"peak = static max {f(e.static_max, 'pressure')} + surge = "
        f"{f(e.unprotected_peak, 'pressure')}"
        f" (limit {f(a.profile.surge_limit, 'pressure')})",
        _minimum_step(a, e, units),
        f"minimum safe closure time for the limit: {e.min_safe_closure * 1000:.0f} ms",
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


def _velocity_steps(a: Analysis, units: str) -> list[str]:
    index = next(i for i, p in enumerate(a.layout.pipes) if p.id == "P3")
    pipe = a.layout.pipes[index]
    return [
        f"pipe P3, {pipe.material.id} {pipe.size}, inside diameter "
        f"{fmt(pipe.inner_diameter, 'diameter', units)}, carries {a.wsfu[index]:.1f} WSFU "
        "(two flushometer closets and a lavatory, public)",
        f"Hunter demand (flushometer column) → Q = {fmt(float(a.flow[index]), 'flow', units)}",
        f"v = Q/A = {fmt(float(a.velocity[index]), 'velocity', units)}",
    ]


STEPS: dict[str, Callable[[Analysis, str], list[str]]] = {
    "closure-time": _surge_steps,
    "surge-peak": _surge_steps,
    "column-separation": _surge_steps,
    "arrester-required": _surge_steps,
    "velocity-limit": _velocity_steps,
}


def worked_example(rule_id: str, units: str) -> str:
    """Steps and findings for ``rule_id`` on the built-in example, in ``units``."""
    from rulecheck.pipeline import analyse_file

    path = data_dir("rules") / EXAMPLE
    analysis = analyse_file(str(path))
    analysis.layout.units = units
    analysis.layout.path = f"rules/{EXAMPLE}"
    lines = STEPS[rule_id](analysis, units) if rule_id in STEPS else []
    found = [f for f in run_rules(analysis) if f.rule == rule_id]
    if found:
        lines.append("rulecheck reports:")
        lines += [f"  {f.severity}: {f.message}" + (f" → {f.fix}" if f.fix else "") for f in found]
    return "\n".join(lines)
