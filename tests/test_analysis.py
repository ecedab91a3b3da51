"""Steady analysis (``rulecheck.pipeline.analyse_file``) against hand calculations.

References:
- engineering-basis §3: WSFU accumulation (cold pipe serving both sides of a
  fixture counts its TOTAL WSFU [S: IPC Table E103.3(2)]), Hunter's curve as
  tabled in IPC Table E103.3(3), single-fixture and largest-fixture floors [CP],
  continuous flows added, ``demand`` overrides.
- engineering-basis §4: v = Q/A with A from the inside diameter; static pressure
  falls by rho*g per unit rise; a pressure-reducing device caps the static
  downstream; residual = static min - friction - device losses - elevation.
- Water density and viscosity at the service temperature from IAPWS-95 via the
  ``iapws`` package; friction factor from the ``fluids`` package (Colebrook).
- Unit factors: 1 gpm = 231 in^3/min, 1 psi = 6894.757 Pa, 1 ft = 0.3048 m,
  1 in = 0.0254 m [S: NIST SP 811, Appendix B].
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path

import iapws
import pytest
from conftest import MINIMAL, tweak
from fluids.friction import friction_factor

from rulecheck.analysis import Analysis
from rulecheck.physics.demand import demand_flow
from rulecheck.pipeline import analyse_file

GPM = 231 * 0.0254**3 / 60  # [m^3/s] [S: NIST SP 811]
PSI = 6894.757293168361  # [Pa] [S: NIST SP 811, 6.894757e3]
FT = 0.3048  # [m] exact [S: NIST SP 811]
INCH = 0.0254  # [m] exact
G = 9.80665  # [m/s^2] [S: CGPM 1901]
T_COLD_DEFAULT = 288.15  # 15 degC, the format's default cold temperature (layout-format.md)

SLOW = "valve: {closing: slow, closure_time: 10 s}"

HOUSE = f"""\
version: 1
project: {{name: WSFU accumulation, units: us}}
supplies:
  - {{id: SVC, pressure: 60 psi, elevation: 0 ft}}
heaters:
  - {{id: WH1, inlet: J2, outlet: H0}}
points:
  - {{id: J1}}
  - {{id: J2}}
  - {{id: J3}}
  - {{id: H0}}
  - {{id: H1}}
pipes:
  - {{id: C1, from: SVC, to: J1, material: copper-l, size: 1, length: 30 ft, service: cold}}
  - {{id: C2, from: J1, to: J2, material: copper-l, size: 3/4, length: 10 ft, service: cold}}
  - {{id: C3, from: J1, to: J3, material: copper-l, size: 3/4, length: 10 ft, service: cold}}
  - {{id: H1p, from: H0, to: H1, material: copper-l, size: 3/4, length: 10 ft, service: hot}}
fixtures:
  - {{id: L1, type: lavatory, cold: J3, hot: H1, {SLOW}}}
  - {{id: L2, type: lavatory, cold: J3, hot: H1, {SLOW}}}
  - {{id: WC1, type: water-closet-tank, cold: J3, {SLOW}}}
