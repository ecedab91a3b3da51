"""Turn a schema-valid document into a :class:`~rulecheck.model.Layout` in SI units.

Resolves catalog references (materials, sizes, fixture types), applies the
project's defaults and overrides, and checks that ids are unique and that
every reference names something that exists. All problems of a file are
collected and raised together.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

from rulecheck.errors import ProblemCollector
from rulecheck.input.catalog import (
    Catalog,
    project_catalog,
    resolve_size,
    size_label,
    wsfu_from,
)
from rulecheck.input.loader import Document
from rulecheck.input.model import (
    Arrester,
    Device,
    Fixture,
    Heater,
    Layout,
    Pipe,
    Point,
    Supply,
    Waiver,
    Wsfu,
)
from rulecheck.input.profiles import arrester_classes, default_profile_id, get_profile, profile_ids
from rulecheck.input.reader import Reader
from rulecheck.resources import data_dir
from rulecheck.suggest import suggest

_ELEMENT_KINDS = ("supplies", "heaters", "points", "pipes", "fixtures", "arresters", "devices")


def _catalog_file(name: str) -> str:
    """Where a shipped list of names is, for hints."""
    return str(data_dir("rules") / name)


class _Builder:
    def __init__(self, doc: Document, known_rules: set[str], profile_override: str | None) -> None:
        self.doc = doc
        self.data: dict[str, Any] = doc.data
        self.problems = ProblemCollector(doc.path)
        project = self.data["project"]
        self.system = project.get("units", "si")
        self.reader = Reader(doc, self.system, self.problems)
        self.known_rules = known_rules
        self.profile_id = profile_override or project.get("profile") or default_profile_id()
        if self.profile_id not in profile_ids():
            self.problems.add(
                doc.where(("project", "profile")),
                f"unknown profile '{self.profile_id}'",
                suggest(str(self.profile_id), profile_ids(), _catalog_file("profiles.yaml")),
            )
            self.profile_id = default_profile_id()
        self.profile = get_profile(self.profile_id)
        self.catalog: Catalog = project_catalog(doc, self.system, self.problems)
        self.ids: dict[str, tuple[str, tuple[str | int, ...]]] = {}
        self.unpressured: list[tuple[Supply, tuple, str]] = []  # supplies at 0 gauge

    def q(
        self,
        node: dict[str, Any],
        path: tuple,
        key: str,
        kind: str,
        default: float | None = None,
        bound: str | None = None,
        **limits: bool,
    ) -> float:
        value = self.reader.quantity(node, path, key, kind, default, bound=bound, **limits)
        return 0.0 if value is None else value

    def items(self, key: str) -> Iterable[tuple[tuple[str, int], dict[str, Any]]]:
        for i, item in enumerate(self.data.get(key, [])):
            yield (key, i), item

    def register_ids(self) -> None:
        for kind in _ELEMENT_KINDS:
            for path, item in self.items(kind):
                ident = item["id"]
                if ident in self.ids:
                    first = self.doc.where(self.ids[ident][1])
                    self.problems.add(
                        self.doc.where((*path, "id")),
                        f"id '{ident}' is used twice (first at line {first.line})",
                        "every id must be unique across the whole file",
                    )
                else:
                    self.ids[ident] = (kind, path)

    def ref(self, path: tuple, key: str, node: dict[str, Any], kinds: tuple[str, ...]) -> str:
        """Check that ``node[key]`` names an element of one of ``kinds``."""
        target = node[key]
        found = self.ids.get(target)
        if found is None or found[0] not in kinds:
            what = " or ".join(k[:-1] if k != "supplies" else "supply" for k in kinds)
            have = [i for i, (k, _) in self.ids.items() if k in kinds]
            self.problems.add(
                self.doc.where((*path, key)),
                f"'{key}: {target}' names no {what} in this file",
                suggest(str(target), have, f"the {what} ids in this file"),
            )
        return str(target)

    def build(self) -> Layout:
        self.register_ids()
        project, water = self.data["project"], self.data.get("water", {})
        cold = self.temperature(water, "cold_temperature", 288.15)
        hot = self.temperature(water, "hot_temperature", 333.15)
        supplies = [self.supply(p, s) for p, s in self.items("supplies")]
        points = [
            Point(i["id"], self.q(i, p, "elevation", "length", 0.0, "elevation"), self.doc.where(p))
            for p, i in self.items("points")
        ]
        self.check_supplies_push(points)
        heaters = [self.heater(p, h) for p, h in self.items("heaters")]
        pipes = [pipe for p, i in self.items("pipes") if (pipe := self.pipe(p, i))]
        fixtures = [f for p, i in self.items("fixtures") if (f := self.fixture(p, i))]
        arresters = [self.arrester(p, a) for p, a in self.items("arresters")]
        devices = [self.device(p, d) for p, d in self.items("devices")]
        waivers = [self.waiver(p, w) for p, w in self.items("waivers")]
        self.problems.raise_if_any()
        # Without problems every id is unique and every element built, each with the position
        # of its path: the same table as {id: where(path)}, in the same order, made once.
        kinds: list[list[Any]] = [supplies, heaters, points, pipes, fixtures, arresters, devices]
        return Layout(
            path=self.doc.path,
            name=project["name"],
            units=self.system,
            profile=self.profile_id,
            cold_temperature=cold,
            hot_temperature=hot,
            demand_curve=project.get("demand_curve", "auto"),
            supplies=supplies,
            heaters=heaters,
            points=points,
            pipes=pipes,
            fixtures=fixtures,
            arresters=arresters,
            devices=devices,
            waivers=waivers,
            positions={e.id: e.pos for kind in kinds for e in kind},
        )

    def temperature(self, water: dict[str, Any], key: str, default: float) -> float:
        value = self.reader.quantity(
            water, ("water",), key, "temperature", default, bound="water-temperature"
        )
        return default if value is None else value

    def supply(self, path: tuple, item: dict[str, Any]) -> Supply:
        pressure = item["pressure"]
        problems_before = len(self.problems.problems) + self.problems.omitted
        if isinstance(pressure, dict):
            pp = (*path, "pressure")
            low = self.q(pressure, pp, "min", "pressure", bound="supply-pressure", nonnegative=True)
            high = self.q(
                pressure, pp, "max", "pressure", bound="supply-pressure", nonnegative=True
            )
            if low > high:
                self.problems.add(
                    self.doc.where(pp), "supply pressure 'min' is above 'max'", "swap them"
                )
        else:
            low = high = self.q(
                item, path, "pressure", "pressure", bound="supply-pressure", nonnegative=True
            )
        supply = Supply(
            item["id"],
            low,
            high,
            self.q(item, path, "elevation", "length", 0.0, "elevation"),
            self.doc.where(path),
        )
        if high <= 0 and len(self.problems.problems) + self.problems.omitted == problems_before:
            top = isinstance(pressure, dict) and "max" in pressure
            where = (*path, "pressure", "max") if top else (*path, "pressure")
            shown = pressure["max"] if top else pressure
            self.unpressured.append((supply, where, f"max static {shown}"))
        return supply

    def check_supplies_push(self, points: list[Point]) -> None:
        """Refuse a supply at no pressure above atmospheric that stands below every point.

        A supply at 0 gauge is legal: the free surface of a roof tank feeds the floors
        below it by elevation alone. But when no point lies below it, the static pressure
        p = p_s - rho*g*(z - z_s) is nowhere above zero and nothing flows [physical].
        """
        lowest = min((p.elevation for p in points), default=math.inf)
        for supply, where, shown in self.unpressured:
            if lowest < supply.elevation:
                continue
            self.problems.add(
                self.doc.where(where),
                f"supply {supply.id} has no pressure above atmospheric ({shown}) and no "
                "point lies below it, so no water flows anywhere",
                "give the static pressure at the supply (e.g. 'pressure: {min: 55 psi, "
                "max: 72 psi}'); 0 psi suits only a tank above the points it feeds",
            )

    def heater(self, path: tuple, item: dict[str, Any]) -> Heater:
        inlet = self.ref(path, "inlet", item, ("points",))
        outlet = self.ref(path, "outlet", item, ("points",))
        loss = self.q(item, path, "loss", "pressure", 0.0, "pressure-loss", nonnegative=True)
        return Heater(item["id"], inlet, outlet, loss, self.doc.where(path))

    def pipe(self, path: tuple, item: dict[str, Any]) -> Pipe | None:
        start = self.ref(path, "from", item, ("supplies", "points"))
        if self.ids.get(item["to"], ("", ()))[0] == "supplies":  # drawn against the flow
            self.problems.add(
                self.doc.where((*path, "to")),
                f"pipe {item['id']} runs into supply {item['to']}, where water enters",
                f"'from' is the upstream end: write {item['id']} as "
                f"'from: {item['to']}, to: {item['from']}'",
            )
            end = str(item["to"])
        else:
            end = self.ref(path, "to", item, ("points",))
        length = self.q(item, path, "length", "length", bound="pipe-length", positive=True)
        material = self.catalog.materials.get(item["material"])
        if material is None:
            self.problems.add(
                self.doc.where((*path, "material")),
                f"unknown material '{item['material']}'",
                suggest(
                    str(item["material"]),
                    self.catalog.materials,
                    "`rulecheck catalog`, "
                    + _catalog_file("materials.yaml")
                    + " and this file's materials:",
                    {k: m.name for k, m in self.catalog.materials.items()},
                ),
            )
            return None
        found, walls = resolve_size(material, item["size"])
        if found is None:
            label = size_label(item["size"])
            if walls:
                hint = (
                    f"{material.id} has several walls at this outside diameter: write one of "
                    + ", ".join(walls)
                )
            else:
                hint = suggest(
                    label,
                    material.sizes,
                    f"the {material.id} size table (`rulecheck catalog {material.id}`)",
                    what="sizes",
                )
            self.problems.add(
                self.doc.where((*path, "size")),
                f"size '{label}' is not in the {material.id} table",
                hint,
            )
            return None
        label = found
        fittings = item.get("fittings", self.profile.fittings_allowance)
        if isinstance(fittings, (int, float)) and not isinstance(fittings, bool):
            fittings_length = float(fittings) * length
        else:
            fittings_length = self.q(
                item, path, "fittings", "length", bound="fittings-length", nonnegative=True
            )
        demand = self.reader.quantity(
            item, path, "demand", "flow", None, bound="demand", nonnegative=True
        )
        od, wall = material.sizes[label]
        return Pipe(
            item["id"],
            start,
            end,
            material,
            label,
            od,
            wall,
            length,
            fittings_length,
            item["service"],
            item.get("anchoring", "throughout"),
            demand,
            self.doc.where(path),
            item.get("keep_size") is True,
        )

    def fixture(self, path: tuple, item: dict[str, Any]) -> Fixture | None:
        cold = self.ref(path, "cold", item, ("points",)) if "cold" in item else None
        hot = self.ref(path, "hot", item, ("points",)) if "hot" in item else None
        ftype = self.catalog.fixture_types.get(item["type"])
        if ftype is None:
            self.problems.add(
                self.doc.where((*path, "type")),
                f"unknown fixture type '{item['type']}'",
                suggest(
                    str(item["type"]),
                    self.catalog.fixture_types,
                    "`rulecheck catalog fixtures`, "
                    + _catalog_file("fixture-types.yaml")
                    + " and this file's fixture_types:",
                    {k: t.name for k, t in self.catalog.fixture_types.items()},
                ),
            )
            return None
        occupancy = item.get("occupancy", "private")
        base = ftype.wsfu_public if occupancy == "public" else ftype.wsfu_private
        wsfu = _wsfu_override(item.get("wsfu"), base)
        flow_default, pressure_default = ftype.flow, ftype.min_pressure
        demand_units: Wsfu | None = None
        if self.profile.demand_method == "loading-units":
            overlay = ftype.profiles.get(self.profile_id)
            if overlay is None:
                self.problems.add(
                    self.doc.where((*path, "type")),
                    f"fixture type '{ftype.id}' has no loading units for profile "
                    f"'{self.profile_id}'",
                    f"add 'profiles: {{{self.profile_id}: {{loading_units: {{cold: 1, hot: 1, "
                    "total: 1}, flow: 0.1 L/s, min_pressure: 100 kPa}}' to the fixture type, "
                    "or give this fixture 'loading_units'",
                )
                if "loading_units" not in item:
                    return None
            else:
                flow_default, pressure_default = overlay.flow, overlay.min_pressure
            demand_units = _wsfu_override(
                item.get("loading_units"), overlay.units if overlay else Wsfu(0.0, 0.0, 0.0)
            )
        valve = item.get("valve", {})
        vpath = (*path, "valve")
        return Fixture(
            id=item["id"],
            type=ftype,
            cold=cold,
            hot=hot,
            occupancy=occupancy,
            wsfu=wsfu,
            flow=self.q(item, path, "flow", "flow", flow_default, "fixture-flow", positive=True),
            min_pressure=self.q(
                item,
                path,
                "min_pressure",
                "pressure",
                pressure_default,
                "fixture-pressure",
                nonnegative=True,
            ),
            closing=valve.get("closing", ftype.closing),
            closure_time=self.q(
                valve,
                vpath,
                "closure_time",
                "time",
                ftype.closure_time,
                "closure-time",
                nonnegative=True,
            ),
            continuous=bool(item.get("continuous", False)),
            pos=self.doc.where(path),
            demand_units=demand_units,
        )

    def arrester(self, path: tuple, item: dict[str, Any]) -> Arrester:
        at = self.ref(path, "at", item, ("points",))
        rating = item["rating"]
        if isinstance(rating, str):
            rating_class: str | None = rating
            capacity = arrester_classes()[rating].max_wsfu
        else:
            rating_class, capacity = None, float(rating)
        return Arrester(
            item["id"],
            at,
            rating_class,
            capacity,
            item.get("kind", "sealed"),
            self.reader.quantity(
                item, path, "gas_volume", "volume", None, bound="gas-volume", positive=True
            ),
            self.reader.quantity(
                item,
                path,
                "precharge",
                "pressure",
                None,
                bound="fixture-pressure",
                nonnegative=True,
            ),
            self.doc.where(path),
        )

    def device(self, path: tuple, item: dict[str, Any]) -> Device:
        on = self.ref(path, "on", item, ("pipes",))
        set_pressure = self.reader.quantity(
            item, path, "set_pressure", "pressure", None, bound="set-pressure", nonnegative=True
        )
        if item["kind"] == "pressure-reducing" and "set_pressure" not in item:
            self.problems.add(
                self.doc.where(path),
                "a pressure-reducing device needs 'set_pressure'",
                "add e.g. 'set_pressure: 60 psi'",
            )
        loss = self.q(item, path, "loss", "pressure", 0.0, "pressure-loss", nonnegative=True)
        return Device(item["id"], item["kind"], on, set_pressure, loss, self.doc.where(path))

    def waiver(self, path: tuple, item: dict[str, Any]) -> Waiver:
        if item["rule"] not in self.known_rules:
            self.problems.add(
                self.doc.where((*path, "rule")),
                f"unknown rule '{item['rule']}'",
                suggest(str(item["rule"]), self.known_rules, "`rulecheck rules`"),
            )
        if item["element"] not in self.ids:
            self.problems.add(
                self.doc.where((*path, "element")),
                f"'element: {item['element']}' names nothing in this file",
                "name the id of a pipe, point, fixture or other element",
            )
        return Waiver(item["rule"], item["element"], item["reason"].strip(), self.doc.where(path))


def _wsfu_override(value: Any, base: Wsfu) -> Wsfu:
    """A fixture's own ``wsfu``: a number scales the type's split; a mapping replaces it."""
    if value is None:
        return base
    if isinstance(value, dict):
        return wsfu_from(value)
    total = float(value)
    if base.total > 0:  # keep the type's cold/hot proportions [D]
        return Wsfu(base.cold * total / base.total, base.hot * total / base.total, total)
    return Wsfu(total, total, total)


def build_layout(doc: Document, known_rules: set[str], profile: str | None = None) -> Layout:
    """Build the typed layout, raising :class:`~rulecheck.errors.InputError` on any problem."""
    return _Builder(doc, known_rules, profile).build()
