"""The catalog of pipe materials and fixture types: built-in (``rules/``) plus project-local.

Both use one shape (see ``layout-format.md``). Built-in entries always carry
explicit units; project-local ones may use bare numbers in the project's units.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from typing import Any, TypeVar

from rulecheck.cache import cached
from rulecheck.errors import InputError, ProblemCollector
from rulecheck.input.loader import Document, JsonPath, parse_text
from rulecheck.input.model import FixtureType, Material, ProfileFixture, Wsfu
from rulecheck.input.reader import Reader
from rulecheck.resources import YAML_TAG, data_dir

MATERIALS_FILE = "materials.yaml"
FIXTURE_TYPES_FILE = "fixture-types.yaml"
CATALOG_FILES = (MATERIALS_FILE, FIXTURE_TYPES_FILE)


@dataclass(frozen=True)
class Catalog:
    materials: dict[str, Material]
    fixture_types: dict[str, FixtureType]


_METRIC = re.compile(
    r"^\s*(\d+(?:\.\d+)?)\s*(?:mm)?\s*[x\u00d7X*]\s*(\d+(?:\.\d+)?)\s*(?:mm)?\s*$", re.ASCII
)
_DN = re.compile(r"^\s*DN\s*(\d+)\s*$", re.IGNORECASE | re.ASCII)
_OD = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*(?:mm)?\s*$", re.ASCII)


def metric_label(outside: float, wall: float) -> str:
    """The canonical label of a metric size: ``22x1.0``, ``66.7x1.2`` (diameter and wall in mm;
    the wall with at least one decimal, as the trade writes it)."""
    return f"{outside:g}x{wall:.1f}" if round(wall, 1) == wall else f"{outside:g}x{wall:g}"


def size_label(value: Any) -> str:
    """Normalise a size label: ``1`` and ``"1"`` are the same size; ``1.5`` reads as ``1-1/2``;
    metric sizes as the trade writes them, ``22x1``, ``22 × 1.0``, ``22x1.0 mm`` read as
    ``22x1.0``; ``dn25`` and ``DN 25`` read as ``DN25``."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    if isinstance(value, float):
        whole, frac = divmod(value, 1)
        for den in (2, 4, 8):
            if abs(frac * den - round(frac * den)) < 1e-9:
                num = round(frac * den)
                part = f"{num}/{den}" if num else ""
                return f"{int(whole)}-{part}" if whole else part
    text = str(value).strip()
    if m := _METRIC.match(text):
        return metric_label(float(m.group(1)), float(m.group(2)))
    if m := _DN.match(text):
        return f"DN{int(m.group(1))}"
    return text


def resolve_size(material: Material, value: Any) -> tuple[str | None, list[str]]:
    """The size of ``material`` that ``value`` names, and the candidates when it names none.

    A label of the table (after :func:`size_label`) names itself. An outside diameter alone
    (``20``, ``"20 mm"``) names the one size of a metric table with that diameter; where
    several walls share it, nothing is chosen and the candidates are returned."""
    label = size_label(value)
    if label in material.sizes:
        return label, []
    m = _OD.match(str(value))
    if m is None:
        return None, []
    outside = float(m.group(1)) / 1000.0
    same = [k for k, (od, _) in material.sizes.items() if "x" in k and abs(od - outside) < 1e-7]
    if len(same) == 1:
        return same[0], []
    return None, sorted(same, key=lambda k: material.sizes[k][1])


