"""Profile en806 (issue 13): EN 806-3 loading units, design flow, limits, and a metric layout
that checks, analyses and simulates.

Outside references beside each assertion: EN 806-3:2006 Table 2 and clause 4.4 (via a
published excerpt), a tube maker's EN 1057 dimension table, the thick-wall wave-speed
formula (Wylie & Streeter 1993) with ``iapws`` water properties.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path

import pytest
import yaml
from iapws import IAPWS95

from rulecheck.errors import EXIT_INPUT
from rulecheck.input.catalog import builtin_catalog
from rulecheck.input.profiles import get_profile, parameters, profile_ids
from rulecheck.input.rulebook import rule_specs
from rulecheck.physics.demand import loading_unit_flow, loading_unit_table
from rulecheck.pipeline import analyse_file, check_file

Cli = Callable[..., tuple[int, str, str]]
RULES = Path(__file__).resolve().parent.parent / "rules"

# EN 806-3:2006 Table 2, loading units per draw-off point [S: via a published excerpt]:
# washbasin, bidet, WC cistern 1; kitchen sink, washing machine, dishwasher, sink, shower 2;
# urinal flush valve 3; bath 4; garden/garage tap 5; flush valve DN 20 15.
TABLE_2 = {
    "lavatory": 1, "bidet": 1, "water-closet-tank": 1, "kitchen-sink": 2, "clothes-washer": 2,
    "dishwasher": 2, "laundry-tray": 2, "shower": 2, "urinal-flushometer": 3, "bathtub": 4,
    "hose-bibb": 5, "water-closet-flushometer": 15,
}  # fmt: skip

LAYOUT = """\
version: 1
project: {name: metric flat, units: si, profile: en806}
water: {cold_temperature: 12 degC, hot_temperature: 60 degC}
supplies:
  - {id: S, pressure: {min: 350 kPa, max: 450 kPa}, elevation: 0 m}
heaters:
  - {id: WH, inlet: C1, outlet: H0, loss: 10 kPa}
points:
  - {id: C1, elevation: 0 m}
  - {id: C2, elevation: 1 m}
  - {id: H0, elevation: 1 m}
  - {id: H1, elevation: 1 m}
pipes:
  - {id: P1, from: S, to: C1, material: copper-en1057, size: 22x1.0, length: 10 m, service: cold}
  - {id: P2, from: C1, to: C2, material: copper-en1057, size: 22 × 1.0, length: 5 m, service: cold}
  - {id: P3, from: H0, to: H1, material: pex-en15875-s3.2, size: 20, length: 5 m, service: hot}
fixtures:
  - {id: KS, type: kitchen-sink, cold: C2, hot: H1}
  - {id: DW, type: dishwasher, cold: C2}
  - {id: BT, type: bathtub, cold: C2, hot: H1}
