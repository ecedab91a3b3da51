"""Plausibility bounds: the range of values a building's water system can hold, per quantity.

A value outside its bound is refused at its node (file:line:column) before any
computation sees it: a 1e14 ft pipe or a 1e-12 s valve closure is a typo, not a
design, and computing with it only produces numbers no water and pipe can reach
(or runs out of memory). One table, :data:`BOUNDS`, holds every bound as data,
each side with its reason; layouts (``build.py``, ``catalog.py``) and the limits
of ``rulecheck.toml`` (``config.py``) read it. DEVELOPERS.md shows it as
:func:`markdown_table` prints it (``tests/test_hostile_values.py`` keeps them equal).

Pressures are gauge: -101.325 kPa gauge is a perfect vacuum, and nothing lies below it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache
from typing import Any

from rulecheck.units import to_si

_VACUUM = -101_325.0  # Pa gauge: absolute zero pressure at standard atmosphere [S: ISO 2533]


@dataclass(frozen=True)
class Bound:
    """The plausible range of one quantity; ``low``/``high`` are ``"number unit"`` texts."""

    what: str  # how a message names the quantity
    kind: str  # unit kind (units.py)
    low: str
    low_why: str
    high: str
    high_why: str
    low_open: bool = False  # True: the low value itself is refused too

    @property
    def low_si(self) -> float:
        return _si(self.low, self.kind)

    @property
    def high_si(self) -> float:
        return _si(self.high, self.kind)


@cache
def _si(text: str, kind: str) -> float:
    return to_si(text, kind, "si")


_BUILDING = "common practice for a building"
_PRESSURE_HIGH = (
    "building systems run below about 2 MPa, 300 psi [common practice; from memory; verify]; "
    "twice the highest pipe rating in the catalog (730 psi)"
)

#: Every bound, by role. Units in the texts are SI; messages show them as written here.
BOUNDS: dict[str, Bound] = {
    "pipe-length": Bound(
        "pipe length",
        "length",
        "1 mm",
        "a run shorter than a millimetre is a joint, not a pipe; put fittings in 'fittings' "
        "[common practice]",
        "10 km",
        f"longer than any building service; a longer run is a water main [{_BUILDING}]",
    ),
    "fittings-length": Bound(
        "fittings allowance",
        "length",
        "0 m",
        "an equivalent length cannot be negative [physical]",
        "10 km",
        f"longer than any building service [{_BUILDING}]",
    ),
    "elevation": Bound(
        "elevation",
        "length",
        "-1 km",
        "dry land reaches down to about -430 m (Dead Sea shore) [from memory; verify]",
        "9 km",
        "dry land reaches up to 8849 m (Everest) [from memory; verify]",
    ),
    "supply-pressure": Bound(
        "supply static pressure",
        "pressure",
        "0 kPa",
        "a supply below atmospheric pressure pushes no water in [physical]",
        "10 MPa",
        _PRESSURE_HIGH,
    ),
    "pressure-loss": Bound(
        "pressure loss",
        "pressure",
        "0 kPa",
        "a device or heater does not add pressure; model a pump as a supply [physical]",
        "10 MPa",
        _PRESSURE_HIGH,
    ),
    "set-pressure": Bound(
        "set pressure",
        "pressure",
        "0 kPa",
        "a reducing valve set at or below 0 gauge delivers no water [physical]",
        "10 MPa",
        _PRESSURE_HIGH,
        low_open=True,
    ),
    "fixture-pressure": Bound(
        "fixture pressure",
        "pressure",
        "0 kPa",
        "pressures are gauge; a fixture cannot need less than atmospheric [physical]",
        "10 MPa",
        _PRESSURE_HIGH,
    ),
    "fixture-flow": Bound(
        "fixture flow",
        "flow",
        "0.1 mL/s",
        "below 6 mL a minute is a drip, not a fixture's flow [common practice]",
        "1 m^3/s",
        "more than a 300 mm (12 in) service carries at 10 m/s; no fixture draws that "
        f"[{_BUILDING}]",
    ),
    "demand": Bound(
        "design flow",
        "flow",
        "0 m^3/s",
        "a flow override gives the flow's size; direction is 'from' to 'to' [physical]",
        "1 m^3/s",
        f"more than a 300 mm (12 in) service carries at 10 m/s [{_BUILDING}]",
    ),
    "closure-time": Bound(
        "valve closure time",
        "time",
        "1 ms",
        "no plumbing valve closes faster; solenoid valves take some 10-50 ms "
        "[from memory; verify against the manufacturer's data]",
        "1 h",
        "a valve that takes over an hour to close makes no surge; screening it is "
        "meaningless [common practice]",
    ),
    "water-temperature": Bound(
        "water temperature",
        "temperature",
        "0.01 degC",
        "outside liquid water at atmospheric pressure: it freezes (triple point 0.01 degC) "
        "[S: IAPWS-95]",
        "99 degC",
        "outside liquid water at atmospheric pressure: it boils near 99.97 degC; the shipped "
        "water-property table ends at 99 degC [S: IAPWS-95]",
    ),
    "gas-volume": Bound(
        "arrester gas volume",
        "volume",
        "1 mL",
        "smaller than the gas charge of any sealed arrester [common practice]",
        "1 m^3",
        "a vessel that size is a surge tank on a main, not a building arrester [common practice]",
    ),
    "velocity-limit": Bound(
        "velocity limit",
        "velocity",
        "0 m/s",
        "a limit at or below zero fails every pipe that carries water [physical]",
        "15 m/s",
        "building pipes run at 1-3 m/s [common practice]; at 15 m/s Darcy-Weisbach friction "
        "in a 1/2 in tube (f = 0.016) takes over 1 MPa in 10 m, so no design reaches it [D]",
        low_open=True,
    ),
    "pressure-limit": Bound(
        "pressure limit",
        "pressure",
        "0 kPa",
        "a limit at or below 0 gauge fails every point that holds water [physical]",
        "10 MPa",
        _PRESSURE_HIGH,
        low_open=True,
    ),
}

#: The bound a ``rulecheck.toml`` limit of each unit kind must meet.
LIMIT_BOUND = {
    "velocity": "velocity-limit",
    "pressure": "pressure-limit",
    "temperature": "water-temperature",
    "length": "pipe-length",
    "time": "closure-time",
    "flow": "demand",
    "volume": "gas-volume",
}


def problem(role: str, si: float, shown: Any) -> tuple[str, str] | None:
    """(message, hint) saying why ``si`` is implausible, or ``None`` when it is plausible.

    ``si`` is in SI units; ``shown`` is the value as the user wrote it.
    """
    bound = BOUNDS[role]
    low, high = bound.low_si, bound.high_si
    span = f"above {bound.low} up to" if bound.low_open else f"{bound.low} to"
    hint = f"the plausible range is {span} {bound.high}; check the number and its unit"
    if not math.isfinite(si):
        return f"{bound.what} {shown} is not a finite number", hint
    if bound.kind == "pressure" and si < _VACUUM:
        message = (
            f"{bound.what} {shown} is below a perfect vacuum: pressures are gauge, and "
            "-101.325 kPa (-14.7 psi) gauge is absolute zero pressure"
        )
        return message, hint
    if bound.kind == "temperature" and si < 0:
        return f"{bound.what} {shown} is below absolute zero", hint
    if si < low or (bound.low_open and si == low):
        edge = "at or below" if bound.low_open else "below"
        return f"{bound.what} {shown} is {edge} {bound.low}: {bound.low_why}", hint
    if si > high:
        return f"{bound.what} {shown} is above {bound.high}: {bound.high_why}", hint
    return None


#: A bare number for a closure time of this much or more could be seconds or milliseconds.
AMBIGUOUS_BARE_TIME = 1.0


def ambiguous_bare_time(value: Any) -> bool:
    """True for a bare closure time that reads as plausible in both seconds and milliseconds.

    The layout format reads a bare time in seconds. A valve closes in milliseconds to
    seconds, so ``closure_time: 20`` may mean 20 ms as well as 20 s; below 1 the
    millisecond reading is under the 1 ms bound, so ``0.1`` is 0.1 s without doubt.
    """
    if isinstance(value, bool):
        return False
    if isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            return False  # has a unit (or is not a number: to_si says so)
    return isinstance(value, (int, float)) and abs(value) >= AMBIGUOUS_BARE_TIME


def markdown_table() -> str:
    """The bounds as the Markdown table DEVELOPERS.md shows."""
    rows = ["| quantity | low | why | high | why |", "|---|---|---|---|---|"]
    for bound in BOUNDS.values():
        low = f"{'> ' if bound.low_open else ''}{bound.low}"
        rows.append(f"| {bound.what} | {low} | {bound.low_why} | {bound.high} | {bound.high_why} |")
    return "\n".join(rows) + "\n"
