"""No output shows a pressure water cannot reach (issue 9 B.1, engineering-basis §7).

Water cannot be pulled below its vapour pressure p_v: a screening minimum of
static − surge that would fall lower is floored at p_v − p_atm (gauge) and the column
separates; a static column a supply cannot hold up stands at p_v; and a residual
(flowing) pressure below zero is a shortfall at design flow, not a pressure.

Every sample and every per-rule case, plus hostile layouts written here, goes through
``check`` (text, json, sarif), ``analyze`` (text, json) and ``explain`` of every rule, and
each pressure read back from the output, a number with its unit in text or a JSON field
that holds a pressure, is compared with the vapour pressure at the layout's temperatures.
Reference: saturation pressure from the ``iapws`` package (IAPWS-IF97, x = 0); standard
atmosphere 101.325 kPa [S: ISO 2533]; 1 psi = 6894.757 Pa [S: NIST SP 811].
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable, Iterator
from pathlib import Path

import iapws
import pytest
from conftest import CASES, SAMPLES

from rulecheck.pipeline import analyse_file

P_ATM = 101325.0  # [Pa] [S: ISO 2533]
TO_PA = {"psi": 6894.757293168361, "kPa": 1e3, "MPa": 1e6, "Pa": 1.0}  # [S: NIST SP 811]
# Half a unit of the last printed digit: text shows psi to 0.1 and kPa to 0.1 or 1.
ROUNDING = {"psi": 0.05 * TO_PA["psi"], "kPa": 500.0, "MPa": 5e3, "Pa": 1.0}
NUMBER_UNIT = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?)\s?(psi|kPa|MPa|Pa)\b")
CELL_SPLIT = re.compile(r"\s{2,}")

# A supply at 10 psi lifting to a point 60 ft up: 10 − 26.0 = −16 psi by the head balance,
# below the vapour pressure at 55 °F (−14.5 psi gauge); the lavatory there is short of any
# pressure at design flow. The dishwasher at the end of 80 ft of 1/2 in tube closes in 30 ms
# (Joukowsky well over its static). Invented scenario.
HOSTILE = """\
version: 1
project: {name: Column above reach, units: us}
water: {cold_temperature: 55 degF, hot_temperature: 140 degF}
supplies:
  - {id: SVC, pressure: {min: 10 psi, max: 12 psi}, elevation: 0 ft}
heaters:
  - {id: WH1, inlet: J1, outlet: H0}
points:
  - {id: J1, elevation: 0 ft}
  - {id: J2, elevation: 60 ft}
  - {id: H0, elevation: 0 ft}
  - {id: H1, elevation: 0 ft}
pipes:
  - {id: P1, from: SVC, to: J1, material: copper-l, size: 3/4, length: 20 ft, service: cold}
  - {id: P2, from: J1, to: J2, material: copper-l, size: 1/2, length: 70 ft, service: cold}
  - {id: P3, from: H0, to: H1, material: copper-l, size: 1/2, length: 80 ft, service: hot}
fixtures:
  - {id: L1, type: lavatory, cold: J2, valve: {closing: slow, closure_time: 5 s}}
  - {id: DW1, type: dishwasher, hot: H1}
"""

# Level and low supply: only friction. A flushometer closet (25 gpm) on 60 ft of 1/2 in
# tube at 30 psi: friction far above 30 psi, residual below zero (a shortfall).
STARVED = """\
version: 1
project: {name: Starved closet, units: si}
supplies:
  - {id: SVC, pressure: 30 psi}
points:
  - {id: J1}
pipes:
  - {id: P1, from: SVC, to: J1, material: copper-l, size: 1/2, length: 60 ft, service: cold}
fixtures:
  - {id: WC1, type: water-closet-flushometer, cold: J1}
"""

LAYOUTS = sorted(SAMPLES.glob("*.yaml")) + sorted(CASES.glob("*/*.yaml"))


def _floors(path: Path) -> dict[str, float]:
    """Gauge vapour pressure of the layout's cold and hot water [Pa] (IAPWS-IF97)."""
    layout = analyse_file(path).layout
    return {
        service: iapws.IAPWS97(T=layout.temperature(service), x=0).P * 1e6 - P_ATM
        for service in ("cold", "hot")
    }


def _text_pressures(text: str) -> Iterator[tuple[float, float, str]]:
    """(value [Pa], rounding [Pa], context) for every 'number unit' pressure in text."""
    for match in NUMBER_UNIT.finditer(text):
        unit = match.group(2)
        start = max(0, match.start() - 60)
        yield float(match.group(1)) * TO_PA[unit], ROUNDING[unit], text[start : match.end()]


