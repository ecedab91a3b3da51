"""Water-hammer rules: closure time, surge peak, column separation, arresters."""

from __future__ import annotations

from collections.abc import Iterator

from rulecheck.analysis.result import METHOD_SCREENING, ValveEvent
from rulecheck.analysis.screening import arrester_capacity_ok, pipes_over_rating, wsfu_within
from rulecheck.engine.context import RuleContext
from rulecheck.findings import Finding
from rulecheck.input.profiles import aa_appliances, smallest_class_for
from rulecheck.physics.constants import STANDARD_ATMOSPHERE
from rulecheck.physics.surge import closure_time_for_limit


def _events(ctx: RuleContext) -> tuple[ValveEvent, ...]:
    """The valve events as judged: screening, or simulated where a simulation ran."""
    return ctx.analysis.valve_events


#: The screening formula behind a surge, as a label names it. "Joukowsky" labels ρ·a·Δv only.
FORMULA = {"joukowsky": "Joukowsky ρ·a·Δv", "slow-closure": "slow-closure 2ρ·ΣL·Δv/t"}


def method_label(e: ValveEvent, base: str = "") -> str:
    """Where a surge figure of ``e`` comes from: the screening formula (with ``base``, the
    static pressure it is added to or taken from) or the simulation that replaced it."""
    if e.method != METHOD_SCREENING:
        return e.method  # "simulation, whole service tree" | "simulation, path model"
    label = f"screening, {base}{FORMULA[e.surge_formula]}"
    return f"{label}; {e.screening_reason}" if e.screening_reason else label


def _peak_label(e: ValveEvent) -> str:
    if e.method == METHOD_SCREENING and e.protected_by and e.peak < e.unprotected_peak:
        return f"screening, arrester {e.protected_by} credited with the design limit"
    return method_label(e, "static max + ")


def _fig(ctx: RuleContext, value: float, kind: str, label: str) -> str:
    """One figure with the one method label it comes from."""
    return f"{ctx.fmt(value, kind)} ({label})"


def _valve(ctx: RuleContext, e: ValveEvent) -> str:
    return (
        f"{e.fixture.id} ({e.fixture.type.id}, {e.side}) closes in "
        f"{_ms(e.closure_time)}, critical time Σ2L/a = {_ms(e.critical_time)}"
    )


def _ms(seconds: float) -> str:
    return f"{seconds * 1000:.0f} ms" if seconds < 1 else f"{seconds:.2f} s"


def _suggestion(ctx: RuleContext, e: ValveEvent) -> str:
    reach = ctx.parameter("arrester_distance")
    units = wsfu_within(ctx.analysis.surge, e.point, e.side, reach)
    cls = smallest_class_for(units) or "F (or several)"
    basis = "" if ctx.analysis.profile.fixture_unit == "WSFU" else " (PDI-WH 201 classes)"
    return (
        f"a sealed class {cls} arrester at {e.point} would serve {units:.1f} WSFU{basis} "
        f"within {ctx.fmt(reach, 'length')}"
    )


def _safe_closure(e: ValveEvent, limit: float) -> str:
    """The shortest closure that keeps the peak at ``limit``, with where it comes from: the
    screening formula solved for t (a simulation does not give it), or T_c when longer."""
    safe = closure_time_for_limit(e.column_momentum, e.static_max, limit)
    if safe >= e.critical_time:
        return f"{_ms(safe)} (screening, slow-closure 2ρ·ΣL·Δv/t solved for t)"
    return f"{_ms(e.critical_time)} (critical time Σ2L/a)"