def read_material(reader: Reader, entry: dict[str, Any], path: JsonPath) -> Material | None:
    q = reader.quantity
    modulus = q(entry, path, "modulus", "pressure", positive=True)
    roughness = q(entry, path, "roughness", "diameter", nonnegative=True)
    ratings = _table(reader, entry, path, "pressure_rating", "pressure")
    moduli = _table(reader, entry, path, "modulus_vs_temperature", "modulus")
    sizes: dict[str, tuple[float, float]] = {}
    size_ratings: dict[str, tuple[tuple[float, float], ...]] = {}
    size_moduli: dict[str, float] = {}
    ok = True
    for label, dims in entry.get("sizes", {}).items():
        spath = (*path, "sizes", label)
        od = q(dims, spath, "outside_diameter", "diameter", positive=True)
        wall = q(dims, spath, "wall", "diameter", positive=True)
        if od is None or wall is None:
            ok = False
            continue
        if size_label(label) in sizes:
            reader.problems.add(
                reader.doc.where(spath),
                f"size {label} is the same size as {size_label(label)} above",
                "give each size once",
            )
            ok = False
            continue
        if 2 * wall >= od:
            reader.problems.add(reader.doc.where(spath), f"size {label}: the wall leaves no bore")
            ok = False
            continue
        sizes[size_label(label)] = (od, wall)
        if "modulus" in dims:
            own_modulus = q(dims, spath, "modulus", "pressure", positive=True)
            if own_modulus is None:
                ok = False
            else:
                size_moduli[size_label(label)] = own_modulus
        if "pressure_rating" in dims:
            own = _table(reader, dims, spath, "pressure_rating", "pressure")
            if own is None:
                ok = False
            else:
                size_ratings[size_label(label)] = own
    if modulus is None or roughness is None or ratings is None or moduli is None or not ok:
        return None
    return Material(
        id=entry["id"],
        name=entry.get("name", entry["id"]),
        family=entry.get("family", "other"),
        modulus=modulus,
        poisson=float(entry["poisson"]),
        roughness=roughness,
        pressure_rating=ratings,
        sizes=sizes,
        source=entry["source"],
        modulus_vs_temperature=moduli,
        size_ratings=size_ratings,
        size_moduli=size_moduli,
        standard=str(entry.get("standard", "")),
    )


def _table(
    reader: Reader, entry: dict[str, Any], path: JsonPath, key: str, kind: str
) -> tuple[tuple[float, float], ...] | None:
    rows = []
    value_key = "pressure" if kind == "pressure" else "modulus"
    for i, row in enumerate(entry.get(key, [])):
        rpath = (*path, key, i)
        t = reader.quantity(row, rpath, "temperature", "temperature")
        v = reader.quantity(row, rpath, value_key, "pressure", positive=True)
        if t is None or v is None:
            return None
        rows.append((t, v))
    if any(b[0] <= a[0] for a, b in zip(rows, rows[1:], strict=False)):
        reader.problems.add(
            reader.doc.where((*path, key)), f"'{key}' rows must rise in temperature"
        )
        return None
    return tuple(rows)


def read_fixture_type(reader: Reader, entry: dict[str, Any], path: JsonPath) -> FixtureType | None:
    q = reader.quantity
    flow = q(entry, path, "flow", "flow", positive=True, bound="fixture-flow")
    min_pressure = q(
        entry, path, "min_pressure", "pressure", nonnegative=True, bound="fixture-pressure"
    )
    valve = entry.get("valve", {})
    closure = q(valve, (*path, "valve"), "closure_time", "time", 1.0, bound="closure-time")
    if flow is None or min_pressure is None or closure is None:
        return None
    profiles: dict[str, ProfileFixture] = {}
    for profile_id, block in entry.get("profiles", {}).items():
        ppath = (*path, "profiles", profile_id)
        pflow = q(block, ppath, "flow", "flow", flow, bound="fixture-flow", positive=True)
        ppressure = q(
            block,
            ppath,
            "min_pressure",
            "pressure",
            min_pressure,
            bound="fixture-pressure",
            nonnegative=True,
        )
        if pflow is None or ppressure is None:
            return None
        profiles[profile_id] = ProfileFixture(
            wsfu_from(block["loading_units"]),
            pflow,
            ppressure,
            str(block.get("source", entry["source"])),
        )
    wsfu = entry["wsfu"]
    private = wsfu.get("private", wsfu)
    public = wsfu.get("public", private)
    sides = tuple(entry.get("sides", ("cold", "hot")))
    return FixtureType(
        id=entry["id"],
        name=entry.get("name", entry["id"]),
        wsfu_private=wsfu_from(private),
        wsfu_public=wsfu_from(public),
        flow=flow,
        min_pressure=min_pressure,
        sides=sides,
        flushometer=bool(entry.get("flushometer", False)),
        closing=valve.get("closing", "slow"),
        closure_time=closure,
        source=entry["source"],
        profiles=profiles,
    )


