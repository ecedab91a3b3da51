"""Quantities: parse ``"12 ft"`` / bare numbers into SI floats, and format SI back.

Units are converted once, here, at the edge. pint's unit registry is the authority;
each distinct unit text is resolved once as an affine map (``si = value * scale +
offset``), so a 100k-pipe file does not pay pint's parsing cost per value. The maps of
the common spellings come from a table generated from pint (``unit_table.py``, by
``scripts/make_unit_table.py``; ``tests/test_unit_table.py`` checks it against pint), so
a run imports pint (some 0.3 s with its registry) only for a spelling outside the table.
"""

from __future__ import annotations

import math
import re
from functools import cache
from typing import TYPE_CHECKING, Any

from rulecheck.unit_table import TABLE

if TYPE_CHECKING:
    import pint

# What each kind of quantity is in SI, and what a bare number means per unit system.
# Small lengths (diameters, walls, roughness) read bare numbers in inches / millimetres:
# a bare "0.625" for a tube diameter in feet would surprise every designer.
_SI_UNIT = {
    "length": "m",
    "diameter": "m",
    "pressure": "Pa",
    "time": "s",
    "flow": "m**3/s",
    "velocity": "m/s",
    "temperature": "K",
    "volume": "m**3",
}
BARE_UNIT = {
    "us": {
        "length": "ft",
        "diameter": "in",
        "pressure": "psi",
        "time": "s",
        "flow": "gpm",
        "velocity": "ft/s",
        "temperature": "degF",
        "volume": "gal",
    },
    "si": {
        "length": "m",
        "diameter": "mm",
        "pressure": "kPa",
        "time": "s",
        "flow": "L/s",
        "velocity": "m/s",
        "temperature": "degC",
        "volume": "L",
    },
}
_EXAMPLE = {
    "length": "12 ft",
    "diameter": "0.625 in",
    "pressure": "65 psi",
    "time": "30 ms",
    "flow": "2.5 gpm",
    "velocity": "8 ft/s",
    "temperature": "140 degF",
    "volume": "1 L",
}

# Beyond this in SI units no layout value makes sense (the largest real ones are wall
# moduli, ~1e11 Pa); it also keeps the hydraulics clear of float overflow [D].
_ABSURD = 1e15
# A quantity is a number and a unit, nothing more. The unit is one name or two joined by
# '/', each name perhaps raised to a small whole power: "ft", "ft/s", "L/min", "lbf/in^2",
# "m³/s", "degF", "°C", "ftH2O". Anything else (operators, numbers inside the unit,
# brackets, powers of powers) is refused here, before pint sees it: pint evaluates what it
# is given, and "ft*9^9^9" would run for ever [D].
_UNIT_NAME = r"[A-Za-z°µμ][A-Za-z0-9_]{0,23}(?:(?:\^|\*\*)[1-4]|[²³])?"
_UNIT_TEXT = re.compile(rf"^{_UNIT_NAME}(?: ?/ ?{_UNIT_NAME})?$")
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_MAX_TEXT = 80  # characters: "0.0000125 m³/s" is 14; a longer text is not a quantity


class QuantityError(ValueError):
    """A quantity that cannot be used; ``hint`` says what to write instead."""

    def __init__(self, message: str, hint: str = "") -> None:
        super().__init__(message)
        self.hint = hint


def _accepted(kind: str) -> str:
    """How a quantity of ``kind`` is written, with an example of that kind first."""
    return (
        f"a {kind} as a number and a unit, such as '{_EXAMPLE[kind]}': "
        "one unit name, or two joined by '/' as in 'ft/s'"
    )


KINDS = tuple(_SI_UNIT)


@cache
def registry() -> pint.UnitRegistry:
    import pint

    ureg: pint.UnitRegistry = pint.UnitRegistry()
    ureg.define("gallon_per_minute = gallon / minute = gpm")
    return ureg


# Successful conversions of quantity texts, by (text, kind, system, positive, nonnegative):
# a pure function of those, so a file of 100k pipes parses each distinct "12 ft" once.
# Failures are not kept (they raise afresh, with the same message). Bounded in size.
_CONVERTED: dict[tuple[str, str, str, bool, bool], float] = {}
_CONVERTED_MAX = 100_000


@cache
def _affine(unit_text: str, kind: str) -> tuple[float, float]:
    """(scale, offset) taking a value in ``unit_text`` to SI for ``kind``."""
    known = TABLE.get((unit_text, kind))
    return known if known is not None else pint_affine(unit_text, kind)


def pint_affine(unit_text: str, kind: str) -> tuple[float, float]:
    """(scale, offset) for ``unit_text`` as ``kind``, asked of pint itself."""
    ureg = registry()
    try:
        unit = ureg.Unit(unit_text)
    except Exception as exc:  # noqa: BLE001 - pint raises many types for malformed unit text
        raise QuantityError(
            f"unknown unit '{unit_text}'", f"write a {kind} such as '{_EXAMPLE[kind]}'"
        ) from exc
    target = ureg.Unit(_SI_UNIT[kind])
    if unit.dimensionality != target.dimensionality:
        raise QuantityError(
            f"'{unit_text}' is not a unit of {kind}", f"write a {kind} such as '{_EXAMPLE[kind]}'"
        )
    zero = ureg.Quantity(0.0, unit).to(target).magnitude
    one = ureg.Quantity(1.0, unit).to(target).magnitude
    return float(one - zero), float(zero)