def closure_time(ctx: RuleContext) -> Iterator[Finding]:
    limit = ctx.parameter("surge_limit")
    for e in _events(ctx):
        if e.protected_by or e.closure_time > e.critical_time:
            continue
        rise = (
            f"surge {_fig(ctx, e.surge, 'pressure', method_label(e))}, peak "
            f"{_fig(ctx, e.unprotected_peak, 'pressure', method_label(e, 'static max + '))}"
        )
        if e.unprotected_peak <= limit:
            outcome = f"{rise}, under the {ctx.fmt(limit, 'pressure')} limit"
            fix = "an arrester still softens the shock: " + _suggestion(ctx, e)
        else:
            safe = _safe_closure(e, limit)
            outcome = (
                f"{rise}; closing in {safe} or longer keeps the peak under the "
                f"{ctx.fmt(limit, 'pressure')} limit"
            )
            fix = f"a valve closing in {safe} or more, or " + _suggestion(ctx, e)
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
    limit = ctx.parameter("surge_limit")
    ratings = ctx.analysis.surge.pipe_rating
    pipes = {p.id: p for p in ctx.analysis.layout.pipes}
    for e in _events(ctx):
        over = pipes_over_rating(e, ratings)
        if over:
            pid, peak = over[0]
            pipe = pipes[pid]
            more = (
                f"; also over their own ratings: pipe {', '.join(p for p, _ in over[1:])}"
                if len(over) > 1
                else ""
            )
            yield ctx.finding(
                e.fixture.id,
                f"valve {_valve(ctx, e)}: peak {_fig(ctx, peak, 'pressure', _peak_label(e))} "
                f"in pipe {pid} ({pipe.material.id} {pipe.size}) over its "
                f"{ctx.fmt(ratings[pid], 'pressure')} rating at its temperature{more}",
                measured=peak,
                limit=ratings[pid],
                kind="pressure",
                severity="hazard",
                method=e.method,
                fix="protect the valve with a sealed arrester and use pipe rated for the peak",
            )
        elif (e.protected_by is None or e.method != METHOD_SCREENING) and e.peak > limit:
            yield ctx.finding(
                e.fixture.id,
                f"valve {_valve(ctx, e)}: surge {_fig(ctx, e.surge, 'pressure', method_label(e))}"
                f", peak {_fig(ctx, e.peak, 'pressure', _peak_label(e))} over the "
                f"{ctx.fmt(limit, 'pressure')} limit, "
                + (
                    f"with arrester {e.protected_by}"
                    if e.protected_by
                    else f"no sealed arrester within "
                    f"{ctx.fmt(ctx.parameter('arrester_distance'), 'length')}"
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
        minimum = _fig(ctx, e.min_pressure, "pressure", method_label(e, "static min − "))
        if e.cavity_at is None:
            where = (
                f"the pressure wave drops {e.point} to {minimum.replace(' (', ' gauge (', 1)}, "
                "down to vapour pressure"
            )
            measured = e.min_pressure
        else:  # the simulation found the first cavity away from the valve
            where = (
                f"the pressure wave drops the water {e.cavity_at} to vapour pressure "
                f"({e.method}); {e.point} itself falls to "
                f"{minimum.replace(' (', ' gauge (', 1)}"
            )
            measured = vapour_gauge
        yield ctx.finding(
            e.fixture.id,
            f"valve {_valve(ctx, e)}: {where}: the column separates and its collapse can "
            "send a peak above the first surge",
            measured=measured,
            limit=vapour_gauge,
            kind="pressure",
            method=e.method,
            fix=_suggestion(ctx, e),
        )


def arrester_required(ctx: RuleContext) -> Iterator[Finding]:
    reach = ctx.parameter("arrester_distance")
    limit = ctx.parameter("surge_limit")
    # "quick": every quick-closing valve (IPC/UPC); "over-limit": only where the computed
    # unprotected peak exceeds the design limit (profiles without an arrester rule, en806)
    only_over = ctx.parameter("arrester_required_when") == "over-limit"
    for e in _events(ctx):
        if not e.quick or e.protected_by or (only_over and e.unprotected_peak <= limit):
            continue
        chambers = (
            f"; air chamber {', '.join(e.nearby_air_chambers)} gives no credit"
            if e.nearby_air_chambers
            else ""
        )
        yield ctx.finding(
            e.fixture.id,
            f"quick-closing valve {_valve(ctx, e)}: surge "
            f"{_fig(ctx, e.surge, 'pressure', method_label(e))}, peak "
            f"{_fig(ctx, e.unprotected_peak, 'pressure', method_label(e, 'static max + '))}, "
            f"no sealed arrester within {ctx.fmt(reach, 'length')}{chambers}",
            measured=e.unprotected_peak,
            limit=limit,
            kind="pressure",
            fix=_suggestion(ctx, e),
            method=e.method,
        )


def arrester_capacity(ctx: RuleContext) -> Iterator[Finding]:
    surge = ctx.analysis.surge
    ctx.parameter("arrester_distance")  # the reach that decided which arrester serves whom
    for arrester in ctx.analysis.layout.arresters:
        served = surge.served.get(arrester.id, ())
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
    severity = ctx.parameter("air_chamber_severity")
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