"""


def by_pipe(analysis: Analysis, values: object) -> dict[str, float]:
    return {p.id: float(values[i]) for i, p in enumerate(analysis.layout.pipes)}  # type: ignore[index]


def hunter_tank(wsfu: float) -> float:
    """Flush-tank column of IPC Table E103.3(3), rows 1-10 as listed in engineering-basis §3
    (1: 3.0, 2: 5.0, 3: 6.5, 4: 8.0, 5: 9.4 ...), linear between rows, in m^3/s."""
    rows = [
        (1, 3.0),
        (2, 5.0),
        (3, 6.5),
        (4, 8.0),
        (5, 9.4),
        (6, 10.7),
        (7, 11.8),
        (8, 12.8),
        (9, 13.7),
        (10, 14.6),
        (15, 17.5),
    ]
    for (n0, q0), (n1, q1) in zip(rows, rows[1:], strict=False):
        if n0 <= wsfu <= n1:
            return (q0 + (q1 - q0) * (wsfu - n0) / (n1 - n0)) * GPM
    raise AssertionError("outside the rows used here")


@pytest.fixture
def house(write_layout: Callable[..., Path]) -> Analysis:
    return analyse_file(write_layout(HOUSE))


def test_cold_pipe_serving_only_cold_sides_counts_cold_wsfu(house: Analysis) -> None:
    """C3 feeds the cold sides of L1, L2 (0.5 each) and WC1 (2.2): 3.2 WSFU
    [S: IPC Table E103.3(2), private lavatory 0.5 cold; tank closet 2.2]."""
    assert by_pipe(house, house.wsfu)["C3"] == pytest.approx(0.5 + 0.5 + 2.2, abs=1e-12)


def test_cold_pipe_to_the_heater_counts_hot_wsfu(house: Analysis) -> None:
    """C2 feeds only the heater, i.e. the hot sides of L1, L2: 0.5 + 0.5."""
    assert by_pipe(house, house.wsfu)["C2"] == pytest.approx(1.0, abs=1e-12)


def test_hot_pipe_counts_hot_wsfu(house: Analysis) -> None:
    assert by_pipe(house, house.wsfu)["H1p"] == pytest.approx(1.0, abs=1e-12)


def test_cold_pipe_serving_both_sides_counts_total_wsfu(house: Analysis) -> None:
    """C1 feeds L1 and L2 on both sides (cold directly, hot through the heater): their TOTAL
    WSFU 0.7 each, plus WC1's 2.2 = 3.6 (engineering-basis §3.1, IPC Table E103.3(2) total
    column), not cold + hot = 4.2."""
    assert by_pipe(house, house.wsfu)["C1"] == pytest.approx(0.7 + 0.7 + 2.2, abs=1e-12)


def test_flows_follow_hunters_curve(house: Analysis) -> None:
    """C1: 3.6 WSFU -> 6.5 + 0.6 x (8.0 - 6.5) = 7.4 gpm (IPC E103.3(3) rows 3 and 4);
    C3: 3.2 WSFU -> 6.8 gpm; both above the largest fixture (3 gpm, tank closet)."""
    flow = by_pipe(house, house.flow)
    assert flow["C1"] == pytest.approx(7.4 * GPM, rel=1e-9)
    assert flow["C3"] == pytest.approx(hunter_tank(3.2), rel=1e-9)
    assert flow["C3"] == pytest.approx(6.8 * GPM, rel=1e-9)


def test_single_fixture_pipe_carries_the_fixture_flow(write_layout: Callable[..., Path]) -> None:
    """One tank closet (2.2 WSFU, 3 gpm per IPC Table 604.3): the pipe carries 3 gpm, not
    Hunter's 5.3 gpm for 2.2 WSFU (engineering-basis §3.3)."""
    analysis = analyse_file(write_layout())
    assert float(analysis.flow[0]) == pytest.approx(3.0 * GPM, rel=1e-9)
    assert hunter_tank(2.2) > 5 * GPM  # the curve alone would be higher: the rule matters


FLUSH_LAYOUT = f"""\
version: 1
project: {{name: flushometers, units: us}}
supplies:
  - {{id: SVC, pressure: 80 psi}}
points:
  - {{id: J1}}
pipes:
  - {{id: P1, from: SVC, to: J1, material: copper-l, size: 2, length: 30 ft, service: cold}}
fixtures:
  - {{id: W1, type: TYPE, occupancy: public, cold: J1, {SLOW}}}
  - {{id: W2, type: TYPE, occupancy: public, cold: J1, {SLOW}}}
  - {{id: W3, type: TYPE, occupancy: public, cold: J1, {SLOW}}}
"""


