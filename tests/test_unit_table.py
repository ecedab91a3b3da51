"""The generated unit table (``rulecheck/unit_table.py``) against pint, and the start-up
path that uses it.

The reference is a fresh ``pint.UnitRegistry()`` (pint's own definitions, with the one
name rulecheck adds, ``gpm`` = US gallon per minute). Every entry must give what pint
gives; a spelling outside the table still reaches pint at run time.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import pint
import pytest

from rulecheck import units
from rulecheck.unit_table import TABLE

ROOT = Path(__file__).resolve().parent.parent
UREG = pint.UnitRegistry()
PINT_NAME = {"gpm": "gallon / minute"}  # pint's gallon is the US gallon [S: NIST SP 811, B]
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


@pytest.mark.parametrize(("text", "kind"), sorted(TABLE))
def test_every_entry_agrees_with_pint(text: str, kind: str) -> None:
    scale, offset = TABLE[(text, kind)]
    unit = PINT_NAME.get(text, text)
    for value in (0.0, 1.0, -40.0, 123.456):
        expected = UREG.Quantity(value, unit).to(SI[kind]).magnitude
        assert math.isclose(value * scale + offset, expected, rel_tol=1e-12, abs_tol=1e-12)


def test_table_covers_the_bare_and_display_units() -> None:
    for system in units.BARE_UNIT.values():
        for kind, text in system.items():
            assert (text, kind) in TABLE
    for system in units.DISPLAY_UNIT.values():
        for kind, text in system.items():
            kind = "velocity" if kind == "speed" else kind
            assert (text, kind) in TABLE


def test_table_is_what_the_script_makes() -> None:
    done = subprocess.run(
        [sys.executable, "scripts/make_unit_table.py", "--check"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert done.returncode == 0, done.stdout + done.stderr


@pytest.mark.parametrize(
    ("text", "kind", "si"),
    [
        # outside the table: pint answers (1 yd = 0.9144 m exactly [S: NIST SP 811, B])
        ("3 yard", "length", 3 * 0.9144),
        ("2 kilopascal", "pressure", 2000.0),
        ("1 torr", "pressure", 101325.0 / 760.0),  # [S: NIST SP 811, B: 1 torr = 1/760 atm]
    ],
)
def test_spellings_outside_the_table_reach_pint(text: str, kind: str, si: float) -> None:
    assert (text.split()[1], kind) not in TABLE
    assert math.isclose(units.to_si(text, kind, "us"), si, rel_tol=1e-12)


@pytest.mark.parametrize(
    ("text", "kind", "message"),
    [
        ("3 furlongs_of_cheese", "length", "unknown unit"),
        ("3 psi", "length", "is not a unit of length"),  # psi is in the table as pressure
        ("3 ft", "pressure", "is not a unit of pressure"),
    ],
)
def test_errors_outside_the_table_are_pints(text: str, kind: str, message: str) -> None:
    with pytest.raises(units.QuantityError, match=message):
        units.to_si(text, kind, "us")


_PROBE = """
import io, sys, contextlib
from rulecheck.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    status = main(sys.argv[1:])
print(status, *sorted({m.split('.')[0] for m in sys.modules} & {'pint', 'jsonschema', 'rich'}))
"""


@pytest.mark.parametrize(
    ("fmt", "absent"),
    [("json", {"pint", "jsonschema", "rich"}), ("text", {"pint", "jsonschema"})],
)
def test_a_clean_check_does_not_import_the_slow_libraries(fmt: str, absent: set[str]) -> None:
    sample = ROOT / "samples" / "two-bath-house.yaml"
    done = subprocess.run(
        [sys.executable, "-c", _PROBE, "check", str(sample), "--format", fmt],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=120,
    )
    status, *imported = done.stdout.split()
    assert status in ("0", "1"), done.stderr
    assert not absent & set(imported), imported


def test_a_schema_error_still_gets_jsonschemas_message(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    sample = (ROOT / "samples" / "two-bath-house.yaml").read_text(encoding="utf-8")
    bad.write_text(sample.replace("units: us", "units: metric"), encoding="utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "rulecheck", "check", str(bad)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 2
    assert "bad.yaml:7:10:" in done.stderr and "metric" in done.stderr, done.stderr
