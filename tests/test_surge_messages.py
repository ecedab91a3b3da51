"""Every figure of a water-hammer message names the one method it comes from (issue 9 B.2),
and the pipe over its rating is the pipe whose own peak exceeds its own rating (B.3).

The messages of every sample and every per-rule case are read under ``check`` and
``check --transient``, in US and SI units. A figure is a number with a pressure or
time unit. It must be either one of the fixed quantities the message names by what
they are (a closure time from the fixture type, the critical time Σ2L/a, a limit or a
pipe rating from the rule data and the catalog, a distance), or be followed by exactly
one method label: ``(screening, <formula>)`` or ``(simulation, whole service tree |
path model)``. "Joukowsky" appears only as "Joukowsky ρ·a·Δv" inside a screening label,
and no bracket opens inside another.
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

import pytest

from rulecheck.analysis import AnalysisOptions, analyse
from rulecheck.engine.run import run_rules
from rulecheck.input import load_layout
from rulecheck.pipeline import analyse_file
from rulecheck.units import fmt

ROOT = Path(__file__).resolve().parent.parent
SURGE_RULES = ("closure-time", "surge-peak", "column-separation", "arrester-required")
LAYOUTS = sorted((ROOT / "samples").glob("*.yaml")) + sorted(
    (ROOT / "tests" / "cases").glob("*/*.yaml")
)
PSI = 6894.757  # Pa [S: NIST SP 811]

NUMBER = r"-?\d[\d,]*(?:\.\d+)?"
FIGURE = re.compile(rf"({NUMBER}) (psi|kPa|MPa|ms|s)\b")
LABEL = re.compile(
    r"\A(?: gauge)? \((screening, [^()]+|simulation, (?:whole service tree|path model)"
    r"|critical time Σ2L/a)\)"
)
# figures that are not a method's result, by the words just before or after them
FIXED_BEFORE = ("closes in ", "Σ2L/a = ")
FIXED_AFTER = (" limit", " rating")


def _messages(path: Path, transient: bool, units: str) -> list[tuple[str, str]]:
    layout = replace(load_layout(path), units=units)
    analysis = analyse(layout, AnalysisOptions(transient=transient, workers=1))
    return [
        (f.rule, text)
        for f in run_rules(analysis)
        if f.rule in SURGE_RULES
        for text in (f.message, f.fix)
    ]


def _depth_ok(text: str) -> bool:
    depth = 0
    for char in text:
        depth += {"(": 1, ")": -1}.get(char, 0)
        if depth > 1 or depth < 0:
            return False
    return depth == 0


def _check_message(text: str, transient: bool) -> int:
    """Assert the labelling of one message; return how many labelled figures it has."""
    assert _depth_ok(text), f"nested or unbalanced brackets: {text}"
    for hit in re.finditer("Joukowsky", text):
        label_start = text.rfind("(", 0, hit.start())
        assert text[hit.end() :].startswith(" ρ·a·Δv"), text
        assert text[label_start:].startswith("(screening, "), text
    labelled = 0
    for figure in FIGURE.finditer(text):
        before, after = text[: figure.start()], text[figure.end() :]
        if before.endswith(FIXED_BEFORE) or after.startswith(FIXED_AFTER):
            continue
        label = LABEL.match(after)
        assert label, f"figure {figure.group(0)!r} without its method: {text}"
        inside = label.group(1)
        assert inside.count("screening") + inside.count("simulation") <= 1, text
        if transient and inside.startswith("screening") and "solved for t" not in inside:
            # under --transient, only the minimum safe closure time is still a formula's
            assert "Joukowsky" not in inside and "slow-closure" not in inside, text
        labelled += 1
    return labelled


@pytest.mark.parametrize("transient", [False, True], ids=["screening", "transient"])
@pytest.mark.parametrize("units", ["us", "si"])
def test_every_surge_figure_names_one_method(transient: bool, units: str) -> None:
    labelled = 0
    for path in LAYOUTS:
        for _rule, text in _messages(path, transient, units):
            labelled += _check_message(text, transient)
    assert labelled > 20  # the sweep read real figures, not empty messages


def test_transient_messages_say_simulation_and_keep_the_screening_closure_time() -> None:
    path = ROOT / "samples" / "corner-bistro.yaml"
    found = dict(_messages(path, True, "us")[::2])  # (rule, message) of each finding
    closure = next(t for r, t in _messages(path, True, "us") if r == "closure-time")
    assert "(simulation, whole service tree)" in closure
    assert "(screening, slow-closure 2ρ·ΣL·Δv/t solved for t)" in closure
    assert "Joukowsky" not in closure  # the simulated rise is not a Joukowsky figure
    assert "transient (" not in " ".join(found.values())


def _dishwasher(tmp_path: Path, closure: str) -> Path:
    """The surge-peak case (50 ft of 1/2 in copper, T_c ≈ 22 ms) with its own closure."""
    text = (ROOT / "tests" / "cases" / "surge-peak" / "fail.yaml").read_text(encoding="utf-8")
    path = tmp_path / "dishwasher.yaml"
    path.write_text(
        text.replace("hot: H1}", f"hot: H1, valve: {{closing: quick, closure_time: {closure}}}}}"),
        encoding="utf-8",
    )
    return path


def test_the_joukowsky_figure_is_rho_a_dv_of_the_valve_pipe(tmp_path: Path) -> None:
    """A 5 ms closure: the surge labelled Joukowsky is ρ·a₁·Δv₁ recomputed here from the
    analysis' own density, wave speed and flow [S: Massoud, Engineering Thermofluids
    §IIIb.7]."""
    analysis = analyse_file(_dishwasher(tmp_path, "5 ms"))
    event = next(e for e in analysis.surge.events if e.fixture.id == "DW1")
    water = analysis.water_for("hot")
    pipe = analysis.layout.pipes[event.path[0]]
    rise = water.density * float(analysis.surge.wave_speed[event.path[0]]) * event.flow / pipe.area
    assert event.surge_formula == "joukowsky"
    assert event.joukowsky == pytest.approx(rise, rel=1e-12)
    message = next(f.message for f in run_rules(analysis) if f.rule == "arrester-required")
    assert f"surge {fmt(rise, 'pressure', 'us')} (screening, Joukowsky ρ·a·Δv)" in message


def test_slow_closure_is_labelled_by_its_own_formula(tmp_path: Path) -> None:
    """A 200 ms closure on 50 ft of 1/2 in copper (T_c ≈ 22 ms): Michaud's 2ρ·ΣL·Δv/t is
    below ρ·a·Δv, so the surge is not a Joukowsky figure."""
    analysis = analyse_file(_dishwasher(tmp_path, "200 ms"))
    event = analysis.surge.events[0]
    assert event.surge_formula == "slow-closure" and event.surge < event.joukowsky
    message = next(f.message for f in run_rules(analysis) if f.rule == "arrester-required")
    assert "(screening, slow-closure 2ρ·ΣL·Δv/t)" in message and "Joukowsky" not in message


# --- B.3: the pipe over its rating -------------------------------------------------------

PEX_MAIN = """\
version: 1
project: {name: PEX main behind a copper branch (test), units: us}
water: {hot_temperature: 180 degF}
supplies:
  - {id: SVC, pressure: 60 psi}
