"""Steady-flow rules: velocity, static pressure, residual pressure at fixtures."""

from __future__ import annotations

import math
from collections.abc import Iterator

from rulecheck.analysis import Analysis
from rulecheck.engine.context import RuleContext
from rulecheck.findings import Finding
from rulecheck.input.model import Layout, Pipe


def velocity_limit_for(ctx: RuleContext, pipe: Pipe, index: int) -> float:
    single = "single_outlet" in ctx.spec.raw_limits(ctx.analysis.layout.profile)
    if single and pipe.service != "hot-return" and int(ctx.analysis.fixtures_served[index]) == 1:
        return ctx.limit("single_outlet", "velocity")  # a connection pipe to one fitting
    if pipe.service == "cold":
        return ctx.limit("cold", "velocity")
    if pipe.service == "hot-return":
        return ctx.limit("hot_return", "velocity")
    if pipe.material.family == "copper":
        hot = ctx.analysis.layout.hot_temperature
        # 1 mK of slack: 60 °C and 140 °F are the same temperature, whatever the float noise.
        if hot > ctx.limit("hot_copper_threshold", "temperature") + 1e-3:
            return ctx.limit("hot_copper_above_threshold", "velocity")
        return ctx.limit("hot_copper", "velocity")
    return ctx.limit("hot_other", "velocity")


def smallest_size_for(pipe: Pipe, flow: float, max_velocity: float) -> str | None:
    """Smallest size of the pipe's material whose bore keeps ``flow`` at or under the limit."""
    for label, (od, wall) in sorted(pipe.material.sizes.items(), key=lambda kv: kv[1][0]):
        if flow / (math.pi * (od - 2 * wall) ** 2 / 4) <= max_velocity:
            return label
    return None


def velocity_limit(ctx: RuleContext) -> Iterator[Finding]:
    analysis = ctx.analysis
    for index, pipe in enumerate(analysis.layout.pipes):
        velocity = float(analysis.velocity[index])
        limit = velocity_limit_for(ctx, pipe, index)
        if velocity <= limit:
            continue
        flow = float(analysis.flow[index])
        better = smallest_size_for(pipe, flow, limit)
        fix = (
            f"use {pipe.material.id} {better} or larger"
            if better
            else f"no {pipe.material.id} size carries this flow under the limit; split the flow"
        )
        yield ctx.finding(
            pipe.id,
            f"{pipe.service} pipe {pipe.id} ({pipe.material.id} {pipe.size}) runs at "
            f"{ctx.fmt(velocity, 'velocity')} with {ctx.fmt(flow, 'flow')}, over the "
            f"{ctx.fmt(limit, 'velocity')} limit",
            measured=velocity,
            limit=limit,
            kind="velocity",
            fix=fix,
        )


def static_pressure(ctx: RuleContext) -> Iterator[Finding]:
    """Report the first point of the building's distribution on each path whose static
    pressure exceeds the limit (engineering-basis §9).

    The limit applies downstream of the service point: a supply itself is never reported,
    and a supply over the limit whose every outgoing path is reduced gives no finding
    (IPC 604.8 asks for the reducing valve, not a lower main).
    """
    analysis = ctx.analysis
    limit = ctx.limit("max_static", "pressure")
    network, layout, static = analysis.network, analysis.layout, analysis.static_max
    supplies = {s.id for s in layout.supplies}
    reducers = _reducers_by_pipe(layout)

    def over(node: str | None) -> bool:
        return node is not None and node not in supplies and static.get(node, 0.0) > limit

    for service in ("cold", "hot"):
        tree = network.trees[service]
        # per node: (points over the limit strictly downstream, highest pressure there, where)
        below: dict[str, tuple[int, float, str]] = {}
        for node in reversed(tree.order):
            count, worst, where = below.get(node, (0, -math.inf, ""))
            if over(node):
                count, (worst, where) = count + 1, max((worst, where), (static[node], node))
            index = tree.parent.get(node)
            if index is not None:
                start = layout.pipes[index].start
                up = below.get(start, (0, -math.inf, ""))
                below[start] = (up[0] + count, *max(up[1:], (worst, where)))
        for node in tree.order:
            if not over(node):
                continue
            index = tree.parent.get(node)
            heater = network.heater_at_outlet.get(node)
            upstream = (
                layout.pipes[index].start
                if index is not None
                else (heater.inlet if heater else None)
            )
            if over(upstream):
                continue  # reported at the first point over the limit upstream
            count, worst, where = below.get(node, (0, -math.inf, ""))
            extra = (
                f"; {count} more {'point' if count == 1 else 'points'} downstream also "
                f"exceed{'s' if count == 1 else ''} it, highest "
                f"{ctx.fmt(worst, 'pressure')} at {where}"
                if count
                else ""
            )
            feed = layout.pipes[index].id if index is not None else None
            yield ctx.finding(
                node,
                f"static pressure at {node} reaches {ctx.fmt(static[node], 'pressure')}, over "
                f"the {ctx.fmt(limit, 'pressure')} limit{extra}",
                measured=static[node],
                limit=limit,
                kind="pressure",
                fix=_static_fix(ctx, node, service, feed, limit, reducers),
            )


