"""Hunter's-curve demand flow against IPC Table E103.3(3) as transcribed in the basis."""

from __future__ import annotations

import math

import numpy as np
import pint
import pytest
import yaml
from hypothesis import given
from hypothesis import strategies as st

from rulecheck.physics.demand import GPM, demand_flow, hunter_table
from rulecheck.resources import read_text

# IPC Table E103.3(3), gpm, tank / flushometer ("-" = no entry), transcribed from
# engineering-basis section 3 [S: IPC Table E103.3(3) for the seen cells, M for the rest].
IPC_E103_3_3 = """1: 3.0/-, 2: 5.0/-, 3: 6.5/-, 4: 8.0/-, 5: 9.4/15.0, 6: 10.7/17.4,
7: 11.8/19.8, 8: 12.8/22.2, 9: 13.7/24.6, 10: 14.6/27.0, 15: 17.5/31.0, 20: 19.6/35.0,
25: 21.5/38.0, 30: 23.3/42.0, 40: 26.3/46.0, 50: 29.1/50.0, 60: 32.0/54.0, 80: 38.0/61.2,
100: 43.5/67.5, 120: 48.0/73.0, 140: 52.5/77.0, 160: 57.0/81.0, 180: 61.0/85.5,
200: 65.0/90.0, 250: 75.0/101.0, 300: 85.0/108.0, 400: 105.0/127.0, 500: 124.0/143.0,
750: 170.0/177.0, 1000: 208.0/208.0, 1500: 269/269, 2000: 325/325, 3000: 433/433"""
# Seen cells, engineering-basis section 3: "Rows 1, 2, 4, 5v, 7v, 8t, 10v, 15, 20v, 30, 50
# seen [S]; 60-1000 tank column matches Illinois Plumbing Code Table N [S]; the rest [M]."
SEEN_ROWS = {1, 2, 4, 15, 30, 50}
SEEN_FLUSHOMETER = {5, 7, 10, 20}
SEEN_TANK = {8} | {60, 80, 100, 120, 140, 160, 180, 200, 250, 300, 400, 500, 750, 1000}


def _rows() -> list[tuple[float, float, float]]:
    rows = []
    for item in IPC_E103_3_3.replace("\n", " ").split(","):
        wsfu, flows = item.split(":")
        tank, flush = flows.strip().split("/")
        rows.append((float(wsfu), float(tank), math.nan if flush == "-" else float(flush)))
    return rows


ROWS = _rows()


def test_gallon_per_minute_against_pint() -> None:
    """1 gpm = 6.30901964e-5 m^3/s (US gallon 231 in^3 [S: NIST SP 811]); pint as reference."""
    reference = pint.UnitRegistry().Quantity(1.0, "gallon / minute").to("m**3 / s").magnitude
    assert GPM == pytest.approx(reference, rel=1e-12)
    assert GPM == pytest.approx(6.30901964e-5, rel=1e-12)


def test_table_matches_basis() -> None:
    table = hunter_table()
    expected = np.array(ROWS)
    np.testing.assert_array_equal(table.wsfu, expected[:, 0])
    np.testing.assert_array_equal(table.tank, expected[:, 1])
    np.testing.assert_array_equal(table.flushometer, expected[:, 2])  # NaN compares equal here
    assert "E103.3(3)" in table.source and "from memory" in table.source
    assert not table.wsfu.flags.writeable


def test_tags_match_basis() -> None:
    """Each cell's tag in rules/hunter.yaml is S exactly where the basis says the cell was seen."""
    for row in yaml.safe_load(read_text("rules", "hunter.yaml"))["rows"]:
        n = row["wsfu"]
        assert row["tag"]["tank"] == ("S" if n in SEEN_ROWS | SEEN_TANK else "M"), n
        assert row["tag"]["flushometer"] == ("S" if n in SEEN_ROWS | SEEN_FLUSHOMETER else "M"), n


@pytest.mark.parametrize("wsfu, tank, flush", ROWS)
def test_every_row_reproduced(wsfu: float, tank: float, flush: float) -> None:
    """Each tabled row of IPC Table E103.3(3); below 5 WSFU flushometer uses the tank column."""
    assert demand_flow(wsfu, False) == pytest.approx(tank * GPM, rel=1e-12)
    expected_flush = tank if math.isnan(flush) else flush
    assert demand_flow(wsfu, True) == pytest.approx(expected_flush * GPM, rel=1e-12)


def test_interpolated_midpoints() -> None:
    """12.5 WSFU, halfway between the 10 and 15 rows: (14.6+17.5)/2 and (27.0+31.0)/2 gpm [D]."""
    assert demand_flow(12.5, False) == pytest.approx(16.05 * GPM, rel=1e-12)
    assert demand_flow(12.5, True) == pytest.approx(29.0 * GPM, rel=1e-12)


def test_edges() -> None:
    """0 -> 0; below 1 WSFU the first row's 3.0 gpm [D]; past 3000 along the last segment [D]."""
    assert demand_flow(0.0, True) == 0.0
    assert demand_flow(0.3, False) == pytest.approx(3.0 * GPM, rel=1e-12)
    assert demand_flow(4.5, True) == pytest.approx(8.7 * GPM, rel=1e-12)  # tank column below 5
    slope = (433.0 - 325.0) / 1000.0  # last segment, 2000 -> 3000 WSFU
    assert demand_flow(4000.0, True) == pytest.approx((433.0 + 1000 * slope) * GPM, rel=1e-12)
    with pytest.raises(ValueError):
        demand_flow(-1.0, False)


def test_arrays() -> None:
    wsfu = np.array([0.0, 2.0, 12.5, 12.5, 4000.0])
    flush = np.array([True, True, False, True, False])
    out = demand_flow(wsfu, flush)
    assert isinstance(out, np.ndarray) and out.shape == wsfu.shape
    np.testing.assert_allclose(out, [demand_flow(n, f) for n, f in zip(wsfu, flush, strict=True)])
    assert type(demand_flow(3, False)) is float


@given(
    st.floats(min_value=0.0, max_value=5000.0),
    st.floats(min_value=0.0, max_value=5000.0),
    st.booleans(),
)
def test_monotone_in_wsfu(a: float, b: float, flushometer: bool) -> None:
    """Demand never falls as fixture units are added, in either column."""
    low, high = sorted((a, b))
    assert demand_flow(low, flushometer) <= demand_flow(high, flushometer)
    assert demand_flow(high, False) <= demand_flow(high, True)
