"""Korteweg-Halliwell wave speed against published check values and limits."""

from __future__ import annotations

import numpy as np
import pytest
from iapws import IAPWS95

from rulecheck.physics.water import water_properties
from rulecheck.physics.wavespeed import wave_speed

INCH = 0.0254  # [m], exact [S: NIST SP 811]
COPPER = (117e9, 0.34)  # E [Pa], nu [-] [S: Callister App. B; Dowling Table 5.2]
STEEL = (207e9, 0.29)  # [S: Callister]
PEX = (0.7e9, 0.46)  # at 20 degC [M: from memory; verify against the adopted edition]
CPVC = (2.9e9, 0.40)  # E [S: material-properties table, weak]; nu [M]


@pytest.mark.parametrize(
    "diameter_mm, wall_mm, expected",
    [(22.14, 1.63, 1319.0), (22.96, 1.22, 1273.0), (23.58, 0.91, 1217.0)],
)
def test_iwa_copper_check_values(diameter_mm: float, wall_mm: float, expected: float) -> None:
    """Copper tube, water 15 degC, anchored throughout [S: IWA Publishing paper, Table 2].

    Tolerance 1 %: the paper's water properties and copper modulus are not
    stated exactly; E spans 115-130 GPa [S: Callister], worth about 1 % in a.
    """
    water = water_properties(288.15)
    a = wave_speed(water.bulk_modulus, water.density, *COPPER, diameter_mm / 1e3, wall_mm / 1e3)
    assert a == pytest.approx(expected, rel=0.01)


def test_rigid_wall_gives_speed_of_sound() -> None:
    """E -> 1e6 x copper: a tends to the speed of sound (iapws IAPWS-95, 20 degC), within 0.1 %."""
    water = water_properties(293.15)
    a = wave_speed(water.bulk_modulus, water.density, 117e15, 0.34, 0.02, 0.001)
    assert a == pytest.approx(IAPWS95(T=293.15, P=0.101325).w, rel=1e-3)


def test_thin_wall_korteweg_limit() -> None:
    """Expansion joints and e/D -> 0: c1 -> 1, Korteweg's a = sqrt(K/rho / (1 + K D/(E e))).

    Korteweg (1878), classical thin-wall form; relative tolerance 1e-3 at e/D = 1e-4,
    where the thick-wall terms of c1 are of order e/D.
    """
    k, rho, e_mod, d, e = 2.2e9, 998.0, 117e9, 1.0, 1e-4
    expected = np.sqrt(k / rho / (1 + k * d / (e_mod * e)))
    assert wave_speed(k, rho, e_mod, 0.34, d, e, "joints") == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize("material", [COPPER, STEEL, PEX, CPVC])
def test_anchoring_order(material: tuple[float, float]) -> None:
    """For 0 < nu < 0.5, 1 - nu/2 < 1 - nu^2 < 1 (Wylie & Streeter c1 forms), so
    a(upstream) > a(throughout) > a(joints)."""
    water = water_properties(293.15)
    args = (water.bulk_modulus, water.density, *material, 0.02, 0.002)
    upstream, throughout, joints = (
        wave_speed(*args, k) for k in ("upstream", "throughout", "joints")
    )
    assert upstream > throughout > joints
    assert wave_speed(*args) == throughout  # default


def test_pex_near_300() -> None:
    """PEX SDR 9, 1/2 in CTS, 20 degC: about 300 m/s [D].

    OD 0.625 in = nominal + 1/8 in [S: ASTM B88 CTS rule]; wall 0.070 in
    [S: ASTM F876/F877 CTS, minimum wall at 1/2 in and below].

    Tolerance 10 %: 300 m/s is a rounded figure, and E of PEX [M] is uncertain
    by about +-20 %, which moves a (nearly proportional to sqrt(E) here) by about 10 %.
    """
    water = water_properties(293.15)
    od, wall = 0.625 * INCH, 0.070 * INCH
    a = wave_speed(water.bulk_modulus, water.density, *PEX, od - 2 * wall, wall)
    assert a == pytest.approx(300.0, rel=0.10)


def test_arrays_and_errors() -> None:
    water = water_properties(293.15)
    d = np.array([0.01, 0.02, 0.05])
    e = np.array([0.001, 0.0015, 0.003])
    a = wave_speed(water.bulk_modulus, water.density, *COPPER, d, e)
    assert isinstance(a, np.ndarray) and a.shape == (3,)
    expected = [
        wave_speed(water.bulk_modulus, water.density, *COPPER, di, ei)
        for di, ei in zip(d, e, strict=True)
    ]
    np.testing.assert_allclose(a, expected, rtol=1e-15)
    assert type(wave_speed(2.2e9, 998.0, *COPPER, 0.02, 0.001)) is float
    with pytest.raises(ValueError, match="anchoring"):
        wave_speed(2.2e9, 998.0, *COPPER, 0.02, 0.001, "sideways")
