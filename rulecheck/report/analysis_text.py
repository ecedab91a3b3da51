"""Text form of ``rulecheck analyze``: per pipe and per point, in the project's units."""

from __future__ import annotations

from rulecheck.analysis import Analysis
from rulecheck.units import from_si, unit_label


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h)
              for i, h in enumerate(headers)]
    def line(cells: list[str]) -> str:
        return "  ".join(c.ljust(w) if i == 0 else c.rjust(w)
                         for i, (c, w) in enumerate(zip(cells, widths, strict=True))).rstrip()
    return [line(headers), *(line(r) for r in rows)]


def _num(value: float, kind: str, units: str, decimals: int = 2) -> str:
    return f"{from_si(value, kind, units):.{decimals}f}"


def render_analysis(analysis: Analysis) -> str:
    layout, units = analysis.layout, analysis.layout.units
    lab = {k: unit_label(k, units) for k in ("flow", "velocity", "pressure", "length")}
    out = [f"{layout.name}  ({layout.path}, profile {layout.profile}, units {units})", ""]
    rows = []
    for i, p in enumerate(layout.pipes):
        rows.append([p.id, p.service, f"{p.material.id} {p.size}", f"{analysis.wsfu[i]:.1f}",
                     _num(analysis.flow[i], "flow", units),
                     _num(analysis.velocity[i], "velocity", units),
                     _num(analysis.friction_drop[i], "pressure", units)])
    out += _table(["pipe", "service", "size", "WSFU", f"flow [{lab['flow']}]",
                   f"velocity [{lab['velocity']}]", f"friction [{lab['pressure']}]"], rows)
    out.append("")
    rows = [[n, _num(analysis.static_max[n], "pressure", units, 1),
             _num(analysis.static_min[n], "pressure", units, 1),
             _num(analysis.residual[n], "pressure", units, 1)]
            for n in sorted(analysis.static_max)]
    out += _table(["point", f"static max [{lab['pressure']}]", f"static min [{lab['pressure']}]",
                   f"residual [{lab['pressure']}]"], rows)
    return "\n".join(out)