heaters:
  - {id: WH1, inlet: J1, outlet: H0}
points:
  - {id: J1}
  - {id: H0}
  - {id: H1}
  - {id: H2}
pipes:
  - {id: P1, from: SVC, to: J1, material: copper-l, size: 1, length: 10 ft, service: cold}
  - {id: P2, from: H0, to: H1, material: pex-sdr9, size: 1, length: 30 ft, service: hot}
  - {id: P3, from: H1, to: H2, material: copper-l, size: 1/2, length: 20 ft, service: hot}
fixtures:
  - {id: DW1, type: dishwasher, hot: H2}
"""


def test_the_hazard_names_the_pipe_whose_own_peak_exceeds_its_own_rating(
    tmp_path: Path,
) -> None:
    """Copper at the valve is rated far above the peak; the hot PEX main upstream is rated
    100 psi at 180 °F [S: F876 tubing data sheet]: the hazard names P2, not P3."""
    path = tmp_path / "pex.yaml"
    path.write_text(PEX_MAIN, encoding="utf-8")
    analysis = analyse_file(path)
    ratings = analysis.surge.pipe_rating
    assert ratings["P2"] == pytest.approx(100 * PSI, rel=1e-6)
    event = analysis.surge.events[0]
    assert event.pipe_peaks["P3"] < ratings["P3"] and event.pipe_peaks["P2"] > ratings["P2"]
    hazard = [f for f in run_rules(analysis) if f.rule == "surge-peak" and f.severity == "hazard"]
    assert len(hazard) == 1
    assert "in pipe P2 (pex-sdr9 1)" in hazard[0].message and "P3" not in hazard[0].message
    assert hazard[0].measured == pytest.approx(event.pipe_peaks["P2"])
    assert hazard[0].limit == pytest.approx(ratings["P2"])


def test_screening_puts_the_valve_surge_on_every_path_pipe_with_its_own_static() -> None:
    path = ROOT / "samples" / "corner-bistro.yaml"
    analysis = analyse_file(path)
    event = next(e for e in analysis.surge.events if e.fixture.id == "DW1")
    pipes = {p.id: p for p in analysis.layout.pipes}
    assert set(event.pipe_peaks) == {analysis.layout.pipes[k].id for k in event.path}
    for pid, peak in event.pipe_peaks.items():
        pipe = pipes[pid]
        static = max(analysis.static_max[pipe.start], analysis.static_max[pipe.end])
        assert peak == pytest.approx(static + event.surge)


def test_corner_bistro_transient_judges_each_pipe_by_its_own_simulated_peak() -> None:
    """The issue's case: the simulated 463 psi is in the 1/2 in branch P11 (its own rating,
    CTH type L 1/2 in annealed, is far higher), while P10 (1 in) peaked near 150 psi: no
    pipe is over its rating, so no hazard names P10."""
    options = AnalysisOptions(transient=True, workers=1)
    analysis = analyse_file(ROOT / "samples" / "corner-bistro.yaml", options=options)
    event = next(e for e in analysis.valve_events if e.fixture.id == "DW1")
    ratings = analysis.surge.pipe_rating
    assert event.pipe_peaks["P11"] > 2.5 * event.pipe_peaks["P10"]
    assert max(event.pipe_peaks.values()) == pytest.approx(event.peak, rel=0.02)
    assert all(peak <= ratings[pid] for pid, peak in event.pipe_peaks.items())
    found = [f for f in run_rules(analysis) if f.rule == "surge-peak" and f.element == "DW1"]
    assert found and all(f.severity != "hazard" for f in found)
