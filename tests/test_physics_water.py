"""Water properties from the shipped IAPWS table, checked against published data and iapws."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest
from iapws import IAPWS95, IAPWS97

from rulecheck.physics.water import _table, water_properties
from rulecheck.resources import read_text

ROOT = Path(__file__).resolve().parent.parent
KELVIN = 273.15
P_ATM_MPA = 0.101325  # [S: ISO 2533]


def test_london_south_bank_20c() -> None:
    """LSBU water data, 20 degC: rho 998.2 kg/m^3, w 1483 m/s [S: London South Bank University].

    Tolerance: half a unit in the last quoted digit, widened to 1 m/s for w
    (IAPWS-95 gives 1482.35 m/s, so LSBU's rounding sits 0.65 m/s away).
    """
    props = water_properties(KELVIN + 20.0)
    assert props.density == pytest.approx(998.2, abs=0.05)
    assert props.sound_speed == pytest.approx(1483.0, abs=1.0)


def test_london_south_bank_60c() -> None:
    """LSBU water data, 60 degC: rho 983.2 kg/m^3, w 1551 m/s [S: London South Bank University].

    Tolerance: half a unit in the last quoted digit (0.05 kg/m^3, 0.5 m/s).
    """
    props = water_properties(KELVIN + 60.0)
    assert props.density == pytest.approx(983.2, abs=0.05)
    assert props.sound_speed == pytest.approx(1551.0, abs=0.5)


def test_vapour_pressure_20c() -> None:
    """Saturation pressure at 20 degC 2.339 kPa [S: IAPWS-IF97]; tolerance 0.5 Pa (rounding)."""
    assert water_properties(KELVIN + 20.0).vapour_pressure == pytest.approx(2339.0, abs=0.5)


@pytest.mark.parametrize("celsius", [15.5, 37.3, 82.7, 0.5, 98.5])
def test_interpolation_against_iapws(celsius: float) -> None:
    """Off-grid temperatures against iapws (IAPWS-95, IF97 saturation) computed directly.

    Relative tolerances: density 1e-5, sound speed 3e-5, viscosity 5e-4,
    vapour pressure 1e-3, i.e. about twice the largest error of linear
    interpolation over 1 K steps found on a 0.5 .. 98.5 degC scan (2.2e-6,
    1.0e-5, 2.3e-4, 5.7e-4).
    """
    t = KELVIN + celsius
    state = IAPWS95(T=t, P=P_ATM_MPA)
    p_vap = IAPWS97(T=t, x=0).P * 1e6
    props = water_properties(t)
    assert props.temperature == t
    assert props.density == pytest.approx(state.rho, rel=1e-5)
    assert props.sound_speed == pytest.approx(state.w, rel=3e-5)
    assert props.viscosity == pytest.approx(state.mu, rel=5e-4)
    assert props.vapour_pressure == pytest.approx(p_vap, rel=1e-3)
    # K = rho w^2 (isentropic bulk modulus, definition); from the same iapws state
    assert props.bulk_modulus == pytest.approx(state.rho * state.w**2, rel=1e-4)


def test_grid_points_match_iapws() -> None:
    """At tabled temperatures the table holds iapws values to its 10 significant digits."""
    for celsius in (0.01, 20.0, 99.0):
        state = IAPWS95(T=KELVIN + celsius, P=P_ATM_MPA)
        props = water_properties(KELVIN + celsius)
        assert props.density == pytest.approx(state.rho, rel=1e-9)
        assert props.viscosity == pytest.approx(state.mu, rel=1e-9)


def test_returns_plain_floats() -> None:
    props = water_properties(300.0)
    assert all(type(getattr(props, name)) is float for name in props.__dataclass_fields__)


@pytest.mark.parametrize("temperature", [273.15, 250.0, 372.2, 400.0, float("nan")])
def test_outside_table_raises(temperature: float) -> None:
    with pytest.raises(ValueError, match="outside the property table"):
        water_properties(temperature)


def test_table_layout() -> None:
    """0.01 degC, then 1 .. 99 degC in 1 K steps, as the brief specifies."""
    celsius = _table()[:, 0] - KELVIN
    expected = np.array([0.01] + list(range(1, 100)), dtype=float)
    np.testing.assert_allclose(celsius, expected, atol=1e-9)
    header = [line for line in read_text("rules", "water-properties.csv").splitlines()[:8]]
    assert any("make_water_table.py" in line for line in header)
    assert any("IAPWS-95" in line for line in header) and any("IF97" in line for line in header)


def test_shipped_table_equals_regenerated(tmp_path: Path) -> None:
    """The shipped CSV equals what scripts/make_water_table.py produces now (rel 1e-9)."""
    spec = importlib.util.spec_from_file_location(
        "make_water_table", ROOT / "scripts" / "make_water_table.py"
    )
    assert spec is not None and spec.loader is not None
    script = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(script)
    out = tmp_path / "water.csv"
    assert script.main([str(out)]) == 0

    def load(text: str) -> np.ndarray:
        rows = [line for line in text.splitlines() if line and not line.startswith("#")]
        assert rows[0].startswith("temperature_K,")
        return np.array([row.split(",") for row in rows[1:]], dtype=float)

    fresh = load(out.read_text(encoding="utf-8"))
    shipped = load(read_text("rules", "water-properties.csv"))
    assert fresh.shape == shipped.shape == (100, 5)
    np.testing.assert_allclose(shipped, fresh, rtol=1e-9, atol=0)
