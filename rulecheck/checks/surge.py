"""Water-hammer rules: closure time, surge peak, column separation, arresters."""

from __future__ import annotations

from collections.abc import Iterator

from rulecheck.engine import RuleContext
from rulecheck.findings import Finding
from rulecheck.physics.surge import STANDARD_ATMOSPHERE
from rulecheck.profiles import aa_appliances, smallest_class_for
from rulecheck.surge_analysis import ValveEvent, arrester_capacity_ok, wsfu_within


def _events(ctx: RuleContext) -> list[ValveEvent]:
    surge = ctx.analysis.surge
    return surge.events if surge is not None else []


def _valve(ctx: RuleContext, e: ValveEvent) -> str:
    return (
        f"{e.fixture.id} ({e.fixture.type.id}, {e.side}) closes in "
        f"{_ms(e.closure_time)}, critical time {_ms(e.critical_time)}"
    )


def _ms(seconds: float) -> str:
    return f"{seconds * 1000:.0f} ms" if seconds < 1 else f"{seconds:.2f} s"


def _suggestion(ctx: RuleContext, e: ValveEvent) -> str:
    reach = ctx.analysis.profile.arrester_distance
    units = wsfu_within(ctx.analysis, e.point, e.side, reach)
    cls = smallest_class_for(units) or "F (or several)"
    return (
        f"a sealed class {cls} arrester at {e.point} would serve {units:.1f} WSFU "
        f"within {ctx.fmt(reach, 'length')}"
    )


def closure_time(ctx: RuleContext) -> Iterator[Finding]:
    limit = ctx.analysis.profile.surge_limit
    for e in _events(ctx):
        if e.protected_by or e.closure_time > e.critical_time:
            continue
        if e.unprotected_peak <= limit:
            outcome = (
                f"the full Joukowsky surge {ctx.fmt(e.surge, 'pressure')} arrives "
                f"(peak {ctx.fmt(e.unprotected_peak, 'pressure')}, under the "
                f"{ctx.fmt(limit, 'pressure')} limit)"
            )
            fix = "an arrester still softens the shock: " + _suggestion(ctx, e)
        else:
            safe = max(e.min_safe_closure, e.critical_time)
            outcome = (
                f"the full Joukowsky surge {ctx.fmt(e.surge, 'pressure')} arrives; "
                f"closing in {_ms(safe)} or longer keeps the peak under "
                f"{ctx.fmt(limit, 'pressure')}"
            )
            fix = f"a valve closing in {_ms(safe)} or more, or " + _suggestion(ctx, e)
        yield ctx.finding(
            e.fixture.id,
            f"valve {_valve(ctx, e)}: a quick closure; {outcome}",
            measured=e.closure_time,
            limit=e.critical_time,
            kind="time",
            method=e.method,
            fix=fix,
        )


def surge_peak(ctx: RuleContext) -> Iterator[Finding]:
    limit = ctx.analysis.profile.surge_limit
    for e in _events(ctx):
        if e.peak > e.lowest_rating:
            yield ctx.finding(
                e.fixture.id,
                f"valve {_valve(ctx, e)}: surge {ctx.fmt(e.surge, 'pressure')}, peak "
                f"{ctx.fmt(e.peak, 'pressure')} over the {ctx.fmt(e.lowest_rating, 'pressure')} "
                f"rating of pipe {e.lowest_rating_pipe} at its temperature ({e.method})",
                measured=e.peak,
                limit=e.lowest_rating,
                kind="pressure",
                severity="hazard",
                method=e.method,
                fix="protect the valve with a sealed arrester and use pipe rated for the peak",
            )
        elif (e.protected_by is None or e.method != "screening") and e.peak > limit:
            yield ctx.finding(
                e.fixture.id,
                f"valve {_valve(ctx, e)}: surge {ctx.fmt(e.surge, 'pressure')}, peak "
                f"{ctx.fmt(e.peak, 'pressure')} over the {ctx.fmt(limit, 'pressure')} limit "
                f"({e.method}), "
                + (
                    f"with arrester {e.protected_by}"
                    if e.protected_by
                    else f"no sealed arrester within "
                    f"{ctx.fmt(ctx.analysis.profile.arrester_distance, 'length')}"
                ),
                measured=e.peak,
                limit=limit,
                kind="pressure",
                method=e.method,
                fix=_suggestion(ctx, e),
            )


