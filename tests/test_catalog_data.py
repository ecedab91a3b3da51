"""Checks of the built-in catalog data (``rules/materials.yaml``, ``rules/fixture-types.yaml``).

The data is compared with outside references where one exists (ASTM B88 copper
tube sizes, ASME B36.10M via the ``fluids`` package, the SDR definition of
ASTM F876 and ASTM D2846, the thin-wall pressure formula of the CDA Copper Tube
Handbook and ASME B31.1) and otherwise checked for the shape and the tagging
that the engineering basis requires. Quantities are parsed with pint here, not
with rulecheck's own loader, so that the data is checked independently of it.
"""

from __future__ import annotations

import re
from fractions import Fraction
from pathlib import Path
from typing import Any

import pint
import pytest
import yaml
from fluids.piping import nearest_pipe

RULES = Path(__file__).resolve().parent.parent / "rules"
MEMORY_PHRASE = "from memory; verify against the adopted edition"

UREG = pint.UnitRegistry()
UREG.define("gpm = gallon / minute")  # US gallon per minute; pint has no gpm

FIXTURE_IDS = {
    "lavatory",
    "kitchen-sink",
    "bar-sink",
    "service-sink",
    "laundry-tray",
    "bathtub",
    "shower",
    "bidet",
    "dishwasher",
    "clothes-washer",
    "ice-maker",
    "drinking-fountain",
    "hose-bibb",
    "water-closet-tank",
    "water-closet-flushometer",
    "water-closet-flushometer-tank",
    "urinal-flushometer",
}
# Flush-valve fixtures select the flushometer column of IPC Table E103.3(3); a
# flushometer tank (pressure-assist closet) is a tank, not a flush valve.
FLUSH_VALVE_IDS = {"water-closet-flushometer", "urinal-flushometer"}
CTS_MATERIALS = ("copper-k", "copper-l", "copper-m", "pex-sdr9", "cpvc-sdr11")
# metric materials (issue 13), checked in tests/test_metric_catalog.py
METRIC_MATERIALS = (
    "copper-en1057",
    "pex-en15875-s3.2",
    "ppr-en15874-s3.2",
    "ppr-en15874-s2.5",
    "multilayer-pert-al",
    "stainless-en10312",
    "steel-en10255-m",
)


def _load(name: str, key: str) -> list[dict[str, Any]]:
    with open(RULES / name, encoding="utf-8") as handle:
        data = yaml.safe_load(handle)
    entries = data[key]
    assert isinstance(entries, list) and entries
    return entries


MATERIALS = {m["id"]: m for m in _load("materials.yaml", "materials")}
FIXTURES = {f["id"]: f for f in _load("fixture-types.yaml", "fixture_types")}


def q(text: str) -> pint.Quantity:
    """Parse "number unit" (offset units such as degF need the two-argument form)."""
    number, unit = str(text).split(None, 1)
    return UREG.Quantity(float(number), unit)


def inches(text: str) -> float:
    return q(text).to("inch").magnitude


def nominal(label: str) -> float:
    """Nominal size label to inches: "1-1/4" -> 1.25, "3/8" -> 0.375, "2" -> 2."""
    whole, _, frac = label.partition("-")
    if "/" in whole:
        return float(Fraction(whole))
    return float(int(whole) + (Fraction(frac) if frac else 0))


def occupancy_rows(wsfu: dict[str, Any]) -> dict[str, dict[str, float]]:
    """The wsfu block as {occupancy: {cold, hot, total}} (flat form counts for both)."""
    if "private" in wsfu or "public" in wsfu:
        return wsfu
    return {"any": wsfu}


# --- sizes against the standards ---------------------------------------------------------


@pytest.mark.parametrize("material_id", CTS_MATERIALS)
def test_cts_outside_diameter_is_nominal_plus_eighth(material_id: str) -> None:
    """CTS outside diameter = nominal + 1/8 in [S: ASTM B88], within 0.0005 in (rounding)."""
    for label, size in MATERIALS[material_id]["sizes"].items():
        assert inches(size["outside_diameter"]) == pytest.approx(
            nominal(label) + 0.125, abs=5e-4
        ), f"{material_id} {label}"


def test_steel_sch40_matches_fluids_table() -> None:
    """OD and wall vs ASME B36.10M as carried by fluids.piping.nearest_pipe, within 0.5 %.

    fluids tabulates the metric column of B36.10M (e.g. 21.3 mm for NPS 1/2), the
    catalog the inch column (0.840 in): they differ by up to about 0.2 %.
    """
    sizes = MATERIALS["steel-sch40"]["sizes"]
    assert len(sizes) >= 10
    for label, size in sizes.items():
        nps, _di, do, t = nearest_pipe(NPS=nominal(label), schedule="40")
        assert nps == pytest.approx(nominal(label))
        assert q(size["outside_diameter"]).to("m").magnitude == pytest.approx(do, rel=5e-3), label
        assert q(size["wall"]).to("m").magnitude == pytest.approx(t, rel=5e-3), label