def to_si(
    value: Any, kind: str, system: str, *, positive: bool = False, nonnegative: bool = False
) -> float:
    """Convert a layout quantity (bare number or ``"number unit"``) to SI.

    Raises :class:`QuantityError` for a wrong kind, an unknown unit, a non-finite
    number, or a value that breaks ``positive`` / ``nonnegative``.
    """
    text = value.__class__ is str  # texts repeat ("12 ft"): remember what each one gave
    if text:
        memo = (value, kind, system, positive, nonnegative)
        known = _CONVERTED.get(memo)
        if known is not None:
            return known
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise QuantityError(f"expected a {kind}", f"write e.g. '{_EXAMPLE[kind]}'")
    if isinstance(value, str):
        match = _NUMBER.match(value) if len(value) <= _MAX_TEXT else None
        if not match:
            shown = value if len(value) <= _MAX_TEXT else value[:_MAX_TEXT] + "…"
            raise QuantityError(f"'{shown}' is not a {kind}", f"write {_accepted(kind)}")
        number = float(match.group(1))
        unit_text = match.group(2) or BARE_UNIT[system][kind]
        if not _UNIT_TEXT.match(unit_text):  # no arithmetic reaches pint, nor stray punctuation
            raise QuantityError(
                f"unknown unit '{unit_text}': a quantity is a number and a plain unit, "
                "no arithmetic, brackets or numbers in the unit",
                f"write {_accepted(kind)}",
            )
    else:
        try:
            number = float(value)
        except OverflowError:  # an integer beyond the float range
            number = math.inf
        unit_text = BARE_UNIT[system][kind]
    if not math.isfinite(number):
        raise QuantityError(f"{kind} must be a finite number", f"write e.g. '{_EXAMPLE[kind]}'")
    scale, offset = _affine(unit_text, kind)
    si = number * scale + offset
    if abs(si) > _ABSURD:
        raise QuantityError(
            f"{value!r} is far outside the range of any building",
            f"write a {kind} such as '{_EXAMPLE[kind]}'",
        )
    if positive and not si > 0:
        raise QuantityError(f"{kind} must be greater than zero, got {value!r}")
    if nonnegative and si < 0:
        raise QuantityError(f"{kind} must not be negative, got {value!r}")
    if text and len(_CONVERTED) < _CONVERTED_MAX:
        _CONVERTED[memo] = si
    return si


# ---- output ---------------------------------------------------------------------------

DISPLAY_UNIT = {
    "us": {
        "length": "ft",
        "pressure": "psi",
        "flow": "gpm",
        "velocity": "ft/s",
        "time": "s",
        "temperature": "degF",
        "diameter": "in",
        "volume": "gal",
        "speed": "ft/s",
    },
    "si": {
        "length": "m",
        "pressure": "kPa",
        "flow": "L/s",
        "velocity": "m/s",
        "time": "s",
        "temperature": "degC",
        "diameter": "mm",
        "volume": "L",
        "speed": "m/s",
    },
}
_LABEL = {"degF": "°F", "degC": "°C"}


def from_si(value: float, kind: str, system: str) -> float:
    """Convert an SI value of ``kind`` to the display unit of ``system``."""
    kind = "velocity" if kind == "speed" else kind
    scale, offset = _affine(DISPLAY_UNIT[system][kind], kind)
    return (value - offset) / scale


def unit_label(kind: str, system: str) -> str:
    unit = DISPLAY_UNIT[system][kind]
    return _LABEL.get(unit, unit)


def fmt(value: float, kind: str, system: str, digits: int = 3) -> str:
    """Format an SI value in the display unit of ``system``, e.g. ``'72.4 psi'``."""
    if math.isinf(value):
        return "∞"
    shown = from_si(value, kind, system)
    return f"{_round(shown, digits)} {unit_label(kind, system)}"


def _round(x: float, digits: int) -> str:
    """Round to ``digits`` significant figures, without exponent for everyday sizes."""
    if x == 0 or not math.isfinite(x):
        return f"{x:g}"
    magnitude = math.floor(math.log10(abs(x)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{x:.{decimals}f}"


#: the kinds of quantity a limit in the rule data or rulecheck.toml may be
QUANTITY_KINDS = ("velocity", "pressure", "temperature", "length", "time", "flow", "volume")


def quantity_kind(raw: Any) -> str | None:
    """The kind of quantity a ``"number unit"`` text measures; ``None`` for anything else."""
    if not isinstance(raw, str) or is_number(raw):
        return None  # a bare number has no unit, hence no kind
    for kind in QUANTITY_KINDS:
        try:
            to_si(raw, kind, "si")
        except QuantityError:
            continue
        return kind
    return None


def is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
