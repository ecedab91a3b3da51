"""Text form of ``rulecheck analyze``: per pipe and per point, in the project's units."""

from __future__ import annotations

from rulecheck.analysis import Analysis
from rulecheck.errors import visible
from rulecheck.units import from_si, unit_label


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    widths = [
        max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(headers)
    ]

    def line(cells: list[str]) -> str:
        return "  ".join(
            c.ljust(w) if i == 0 else c.rjust(w)
            for i, (c, w) in enumerate(zip(cells, widths, strict=True))
        ).rstrip()

    return [line(headers), *(line(r) for r in rows)]


def _num(value: float, kind: str, units: str, decimals: int = 2) -> str:
    return f"{from_si(value, kind, units):.{decimals}f}"


def render_analysis(analysis: Analysis) -> str:
    layout, units = analysis.layout, analysis.layout.units
    lab = {k: unit_label(k, units) for k in ("flow", "velocity", "pressure", "length")}
    out = [f"{layout.name}  ({layout.path}, profile {layout.profile}, units {units})", ""]
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
            ]
        )
    out += _table(
        [
            "pipe",
            "service",
            "size",
            "WSFU",
            f"flow [{lab['flow']}]",
            f"velocity [{lab['velocity']}]",
            f"friction [{lab['pressure']}]",
            f"wave speed [{lab['velocity']}]",
        ],
        rows,
    )
    out.append("")
    rows = [
        [
            n,
            _num(analysis.static_max[n], "pressure", units, 1),
            _num(analysis.static_min[n], "pressure", units, 1),
            _num(analysis.residual[n], "pressure", units, 1),
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
                _num(e.min_pressure, "pressure", units, 1),
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
    return visible("\n".join(out), keep_newlines=True)