def test_copper_walls_k_thicker_than_l_thicker_than_m() -> None:
    """Type K > L > M wall at every size made in all three [S: ASTM B88]."""
    k, l_, m = (MATERIALS[f"copper-{t}"]["sizes"] for t in "klm")
    common = set(k) & set(l_) & set(m)
    assert len(common) >= 10
    for label in common:
        assert inches(k[label]["wall"]) > inches(l_[label]["wall"]) > inches(m[label]["wall"])


@pytest.mark.parametrize(
    ("material_id", "sdr", "min_wall"),
    [
        ("cpvc-sdr11", 11, 0.068),  # ASTM D2846: SDR 11, minimum wall 0.068 in [M]
        ("pex-sdr9", 9, 0.070),  # ASTM F876: SDR 9, minimum wall 0.070 in [S for 3/8-1 in]
    ],
)
def test_sdr_wall(material_id: str, sdr: int, min_wall: float) -> None:
    """Wall = max(OD / SDR, minimum wall), within 0.001 in (tables round to 3 decimals)."""
    for label, size in MATERIALS[material_id]["sizes"].items():
        od = inches(size["outside_diameter"])
        assert inches(size["wall"]) == pytest.approx(max(od / sdr, min_wall), abs=1e-3), label


# --- pressure ratings against the thin-wall formula ----------------------------------------

# Annealed copper allowable stress by degF, psi [S: CDA Copper Tube Handbook Table 3c header,
# copper.org: S = 6000, 5100, 4900, 4800 psi at 100, 150, 200, 250 degF].
COPPER_ANNEALED_STRESS_PSI = {100: 6000.0, 150: 5100.0, 200: 4900.0, 250: 4800.0}


@pytest.mark.parametrize("material_id", ["copper-k", "copper-l", "copper-m"])
def test_copper_rating_not_above_any_size(material_id: str) -> None:
    """The one rating per material must hold for every size (the governing size rules).

    Upper bound per size: P = 2 S t / (D - 0.8 t) with the NOMINAL wall t and the
    annealed allowable stress S (the method of the CDA Copper Tube Handbook rating
    tables [M]); the tables use the minimum wall, so they come out lower still.
    """
    material = MATERIALS[material_id]
    for row in material["pressure_rating"]:
        temp_f = round(q(row["temperature"]).to("degF").magnitude)
        stress = COPPER_ANNEALED_STRESS_PSI[temp_f]
        rating = q(row["pressure"]).to("psi").magnitude
        for label, size in material["sizes"].items():
            d, t = inches(size["outside_diameter"]), inches(size["wall"])
            assert rating <= 2 * stress * t / (d - 0.8 * t), f"{material_id} {label} {temp_f} degF"


# ASTM B280 type K and type L tube (the same outside diameters and walls as ASTM B88 K and
# L), maximum pressure at 150 degF, psi, by nominal size [S: "Pressure Rating of Copper
# Pipes and Tubes", high-purity gas delivery systems data sheet (scribd 513937758)].
VENDOR_150F_PSI = {
    "copper-k": {
        "1/4": 913, "3/8": 960, "1/2": 758, "5/8": 626, "3/4": 724, "1": 557, "1-1/4": 452,
        "1-1/2": 420, "2": 370, "2-1/2": 338, "3": 328, "3-1/2": 311, "4": 306,
    },
    "copper-l": {
        "1/4": 775, "3/8": 662, "1/2": 613, "5/8": 537, "3/4": 495, "1": 420, "1-1/4": 373,
        "1-1/2": 347, "2": 309, "2-1/2": 285, "3": 270, "3-1/2": 258, "4": 249,
    },
}  # fmt: skip


def _size_rows(material_id: str) -> dict[str, dict[int, float]]:
    return {
        label: {
            round(q(row["temperature"]).to("degF").magnitude): q(row["pressure"])
            .to("psi")
            .magnitude
            for row in size["pressure_rating"]
        }
        for label, size in MATERIALS[material_id]["sizes"].items()
    }


@pytest.mark.parametrize("material_id", ["copper-k", "copper-l", "copper-m"])
def test_copper_size_ratings_follow_each_size_wall(material_id: str) -> None:
    """Each size's own rating against ASME B31.1 / Barlow P = 2 S t / (D - 0.8 t) with that
    size's nominal wall and the handbook's annealed S: at most the nominal-wall value, and
    at least 85 % of it (the tables use the minimum wall, about 10 % under nominal [M]).
    One rating for every size (the 4-in row) would fall far below that band at 1/2 in."""
    for label, rows in _size_rows(material_id).items():
        size = MATERIALS[material_id]["sizes"][label]
        d, t = inches(size["outside_diameter"]), inches(size["wall"])
        assert set(rows) == set(COPPER_ANNEALED_STRESS_PSI), label
        for temp_f, rating in rows.items():
            bound = 2 * COPPER_ANNEALED_STRESS_PSI[temp_f] * t / (d - 0.8 * t)
            assert 0.85 * bound <= rating <= bound, f"{material_id} {label} {temp_f} degF"