def test_flushometer_column_used_when_a_flushometer_is_downstream(
    write_layout: Callable[..., Path],
) -> None:
    """Three public flushometer closets, 10 WSFU each [S: IPC Table E103.3(2)]: 30 WSFU ->
    42.0 gpm in the flushometer column, row 30 [S: IPC Table E103.3(3)]; flush-tank closets
    (public, 5 WSFU each): 15 WSFU -> 17.5 gpm in the tank column, row 15 [S]."""
    flush = analyse_file(
        write_layout(FLUSH_LAYOUT.replace("TYPE", "water-closet-flushometer"), name="flush.yaml")
    )
    tank = analyse_file(
        write_layout(FLUSH_LAYOUT.replace("TYPE", "water-closet-tank"), name="tank.yaml")
    )
    assert float(flush.wsfu[0]) == pytest.approx(30.0)
    assert float(flush.flow[0]) == pytest.approx(42.0 * GPM, rel=1e-9)
    assert float(flush.flow[0]) == pytest.approx(demand_flow(30.0, True), rel=1e-12)
    assert float(tank.wsfu[0]) == pytest.approx(15.0)
    assert float(tank.flow[0]) == pytest.approx(17.5 * GPM, rel=1e-9)
    assert float(tank.flow[0]) == pytest.approx(demand_flow(15.0, False), rel=1e-12)


def test_largest_fixture_floor(write_layout: Callable[..., Path]) -> None:
    """A private flushometer closet (6 WSFU, 25 gpm [S: IPC Table 604.3]) and a lavatory
    (0.5 cold): 6.5 WSFU gives 18.6 gpm on the flushometer column, below the closet's own
    25 gpm, so the pipe carries 25 gpm (engineering-basis §3.3 [CP])."""
    text = tweak(
        MINIMAL,
        ("water-closet-tank", "water-closet-flushometer"),
        append=f"  - {{id: L1, type: lavatory, cold: J1, {SLOW}}}\n",
    )
    analysis = analyse_file(write_layout(text))
    assert float(analysis.wsfu[0]) == pytest.approx(6.5)
    assert demand_flow(6.5, True) == pytest.approx(18.6 * GPM, rel=1e-9)
    assert float(analysis.flow[0]) == pytest.approx(25.0 * GPM, rel=1e-9)


def test_continuous_flow_is_added(write_layout: Callable[..., Path]) -> None:
    """A continuous hose bibb (5 gpm, IPC Table 604.3) beside a tank closet (3 gpm, alone on
    Hunter's side): 3 + 5 = 8 gpm; its fixture units are not converted (WSFU stays 2.2)."""
    text = tweak(
        MINIMAL, append=f"  - {{id: HB1, type: hose-bibb, cold: J1, continuous: true, {SLOW}}}\n"
    )
    analysis = analyse_file(write_layout(text))
    assert float(analysis.wsfu[0]) == pytest.approx(2.2)
    assert float(analysis.flow[0]) == pytest.approx((3.0 + 5.0) * GPM, rel=1e-9)


def test_demand_overrides(write_layout: Callable[..., Path]) -> None:
    text = tweak(MINIMAL, ("service: cold}", "service: cold, demand: 12 gpm}"))
    analysis = analyse_file(write_layout(text))
    assert float(analysis.flow[0]) == pytest.approx(12 * GPM, rel=1e-12)


def test_velocity_is_flow_over_bore_area(write_layout: Callable[..., Path]) -> None:
    """Copper type L 3/4: OD 0.875 in, wall 0.045 in, bore 0.785 in [S: ASTM B88]; at 10 gpm,
    v = Q / (pi d^2 / 4) = 6.30902e-4 / 3.12249e-4 = 2.02051 m/s (6.629 ft/s)."""
    text = tweak(MINIMAL, ("service: cold}", "service: cold, demand: 10 gpm}"))
    analysis = analyse_file(write_layout(text))
    bore = (0.875 - 2 * 0.045) * INCH
    expected = 10 * GPM / (math.pi * bore**2 / 4)
    assert expected == pytest.approx(2.02051, rel=1e-5)  # the hand number in the docstring
    assert float(analysis.velocity[0]) == pytest.approx(expected, rel=1e-9)


