"""``rulecheck explain``: every rule shows a worked example the engine computed (issue 9 B.7).

The example layout is analysed and checked here independently of the explain module
(``analyse_file`` + ``run_rules``), in both unit systems, and the explain text must
carry the engine's own findings and a number of its steps. Snippet comments are filled
from the catalog: the flushometer's minimum flow pressure the catalog holds, in the
reader's units, not a typed figure.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest
import yaml

from rulecheck.analysis import Analysis, analyse
from rulecheck.cli.explain import EXAMPLE, explain
from rulecheck.engine.run import run_rules
from rulecheck.findings import Finding
from rulecheck.input import load_layout
from rulecheck.input.rulebook import rule_specs
from rulecheck.units import fmt

ROOT = Path(__file__).resolve().parent.parent
PSI = 6894.757  # Pa [S: NIST SP 811]


def _engine(units: str) -> tuple[Analysis, list[Finding]]:
    analysis = analyse(replace(load_layout(ROOT / "rules" / EXAMPLE), units=units))
    return analysis, run_rules(analysis)


def _index(analysis: Analysis, pipe_id: str) -> int:
    return next(i for i, p in enumerate(analysis.layout.pipes) if p.id == pipe_id)


def _step_number(rule: str, a: Analysis, found: list[Finding], units: str) -> str:
    """One number of the rule's worked steps, read straight from the analysis."""
    dw1 = next(e for e in a.surge.events if e.fixture.id == "DW1" and e.side == "hot")
    if rule in ("closure-time", "surge-peak", "column-separation", "arrester-required"):
        return f"Joukowsky ρ·a·Δv = {fmt(dw1.joukowsky, 'pressure', units)}"
    if rule == "velocity-limit":
        return f"v = Q/A = {fmt(float(a.velocity[_index(a, 'P3')]), 'velocity', units)}"
    if rule == "static-pressure":
        return f"= {fmt(a.static_max[found[0].element], 'pressure', units)}"
    if rule == "residual-pressure":
        fixture = next(x for x in a.layout.fixtures if x.id == found[0].element)
        return f"design flow: {fmt(a.fixture_residual(fixture)[0], 'pressure', units)}"
    if rule == "waiver-unused":
        return f"P2 runs at {fmt(float(a.velocity[_index(a, 'P2')]), 'velocity', units)}"
    if rule == "arrester-capacity":
        served = a.surge.served[found[0].element]
        return f"total {sum(u for _, _, u in served):.1f} WSFU"
    if rule == "arrester-kind":
        return f"severity {a.profile.air_chamber_severity}"
    raise AssertionError(f"no step number chosen for {rule}")


@pytest.mark.parametrize("units", ["us", "si"])
@pytest.mark.parametrize("rule_id", sorted(rule_specs()))
def test_every_rule_explains_on_numbers_the_engine_computed(rule_id: str, units: str) -> None:
    analysis, findings = _engine(units)
    found = [f for f in findings if f.rule == rule_id]
    assert found, f"{rule_id} does not fire on the built-in example"
    text = explain(rule_specs()[rule_id], "ipc", units)
    worked = text.split("Worked example", 1)[1].split("\nSource:", 1)[0]
    for finding in found:
        assert finding.message in worked
    assert _step_number(rule_id, analysis, found, units) in worked


def test_the_closure_time_example_is_a_quick_closure_that_fires() -> None:
    analysis, findings = _engine("us")
    event = next(e for e in analysis.surge.events if e.fixture.id == "DW1")
    assert event.closure_time <= event.critical_time
    assert [f.element for f in findings if f.rule == "closure-time"] == ["DW1"]


@pytest.mark.parametrize("units", ["us", "si"])
def test_snippet_comments_come_from_the_catalog_in_the_readers_units(units: str) -> None:
    """The flushometer closet's minimum flow pressure as rules/fixture-types.yaml states it
    (read here with PyYAML, not through rulecheck's catalog), shown in the reader's units."""
    with open(ROOT / "rules" / "fixture-types.yaml", encoding="utf-8") as handle:
        types = {t["id"]: t for t in yaml.safe_load(handle)["fixture_types"]}
    number, unit = types["water-closet-flushometer"]["min_pressure"].split()
    assert unit == "psi"
    expected = fmt(float(number) * PSI, "pressure", units)
    text = explain(rule_specs()["residual-pressure"], "ipc", units)
    snippets = text.split("A failing layout snippet:", 1)[1]
    assert f"needs {expected} flowing" in snippets
    for rule_id, spec in rule_specs().items():
        assert "{fixture:" not in explain(spec, "ipc", units), rule_id
        assert "{arrester:" not in explain(spec, "ipc", units), rule_id
