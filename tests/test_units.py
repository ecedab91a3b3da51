"""Quantities: ``rulecheck.units.to_si`` / ``from_si`` against pint used directly.

The reference is a fresh ``pint.UnitRegistry()`` (pint's own definitions, not
rulecheck's cached affine maps); exact conversion factors are checked against
NIST SP 811 (2008), Appendix B. Tolerances: 1e-12 relative where both sides are
exact definitions, otherwise as stated.
"""

from __future__ import annotations

import math

import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rulecheck.units import BARE_UNIT, QuantityError, fmt, from_si, to_si

UREG = pint.UnitRegistry()
# pint has no "gpm"; a US gallon per minute is gallon / minute (pint's gallon is the US
# liquid gallon, 231 in^3 [S: NIST SP 811, Appendix B]).
PINT_NAME = {"gpm": "gallon / minute"}
SI = {
    "length": "m",
    "diameter": "m",
    "pressure": "Pa",
    "time": "s",
    "flow": "m**3/s",
    "velocity": "m/s",
    "temperature": "K",
    "volume": "m**3",
}
KINDS = sorted(SI)


def pint_si(number: float, unit: str, kind: str) -> float:
    quantity = UREG.Quantity(number, PINT_NAME.get(unit, unit))
    return float(quantity.to(SI[kind]).magnitude)


@pytest.mark.parametrize("system", ["us", "si"])
@pytest.mark.parametrize("kind", KINDS)
def test_bare_numbers_read_in_the_system_unit(system: str, kind: str) -> None:
    """A bare number is read in the system's unit for its kind (layout-format.md, Quantities)."""
    unit = BARE_UNIT[system][kind]
    for number in (0.5, 3, 72.25):
        assert to_si(number, kind, system) == pytest.approx(
            pint_si(number, unit, kind), rel=1e-12, abs=1e-12
        )


def test_bare_units_are_the_documented_ones() -> None:
    """layout-format.md: us reads ft, psi, gpm, ft/s, s, degF; si m, kPa, L/s, m/s, s, degC."""
    documented = {
        "us": {
            "length": "ft",
            "pressure": "psi",
            "flow": "gpm",
            "velocity": "ft/s",
            "time": "s",
            "temperature": "degF",
        },
        "si": {
            "length": "m",
            "pressure": "kPa",
            "flow": "L/s",
            "velocity": "m/s",
            "time": "s",
            "temperature": "degC",
        },
    }
    for system, units in documented.items():
        for kind, unit in units.items():
            assert BARE_UNIT[system][kind] == unit


@pytest.mark.parametrize(
    ("text", "kind"),
    [
        ("12 ft", "length"),
        ("3.6 m", "length"),
        ("450 kPa", "pressure"),
        ("65 psi", "pressure"),
        ("30 ms", "time"),
        ("2.5 gpm", "flow"),
        ("0.2 L/s", "flow"),
        ("8 ft/s", "velocity"),
        ("0.625 in", "diameter"),
        ("22 mm", "diameter"),
        ("1 L", "volume"),
        ("2 gal", "volume"),
        ("13 degC", "temperature"),
        ("55 degF", "temperature"),
        ("300 K", "temperature"),
        ("1.2e2 ft", "length"),
        ("  7 ft  ", "length"),
        ("117 GPa", "pressure"),
        ("7 m", "length"),
    ],
)
@pytest.mark.parametrize("system", ["us", "si"])
def test_number_with_unit_matches_pint(text: str, kind: str, system: str) -> None:
    """An explicit unit wins over the system: the same SI value in both systems."""
    number, unit = text.split(None, 1)
    assert to_si(text, kind, system) == pytest.approx(
        pint_si(float(number), unit.strip(), kind), rel=1e-12
    )


def test_fahrenheit_offset() -> None:
    """55 degF = (55 + 459.67) x 5/9 K = 285.92777... K [S: NIST SP 811, Appendix B.8 and the
    definition of the Fahrenheit scale, T/K = (t/degF + 459.67)/1.8]."""
    assert to_si("55 degF", "temperature", "us") == pytest.approx((55 + 459.67) / 1.8, rel=1e-12)
    assert to_si(55, "temperature", "us") == pytest.approx(285.9277777777778, rel=1e-12)
    assert to_si(32, "temperature", "us") == pytest.approx(273.15, rel=1e-12)
    assert to_si(212, "temperature", "us") == pytest.approx(373.15, rel=1e-12)