"""


@pytest.fixture
def flat(tmp_path: Path) -> Path:
    path = tmp_path / "flat.yaml"
    path.write_text(LAYOUT, encoding="utf-8")
    return path


def test_profile_has_every_parameter_with_a_source() -> None:
    assert "en806" in profile_ids()
    profile = get_profile("en806")
    assert profile.demand_method == "loading-units" and profile.fixture_unit == "LU"
    assert get_profile("ipc").fixture_unit == "WSFU"
    for name in parameters():
        assert profile.sources[name].strip(), name
        assert "[" in profile.sources[name], name  # every source carries its tag


@pytest.mark.parametrize(("fixture_type", "lu"), sorted(TABLE_2.items()))
def test_loading_units_are_table_2(fixture_type: str, lu: int) -> None:
    values = builtin_catalog().fixture_types[fixture_type].profiles["en806"]
    assert values.units.total == lu
    assert values.flow == pytest.approx(lu * 1e-4)  # 1 LU = 0.1 L/s [S: EN 806-3 Table 2]
    assert values.min_pressure == pytest.approx(100e3)


def test_every_fixture_type_has_en806_values() -> None:
    assert all("en806" in t.profiles for t in builtin_catalog().fixture_types.values())


def test_loading_unit_flow_shape() -> None:
    """1 LU = 0.1 L/s [S: EN 806-3 Table 2]; simultaneity never makes the design flow exceed
    the sum of the draw-offs, and it rises with the total [S: EN 806-3 clause 5, the tables
    build in the probability of simultaneous use]."""
    assert loading_unit_flow(1) == pytest.approx(1e-4)
    assert loading_unit_flow(0) == 0.0
    table = loading_unit_table()
    for n in [*table.lu, 7.0, 15.0, 450.0, 8000.0]:
        q = loading_unit_flow(n)
        assert 0 < q <= n * 1e-4 + 1e-12
    series = [loading_unit_flow(n) for n in range(1, 3000, 7)]
    assert all(b >= a for a, b in zip(series, series[1:], strict=False))
    with pytest.raises(ValueError, match="negative"):
        loading_unit_flow(-1)


def test_en806_limits_are_en806_3_and_en806_2() -> None:
    velocity = rule_specs()["velocity-limit"]
    assert velocity.limit("en806", "cold", "velocity") == pytest.approx(2.0)  # EN 806-3 4.4
    assert velocity.limit("en806", "single_outlet", "velocity") == pytest.approx(4.0)
    static = rule_specs()["static-pressure"]
    assert static.limit("en806", "max_static", "pressure") == pytest.approx(500e3)  # [M]
    # ipc keeps its own: 8 ft/s [S: NSPC 10.14.1], no single-outlet limit
    assert velocity.limit("ipc", "cold", "velocity") == pytest.approx(8 * 0.3048)
    assert "single_outlet" not in velocity.raw_limits("ipc")


def _thick_wall(temp_c: float, e_mod: float, nu: float, d: float, e: float) -> float:
    water = IAPWS95(T=273.15 + temp_c, P=0.101325)
    k = water.rho * water.w**2
    c1 = 2 * e / d * (1 + nu) + d * (1 - nu**2) / (d + e)
    return math.sqrt((k / water.rho) / (1 + k / e_mod * d / e * c1))


def test_metric_layout_analyses_with_the_right_numbers(flat: Path) -> None:
    a = analyse_file(flat)
    p1, p2, p3 = a.layout.pipes
    # 22x1.0: inside 20.0 mm [S: Halcor EN 1057 tube table]; PE-X 20 alone = 20x2.8 (S 3.2)
    assert p1.inner_diameter == pytest.approx(0.020) and p2.size == "22x1.0"
    assert p3.size == "20x2.8" and p3.inner_diameter == pytest.approx(0.0144)
    # wave speeds: the thick-wall formula, E 117 GPa nu 0.34 copper; PE-X at 60 degC E 0.35 GPa
    assert a.surge.wave_speed[0] == pytest.approx(_thick_wall(12, 117e9, 0.34, 0.020, 0.001), 2e-3)
    assert a.surge.wave_speed[2] == pytest.approx(
        _thick_wall(60, 0.35e9, 0.46, 0.0144, 0.0028), 2e-3
    )
    # loading units: kitchen sink 2 + dishwasher 2 + bath 4 on the cold pipes (each outlet
    # once where a pipe feeds both sides), 2 + 4 on the hot [S: EN 806-3 Table 2]
    assert list(a.wsfu) == [8.0, 8.0, 6.0]
    assert a.flow[0] == pytest.approx(loading_unit_flow(8))
    assert a.flow[2] == pytest.approx(max(loading_unit_flow(6), 0.4e-3))  # bath 0.4 L/s floor
    # residual pressure is judged against 100 kPa, the en806 minimum flow pressure
    assert {f.min_pressure for f in a.layout.fixtures} == {100e3}


def test_metric_layout_checks_in_lu_and_simulates(flat: Path, cli: Cli) -> None:
    found = check_file(flat).findings
    assert found, "the PE-X branch at 0.45 L/s runs over 2 m/s"
    velocity = [f for f in found if f.rule == "velocity-limit"]
    assert velocity and all("2.00 m/s limit" in f.message for f in velocity)
    rc, out, _ = cli("analyze", flat)
    assert rc == 0 and " LU " in out and "EN 806-3" in out and "WSFU" not in out
    rc, out, _ = cli("analyze", flat, "--format", "json")
    pipe = json.loads(out)["pipes"]["P1"]
    assert pipe["loading_units"] == 8.0 and "wsfu" not in pipe
    rc, out, _ = cli("simulate", flat, "--valve", "DW", "--format", "json")
    assert rc == 0
    result = json.loads(out)
    assert result["peak_pressure"] > 450e3 and result["model"] == "whole cold tree"


def test_arrester_asked_only_over_the_limit(flat: Path) -> None:
    """en806: no arrester rule like IPC 604.9; an arrester is asked for only where the
    computed unprotected peak exceeds the profile's limit (1000 kPa)."""
    found = check_file(flat).findings
    a = analyse_file(flat)
    over = {e.fixture.id for e in a.valve_events if e.quick and e.unprotected_peak > 1000e3}
    assert {f.element for f in found if f.rule == "arrester-required"} == over
    # the same layout under ipc asks for one at every quick-closing valve
    ipc = check_file(flat, profile="ipc")
    quick = {e.fixture.id for e in ipc.analysis.valve_events if e.quick and not e.protected_by}
    assert quick and {f.element for f in ipc.findings if f.rule == "arrester-required"} == quick
    assert over < quick


