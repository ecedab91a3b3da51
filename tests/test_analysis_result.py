"""One analysis result, built once and then only read; transient outcomes kept beside the
screening; profile parameters judged per rule as the rule data declares them."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from conftest import CASES, SAMPLES

from rulecheck.analysis import AnalysisOptions, TransientOutcome
from rulecheck.analysis.result import METHOD_SCREENING, Analysis, judged_event
from rulecheck.engine.context import Settings
from rulecheck.engine.run import run_rules
from rulecheck.input.profiles import get_profile, parameters
from rulecheck.input.rulebook import rule_specs
from rulecheck.pipeline import analyse_file

PSI = 6894.757  # Pa per psi [S: NIST SP 811, Appendix B]


@pytest.fixture(scope="module")
def bistro() -> Analysis:
    return analyse_file(SAMPLES / "corner-bistro.yaml")


def test_the_analysis_cannot_be_changed(bistro: Analysis) -> None:
    with pytest.raises(dataclasses.FrozenInstanceError):
        bistro.surge = bistro.surge  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        bistro.surge.events[0].peak = 0.0  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        bistro.layout.units = "si"  # type: ignore[misc]
    with pytest.raises(ValueError, match="read-only"):
        bistro.flow[0] = 0.0
    with pytest.raises(ValueError, match="read-only"):
        bistro.surge.wave_speed[0] = 0.0
    with pytest.raises(TypeError):
        bistro.static_max["SVC"] = 0.0  # type: ignore[index]
    with pytest.raises(TypeError):
        bistro.surge.events[0].pipe_peaks["P1"] = 0.0  # type: ignore[index]


def test_rules_leave_the_analysis_as_it_was(bistro: Analysis) -> None:
    before = repr(bistro.valve_events), bistro.flow.tobytes(), dict(bistro.residual)
    run_rules(bistro)
    assert (repr(bistro.valve_events), bistro.flow.tobytes(), dict(bistro.residual)) == before


def test_screening_alone_judges_the_screening_events(bistro: Analysis) -> None:
    assert bistro.transient == (None,) * len(bistro.surge.events)
    assert bistro.valve_events == bistro.surge.events
    assert {e.method for e in bistro.valve_events} == {METHOD_SCREENING}


def test_transient_outcomes_stand_beside_the_screening_events() -> None:
    """Under transient the screening events keep their formula figures; the judged copies
    carry the simulated ones with the simulation's method."""
    options = AnalysisOptions(transient=True, workers=1)
    sim = analyse_file(SAMPLES / "corner-bistro.yaml", options=options)
    screened = analyse_file(SAMPLES / "corner-bistro.yaml")
    assert sim.surge.events == screened.surge.events
    ran = [(i, o) for i, o in enumerate(sim.transient) if o is not None and o.ran]
    assert ran, "the bistro's quick valves are simulated"
    for i, outcome in ran:
        judged, screening = sim.valve_events[i], sim.surge.events[i]
        assert judged.method == outcome.method and judged.method.startswith("simulation")
        assert judged.peak == outcome.peak and judged.min_pressure == outcome.minimum
        assert screening.method == METHOD_SCREENING
        assert judged.joukowsky == screening.joukowsky  # screening-only figures kept
        assert judged.critical_time == screening.critical_time
    not_asked = [i for i, o in enumerate(sim.transient) if o is None]
    assert all(sim.valve_events[i] is sim.surge.events[i] for i in not_asked)


def test_a_refused_run_keeps_the_screening_and_says_why(bistro: Analysis) -> None:
    event = bistro.surge.events[0]
    judged = judged_event(event, TransientOutcome("screening", ran=False, note="not simulated: x"))
    assert judged.peak == event.peak and judged.method == METHOD_SCREENING
    assert judged.screening_reason == "not simulated: x"


def test_outcomes_must_align_with_the_events(bistro: Analysis) -> None:
    with pytest.raises(ValueError, match="align"):
        Analysis.of(bistro, bistro.surge, (None,))


def test_every_rule_declares_known_profile_parameters_and_reads_only_those() -> None:
    """`uses:` names parameters of rules/profiles.yaml; reading an undeclared one fails."""
    known = set(parameters())
    for spec in rule_specs().values():
        assert set(spec.uses) <= known, spec.id
    # every rule case runs every rule: a rule reading an undeclared parameter would raise
    # KeyError inside the rule and become an internal-error finding
    for case in sorted(CASES.glob("*/*.yaml")):
        found = run_rules(analyse_file(case))
        assert not [f for f in found if "internal error" in f.message], case


def test_profile_values_carry_their_sources() -> None:
    profile = get_profile("ipc")
    assert set(profile.sources) == set(parameters())
    assert "ASSE 1010" in profile.sources["surge_limit"]
    assert "from memory" in profile.sources["arrester_distance"]


def _surge_peak_limits(path: Path, override: str | None) -> set[float]:
    """The limits surge-peak's violations name, in psi rounded to 0.1."""
    limits = {"surge-peak": {"surge_limit": override}} if override else {}
    found = run_rules(analyse_file(path), Settings(limits=limits))
    return {
        round((f.limit or 0) / PSI, 1)
        for f in found
        if f.rule == "surge-peak" and f.severity == "violation"
    }


def test_a_rule_stage_parameter_can_be_set_for_one_rule() -> None:
    """surge-peak judges against 125 psi when rulecheck.toml says so; the profile's 150 psi
    stays for every other rule (arrester-required still reports against 150 psi)."""
    case = CASES / "surge-peak" / "fail.yaml"
    assert _surge_peak_limits(case, None) == {150.0}
    assert _surge_peak_limits(case, "125 psi") == {125.0}
    limits = {"surge-peak": {"surge_limit": "125 psi"}}
    found = run_rules(analyse_file(case), Settings(limits=limits))
    required = [f for f in found if f.rule == "arrester-required"]
    assert required and {round((f.limit or 0) / PSI, 1) for f in required} == {150.0}


def test_an_analysis_stage_parameter_is_refused_per_rule(tmp_path: Path, cli) -> None:  # noqa: ANN001
    config = tmp_path / "rulecheck.toml"
    config.write_text(
        '[rules.arrester-required]\nlimits = { arrester_distance = "10 ft" }\n', encoding="utf-8"
    )
    code, _, err = cli("check", "--config", config, SAMPLES / "two-bath-house.yaml")
    assert code == 2
    assert "rulecheck.toml:2:" in err and "shapes the analysis itself" in err
