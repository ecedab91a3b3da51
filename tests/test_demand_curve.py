"""Which column of Hunter's curve a pipe reads (engineering-basis §3.2, issue 9 B.6).

IPC Table E103.3(3) has a column for supply systems "predominantly for flush tanks" and one
for systems "predominantly for flushometer valves" [S: IPC Table E103.3(3), headings]. The
code gives no number for "predominantly"; rulecheck reads it as flushometer valves carrying
more than half of the fixture units a pipe serves [CP], and `project.demand_curve` can set
the column for every pipe. Reference flows, row 50 WSFU: 29.1 gpm flush tank, 50.0 gpm
flushometer [S: IPC Table E103.3(3), row 50, both columns seen]. Fixture units: a public
flush-tank closet 5, a public flushometer closet 10 [M: IPC Table E103.3(2), as in
rules/fixture-types.yaml].
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from rulecheck.physics.demand import GPM, flushometer_column, hunter_table
from rulecheck.pipeline import analyse_file

ROW_50 = (29.1, 50.0)  # gpm, tank / flushometer [S: IPC Table E103.3(3), row 50]
SLOW = "valve: {closing: slow, closure_time: 10 s}"


def _layout(tank: int, flush: int, curve: str | None = None) -> str:
    """A main P1 to J1 serving ``tank`` public flush-tank closets and ``flush`` public
    flushometer closets (an invented scenario)."""
    project = "{name: Demand curve case, units: us" + (
        f", demand_curve: {curve}}}" if curve else "}"
    )
    fixtures = [
        f"  - {{id: T{i}, type: water-closet-tank, occupancy: public, cold: J1, {SLOW}}}"
        for i in range(tank)
    ] + [
        f"  - {{id: F{i}, type: water-closet-flushometer, occupancy: public, cold: J1, {SLOW}}}"
        for i in range(flush)
    ]
    return "\n".join(
        [
            "version: 1",
            f"project: {project}",
            "supplies:",
            "  - {id: SVC, pressure: 80 psi}",
            "points:",
            "  - {id: J1}",
            "pipes:",
            "  - {id: P1, from: SVC, to: J1, material: copper-l, size: 2, length: 40 ft, "
            "service: cold}",
            "fixtures:",
            *fixtures,
            "",
        ]
    )


def test_reference_row_is_the_shipped_one() -> None:
    """The test's reference values are the rows rules/hunter.yaml ships."""
    table = hunter_table()
    (row,) = np.flatnonzero(table.wsfu == 50)
    assert (table.tank[row], table.flushometer[row]) == ROW_50


def test_one_flushometer_among_tanks_reads_the_tank_column(
    write_layout: Callable[..., Path],
) -> None:
    """8 tank closets (40 WSFU) and one flushometer closet (10): 20 % on flushometer valves,
    so the main carries 29.1 gpm (tank column), not 50.0 gpm."""
    analysis = analyse_file(write_layout(_layout(tank=8, flush=1)))
    assert float(analysis.wsfu[0]) == pytest.approx(50.0)
    assert float(analysis.flushometer_share[0]) == pytest.approx(0.2)
    assert not analysis.flushometer_column[0]
    assert float(analysis.flow[0]) == pytest.approx(ROW_50[0] * GPM, rel=1e-9)


def test_setting_flushometer_forces_the_column(write_layout: Callable[..., Path]) -> None:
    analysis = analyse_file(write_layout(_layout(tank=8, flush=1, curve="flushometer")))
    assert analysis.demand_curve == "flushometer"
    assert float(analysis.flow[0]) == pytest.approx(ROW_50[1] * GPM, rel=1e-9)


def test_predominantly_flushometer_main(write_layout: Callable[..., Path]) -> None:
    """4 flushometer closets (40 WSFU) and 2 tank closets (10): 80 % → 50.0 gpm; setting
    flush-tank reads 29.1 gpm for the same main."""
    auto = analyse_file(write_layout(_layout(tank=2, flush=4), name="auto.yaml"))
    assert float(auto.flushometer_share[0]) == pytest.approx(0.8)
    assert float(auto.flow[0]) == pytest.approx(ROW_50[1] * GPM, rel=1e-9)
    tank = analyse_file(write_layout(_layout(tank=2, flush=4, curve="flush-tank"), name="t.yaml"))
    assert float(tank.flow[0]) == pytest.approx(ROW_50[0] * GPM, rel=1e-9)


def test_threshold_is_strictly_over_one_half() -> None:
    """Exactly half is not "predominantly" [CP]; no fixture units read the tank column."""
    out = flushometer_column([25.0, 25.1, 0.0, 0.0], [50.0, 50.0, 50.0, 0.0])
    assert out.tolist() == [False, True, False, False]
    assert flushometer_column([0.0], [0.0], "flushometer").tolist() == [True]
    assert flushometer_column([50.0], [50.0], "flush-tank").tolist() == [False]
    with pytest.raises(ValueError, match="demand curve"):
        flushometer_column(1.0, 2.0, "mostly")


def test_analyze_shows_the_choice_and_why(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    path = write_layout(_layout(tank=8, flush=1))
    rc, out, _ = cli("analyze", path)
    assert rc == 0
    assert "Demand curve: auto" in out and "over 50 %" in out and "[CP]" in out
    (row,) = [line for line in out.splitlines() if line.startswith("P1 ")]
    assert row.split()[-2:] == ["flush-tank", "20"]
    rc, out, _ = cli("analyze", path, "--format", "json")
    document = json.loads(out)
    assert document["demand_curve"]["setting"] == "auto"
    assert document["demand_curve"]["flushometer_share_over"] == 0.5
    assert document["pipes"]["P1"]["demand_curve"] == "flush-tank"
    assert document["pipes"]["P1"]["flushometer_share"] == 0.2

    forced = write_layout(_layout(tank=8, flush=1, curve="flushometer"), name="forced.yaml")
    rc, out, _ = cli("analyze", forced)
    assert "Demand curve: the flushometer column" in out and "project.demand_curve" in out
    rc, out, _ = cli("analyze", forced, "--format", "json")
    document = json.loads(out)
    assert document["demand_curve"] == {
        "setting": "flushometer",
        "rule": document["demand_curve"]["rule"],
    }
    assert document["pipes"]["P1"]["demand_curve"] == "flushometer"


def test_unknown_demand_curve_is_an_input_error(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    text = _layout(tank=1, flush=1, curve="mostly-tanks")
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert rc == 2
    assert "Traceback" not in out + err
    assert f"{path.name}:2:" in out + err and "demand_curve" in out + err
