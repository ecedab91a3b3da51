"""Generate ``docs/layout-format.md`` from the layout schema and the built-in catalog.

Every key of ``schemas/layout.schema.json`` with its meaning, type, units and default (the
schema's own descriptions), the quantity units, how sizes are written, the profiles with
their parameters and sources, and the built-in materials and fixture types, with an
example layout that ``tests/test_docs.py`` checks. The tests fail when the file in the
repository differs from what this script writes.

Usage: ``python scripts/make_layout_doc.py [--check] [OUTPUT]`` (default output:
``docs/layout-format.md``; ``--check`` writes nothing and exits 1 when the file is stale).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from rulecheck.input.catalog import builtin_catalog  # noqa: E402
from rulecheck.input.profiles import get_profile, parameters, profile_ids  # noqa: E402
from rulecheck.report import CAUTION  # noqa: E402
from rulecheck.units import fmt, unit_label  # noqa: E402

DEFAULT_OUTPUT = ROOT / "docs" / "layout-format.md"
SCHEMA = ROOT / "schemas" / "layout.schema.json"

#: the example the document opens with (an invented scenario; tests/test_docs.py checks it)
EXAMPLE = """\
# yaml-language-server: $schema=../schemas/layout.schema.json
version: 1
project:
  name: Example flat, one kitchen and one bath (invented)
  units: si
  profile: en806
water:
  cold_temperature: 12 degC
  hot_temperature: 60 degC
supplies:
  - id: S
    pressure: {min: 350 kPa, max: 450 kPa}   # static; one value = both
    elevation: 0 m
heaters:
  - {id: WH, inlet: C1, outlet: H0, loss: 10 kPa}
points:
  - {id: C1, elevation: 0 m}
  - {id: C2, elevation: 0.5 m}
  - {id: H0, elevation: 1.5 m}
  - {id: H1, elevation: 0.5 m}
pipes:
  - {id: P1, from: S, to: C1, material: copper-en1057, size: 22x1.0, length: 8 m, service: cold}
  - {id: P2, from: C1, to: C2, material: pex-en15875-s3.2, size: 25, length: 6 m, service: cold}
  - {id: P3, from: H0, to: H1, material: multilayer-pert-al, size: 20x2.0, length: 6 m,
     service: hot}
fixtures:
  - {id: KS, type: kitchen-sink, cold: C2, hot: H1}
  - {id: DW, type: dishwasher, cold: C2}
  - {id: LAV, type: lavatory, cold: C2, hot: H1, valve: {closing: slow, closure_time: 0.5 s}}
arresters:
  - {id: A1, at: C2, rating: A}