@pytest.mark.parametrize("material_id", sorted(VENDOR_150F_PSI))
def test_copper_150F_ratings_match_a_vendor_table(material_id: str) -> None:
    """The 150 degF rows (100 degF value x 5100/6000 [D]) against a vendor's table that
    prints the same tube sizes at 150 degF, within 1.5 psi (both round to whole psi)."""
    rows = _size_rows(material_id)
    assert set(rows) == set(VENDOR_150F_PSI[material_id])
    for label, expected in VENDOR_150F_PSI[material_id].items():
        assert rows[label][150] == pytest.approx(expected, abs=1.5), label


@pytest.mark.parametrize("material_id", ["copper-k", "copper-l", "copper-m"])
def test_copper_material_rating_is_the_lowest_size_row(material_id: str) -> None:
    rows = _size_rows(material_id)
    for row in MATERIALS[material_id]["pressure_rating"]:
        temp_f = round(q(row["temperature"]).to("degF").magnitude)
        lowest = min(r[temp_f] for r in rows.values())
        assert q(row["pressure"]).to("psi").magnitude == pytest.approx(lowest), temp_f


def test_pipe_rating_is_its_own_size_row() -> None:
    """rulecheck reads the size's row: type L 1/2 in at 140 degF interpolates 722 and 614 psi
    (the 100 and 150 degF rows) to 636 psi, not the 4-in row's 258 psi."""
    from rulecheck.input.catalog import builtin_catalog

    material = builtin_catalog().materials["copper-l"]
    psi = q("1 psi").to("Pa").magnitude
    at_140f = UREG.Quantity(140, "degF").to("K").magnitude
    assert material.rating_at(at_140f, "1/2") / psi == pytest.approx(722 + (614 - 722) * 0.8)
    assert material.rating_at(at_140f, "4") / psi == pytest.approx(293 + (249 - 293) * 0.8)
    assert material.rating_at(at_140f) == material.rating_at(at_140f, "4")


def test_steel_rating_not_above_any_size() -> None:
    """Steel rating <= ASME B31.1 104.1.2 plain-pipe bound P = 2 S t / (D - 0.8 t) [M].

    Nominal wall and OD from fluids (ASME B36.10M), S = 15.0 ksi for A53 grade B [M].
    """
    for row in MATERIALS["steel-sch40"]["pressure_rating"]:
        rating = q(row["pressure"]).to("psi").magnitude
        for label in MATERIALS["steel-sch40"]["sizes"]:
            _nps, _di, do, t = nearest_pipe(NPS=nominal(label), schedule="40")
            bound = 2 * 15000.0 * t / (do - 0.8 * t)
            assert rating <= bound, label


# --- shape, units and tags ----------------------------------------------------------------

MATERIAL_DIMENSIONS = {"modulus": "[pressure]", "roughness": "[length]"}


@pytest.mark.parametrize("material_id", sorted(MATERIALS))
def test_material_quantities_have_the_right_kind(material_id: str) -> None:
    material = MATERIALS[material_id]
    assert material["family"] in {"copper", "steel", "plastic", "other"}
    assert 0.0 < float(material["poisson"]) < 0.5  # isotropic solid bound
    for key, dim in MATERIAL_DIMENSIONS.items():
        assert q(material[key]).check(dim), key
        assert q(material[key]).magnitude > 0
    for size in material["sizes"].values():
        od, wall = q(size["outside_diameter"]), q(size["wall"])
        assert od.check("[length]") and wall.check("[length]")
        assert (od - 2 * wall).magnitude > 0  # inside diameter > 0
        assert wall.magnitude > 0


@pytest.mark.parametrize("material_id", sorted(MATERIALS))
def test_pressure_rating_rows_rise_in_temperature(material_id: str) -> None:
    rows = MATERIALS[material_id]["pressure_rating"]
    assert len(rows) >= 2
    temps = [q(r["temperature"]).to("kelvin").magnitude for r in rows]
    assert temps == sorted(temps) and len(set(temps)) == len(temps)
    pressures = [q(r["pressure"]).to("psi").magnitude for r in rows]
    assert all(p > 0 for p in pressures)
    assert pressures == sorted(pressures, reverse=True)  # a rating never rises when hotter


