"""``rulecheck catalog [WHAT]``: the materials, a material's size table, the fixture types.

``catalog`` (or ``catalog materials``) lists the materials; ``catalog MATERIAL`` its size
table (outside diameter, wall, inside diameter, rating); ``catalog fixtures`` the fixture
types with their fixture units under the profile (WSFU, or LU for en806), flow, minimum
flow pressure and valve default. Every row carries the source tags of its entry. With
``--layout FILE`` the layout's own entries appear beside the built-in ones (origin
``project``). ``--format json`` gives the same rows, in SI, with the full source text.
"""

from __future__ import annotations

import argparse
import json
import re
import sys
from typing import TYPE_CHECKING, Any

from rulecheck.cli.common import UsageError
from rulecheck.errors import EXIT_OK
from rulecheck.input.catalog import Catalog, builtin_catalog
from rulecheck.input.model import FixtureType, Material
from rulecheck.input.profiles import default_profile_id, get_profile, profile_ids
from rulecheck.suggest import suggest
from rulecheck.units import fmt

if TYPE_CHECKING:  # rich is imported only when text is written
    from rich.console import Console

_TAG = re.compile(r"\[(S(?::[^\]]*)?|M|CP|D)\]")


def tags(source: str) -> str:
    """The distinct source tags of a source text, in the engineering basis's order."""
    found = {m.group(1).split(":")[0] for m in _TAG.finditer(source)}
    if "from memory" in source:
        found.add("M")
    return "".join(f"[{t}]" for t in ("S", "M", "CP", "D") if t in found) or "-"


def add_parser(sub: argparse._SubParsersAction) -> None:
    cat = sub.add_parser(
        "catalog",
        help="list the materials, a material's sizes, or the fixture types",
        description="WHAT: 'materials' (default), a material id, or 'fixtures'.",
    )
    cat.add_argument("what", nargs="?", default="materials", metavar="WHAT")
    cat.add_argument("--layout", metavar="FILE", help="add this layout's own catalog entries")
    cat.add_argument("--profile", choices=profile_ids(), help="fixture units of this profile")
    cat.add_argument(
        "--units", choices=("si", "us"), help="units shown (default: the layout's, else si)"
    )
    cat.add_argument("--format", choices=("text", "json"), default="text")


def run(args: argparse.Namespace, console: Console) -> int:
    catalog, system = builtin_catalog(), "si"
    if args.layout:
        from rulecheck.input import load_catalog

        catalog, system = load_catalog(args.layout)
    units = args.units or system
    builtin = builtin_catalog()
    if args.what == "materials":
        title, rows = "materials", material_rows(catalog, builtin, units)
    elif args.what == "fixtures":
        profile = args.profile or default_profile_id()
        title = f"fixture types, profile {profile}"
        rows = fixture_rows(catalog, builtin, profile, units)
    elif args.what in catalog.materials:
        material = catalog.materials[args.what]
        title = f"{material.id}: {material.name}"
        rows = size_rows(material, units)
    else:
        hint = suggest(args.what, ["materials", "fixtures", *catalog.materials], "the catalog")
        raise UsageError(f"rulecheck catalog: no material or list '{args.what}'; {hint}")
    if args.format == "json":
        document = {"version": 1, "list": args.what, "units": "SI", "rows": [_si(r) for r in rows]}
        sys.stdout.write(json.dumps(document, indent=1, ensure_ascii=False) + "\n")
    else:
        sys.stdout.write(render(title, rows, units))
    return EXIT_OK


def _origin(entry_id: str, entry: object, builtin: dict[str, Any]) -> str:
    if entry_id not in builtin:
        return "project"
    return "built-in" if builtin[entry_id] is entry else "project (replaces)"


