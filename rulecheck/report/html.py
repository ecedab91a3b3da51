"""The submittal report (``--format html``): one self-contained HTML file.

The page is a jinja2 template (``report/templates/check.html.j2``) with its stylesheet
inline; the network drawing and the plots are inline SVG from ``svg_drawing`` and
``svg_plot``. No scripts, fonts or other files are fetched; the only thing that varies
between runs of the same input is the date, which ``SOURCE_DATE_EPOCH`` pins (the CLI
passes it in). Everything shown comes from the check report and the analyses and traces
the CLI prepared; nothing is judged here.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from importlib.resources import files
from typing import Any, TextIO

from rulecheck import __version__
from rulecheck.analysis import Analysis
from rulecheck.analysis.traces import ValveTrace
from rulecheck.errors import InputError
from rulecheck.findings import SEVERITIES, SEVERITY_RANK, Finding
from rulecheck.report import CAUTION
from rulecheck.report.analysis_text import pipe_curve
from rulecheck.report.svg_drawing import SEVERITY_COLOUR, drawing
from rulecheck.report.svg_plot import envelope_plot, time_plot
from rulecheck.report.text import summary_counts
from rulecheck.units import fmt, from_si, unit_label


@dataclass(frozen=True)
class FileDetail:
    """What the HTML report shows of one checked file beyond its findings."""

    analysis: Analysis
    digest: str  # SHA-256 of the file's bytes, hex
    traces: tuple[ValveTrace, ...] = ()


@cache
def _template(name: str = "check.html.j2") -> Any:
    import jinja2

    def load(template: str) -> str:
        return (files("rulecheck.report") / "templates" / template).read_text("utf-8")

    env = jinja2.Environment(
        loader=jinja2.FunctionLoader(load),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    return env.get_template(name)


def _quantity(value: float | None, kind: str | None, units: str) -> str:
    if value is None or kind is None:
        return ""
    if not math.isfinite(value):
        return "∞" if value > 0 else "−∞"
    if kind == "time":
        return f"{value * 1000:.0f} ms" if abs(value) < 1 else f"{value:.2f} s"
    if kind == "wsfu":
        return f"{value:.1f} WSFU"
    try:
        return fmt(value, kind, units)
    except KeyError:
        return f"{value:.4g}"


def _marks(findings: list[Finding]) -> dict[str, str]:
    """Element -> the worst severity of its findings in force ("waived" when all are)."""
    marks: dict[str, str] = {}
    for f in findings:
        if f.waived is not None:
            marks.setdefault(f.element, "waived")
            continue
        now = marks.get(f.element)
        if now is None or now == "waived" or SEVERITY_RANK[f.severity] < SEVERITY_RANK[now]:
            marks[f.element] = f.severity
    return marks


def _groups(findings: list[Finding], units: str, refs: dict[str, int]) -> list[dict[str, Any]]:
    """Findings by severity, then element (in file order), with their reference numbers."""
    anchored: set[str] = set()
    groups = []
    for severity in SEVERITIES:
        these = [f for f in findings if f.severity == severity]
        if not these:
            continue
        order: dict[str, int] = {}
        first_line: dict[str, int] = {}
        for f in sorted(these, key=Finding.sort_key):
            order.setdefault(f.element, len(order))
            first_line.setdefault(f.element, f.line)
        elements = []
        for element in order:
            rows = []
            for f in sorted((f for f in these if f.element == element), key=Finding.sort_key):
                number = refs.setdefault(f.source, len(refs) + 1)
                rows.append(
                    {
                        "f": f,
                        "measured": _quantity(f.measured, f.kind, units),
                        "limit": _quantity(f.limit, f.kind, units),
                        "ref": number,
                    }
                )
            elements.append(
                {
                    "id": element,
                    "anchor": element not in anchored,
                    "line": first_line[element],
                    "rows": rows,
                }
            )
            anchored.add(element)
        groups.append({"severity": severity, "elements": elements, "count": len(these)})
    return groups


def _pipes(analysis: Analysis) -> list[list[str]]:
    layout, units = analysis.layout, analysis.layout.units
    speeds = analysis.surge.wave_speed
    rows = []
    for i, p in enumerate(layout.pipes):
        rows.append(
            [
                p.id,
                p.start,
                p.end,
                p.material.id,
                p.size,
                f"{from_si(p.length, 'length', units):.1f}",
                f"{analysis.wsfu[i]:.1f}",
                f"{from_si(float(analysis.flow[i]), 'flow', units):.2f}",
                f"{from_si(float(analysis.velocity[i]), 'velocity', units):.2f}",
                f"{from_si(float(analysis.friction_drop[i]), 'pressure', units):.2f}",
                f"{from_si(float(speeds[i]), 'velocity', units):.0f}",
                pipe_curve(analysis, i),
            ]
        )
    return rows


def _points(analysis: Analysis) -> list[list[str]]:
    units = analysis.layout.units
    elevation = analysis.network.elevation
    rows = []
    for n in sorted(analysis.static_max):
        residual = analysis.residual[n]
        rows.append(
            [
                n,
                f"{from_si(elevation.get(n, 0.0), 'length', units):.2f}",
                f"{from_si(analysis.static_max[n], 'pressure', units):.1f}",
                f"{from_si(analysis.static_min[n], 'pressure', units):.1f}"
                + (" (vapour)" if n in analysis.static_separated else ""),
                f"{from_si(residual, 'pressure', units):.1f}"
                if residual >= 0
                else f"short {from_si(-residual, 'pressure', units):.1f}",
            ]
        )
    return rows


def _valves(analysis: Analysis) -> list[list[str]]:
    units = analysis.layout.units
    classes = {a.id: a.rating_class or f"{a.capacity:g} WSFU" for a in analysis.layout.arresters}
    rows = []
    for e in analysis.valve_events:
        if not e.quick:
            continue
        arrester = (
            f"{e.protected_by} ({classes.get(e.protected_by, '')})" if e.protected_by else "-"
        )
        rows.append(
            [
                e.fixture.id,
                e.side,
                f"{e.closure_time * 1000:.0f}",
                f"{e.critical_time * 1000:.1f}",
                f"{from_si(e.surge, 'pressure', units):.1f}",
                f"{from_si(e.peak, 'pressure', units):.1f}",
                f"{from_si(e.min_pressure, 'pressure', units):.1f}",
                arrester,
                e.method + (f" ({e.screening_reason})" if e.screening_reason else ""),
            ]
        )
    return rows


def _plots(analysis: Analysis, traces: tuple[ValveTrace, ...]) -> list[dict[str, Any]]:
    units = analysis.layout.units
    pu, lu = unit_label("pressure", units), unit_label("length", units)

    def p(v: Any) -> Any:
        return from_si(v, "pressure", units)

    out = []
    for tr in traces:
        name = f"{tr.fixture} ({tr.side})"
        t_ms = tr.t * 1000.0
        rating = tr.rating if math.isfinite(tr.rating) else math.inf
        plot = time_plot(
            f"pressure at valve {name} against time",
            t_ms,
            p(tr.pressure),
            p(tr.peak),
            p(tr.design_limit),
            p(rating) if math.isfinite(rating) else math.inf,
            pu,
        )
        env = ""
        if tr.path:
            env = envelope_plot(
                f"pressure envelope along the path of {name}",
                [
                    (
                        pp.pipe,
                        from_si(pp.start, "length", units),
                        from_si(pp.start + pp.length, "length", units),
                        p(pp.max_pressure),
                        p(pp.min_pressure),
                        p(pp.rating) if math.isfinite(pp.rating) else math.inf,
                    )
                    for pp in tr.path
                ],
                p(tr.design_limit),
                lu,
                pu,
            )
        params = [
            f"model: {tr.method}",
            f"dt {tr.dt * 1000:.3f} ms",
            f"{tr.reaches} reaches",
            f"largest wave-speed adjustment {tr.wave_speed_adjustment * 100:.2f} %",
            f"peak {fmt(tr.peak, 'pressure', units)}, minimum {fmt(tr.minimum, 'pressure', units)}",
        ]
        gas = ", ".join(f"{a} {v * 1e6:.0f} mL" for a, v in tr.gas_volumes)
        out.append(
            {
                "id": f"plot-{tr.fixture}-{tr.side}",
                "name": name,
                "flagged": tr.flagged,
                "time": plot,
                "envelope": env,
                "params": params,
                "gas": gas,
                "sized": ", ".join(a for a, _ in tr.sized_arresters),
                "shift": fmt(tr.shift, "pressure", units),
                "notes": list(tr.notes),
            }
        )
    return out


def file_context(
    path: str,
    profile: str,
    findings: list[Finding],
    detail: FileDetail | None,
    fail_on: str,
    hidden: int | None,
    refs: dict[str, int],
    key: str = "",
) -> dict[str, Any]:
    """Everything the template shows of one file (``key`` prefixes its anchors)."""
    counts = summary_counts(findings)
    waived = sum(1 for f in findings if f.waived is not None)
    fails = fail_on != "never" and any(
        f.waived is None and SEVERITY_RANK[f.severity] <= SEVERITY_RANK[fail_on] for f in findings
    )
    context: dict[str, Any] = {
        "path": path,
        "profile": profile,
        "counts": [(s, counts.get(s, 0)) for s in SEVERITIES],
        "total": len(findings),
        "waived": waived,
        "hidden": hidden,
        "fail_on": fail_on,
        "passes": not fails,
        "detail": detail is not None,
        "key": key,
    }
    if detail is None:
        context["groups"] = _groups(findings, "si", refs)
        return context
    analysis = detail.analysis
    layout, units = analysis.layout, analysis.layout.units
    context.update(
        name=layout.name,
        units=units,
        digest=detail.digest,
        groups=_groups(findings, units, refs),
        drawing=drawing(layout, _marks(findings), key),
        not_drawn=sorted({f.element for f in findings} - _drawn(analysis)),
        pipes=_pipes(analysis),
        points=_points(analysis),
        valves=_valves(analysis),
        plots=_plots(analysis, detail.traces),
        transient=analysis.options.transient,
        lab={k: unit_label(k, units) for k in ("flow", "velocity", "pressure", "length")},
        surge_limit=fmt(analysis.profile.surge_limit, "pressure", units),
    )
    return context


def _drawn(analysis: Analysis) -> set[str]:
    layout = analysis.layout
    groups: list[Any] = [
        layout.supplies,
        layout.points,
        layout.pipes,
        layout.fixtures,
        layout.arresters,
        layout.heaters,
        layout.devices,
    ]
    return {item.id for group in groups for item in group}


def render_html(
    stream: TextIO,
    results: list[tuple[str, str, list[Finding]]],
    errors: list[InputError],
    details: Mapping[str, FileDetail],
    fail_on: str,
    hidden: int | None,
    date: str,
) -> None:
    refs: dict[str, int] = {}
    contexts = [
        file_context(
            path,
            profile,
            fs,
            details.get(path),
            fail_on,
            hidden if k == 0 else None,  # the baseline's count is for the run, shown once
            refs,
            f"f{k + 1}-" if len(results) > 1 else "",
        )
        for k, (path, profile, fs) in enumerate(results)
    ]
    title = (
        contexts[0].get("name", contexts[0]["path"])
        if len(contexts) == 1
        else (f"{len(contexts)} layouts" if contexts else "No layout could be checked")
    )
    stream.write(
        _template().render(
            title=title,
            files=contexts,
            errors=[{"path": e.problems[0].path, "problems": list(e.problems)} for e in errors],
            references=sorted(refs.items(), key=lambda kv: kv[1]),
            caution=CAUTION,
            version=__version__,
            date=date,
            colours=SEVERITY_COLOUR,
        )
    )


def render_simulation(
    stream: TextIO,
    analysis: Analysis,
    trace: ValveTrace,
    model: str,
    digest: str,
    cavities: str,
    date: str,
) -> None:
    """``simulate --format html``: the plot and envelope of one valve with the run's
    parameters."""
    layout = analysis.layout
    (plot,) = _plots(analysis, (trace,))
    stream.write(
        _template("simulate.html.j2").render(
            name=layout.name,
            profile=layout.profile,
            path=layout.path,
            digest=digest,
            valve=f"{trace.fixture} ({trace.side}) at {trace.point}",
            model=model,
            plot=plot,
            cavities=cavities,
            caution=CAUTION,
            version=__version__,
            date=date,
            colours=SEVERITY_COLOUR,
        )
    )
