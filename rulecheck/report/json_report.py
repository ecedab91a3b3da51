"""Machine output (``--format json``): SI units, stable key order, same input → same bytes."""

from __future__ import annotations

import json
from typing import Any

from rulecheck.analysis import Analysis
from rulecheck.errors import InputError
from rulecheck.findings import SEVERITIES, Finding, _clean
from rulecheck.physics.demand import hunter_table
from rulecheck.report.analysis_text import demand_curve_line, pipe_curve
from rulecheck.report.text import summary_counts


def check_document(
    results: list[tuple[str, str, list[Finding]]],
    errors: list[InputError],
    hidden: int | None = None,
) -> dict[str, Any]:
    """The check report; ``hidden`` (findings the baseline hid) appears when a baseline was used."""
    files: list[dict[str, Any]] = [
        {"path": path, "profile": profile, "findings": [f.to_dict() for f in findings]}
        for path, profile, findings in results
    ]
    for error in errors:
        files.append(
            {
                "path": error.problems[0].path,
                "errors": [
                    {
                        "line": p.position.line,
                        "column": p.position.column,
                        "message": p.message,
                        "hint": p.hint,
                    }
                    for p in error.problems
                ],
            }
        )
    every = [f for _, _, findings in results for f in findings]
    counts = summary_counts(every)
    summary: dict[str, Any] = {s: counts.get(s, 0) for s in SEVERITIES}
    summary["waived"] = sum(1 for f in every if f.waived is not None)
    if hidden is not None:
        summary["baseline_hidden"] = hidden
    return {"version": 1, "files": files, "summary": summary}


def valve_records(analysis: Analysis) -> list[dict[str, Any]]:
    """The ``valves`` list of ``analyze --format json`` (SI)."""
    if analysis.surge is None:
        return []
    return [
        {
            "fixture": e.fixture.id,
            "side": e.side,
            "closure_time": _clean(e.closure_time),
            "critical_time": _clean(e.critical_time),
            "surge": _clean(e.surge),
            "peak_pressure": _clean(e.peak),
            "min_pressure": _clean(e.min_pressure),
            "column_separation": e.column_separation,
            "protected_by": e.protected_by,
            "quick": e.quick,
            "method": e.method,
        }
        for e in analysis.surge.events
    ]


def _point_record(analysis: Analysis, node: str) -> dict[str, Any]:
    """Static pressures (floored at the vapour pressure) and the residual at design flow;
    a residual below zero is given as ``residual_shortfall`` [Pa], with a null pressure."""
    residual = analysis.residual[node]
    record: dict[str, Any] = {
        "static_pressure_max": _clean(analysis.static_max[node]),
        "static_pressure_min": _clean(analysis.static_min[node]),
        "residual_pressure": _clean(residual) if residual >= 0.0 else None,
    }
    if residual < 0.0:
        record["residual_shortfall"] = _clean(-residual)
    if node in analysis.static_separated:
        record["static_column_separates"] = True
    return record


def analysis_document(analysis: Analysis) -> dict[str, Any]:
    layout = analysis.layout
    wave_speed = analysis.surge.wave_speed if analysis.surge is not None else None
    pipes: dict[str, Any] = {}
    units_key = "wsfu" if analysis.profile.fixture_unit == "WSFU" else "loading_units"
    for i, pipe in enumerate(layout.pipes):
        entry = {
            "flow": _clean(float(analysis.flow[i])),
            "velocity": _clean(float(analysis.velocity[i])),
            "head_loss": _clean(float(analysis.friction_drop[i])),
            units_key: _clean(float(analysis.wsfu[i])),
            "demand_curve": pipe_curve(analysis, i),
            "flushometer_share": _clean(float(analysis.flushometer_share[i])),
        }
        if wave_speed is not None:
            entry["wave_speed"] = _clean(float(wave_speed[i]))
        pipes[pipe.id] = entry
    points = {node: _point_record(analysis, node) for node in sorted(analysis.static_max)}
    document: dict[str, Any] = {
        "version": 1,
        "path": layout.path,
        "demand_curve": {
            "setting": analysis.demand_curve,
            "rule": demand_curve_line(analysis).removeprefix("Demand curve: "),
            **(
                {
                    "flushometer_share_over": hunter_table().flushometer_share,
                    "basis": hunter_table().share_basis,
                }
                if analysis.demand_curve == "auto"
                else {}
            ),
        },
        "pipes": pipes,
        "points": points,
    }
    document["valves"] = valve_records(analysis)
    return document


def dumps(document: dict[str, Any]) -> str:
    # allow_nan=False: RFC 8259 has no NaN or Infinity; _clean maps them to null first
    return json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