def test_fixture_type_without_loading_units_is_refused(tmp_path: Path, cli: Cli) -> None:
    text = LAYOUT + (
        "fixture_types:\n"
        "  - {id: tap-x, wsfu: {cold: 1}, flow: 0.2 L/s, min_pressure: 100 kPa, sides: [cold],"
        " source: 'invented [CP]'}\n"
    )
    text = text.replace(
        "  - {id: DW, type: dishwasher, cold: C2}", "  - {id: DW, type: tap-x, cold: C2}"
    )
    path = tmp_path / "x.yaml"
    path.write_text(text, encoding="utf-8")
    rc, _, err = cli("check", path)
    line = next(i for i, t in enumerate(text.splitlines(), 1) if "type: tap-x" in t)
    assert rc == EXIT_INPUT
    assert f"x.yaml:{line}:" in err and "no loading units for profile 'en806'" in err


def test_ambiguous_outside_diameter_lists_the_walls(tmp_path: Path, cli: Cli) -> None:
    path = tmp_path / "y.yaml"
    path.write_text(LAYOUT.replace("size: 22x1.0,", "size: 22,"), encoding="utf-8")
    rc, _, err = cli("check", path)
    assert rc == EXIT_INPUT
    assert "y.yaml:14:" in err and "22x0.9, 22x1.0, 22x1.2" in err and "Traceback" not in err


def test_fixture_type_data_carries_en806_sources() -> None:
    data = yaml.safe_load((RULES / "fixture-types.yaml").read_text(encoding="utf-8"))
    for entry in data["fixture_types"]:
        source = entry["profiles"]["en806"]["source"]
        assert "[S:" in source or "[CP]" in source or "[D]" in source, entry["id"]
        assert "from memory; verify against the adopted edition" in " ".join(source.split())


HOSTILE_SIZES = [
    "22x", "x1.0", "22x1.0x3", "DN", "DN-25", "0x0", "1e3x1", "99999999999x1", "22,0x1,0",
    "２２x1.0", "-22x1.0", "22x1.0 in", "22 mm x 1.0 mm x", "\u202e22x1.0", "DN25.5", "",
]  # fmt: skip


@pytest.mark.parametrize("size", HOSTILE_SIZES)
def test_hostile_sizes_are_clear_errors(tmp_path: Path, cli: Cli, size: str) -> None:
    path = tmp_path / "h.yaml"
    path.write_text(LAYOUT.replace("size: 22x1.0,", f"size: {json.dumps(size)},"), encoding="utf-8")
    rc, _, err = cli("check", path)
    assert rc == EXIT_INPUT, err
    assert "h.yaml:14:" in err and "Traceback" not in err


def test_project_material_with_a_size_twice_is_refused(tmp_path: Path, cli: Cli) -> None:
    text = LAYOUT + (
        "materials:\n"
        "  - id: my-tube\n"
        "    modulus: 100 GPa\n"
        "    poisson: 0.3\n"
        "    roughness: 0.001 mm\n"
        "    pressure_rating: [{temperature: 20 degC, pressure: 1 MPa}]\n"
        "    sizes:\n"
        '      "22x1": {outside_diameter: 22 mm, wall: 1 mm}\n'
        '      "22 × 1.0": {outside_diameter: 22 mm, wall: 1.2 mm}\n'
        "    source: invented for a test\n"
    )
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    rc, _, err = cli("check", path)
    line = text.splitlines().index('      "22 × 1.0": {outside_diameter: 22 mm, wall: 1.2 mm}') + 1
    assert rc == EXIT_INPUT and f"d.yaml:{line}:" in err and "same size as 22x1.0" in err