def test_celsius_offset() -> None:
    """T/K = t/degC + 273.15 [S: NIST SP 811, section 4.2.1.1]."""
    assert to_si("13 degC", "temperature", "us") == pytest.approx(286.15, rel=1e-12)
    assert to_si(60, "temperature", "si") == pytest.approx(333.15, rel=1e-12)
    assert to_si(0, "temperature", "si") == pytest.approx(273.15, rel=1e-12)


def test_psi_and_gpm_exact_factors() -> None:
    """1 psi = 6.894757e3 Pa; 1 gal (US) = 3.785412e-3 m^3, so 1 gpm = 6.309020e-5 m^3/s
    [S: NIST SP 811 (2008), Appendix B.8/B.9]; tolerance: the 7 digits NIST prints."""
    assert to_si(1, "pressure", "us") == pytest.approx(6894.757, rel=1e-7)
    assert to_si("1 psi", "pressure", "si") == pytest.approx(6894.757, rel=1e-7)
    assert to_si(1, "flow", "us") == pytest.approx(6.30902e-5, rel=1e-6)
    assert to_si("1 gpm", "flow", "si") == pytest.approx(231 * 0.0254**3 / 60, rel=1e-12)
    assert to_si(1, "length", "us") == pytest.approx(0.3048, rel=1e-15)  # exact [S: NIST SP 811]
    assert to_si(1, "diameter", "us") == pytest.approx(0.0254, rel=1e-15)  # exact
    assert to_si(1, "pressure", "si") == pytest.approx(1000.0, rel=1e-15)  # bare kPa


@settings(max_examples=200, deadline=None)
@given(
    kind=st.sampled_from(KINDS),
    system=st.sampled_from(["us", "si"]),
    number=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False),
)
def test_round_trip_from_si_to_si(kind: str, system: str, number: float) -> None:
    """from_si(to_si(x)) == x in the display unit (display unit = bare unit for these kinds)."""
    si = to_si(number, kind, system)
    back = from_si(si, kind, system)
    assert back == pytest.approx(number, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize(
    ("value", "kind", "fragment"),
    [
        ("5 psi", "length", "not a unit of length"),
        ("20 ft", "pressure", "not a unit of pressure"),
        ("3 gpm", "velocity", "not a unit of velocity"),
        ("1 kg", "temperature", "not a unit of temperature"),
        ("20 furlongz", "length", "unknown unit 'furlongz'"),
        ("20 ft ft ft )", "length", "unknown unit"),
        ("nan ft", "length", "is not a length"),
        ("twelve ft", "length", "is not a length"),
        ("", "length", "is not a length"),
        (float("nan"), "length", "finite"),
        (float("inf"), "pressure", "finite"),
        ("1e400 ft", "length", "finite"),
        (True, "length", "expected a length"),
        (None, "time", "expected a time"),
        ([1, "ft"], "length", "expected a length"),
        ({"value": 1}, "length", "expected a length"),
    ],
)
def test_errors(value: object, kind: str, fragment: str) -> None:
    with pytest.raises(QuantityError) as caught:
        to_si(value, kind, "us")
    assert fragment in str(caught.value)


def test_errors_carry_a_hint_with_an_example() -> None:
    with pytest.raises(QuantityError) as caught:
        to_si("5 psi", "length", "us")
    assert caught.value.hint == "write a length such as '12 ft'"


def test_positive_and_nonnegative() -> None:
    with pytest.raises(QuantityError, match="greater than zero"):
        to_si("0 ft", "length", "us", positive=True)
    with pytest.raises(QuantityError, match="greater than zero"):
        to_si(-1, "length", "us", positive=True)
    with pytest.raises(QuantityError, match="must not be negative"):
        to_si("-0.5 psi", "pressure", "us", nonnegative=True)
    assert to_si(0, "pressure", "us", nonnegative=True) == 0.0
    # A temperature of 0 degC is 273.15 K, positive in SI: the check is on the SI value.
    assert to_si(0, "temperature", "si", positive=True) == pytest.approx(273.15)


def test_fmt_uses_the_display_units() -> None:
    """72 psi printed in us units; the same pressure in kPa in si (6.894757 kPa/psi, NIST)."""
    pa = 72 * 6894.757293168361
    assert fmt(pa, "pressure", "us") == "72.0 psi"
    assert fmt(pa, "pressure", "si") == "496 kPa"
    assert fmt(to_si(140, "temperature", "us"), "temperature", "us") == "140 °F"
    assert fmt(math.inf, "pressure", "us") == "∞"