def test_modulus_vs_temperature_consistent() -> None:
    """Rising temperature, falling modulus; the first row is the nominal modulus."""
    tables = {k: m.get("modulus_vs_temperature") for k, m in MATERIALS.items()}
    tables = {k: v for k, v in tables.items() if v}
    assert "pex-sdr9" in tables
    for material_id, rows in tables.items():
        assert MATERIALS[material_id]["family"] == "plastic"
        temps = [q(r["temperature"]).to("kelvin").magnitude for r in rows]
        moduli = [q(r["modulus"]).to("GPa").magnitude for r in rows]
        assert len(rows) >= 2 and temps == sorted(temps)
        assert all(a > b > 0 for a, b in zip(moduli, moduli[1:], strict=False))
        assert moduli[0] == pytest.approx(q(MATERIALS[material_id]["modulus"]).to("GPa").m)


def test_ids_unique() -> None:
    material_ids = [m["id"] for m in _load("materials.yaml", "materials")]
    fixture_ids = [f["id"] for f in _load("fixture-types.yaml", "fixture_types")]
    assert len(set(material_ids)) == len(material_ids)
    assert len(set(fixture_ids)) == len(fixture_ids)
    assert set(material_ids) == {*CTS_MATERIALS, "steel-sch40", *METRIC_MATERIALS}


def test_fixture_id_list() -> None:
    """The fixture types the first release ships [engineering basis §2]."""
    assert set(FIXTURES) == FIXTURE_IDS


def test_flushometer_flag_only_on_flush_valves() -> None:
    assert {k for k, f in FIXTURES.items() if f["flushometer"] is True} == FLUSH_VALVE_IDS
    assert all(isinstance(f["flushometer"], bool) for f in FIXTURES.values())


@pytest.mark.parametrize("fixture_id", sorted(FIXTURE_IDS))
def test_fixture_entry(fixture_id: str) -> None:
    fixture = FIXTURES[fixture_id]
    rows = occupancy_rows(fixture["wsfu"])
    for occupancy, row in rows.items():
        cold, hot, total = (float(row[k]) for k in ("cold", "hot", "total"))
        assert min(cold, hot) >= 0 and total > 0, occupancy
        assert total >= max(cold, hot), occupancy  # IPC E103.3(2): total column >= either side
        assert total <= cold + hot + 1e-9, occupancy  # and never more than both together
        # a side the fixture does not have carries no load
        for side, value in (("cold", cold), ("hot", hot)):
            if side not in fixture["sides"]:
                assert value == 0, f"{occupancy} {side}"
    assert set(fixture["sides"]) <= {"cold", "hot"} and fixture["sides"]
    assert q(fixture["flow"]).check("[length] ** 3 / [time]")
    assert q(fixture["flow"]).magnitude > 0
    assert q(fixture["min_pressure"]).check("[pressure]")
    valve = fixture["valve"]
    assert valve["closing"] in {"quick", "slow"}
    closure = q(valve["closure_time"])
    assert closure.check("[time]") and closure.magnitude > 0


def test_solenoid_appliances_close_within_40_ms() -> None:
    """Most solenoids close within 40 ms [S: PM Engineer on PDI-WH 201]."""
    for fixture_id in ("dishwasher", "clothes-washer", "ice-maker"):
        valve = FIXTURES[fixture_id]["valve"]
        assert valve["closing"] == "quick"
        assert q(valve["closure_time"]).to("ms").magnitude <= 40.0


def test_flushometers_close_slowly() -> None:
    """Flushometers close gradually over seconds [M]: slow, at least 1 s."""
    for fixture_id in FLUSH_VALVE_IDS:
        valve = FIXTURES[fixture_id]["valve"]
        assert valve["closing"] == "slow"
        assert q(valve["closure_time"]).to("s").magnitude >= 1.0


CITES_MEMORY = re.compile(r"\[M\b|\[M:|\bfrom memory\b")


@pytest.mark.parametrize("entry", [*MATERIALS.values(), *FIXTURES.values()], ids=lambda e: e["id"])
def test_source_present_and_memory_tagged(entry: dict[str, Any]) -> None:
    """Every entry names its source; one that cites memory says so in the required words."""
    source = entry.get("source")
    assert isinstance(source, str) and source.strip()
    if CITES_MEMORY.search(source):
        assert MEMORY_PHRASE in source


@pytest.mark.parametrize("name", ["materials.yaml", "fixture-types.yaml"])
def test_header_names_sources_and_tags(name: str) -> None:
    """The file header carries the sources and the tag legend."""
    header = (RULES / name).read_text(encoding="utf-8").split("\n\n", 1)[0]
    assert all(line.startswith("#") for line in header.splitlines())
    for tag in ("Sources", "[S: ...]", "[M]", "[CP]", "[D]", MEMORY_PHRASE):
        assert tag in header, tag