def column_separation(ctx: RuleContext) -> Iterator[Finding]:
    for e in _events(ctx):
        if not e.column_separation:
            continue
        water = ctx.analysis.water_for(e.side)
        vapour_gauge = water.vapour_pressure - STANDARD_ATMOSPHERE
        if e.cavity_at is None:
            where = (
                f"the pressure wave drops {e.point} to {ctx.fmt(e.min_pressure, 'pressure')} "
                f"(gauge, {e.method}), down to vapour pressure"
            )
            measured = e.min_pressure
        else:  # the simulation found the first cavity away from the valve
            where = (
                f"the pressure wave drops the water {e.cavity_at} to vapour pressure "
                f"({e.method}; {e.point} itself falls to "
                f"{ctx.fmt(e.min_pressure, 'pressure')} gauge)"
            )
            measured = vapour_gauge
        yield ctx.finding(
            e.fixture.id,
            f"valve {_valve(ctx, e)}: {where}: the column separates and its collapse can "
            "exceed the Joukowsky peak",
            measured=measured,
            limit=vapour_gauge,
            kind="pressure",
            method=e.method,
            fix=_suggestion(ctx, e),
        )


def arrester_required(ctx: RuleContext) -> Iterator[Finding]:
    reach = ctx.analysis.profile.arrester_distance
    for e in _events(ctx):
        if not e.quick or e.protected_by:
            continue
        chambers = (
            f"; air chamber {', '.join(e.nearby_air_chambers)} gives no credit"
            if e.nearby_air_chambers
            else ""
        )
        yield ctx.finding(
            e.fixture.id,
            f"quick-closing valve {_valve(ctx, e)}: surge {ctx.fmt(e.surge, 'pressure')}, peak "
            f"{ctx.fmt(e.unprotected_peak, 'pressure')}, no sealed arrester within "
            f"{ctx.fmt(reach, 'length')}{chambers}",
            measured=e.unprotected_peak,
            limit=ctx.analysis.profile.surge_limit,
            kind="pressure",
            fix=_suggestion(ctx, e),
            method=e.method,
        )


def arrester_capacity(ctx: RuleContext) -> Iterator[Finding]:
    surge = ctx.analysis.surge
    if surge is None:
        return
    for arrester in ctx.analysis.layout.arresters:
        served = surge.served.get(arrester.id, [])
        if arrester.kind != "sealed" or arrester_capacity_ok(arrester, served, aa_appliances()):
            continue
        total = sum(units for _, _, units in served)
        names = ", ".join(sorted({f.id for f, _, _ in served}))
        rating = f"class {arrester.rating_class}" if arrester.rating_class else "rating"
        if arrester.rating_class == "AA":
            why = "class AA serves one residential appliance only"
        else:
            why = f"over its {rating} capacity of {arrester.capacity:g} WSFU"
        better = smallest_class_for(total) or "F (or several)"
        yield ctx.finding(
            arrester.id,
            f"arrester {arrester.id} ({rating}) at {arrester.at} serves {total:.1f} WSFU "
            f"({names}): {why}",
            measured=total,
            limit=arrester.capacity,
            kind="wsfu",
            fix=f"use class {better}, or add a second arrester so the ratings add up",
        )


def arrester_kind(ctx: RuleContext) -> Iterator[Finding]:
    severity = ctx.analysis.profile.air_chamber_severity
    for arrester in ctx.analysis.layout.arresters:
        if arrester.kind == "sealed":
            continue
        yield ctx.finding(
            arrester.id,
            f"{arrester.id} at {arrester.at} is an air chamber: it waterlogs and gives no "
            f"protection once the air has dissolved (profile {ctx.analysis.profile.id})",
            severity=severity,
            fix="replace it with a sealed, pre-charged arrester (ASSE 1010)",
        )