"""

KINDS = ("length", "diameter", "pressure", "flow", "velocity", "temperature", "time", "volume")


def _cell(text: str) -> str:
    return " ".join(str(text).replace("|", "\\|").split())


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    lines = ["| " + " | ".join(headers) + " |", "|" + "---|" * len(headers)]
    lines += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in rows]
    return lines


def _type(node: dict[str, Any]) -> str:
    if "$ref" in node:
        return {"quantity": "quantity", "id": "id"}.get(node["$ref"].rsplit("/", 1)[-1], "?")
    if "enum" in node:
        return ", ".join(f"`{v}`" for v in node["enum"])
    if "const" in node:
        return f"`{node['const']}`"
    if "oneOf" in node:
        return " or ".join(_type(alt) for alt in node["oneOf"])
    kind = node.get("type", "any")
    if kind == "array":
        return f"list of {_type(node.get('items', {}))}"
    if (
        kind == "object"
        and "properties" not in node
        and isinstance(node.get("additionalProperties"), dict)
    ):
        return "mapping"
    return str(kind)


def _rows(node: dict[str, Any], path: str, required: bool, out: list[list[str]]) -> None:
    """One row per key below ``node``, depth first, in schema order."""
    if path and not (path.endswith("[]") and "description" not in node):
        out.append(
            [f"`{path}`", "yes" if required else "no", _type(node), node.get("description", "")]
        )
    if "properties" in node:
        needed = set(node.get("required", ()))
        for key, child in node["properties"].items():
            _rows(child, f"{path}.{key}" if path else key, key in needed, out)
    elif node.get("type") == "array" and "properties" in node.get("items", {}):
        _rows(node["items"], f"{path}[]", True, out)
    elif isinstance(node.get("additionalProperties"), dict):
        _rows(node["additionalProperties"], f"{path}.LABEL", True, out)


def key_sections(schema: dict[str, Any]) -> list[str]:
    out: list[str] = []
    needed = set(schema.get("required", ()))
    for key, node in schema["properties"].items():
        rows: list[list[str]] = []
        _rows(node, key, key in needed, rows)
        out += ["", f"### `{key}`", "", node.get("description", "").capitalize() + ".", ""]
        out += _table(["key", "required", "type", "meaning, units, default"], rows)
    return out


def units_section() -> list[str]:
    rows = [[k, unit_label(k, "si"), unit_label(k, "us")] for k in KINDS]
    return [
        "## Quantities",
        "",
        "A quantity is a bare number, read in the project's unit system, or a string of a "
        "number and a unit: `12 ft`, `3.6 m`, `450 kPa`, `65 psi`, `30 ms`, `0.2 L/s`, "
        "`13 degC`. Pressures are gauge. A unit of the wrong kind, a non-finite number or an "
        "unknown unit is an input error at its file, line and column; so is a value outside "
        "its plausible range (DEVELOPERS.md, 'Plausible values').",
        "",
        *_table(["quantity", "bare number in `si`", "bare number in `us`"], rows),
        "",
        "## Sizes",
        "",
        "A pipe's `size` is a label of its material's size table (`rulecheck catalog "
        "MATERIAL` lists it), written as the trade writes it:",
        "",
        "- inch nominal sizes: `1/2`, `3/4`, `1`, `1-1/4` (a bare `1.5` reads as `1-1/2`);",
        "- metric outside diameter x wall in mm: `22x1.0`, also `22 × 1.0`, `22x1`, `22 x 1.0 mm`;",
        "- steel by nominal diameter: `DN25` (also `dn25`, `DN 25`);",
        "- the outside diameter alone (`20`, `20 mm`) where the material has one wall at "
        "that diameter (the PE-X and PP-R series); where several walls share it (EN 1057 "
        "copper) the error lists them.",
    ]


def profiles_section() -> list[str]:
    out = [
        "## Profiles",
        "",
        "`project.profile` picks the rule profile: its shared parameters below, and the "
        "per-rule limits of docs/rules.md. Under a profile whose demand method is "
        "`loading-units` (en806) fixture units are EN 806-3 loading units (LU, 1 LU = "
        "0.1 L/s) and every fixture type needs values under `profiles: {en806: …}`.",
    ]
    names = list(parameters())
    for pid in profile_ids():
        profile = get_profile(pid)
        out += ["", f"### `{pid}`: {profile.title}", ""]
        out += _table(
            ["parameter", "value", "source"],
            [[n, str(profile.raw[n]), profile.sources[n]] for n in names],
        )
    return out


def catalog_section() -> list[str]:
    cat = builtin_catalog()
    out = [
        "## Built-in catalog",
        "",
        "`rulecheck catalog` lists the same with the source tags of every entry; "
        "`rulecheck catalog MATERIAL` gives a size table with bores and ratings; "
        "`--layout FILE` adds a layout's own entries.",
        "",
        "### Materials",
        "",
    ]
    rows = []
    for mid, m in sorted(cat.materials.items()):
        labels = sorted(m.sizes, key=lambda k: m.sizes[k])
        rows.append([f"`{mid}`", m.standard or "-", m.name, ", ".join(labels)])
    out += _table(["id", "standard", "name", "sizes"], rows)
    out += ["", "### Fixture types", ""]
    rows = []
    for tid, t in sorted(cat.fixture_types.items()):
        w = t.wsfu_private
        lu = t.profiles.get("en806")
        rows.append(
            [
                f"`{tid}`",
                t.name,
                f"{w.cold:g}/{w.hot:g}/{w.total:g}",
                f"{lu.units.total:g}" if lu else "-",
                f"{fmt(t.flow, 'flow', 'us')} ({fmt(t.flow, 'flow', 'si')})",
                f"{t.closing}, {fmt(t.closure_time, 'time', 'si')}",
            ]
        )
    out += _table(
        ["id", "name", "WSFU private cold/hot/total", "LU (en806)", "flow", "valve"], rows
    )
    return out


def render() -> str:
    """The whole text of ``docs/layout-format.md``."""
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    out = [
        "# Layout format, version 1",
        "",
        "<!-- Generated by scripts/make_layout_doc.py from schemas/layout.schema.json and "
        "the built-in catalog in rules/. Do not edit by hand: run "
        "`python scripts/make_layout_doc.py`. -->",
        "",
        f"> {CAUTION}",
        "",
        "A layout is a YAML file describing a building's water supply: where water enters, "
        "the pipes and points, the fixtures, heaters, arresters and devices. "
        "`schemas/layout.schema.json` is its machine form (`rulecheck schema` prints where "
        "it is installed); every id is unique across the file and matches "
        "`^[A-Za-z][A-Za-z0-9_.-]*$`.",
        "",
        "## An example (an invented scenario)",
        "",
        "```yaml",
        EXAMPLE.rstrip("\n"),
        "```",
        "",
        *units_section(),
        "",
        "## Keys",
        *key_sections(schema),
        "",
        *profiles_section(),
        "",
        *catalog_section(),
    ]
    return "\n".join(out) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("output", nargs="?", type=Path, default=DEFAULT_OUTPUT)
    parser.add_argument("--check", action="store_true", help="exit 1 if the file is stale")
    args = parser.parse_args(argv)
    text = render()
    if args.check:
        current = args.output.read_text(encoding="utf-8") if args.output.exists() else None
        if current != text:
            print(f"{args.output} is stale: run python scripts/make_layout_doc.py")
            return 1
        return 0
    args.output.write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