def wsfu_from(values: dict[str, float]) -> Wsfu:
    """Fixture units from a ``{cold, hot, total}`` mapping. A missing ``total`` is taken as
    cold + hot: the IPC totals are smaller than that sum, so this errs high [D]."""
    cold = float(values.get("cold", 0.0))
    hot = float(values.get("hot", 0.0))
    return Wsfu(cold, hot, float(values.get("total", cold + hot)))


Entry = TypeVar("Entry", Material, FixtureType)


def _read_entries(
    reader: Reader,
    key: str,
    read: Callable[[Reader, dict[str, Any], JsonPath], Entry | None],
    builtin: dict[str, Entry] | None = None,
) -> dict[str, Entry]:
    """Read the ``key`` list of ``reader.doc`` by id. With ``builtin`` given (project-local
    entries), an id that clashes with a built-in one needs ``replaces: true``."""
    doc = reader.doc
    found: dict[str, Entry] = {}
    for i, entry in enumerate(doc.data.get(key, [])):
        path: JsonPath = (key, i)
        if builtin is not None and entry["id"] in builtin and not entry.get("replaces", False):
            reader.problems.add(
                doc.where((*path, "id")),
                f"'{entry['id']}' is a built-in {key[:-1].replace('_', ' ')} id",
                "choose another id, or add 'replaces: true' to replace the built-in entry",
            )
            continue
        item = read(reader, entry, path)
        if item is not None:
            found[item.id] = item
    return found


#: the modules whose code decides what the built-in catalog holds (a change to any of them
#: makes a new cache file)
CATALOG_CODE = (
    "rulecheck.input.catalog",
    "rulecheck.input.model",
    "rulecheck.input.reader",
    "rulecheck.input.loader",
    "rulecheck.input.plausible",
    "rulecheck.units",
    "rulecheck.unit_table",
    "rulecheck.errors",
)


def _builtin_file(filename: str, text: str) -> Reader:
    doc = parse_text(text, f"rules/{filename}")
    return Reader(doc, "si", ProblemCollector(doc.path))


def read_builtin_catalog(materials_text: str, types_text: str) -> Catalog:
    """The catalog the shipped files' texts give (a defect in them is a packaging error,
    not user input)."""
    materials_file = _builtin_file(MATERIALS_FILE, materials_text)
    types_file = _builtin_file(FIXTURE_TYPES_FILE, types_text)
    materials = _read_entries(materials_file, "materials", read_material)
    fixture_types = _read_entries(types_file, "fixture_types", read_fixture_type)
    for reader in (materials_file, types_file):
        try:
            reader.problems.raise_if_any()
        except InputError as exc:
            raise RuntimeError(f"built-in catalog is broken: {exc}") from None
    return Catalog(materials, fixture_types)


@cache
def builtin_catalog() -> Catalog:
    """The catalog shipped in ``rules/``, from the per-user cache (:mod:`rulecheck.cache`)
    when it holds one built from the same files by the same code."""
    folder = data_dir("rules")
    blobs = [(folder / name).read_bytes() for name in CATALOG_FILES]
    return cached(
        "catalog",
        [*blobs, YAML_TAG],
        CATALOG_CODE,
        lambda: read_builtin_catalog(
            *((folder / name).read_text(encoding="utf-8") for name in CATALOG_FILES)
        ),
    )


def project_catalog(doc: Document, system: str, problems: ProblemCollector) -> Catalog:
    """Built-in catalog plus the layout's own ``materials`` and ``fixture_types``."""
    base = builtin_catalog()
    reader = Reader(doc, system, problems)
    materials = {
        **base.materials,
        **_read_entries(reader, "materials", read_material, base.materials),
    }
    fixture_types = {
        **base.fixture_types,
        **_read_entries(reader, "fixture_types", read_fixture_type, base.fixture_types),
    }
    return Catalog(materials, fixture_types)