RISER = f"""\
version: 1
project: {{name: riser, units: us}}
supplies:
  - {{id: SVC, pressure: {{min: 55 psi, max: 95 psi}}, elevation: 0 ft}}
points:
  - {{id: J1, elevation: 0 ft}}
  - {{id: J2, elevation: 23 ft}}
pipes:
  - {{id: P1, from: SVC, to: J1, material: copper-l, size: 1, length: 40 ft, service: cold}}
  - {{id: P2, from: J1, to: J2, material: copper-l, size: 3/4, length: 30 ft, service: cold}}
fixtures:
  - {{id: WC1, type: water-closet-tank, cold: J2, {SLOW}}}
"""


def test_static_pressure_falls_0433_psi_per_foot(write_layout: Callable[..., Path]) -> None:
    """0.433 psi per foot of rise for cold water [CP; 62.4 lb/ft^3]; at 15 degC the IAPWS-95
    density gives 0.4332 psi/ft, within the stated 0.5 %. J2 is 23 ft above the supply."""
    analysis = analyse_file(write_layout(RISER))
    fall_max = analysis.static_max["SVC"] - analysis.static_max["J2"]
    fall_min = analysis.static_min["SVC"] - analysis.static_min["J2"]
    assert fall_max == pytest.approx(0.433 * 23 * PSI, rel=0.005)
    assert fall_min == pytest.approx(0.433 * 23 * PSI, rel=0.005)
    rho = iapws.IAPWS95(T=T_COLD_DEFAULT, P=0.101325).rho
    assert fall_max == pytest.approx(rho * G * 23 * FT, rel=1e-4)
    assert analysis.static_max["J1"] == pytest.approx(95 * PSI, rel=1e-12)


PRV = "devices:\n  - {id: PRV1, kind: pressure-reducing, on: P1, set_pressure: 60 psi}\n"


def test_pressure_reducing_device_caps_static_downstream(
    write_layout: Callable[..., Path],
) -> None:
    """A PRV set at 60 psi on P1: J1 (level with it) sits at 60 psi static, max and min
    capped alike where the upstream is higher; J2, 23 ft up, at 60 psi - rho*g*23 ft; the
    supply keeps its 95 psi (engineering-basis §4)."""
    analysis = analyse_file(write_layout(RISER, append=PRV))
    rho = iapws.IAPWS95(T=T_COLD_DEFAULT, P=0.101325).rho
    assert analysis.static_max["SVC"] == pytest.approx(95 * PSI, rel=1e-12)
    assert analysis.static_max["J1"] == pytest.approx(60 * PSI, rel=1e-12)
    assert analysis.static_min["J1"] == pytest.approx(55 * PSI, rel=1e-12)  # already below
    assert analysis.static_max["J2"] == pytest.approx(60 * PSI - rho * G * 23 * FT, rel=1e-4)


def test_pressure_reducing_device_set_above_the_supply_changes_nothing(
    write_layout: Callable[..., Path],
) -> None:
    plain = analyse_file(write_layout(RISER, name="plain.yaml"))
    high = analyse_file(
        write_layout(RISER, append=PRV.replace("60 psi", "120 psi"), name="high.yaml")
    )
    assert high.static_max == pytest.approx(plain.static_max, rel=1e-12)
    assert high.static_min == pytest.approx(plain.static_min, rel=1e-12)


def _analyze_json(cli: Callable[..., tuple[int, str, str]], path: Path) -> dict:
    rc, out, err = cli("analyze", path, "--format", "json")
    assert rc == 0, err
    return json.loads(out)


