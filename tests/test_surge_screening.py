"""Water-hammer screening on the dishwasher case of the screening issue, and its references."""

from __future__ import annotations

import dataclasses
import types
from pathlib import Path

import pytest

from rulecheck.analysis.screening import pipe_wave_speeds
from rulecheck.cli import main
from rulecheck.physics.wavespeed import ANCHORINGS, wave_speed
from rulecheck.pipeline import analyse_file, check_file

CASES = Path(__file__).resolve().parent / "cases"
PSI = 6894.757  # Pa [S: NIST SP 811]


def test_unprotected_dishwasher_reports_surge_separation_and_a_suggested_arrester() -> None:
    findings = check_file(CASES / "surge-peak" / "fail.yaml").findings
    rules = {f.rule for f in findings}
    assert {"surge-peak", "column-separation", "arrester-required"} <= rules
    required = next(f for f in findings if f.rule == "arrester-required")
    assert "class A arrester at H1" in required.fix
    peak = next(f for f in findings if f.rule == "surge-peak")
    assert "psi" in peak.message and "150 psi limit" in peak.message


def test_sealed_class_a_arrester_at_the_valve_clears_the_violations() -> None:
    findings = check_file(CASES / "surge-peak" / "pass.yaml").findings
    assert [f for f in findings if f.severity in ("hazard", "violation")] == []


def test_dishwasher_numbers_follow_the_screening_formulas() -> None:
    """Hand calculation, engineering-basis §7: 30 ms > 2L/a, so Michaud 2ρLΔv/t applies."""
    analysis = analyse_file(CASES / "surge-peak" / "fail.yaml")
    event = next(e for e in analysis.surge.events if e.fixture.id == "DW1")
    water = analysis.water_for("hot")
    pipe = analysis.layout.pipes[event.path[0]]
    a = float(analysis.surge.wave_speed[event.path[0]])
    dv = event.flow / pipe.area
    assert event.critical_time == pytest.approx(2 * pipe.length / a, rel=1e-12)
    assert event.closure_time > event.critical_time
    michaud = 2 * water.density * pipe.length * dv / event.closure_time
    assert event.surge == pytest.approx(min(michaud, water.density * a * dv), rel=1e-12)
    assert event.unprotected_peak == pytest.approx(60 * PSI + event.surge, rel=1e-6)
    # ≈ 60 psi per ft/s stopped in rigid metal pipe (common practice): copper within 15 %
    per_fps = water.density * a * 0.3048 / PSI
    assert per_fps == pytest.approx(60, rel=0.15)


def test_analyze_json_lists_valves(capsys: pytest.CaptureFixture[str]) -> None:
    import json

    assert main(["analyze", str(CASES / "surge-peak" / "pass.yaml"), "--format", "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    (valve,) = data["valves"]
    assert valve["fixture"] == "DW1" and valve["side"] == "hot"
    assert valve["protected_by"] == "A1"
    assert set(valve) >= {
        "closure_time",
        "critical_time",
        "surge",
        "peak_pressure",
        "min_pressure",
        "protected_by",
    }
    assert all("wave_speed" in p for p in data["pipes"].values())


def test_vectorised_wave_speeds_equal_the_formula_pipe_by_pipe() -> None:
    """``pipe_wave_speeds`` (one numpy call per anchoring) gives every pipe the same speed,
    to the last bit, as ``wave_speed`` called on that pipe alone [S: Korteweg–Halliwell,
    engineering-basis §7], with the three anchorings mixed in one layout."""
    analysis = analyse_file(Path(__file__).resolve().parent.parent / "samples/fernhill-clinic.yaml")
    pipes = [
        dataclasses.replace(p, anchoring=ANCHORINGS[i % 3])
        for i, p in enumerate(analysis.layout.pipes)
    ]
    layout = dataclasses.replace(analysis.layout, pipes=pipes)
    mixed = types.SimpleNamespace(layout=layout, water_for=analysis.water_for)
    one_by_one = [
        wave_speed(
            analysis.water_for(p.service).bulk_modulus,
            analysis.water_for(p.service).density,
            p.material.modulus_at(layout.temperature(p.service), p.size),
            p.material.poisson,
            p.inner_diameter,
            p.wall,
            p.anchoring,
        )
        for p in pipes
    ]
    assert pipe_wave_speeds(mixed).tolist() == one_by_one  # type: ignore[arg-type]
    assert len({p.anchoring for p in pipes}) == 3