def _assert_text_physical(text: str, floor: float, what: str) -> int:
    """No pressure below the lowest vapour floor of the layout; returns how many were read."""
    count = 0
    for value, rounding, context in _text_pressures(text):
        count += 1
        assert value >= -P_ATM, f"{what}: below absolute zero: …{context}"
        assert value >= floor - rounding, f"{what}: below vapour pressure: …{context}"
    return count


def _table_cells(text: str, unit: str) -> Iterator[tuple[str, str, str]]:
    """(column header, row label, cell) for each pressure column of analyze's tables."""
    header: list[str] | None = None
    for line in text.splitlines():
        cells = CELL_SPLIT.split(line.strip())
        if any(f"[{unit}]" in c for c in cells):
            header = cells
            continue
        if not line.strip() or header is None or len(cells) != len(header):
            header = None if not line.strip() else header
            continue
        for name, cell in zip(header, cells, strict=True):
            if f"[{unit}]" in name and "friction" not in name and "surge" not in name:
                yield name, cells[0], cell


def _run_all(
    path: Path, cli: Callable[..., tuple[int, str, str]]
) -> dict[str, str]:  # output name -> text
    outputs = {}
    for fmt in ("text", "json", "sarif"):
        rc, out, err = cli("check", path, "--format", fmt, "--fail-on", "never")
        assert rc == 0 and "Traceback" not in out + err, f"{path} check {fmt}: {err}"
        outputs[f"check {fmt}"] = out
    for fmt in ("text", "json"):
        rc, out, err = cli("analyze", path, "--format", fmt)
        assert rc == 0 and "Traceback" not in out + err, f"{path} analyze {fmt}: {err}"
        outputs[f"analyze {fmt}"] = out
    return outputs


def _check_outputs(path: Path, cli: Callable[..., tuple[int, str, str]]) -> int:
    floors = _floors(path)
    lowest = min(floors.values())
    analysis = analyse_file(path)
    units = "psi" if analysis.layout.units == "us" else "kPa"
    outputs = _run_all(path, cli)
    seen = 0
    for name in ("check text", "analyze text"):
        seen += _assert_text_physical(outputs[name], lowest, f"{path.name} {name}")

    check = json.loads(outputs["check json"])
    for entry in check["files"]:
        for finding in entry.get("findings", []):
            seen += _assert_text_physical(finding["message"], lowest, f"{path.name} json")
            seen += _assert_text_physical(finding.get("fix", ""), lowest, f"{path.name} fix")
            if finding.get("unit") == "Pa":
                for key in ("measured", "limit"):
                    if finding[key] is not None:
                        assert finding[key] >= lowest - 1.0, (path.name, finding)
                        seen += 1
    sarif = json.loads(outputs["check sarif"])
    for run in sarif["runs"]:
        for result in run["results"]:
            seen += _assert_text_physical(result["message"]["text"], lowest, f"{path.name} sarif")

    document = json.loads(outputs["analyze json"])
    service_of = analysis.network.service_of
    for node, record in document["points"].items():
        floor = floors["hot" if service_of(node) == "hot" else "cold"]
        for key in ("static_pressure_max", "static_pressure_min"):
            assert record[key] >= floor - 1.0, (path.name, node, key, record[key])
        residual = record["residual_pressure"]
        assert residual is None or residual >= 0.0, (path.name, node, record)
        if residual is None:
            assert record["residual_shortfall"] > 0.0, (path.name, node, record)
        seen += 3
    for valve in document["valves"]:
        assert valve["min_pressure"] >= floors[valve["side"]] - 1.0, (path.name, valve)
        assert valve["peak_pressure"] >= floors[valve["side"]] - 1.0, (path.name, valve)
        seen += 2

    # analyze text: the residual column never shows a negative number, static columns and
    # valve minima never below the floor
    for header, label, cell in _table_cells(outputs["analyze text"], units):
        if cell in ("-", ""):
            continue
        if header.startswith("residual"):
            assert not cell.startswith("-"), (path.name, label, cell)
            if cell.startswith("short "):
                assert float(cell.removeprefix("short ")) > 0.0
                continue
        value = float(cell.rstrip("*")) * TO_PA[units]
        assert value >= lowest - ROUNDING[units], (path.name, header, label, cell)
        seen += 1
    return seen


