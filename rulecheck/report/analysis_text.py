"""Text form of ``rulecheck analyze``: per pipe and per point, in the project's units."""

from __future__ import annotations

from rulecheck.analysis import Analysis
from rulecheck.analysis.screening import ValveEvent
from rulecheck.errors import visible
from rulecheck.physics.constants import STANDARD_ATMOSPHERE
from rulecheck.physics.demand import hunter_table
from rulecheck.units import from_si, unit_label

#: ``analyze`` text fits this many columns (the tables' headers carry their units on a
#: second line; prose lines wrap at spaces)
WIDTH = 100


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    """A table; a header ``"name [unit]"`` puts its unit on a second header line."""
    names = [h.split(" [")[0] for h in headers]
    units = [h[len(n) :].strip().strip("[]") for h, n in zip(headers, names, strict=True)]
    widths = [
        max(len(n), len(u), *(len(r[i]) for r in rows)) if rows else max(len(n), len(u))
        for i, (n, u) in enumerate(zip(names, units, strict=True))
    ]

    def line(cells: list[str]) -> str:
        return "  ".join(
            c.ljust(w) if i == 0 else c.rjust(w)
            for i, (c, w) in enumerate(zip(cells, widths, strict=True))
        ).rstrip()

    head = [line(names)] + ([line(units)] if any(units) else [])
    return [*head, *(line(r) for r in rows)]


def _prose(text: str) -> list[str]:
    """A note wrapped at spaces to :data:`WIDTH` (words never cut)."""
    import textwrap

    return textwrap.wrap(text, WIDTH, break_long_words=False, break_on_hyphens=False) or [""]


def _num(value: float, kind: str, units: str, decimals: int = 2) -> str:
    return f"{from_si(value, kind, units):.{decimals}f}"


def _at_vapour(analysis: Analysis, event: ValveEvent) -> bool:
    """Whether a valve's minimum sits at the vapour pressure floor (within 1 Pa)."""
    water = analysis.water_for(event.side)
    return event.min_pressure <= water.vapour_pressure - STANDARD_ATMOSPHERE + 1.0


def _residual(value: float, units: str) -> str:
    """A residual pressure, or below zero the shortfall at design flow (not a pressure)."""
    return (
        _num(value, "pressure", units, 1)
        if value >= 0.0
        else "short " + _num(-value, "pressure", units, 1)
    )


def demand_curve_line(analysis: Analysis) -> str:
    """How fixture units became flow: the project's choice and, under auto, the rule."""
    if analysis.profile.fixture_unit == "LU":
        return (
            f"Demand: loading units (LU) of profile {analysis.profile.id}, EN 806-3 simplified "
            "method, 1 LU = 0.1 L/s; design flow from total LU (rules/loading-units.yaml), "
            "at least the largest single fixture flow"
        )
    if analysis.demand_curve != "auto":
        return (
            f"Demand curve: the {analysis.demand_curve} column of IPC Table E103.3(3) for every "
            "pipe (project.demand_curve); the flush-tank column below 5 WSFU"
        )
    table = hunter_table()
    return (
        "Demand curve: auto, per pipe: the flushometer column of IPC Table E103.3(3) where "
        f"flushometer valves carry over {table.flushometer_share * 100:g} % of the fixture "
        'units the pipe serves ("predominantly"; the threshold is common practice [CP]), '
        "else the flush-tank column; the flush-tank column below 5 WSFU"
    )


def pipe_curve(analysis: Analysis, index: int) -> str:
    """The column a pipe's demand flow was read from, or why none was."""
    pipe = analysis.layout.pipes[index]
    if pipe.demand is not None:
        return "override"
    if pipe.service == "hot-return" or analysis.fixtures_served[index] == 0:
        return "-"
    if analysis.fixtures_served[index] == 1:
        return "one fixture"
    if analysis.profile.fixture_unit == "LU":
        return "EN 806-3"
    return "flushometer" if analysis.flushometer_column[index] else "flush-tank"


def render_analysis(analysis: Analysis) -> str:
    layout, units = analysis.layout, analysis.layout.units
    lab = {k: unit_label(k, units) for k in ("flow", "velocity", "pressure", "length")}
    out = [f"{layout.name}  ({layout.path}, profile {layout.profile}, units {units})", ""]
    out += [*_prose(demand_curve_line(analysis)), ""]
    auto = analysis.demand_curve == "auto" and analysis.profile.fixture_unit == "WSFU"
    rows = []
    speeds = analysis.surge.wave_speed if analysis.surge is not None else None
    for i, p in enumerate(layout.pipes):
        rows.append(
            [
                p.id,
                p.service,
                f"{p.material.id} {p.size}",
                f"{analysis.wsfu[i]:.1f}",
                _num(analysis.flow[i], "flow", units),
                _num(analysis.velocity[i], "velocity", units),
                _num(analysis.friction_drop[i], "pressure", units),
                _num(float(speeds[i]), "velocity", units, 0) if speeds is not None else "-",
                pipe_curve(analysis, i),
                *([f"{analysis.flushometer_share[i] * 100:.0f}"] if auto else []),
            ]
        )
    out += _table(
        [
            "pipe",
            "service",
            "size",
            analysis.profile.fixture_unit,
            f"flow [{lab['flow']}]",
            f"velocity [{lab['velocity']}]",
            f"friction [{lab['pressure']}]",
            f"wave [{lab['velocity']}]",
            "curve",
            *(["flush [%]"] if auto else []),
        ],
        rows,
    )
    out += _prose(
        "wave: wave speed; curve: the demand column read"
        + ("; flush: share of the fixture units on flushometer valves" if auto else "")
    )
    out.append("")
    separated = analysis.static_separated
    rows = [
        [
            n,
            _num(analysis.static_max[n], "pressure", units, 1),
            _num(analysis.static_min[n], "pressure", units, 1) + ("*" if n in separated else ""),
            _residual(analysis.residual[n], units),
        ]
        for n in sorted(analysis.static_max)
    ]
    out += _table(
        [
            "point",
            f"static max [{lab['pressure']}]",
            f"static min [{lab['pressure']}]",
            f"residual [{lab['pressure']}]",
        ],
        rows,
    )
    if separated:
        out += _prose(
            "* vapour pressure: the supply cannot hold the water column up at rest here; "
            "it separates"
        )
    if any(v < 0.0 for v in analysis.residual.values()):
        out += _prose(
            "short: no pressure is left at design flow; the figure is the shortfall, not a pressure"
        )
    if analysis.surge is not None and analysis.surge.events:
        out.append("")
        rows = [
            [
                e.fixture.id,
                e.side,
                f"{e.closure_time * 1000:.0f}",
                f"{e.critical_time * 1000:.1f}",
                _num(e.surge, "pressure", units, 1),
                _num(e.peak, "pressure", units, 1),
                _num(e.min_pressure, "pressure", units, 1)
                + ("*" if _at_vapour(analysis, e) else ""),
                e.protected_by or "-",
            ]
            for e in analysis.surge.events
        ]
        out += _table(
            [
                "valve",
                "side",
                "closes [ms]",
                "T_c [ms]",
                f"surge [{lab['pressure']}]",
                f"peak [{lab['pressure']}]",
                f"min [{lab['pressure']}]",
                "arrester",
            ],
            rows,
        )
        if any(_at_vapour(analysis, e) for e in analysis.surge.events):
            out += _prose(
                "* vapour pressure, the lowest water can reach: the column separates unless "
                "an arrester protects the valve"
            )
    return visible("\n".join(out), keep_newlines=True)