def test_residual_is_static_min_less_friction_devices_and_elevation(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
) -> None:
    """residual(J2) = static_min(SVC) - rho*g*dz - dp_f(P1) - dp_f(P2) - device losses
    (engineering-basis §4), from the analyze JSON (SI, 6 significant figures; tolerance
    1e-5 relative for that rounding). Devices: a 3 psi meter and a 2 psi strainer on P1."""
    devices = (
        "devices:\n  - {id: M1, kind: meter, on: P1, loss: 3 psi}\n"
        "  - {id: S1, kind: strainer, on: P2, loss: 2 psi}\n"
    )
    doc = _analyze_json(cli, write_layout(RISER, append=devices))
    rho = iapws.IAPWS95(T=T_COLD_DEFAULT, P=0.101325).rho
    pipes, points = doc["pipes"], doc["points"]
    expected = (
        55 * PSI
        - rho * G * 23 * FT
        - pipes["P1"]["head_loss"]
        - pipes["P2"]["head_loss"]
        - 3 * PSI
        - 2 * PSI
    )
    assert points["J2"]["residual_pressure"] == pytest.approx(expected, rel=1e-5)
    expected_j1 = 55 * PSI - pipes["P1"]["head_loss"] - 3 * PSI
    assert points["J1"]["residual_pressure"] == pytest.approx(expected_j1, rel=1e-5)
    assert points["SVC"]["residual_pressure"] == pytest.approx(55 * PSI, rel=1e-6)


def test_residual_on_the_hot_side_includes_the_heater_loss(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
) -> None:
    """Hot point H1: residual at the heater inlet J2, less the heater loss (1 psi), the rise
    from J2 to H0 and from H0 to H1 at the hot water's density, and P-hot's friction."""
    text = HOUSE.replace(
        "heaters:\n  - {id: WH1, inlet: J2, outlet: H0}",
        "heaters:\n  - {id: WH1, inlet: J2, outlet: H0, loss: 1 psi}",
    )
    text = text.replace("  - {id: H0}\n", "  - {id: H0, elevation: 5 ft}\n")
    text = text.replace("  - {id: H1}\n", "  - {id: H1, elevation: 12 ft}\n")
    doc = _analyze_json(cli, write_layout(text))
    rho_hot = iapws.IAPWS95(T=333.15, P=0.101325).rho  # hot default 60 degC (layout-format.md)
    points, pipes = doc["points"], doc["pipes"]
    expected = (
        points["J2"]["residual_pressure"]
        - 1 * PSI
        - rho_hot * G * 12 * FT
        - pipes["H1p"]["head_loss"]
    )
    assert points["H1"]["residual_pressure"] == pytest.approx(expected, rel=1e-5)


def test_friction_is_darcy_weisbach_with_colebrook(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
) -> None:
    """dp = f (L + 0.25 L)/d * rho v^2 / 2 with f from ``fluids.friction.friction_factor``
    (Colebrook), water at 15 degC from IAPWS-95, fittings allowance 25 % [CP] (profile ipc),
    roughness 0.0015 mm (copper, materials.yaml). Tolerance 0.5 % (friction-factor method)."""
    text = tweak(MINIMAL, ("service: cold}", "service: cold, demand: 10 gpm}"))
    doc = _analyze_json(cli, write_layout(text))
    water = iapws.IAPWS95(T=T_COLD_DEFAULT, P=0.101325)
    bore = (0.875 - 2 * 0.045) * INCH
    v = 10 * GPM / (math.pi * bore**2 / 4)
    re = water.rho * v * bore / water.mu
    f = friction_factor(Re=re, eD=0.0015e-3 / bore)
    expected = f * (20 * FT * 1.25) / bore * water.rho * v**2 / 2
    assert doc["pipes"]["P1"]["head_loss"] == pytest.approx(expected, rel=0.005)
    assert doc["pipes"]["P1"]["velocity"] == pytest.approx(v, rel=1e-5)
    assert doc["pipes"]["P1"]["flow"] == pytest.approx(10 * GPM, rel=1e-5)


def test_hot_return_carries_no_demand(write_layout: Callable[..., Path]) -> None:
    text = HOUSE.replace(
        "fixtures:\n",
        "  - {id: R1, from: H1, to: H0, material: copper-l, size: 1/2, length: 10 ft, "
        "service: hot-return}\nfixtures:\n",
    )
    analysis = analyse_file(write_layout(text))
    flows = by_pipe(analysis, analysis.flow)
    assert flows["R1"] == 0.0
    assert by_pipe(analysis, analysis.wsfu)["C1"] == pytest.approx(3.6)  # nothing else changes