def _reducers_by_pipe(layout: Layout) -> dict[str, list[tuple[str, float]]]:
    """Pressure-reducing devices per pipe id: (device id, set pressure [Pa])."""
    found: dict[str, list[tuple[str, float]]] = {}
    for device in layout.devices:
        if device.kind == "pressure-reducing" and device.set_pressure is not None:
            found.setdefault(device.on, []).append((device.id, device.set_pressure))
    return found


def _pipes_to_supply(analysis: Analysis, node: str, service: str) -> list[int]:
    """Pipe indices from ``node`` up to its supply, through the heater for a hot point."""
    network = analysis.network
    path = network.path_up(node, service)
    root = analysis.layout.pipes[path[-1]].start if path else node
    heater = network.heater_at_outlet.get(root) if service != "cold" else None
    if heater is not None:
        path += network.path_up(heater.inlet, "cold")
    return path


def _static_fix(
    ctx: RuleContext,
    node: str,
    service: str,
    feed: str | None,
    limit: float,
    reducers: dict[str, list[tuple[str, float]]],
) -> str:
    """Add a reducing valve on the feed pipe, or lower the one already upstream."""
    add = (
        f"add a pressure-reducing valve on pipe {feed}" if feed else "add a pressure-reducing valve"
    )
    analysis = ctx.analysis
    for index in _pipes_to_supply(analysis, node, service):
        pipe = analysis.layout.pipes[index]
        for device, setting in reducers.get(pipe.id, ()):
            lower = (
                f"lower the set pressure of {device} on pipe {pipe.id} (now "
                f"{ctx.fmt(setting, 'pressure')}) so {node} stays at "
                f"{ctx.fmt(limit, 'pressure')} or less"
            )
            return lower if pipe.id == feed else f"{lower}, or {add}"
    return f"{add} set to {ctx.fmt(limit, 'pressure')} or less"


def residual_pressure(ctx: RuleContext) -> Iterator[Finding]:
    """A fixture under its minimum flow pressure at design flow. A residual below zero is
    not a pressure: the design flow cannot reach the fixture, and the message gives the
    shortfall instead (engineering-basis §7)."""
    analysis = ctx.analysis
    for fixture in analysis.layout.fixtures:
        pressure, side = analysis.fixture_residual(fixture)
        need = fixture.min_pressure
        if pressure >= need:
            continue
        short = need - pressure
        if pressure >= 0.0:
            gets = f"gets {ctx.fmt(pressure, 'pressure')} on its {side} side at design flow"
        else:
            gets = (
                f"is short by {ctx.fmt(-pressure, 'pressure')} at design flow on its {side} "
                "side (lift and losses on the path exceed the supply; nothing is left for "
                "the fixture)"
            )
        yield ctx.finding(
            fixture.id,
            f"fixture {fixture.id} ({fixture.type.id}) {gets}; it needs "
            f"{ctx.fmt(need, 'pressure')}",
            measured=pressure if pressure >= 0.0 else None,
            limit=need,
            kind="pressure",
            fix=f"find {ctx.fmt(short, 'pressure')} more: larger pipes on the path, a lower "
            "loss device, or a booster",
        )