@pytest.mark.parametrize("path", LAYOUTS, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_every_output_of_every_layout_is_physical(
    path: Path, cli: Callable[..., tuple[int, str, str]]
) -> None:
    assert _check_outputs(path, cli) > 0  # the sweep read pressures from this layout


@pytest.mark.parametrize("text", [HOSTILE, STARVED], ids=["above-reach", "starved"])
def test_hostile_layouts_floor_and_report_shortfalls(
    text: str, write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """Layouts built to push the head balance below vapour pressure and below zero flow
    pressure: the outputs stay physical, and say what happens instead."""
    path = write_layout(text)
    rc, out, err = cli("check", path, "--fail-on", "never")
    if rc == 2:  # refused as implausible: acceptable, if the error names file and position
        assert re.search(rf"{re.escape(path.name)}:\d+:\d+", out + err), out + err
        return
    assert _check_outputs(path, cli) > 0
    rc, analyze, _ = cli("analyze", path)
    document = json.loads(cli("analyze", path, "--format", "json")[1])
    if text is HOSTILE:
        assert document["points"]["J2"].get("static_column_separates") is True
        assert "* vapour pressure" in analyze
        (dw1,) = [v for v in document["valves"] if v["fixture"] == "DW1"]
        assert dw1["column_separation"] is True
        assert "column-separation" in out
    assert "residual_shortfall" in json.dumps(document)
    assert "short by" in out and "at design flow" in out  # residual-pressure message
    (entry,) = json.loads(cli("check", path, "--format", "json", "--fail-on", "never")[1])["files"]
    starved = [
        f
        for f in entry["findings"]
        if f["rule"] == "residual-pressure" and "short by" in f["message"]
    ]
    assert starved, entry["findings"]
    for finding in starved:  # a shortfall is no measured pressure; the need stays the limit
        assert finding["measured"] is None and finding["limit"] > 0 and finding["unit"] == "Pa"


def test_explain_every_rule_is_physical(cli: Callable[..., tuple[int, str, str]]) -> None:
    rc, out, _ = cli("rules")
    rules = [line.split()[0] for line in out.splitlines()[1:] if line.strip()][:-1]
    assert "column-separation" in rules and "residual-pressure" in rules
    floor_0c = iapws.IAPWS97(T=273.16, x=0).P * 1e6 - P_ATM  # the lowest floor of any water
    seen = 0
    for rule in rules:
        for units in ("us", "si"):
            rc, text, err = cli("explain", rule, "--units", units)
            assert rc == 0, err
            seen += _assert_text_physical(text, floor_0c, f"explain {rule} --units {units}")
    assert seen > 0
    # the worked example of column-separation meets the floor and says so
    rc, text, _ = cli("explain", "column-separation")
    assert "vapour pressure" in text and "separates" in text


def test_transient_check_of_every_sample_is_physical(
    cli: Callable[..., tuple[int, str, str]],
) -> None:
    """``check --transient``: simulated minima come from the vapour-cavity model, so they
    meet the same floor."""
    seen = 0
    for path in sorted(SAMPLES.glob("*.yaml")):
        lowest = min(_floors(path).values())
        for fmt in ("text", "json"):
            rc, out, err = cli("check", "--transient", path, "--format", fmt, "--fail-on", "never")
            assert rc == 0 and "Traceback" not in out + err, err
            seen += _assert_text_physical(out, lowest, f"{path.name} --transient {fmt}")
            if fmt == "json":
                for entry in json.loads(out)["files"]:
                    for finding in entry["findings"]:
                        if finding.get("unit") == "Pa" and finding["measured"] is not None:
                            assert finding["measured"] >= lowest - 1.0, finding
    assert seen > 0  # some sample has pressures in its findings


@pytest.mark.parametrize("path", sorted(SAMPLES.glob("*.yaml")), ids=lambda p: p.name)
def test_simulate_of_every_sample_valve_is_physical(
    path: Path, cli: Callable[..., tuple[int, str, str]]
) -> None:
    """``simulate`` (text and JSON, trace included) of the first quick valves of each
    sample: no pressure below the vapour floor of its service."""
    floors = _floors(path)
    quick = [e for e in analyse_file(path).surge.events if e.quick][:3]
    assert quick, f"{path.name} has no quick-closing valve to simulate"
    for event in quick:
        valve = f"{event.fixture.id}:{event.side}"
        floor = floors[event.side]
        rc, out, err = cli("simulate", path, "--valve", valve, "--format", "json")
        assert rc == 0, err
        run = json.loads(out)
        pressures = [run["peak_pressure"], run["min_pressure"], *run["trace"]["p"]]
        pressures += [v for pipe in run["path"].values() for v in pipe.values()]
        assert min(pressures) >= floor - 1.0, (path.name, valve, min(pressures))
        rc, text, err = cli("simulate", path, "--valve", valve)
        assert rc == 0, err
        assert _assert_text_physical(text, floor, f"simulate {path.name} {valve}") > 0