def test_si_layout_gives_the_same_si_values(write_layout: Callable[..., Path]) -> None:
    """The same riser written in SI units (23 ft = 7.0104 m, 55/95 psi in kPa) gives the same
    static pressures: units are converted once, at the edge."""
    si = (
        RISER.replace("units: us", "units: si")
        .replace("23 ft", "7.0104")
        .replace("55 psi", f"{55 * PSI / 1000!r}")
        .replace("95 psi", f"{95 * PSI / 1000!r}")
    )
    a = analyse_file(write_layout(RISER, name="us.yaml"))
    b = analyse_file(write_layout(si, name="si.yaml"))
    for node in ("SVC", "J1", "J2"):
        assert b.static_max[node] == pytest.approx(a.static_max[node], rel=1e-9)


def test_total_wsfu_when_the_heater_inlet_is_below_the_cold_point(
    write_layout: Callable[..., Path],
) -> None:
    """The lavatory's cold side is at J1 and the heater hangs below J1 (J1 -> J2 = inlet):
    P1 feeds both sides, total 0.7 [S: IPC Table E103.3(2)]; P2 feeds the heater only, hot
    0.5; the hot pipe 0.5 (engineering-basis §3.1)."""
    text = f"""\
version: 1
project: {{name: inlet below, units: us}}
supplies:
  - {{id: SVC, pressure: 60 psi}}
heaters:
  - {{id: WH1, inlet: J2, outlet: H0}}
points:
  - {{id: J1}}
  - {{id: J2}}
  - {{id: H0}}
  - {{id: H1}}
pipes:
  - {{id: P1, from: SVC, to: J1, material: copper-l, size: 3/4, length: 20 ft, service: cold}}
  - {{id: P2, from: J1, to: J2, material: copper-l, size: 3/4, length: 5 ft, service: cold}}
  - {{id: P3, from: H0, to: H1, material: copper-l, size: 1/2, length: 15 ft, service: hot}}
fixtures:
  - {{id: L1, type: lavatory, cold: J1, hot: H1, {SLOW}}}
"""
    analysis = analyse_file(write_layout(text))
    wsfu = by_pipe(analysis, analysis.wsfu)
    assert wsfu == pytest.approx({"P1": 0.7, "P2": 0.5, "P3": 0.5})
    # One fixture on every pipe: each carries the lavatory's 2 gpm [IPC Table 604.3, M].
    assert by_pipe(analysis, analysis.flow) == pytest.approx(
        {"P1": 2 * GPM, "P2": 2 * GPM, "P3": 2 * GPM}, rel=1e-9
    )


def test_flushometer_below_five_wsfu_uses_the_tank_column(
    write_layout: Callable[..., Path],
) -> None:
    """engineering-basis §3.2: below the first flushometer row (5 WSFU) the flush-tank column
    applies. Two project-local flush-valve fixtures of 1 WSFU and 1 gpm each: 2 WSFU ->
    5.0 gpm (tank column, row 2 [S: IPC Table E103.3(3)])."""
    local = """\
fixture_types:
  - id: test-flush-valve
    wsfu: {cold: 1, hot: 0, total: 1}
    flow: 1 gpm
    min_pressure: 15 psi
    flushometer: true
    valve: {closing: slow, closure_time: 5 s}
    source: invented for this test
"""
    text = tweak(
        MINIMAL,
        ("type: water-closet-tank", "type: test-flush-valve"),
        append=f"  - {{id: F2, type: test-flush-valve, cold: J1, {SLOW}}}\n" + local,
    )
    analysis = analyse_file(write_layout(text))
    assert float(analysis.wsfu[0]) == pytest.approx(2.0)
    assert float(analysis.flow[0]) == pytest.approx(5.0 * GPM, rel=1e-9)