def material_rows(catalog: Catalog, builtin: Catalog, units: str) -> list[dict[str, Any]]:
    rows = []
    for mid, m in sorted(catalog.materials.items()):
        ods = sorted(od for od, _ in m.sizes.values())
        temps = [t for t, _ in m.pressure_rating]
        rows.append(
            {
                "id": mid,
                "standard": m.standard or "-",
                "origin": _origin(mid, m, builtin.materials),
                "sizes": len(m.sizes),
                "smallest": (ods[0], "diameter"),
                "largest": (ods[-1], "diameter"),
                "rated_from": (temps[0], "temperature"),
                "rated_to": (temps[-1], "temperature"),
                "tags": tags(m.source),
                "source": " ".join(m.source.split()),
            }
        )
    return rows


def size_rows(m: Material, units: str) -> list[dict[str, Any]]:
    low, high = m.pressure_rating[0][0], m.pressure_rating[-1][0]
    tag = tags(m.source)
    rows = []
    for label, (od, wall) in sorted(m.sizes.items(), key=lambda kv: (kv[1][0], kv[1][1])):
        rows.append(
            {
                "size": label,
                "outside_diameter": (od, "diameter"),
                "wall": (wall, "diameter"),
                "inside_diameter": (od - 2 * wall, "diameter"),
                f"rating at {fmt(low, 'temperature', units)}": (
                    m.rating_at(low, label),
                    "pressure",
                ),
                f"rating at {fmt(high, 'temperature', units)}": (
                    m.rating_at(high, label),
                    "pressure",
                ),
                "wall_modulus": (m.modulus_at(293.15, label), "modulus")
                if label in m.size_moduli
                else "-",
                "tags": tag,
            }
        )
    return rows


def _units_of(t: FixtureType, profile: str) -> tuple[str, Any, float, float, str]:
    """(unit name, {cold, hot, total}, flow, min pressure, source) under ``profile``."""
    overlay = t.profiles.get(profile)
    if get_profile(profile).fixture_unit == "LU":
        if overlay is None:
            return "LU", None, t.flow, t.min_pressure, t.source
        return "LU", overlay.units, overlay.flow, overlay.min_pressure, overlay.source
    return "WSFU", t.wsfu_private, t.flow, t.min_pressure, t.source


def fixture_rows(
    catalog: Catalog, builtin: Catalog, profile: str, units: str
) -> list[dict[str, Any]]:
    rows = []
    for tid, t in sorted(catalog.fixture_types.items()):
        unit, values, flow, pressure, source = _units_of(t, profile)
        shown = "none" if values is None else f"{values.cold:g}/{values.hot:g}/{values.total:g}"
        rows.append(
            {
                "id": tid,
                "origin": _origin(tid, t, builtin.fixture_types),
                f"{unit} cold/hot/total" + (" (private)" if unit == "WSFU" else ""): shown,
                "flow": (flow, "flow"),
                "min_pressure": (pressure, "pressure"),
                "valve": t.closing,
                "closure_time": (t.closure_time, "time"),
                "tags": tags(source),
                "source": " ".join(source.split()),
            }
        )
    return rows


def _si(row: dict[str, Any]) -> dict[str, Any]:
    """A row for JSON: quantities as SI numbers (m, Pa, K, m³/s, s), six significant figures."""
    return {k: float(f"{v[0]:.6g}") if isinstance(v, tuple) else v for k, v in row.items()}


def _text(value: Any, units: str) -> str:
    if not isinstance(value, tuple):
        return str(value)
    if value[1] == "modulus":  # wall moduli read best in GPa in either system
        return f"{value[0] / 1e9:.3g} GPa"
    return fmt(value[0], value[1], units)


def render(title: str, rows: list[dict[str, Any]], units: str) -> str:
    """A plain fixed-width table (the full source texts are in ``--format json``)."""
    if not rows:
        return f"{title}: nothing\n"
    keys = [k for k in rows[0] if k != "source"]
    cells = [[_text(r[k], units) for k in keys] for r in rows]
    widths = [max(len(k), *(len(c[i]) for c in cells)) for i, k in enumerate(keys)]
    lines = [title, ""]
    lines.append("  ".join(k.ljust(w) for k, w in zip(keys, widths, strict=True)).rstrip())
    for c in cells:
        lines.append("  ".join(v.ljust(w) for v, w in zip(c, widths, strict=True)).rstrip())
    return "\n".join(lines) + "\n"
