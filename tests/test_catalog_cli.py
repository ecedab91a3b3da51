"""``rulecheck catalog``: materials, a material's size table, fixture types, project entries.

The figures are compared with the data's own outside references: EN 1057 22x1.0 has a
20.0 mm bore [S: Halcor EN 1057 tube table]; EN 806-3 Table 2 gives a bath 4 LU, 0.4 L/s
[S: via a published excerpt]; IPC Table E103.3(2) a private lavatory 0.5/0.5/0.7 WSFU [S].
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest

from rulecheck.cli.catalog import tags
from rulecheck.errors import EXIT_INPUT, EXIT_OK
from rulecheck.input.catalog import builtin_catalog

Cli = Callable[..., tuple[int, str, str]]

LOCAL = """\
version: 1
project: {name: local entries, units: si, profile: en806}
supplies: [{id: S, pressure: 300 kPa}]
points: [{id: A, elevation: 0 m}]
pipes: [{id: P1, from: S, to: A, material: my-tube, size: 10x1.0, length: 3 m, service: cold}]
fixtures: [{id: F1, type: my-tap, cold: A}]
materials:
  - id: my-tube
    standard: invented
    modulus: 100 GPa
    poisson: 0.3
    roughness: 0.001 mm
    pressure_rating: [{temperature: 20 degC, pressure: 1 MPa}]
    sizes: {"10x1.0": {outside_diameter: 10 mm, wall: 1 mm}}
    source: invented for a test [CP]
fixture_types:
  - id: my-tap
    wsfu: {cold: 1}
    flow: 0.1 L/s
    min_pressure: 100 kPa
    sides: [cold]
    profiles: {en806: {loading_units: {cold: 1, total: 1}}}
    source: invented for a test [CP]
"""


def test_lists_every_material(cli: Cli) -> None:
    rc, out, _ = cli("catalog", "--format", "json")
    assert rc == EXIT_OK
    rows = json.loads(out)["rows"]
    assert {r["id"] for r in rows} == set(builtin_catalog().materials)
    en = next(r for r in rows if r["id"] == "copper-en1057")
    assert en["standard"] == "EN 1057" and en["smallest"] == pytest.approx(0.012)
    assert en["largest"] == pytest.approx(0.108) and en["origin"] == "built-in"
    assert all(r["tags"].startswith("[") for r in rows)


def test_size_table_gives_the_bore(cli: Cli) -> None:
    rc, out, _ = cli("catalog", "copper-en1057", "--format", "json")
    assert rc == EXIT_OK
    row = next(r for r in json.loads(out)["rows"] if r["size"] == "22x1.0")
    assert row["inside_diameter"] == pytest.approx(0.020)
    rc, text, _ = cli("catalog", "copper-en1057")
    assert "22x1.0" in text and "20.0 mm" in text


def test_fixture_units_per_profile(cli: Cli) -> None:
    rc, out, _ = cli("catalog", "fixtures", "--profile", "en806", "--format", "json")
    bath = next(r for r in json.loads(out)["rows"] if r["id"] == "bathtub")
    assert bath["LU cold/hot/total"] == "4/4/4" and bath["flow"] == pytest.approx(4e-4)
    rc, out, _ = cli("catalog", "fixtures", "--format", "json")
    lav = next(r for r in json.loads(out)["rows"] if r["id"] == "lavatory")
    assert lav["WSFU cold/hot/total (private)"] == "0.5/0.5/0.7"
    assert lav["valve"] == "quick" and lav["closure_time"] == pytest.approx(0.1)


def test_project_entries_beside_the_built_in(cli: Cli, tmp_path: Path) -> None:
    path = tmp_path / "local.yaml"
    path.write_text(LOCAL, encoding="utf-8")
    rc, out, _ = cli("catalog", "--layout", path, "--format", "json")
    rows = {r["id"]: r for r in json.loads(out)["rows"]}
    assert rc == EXIT_OK and rows["my-tube"]["origin"] == "project"
    assert rows["copper-en1057"]["origin"] == "built-in"
    rc, out, _ = cli("catalog", "fixtures", "--layout", path, "--profile", "en806")
    assert "my-tap" in out and "project" in out
    rc, out, _ = cli("catalog", "my-tube", "--layout", path)
    assert rc == EXIT_OK and "10x1.0" in out and "8.00 mm" in out


@pytest.mark.parametrize(
    ("argv", "fragment"),
    [
        (("catalog", "coper-en1057"), "did you mean 'copper-en1057'"),
        (("catalog", "fixtures", "--profile", "nope"), "invalid choice"),
        (("catalog", "--format", "yaml"), "invalid choice"),
    ],
)
def test_hostile_arguments(cli: Cli, argv: tuple[str, ...], fragment: str) -> None:
    rc, _, err = cli(*argv)
    assert rc == EXIT_INPUT and fragment in err and "Traceback" not in err


def test_bad_layout_is_an_input_error(cli: Cli, tmp_path: Path) -> None:
    path = tmp_path / "bad.yaml"
    path.write_text(LOCAL.replace("modulus: 100 GPa", "modulus: lots"), encoding="utf-8")
    rc, _, err = cli("catalog", "--layout", path)
    assert rc == EXIT_INPUT and "bad.yaml:" in err and "Traceback" not in err
    rc, _, err = cli("catalog", "--layout", tmp_path / "missing.yaml")
    assert rc == EXIT_INPUT and "missing.yaml" in err


def test_tags() -> None:
    assert tags("x [S: EN 1057] y [M] z [D]") == "[S][M][D]"
    assert tags("from memory; verify against the adopted edition") == "[M]"
    assert tags("nothing") == "-"


def test_output_is_deterministic(cli: Cli) -> None:
    first = cli("catalog", "fixtures", "--format", "json")
    assert cli("catalog", "fixtures", "--format", "json") == first
