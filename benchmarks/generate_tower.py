"""Generate a large invented layout: Larchmont Tower, for timing ``rulecheck check``.

The tower is invented (so is its engineer, Quarry Hill Mechanical). Floors are
split into pressure zones; each floor is split into wings of suites. Every
(zone, wing) pair is one riser system:

    booster takeoff (supply) ─ meter + PRV ─ base tee ─ cold riser ─ floor headers ─ stubs
                                               └─ water heater ─ hot riser ─ floor headers ─ stubs

A suite holds up to six fixtures (kitchen sink, dishwasher, lavatory, tank
water closet, shower, clothes washer); a floor with M fixtures holds
ceil(M / 6) suites, the last one partly filled. Sealed class-AA arresters sit
at the connection points of the solenoid appliances (dishwasher, washer), and a
class-A one on each suite branch (cold and hot) for the single-lever faucets,
within the 20 ft placement distance of every stub.

Pipe sizes are chosen from the fixture units each pipe serves: Hunter's curve
(:func:`rulecheck.physics.demand.demand_flow`) gives the design flow, and the
smallest catalog size that keeps the velocity under 80 % of the rule's limit is
taken [D]. Risers and the service pipe are copper type L; floor headers and
stubs are PEX (copper type L where PEX runs out of sizes).

Usage::

    python benchmarks/generate_tower.py --pipes 10000 -o benchmarks/out/tower-10000.yaml
    python benchmarks/generate_tower.py --floors 24 --fixtures 60 -o tower.yaml

The output depends only on the arguments (``--seed`` drives the small random
variations in run lengths), so the same command gives the same bytes.
"""

from __future__ import annotations

import argparse
import math
import random
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from rulecheck.input.catalog import builtin_catalog
from rulecheck.input.rulebook import rule_specs
from rulecheck.physics.demand import demand_flow
from rulecheck.units import to_si

PROFILE = "ipc"
HOT_TEMPERATURE_F = 130  # [CP] storage/delivery temperature of a residential tower
FLOOR_HEIGHT_FT = 10.5  # [CP] floor-to-floor height of a residential tower
TAKEOFF_FT = 9.0  # [CP] riser branch takeoff above the slab (in the ceiling space)
ZONE_FLOORS = 8  # [D] 8 x 10.5 ft = 84 ft = 36 psi of static head per pressure zone
SUITES_PER_WING = 4  # [D] keeps a riser system's demand within 3 in copper
SUPPLY_PSI = (75, 80)  # [CP] booster discharge band at each zone takeoff, at the 80 psi limit
PRV_SET_PSI = 72  # [D] steadies the zone a little under the 80 psi static limit
METER_LOSS_PSI = 3  # [CP] submeter loss at design flow
HEATER_LOSS_PSI = 2  # [CP] heater pressure drop at design flow
VELOCITY_SHARE = 0.8  # [D] size each pipe for 80 % of the velocity limit

# The suite's fixtures in the order they fill: (code, catalog type, sides, height [ft]).
SUITE = (
    ("KS", "kitchen-sink", ("cold", "hot"), 3.0),
    ("DW", "dishwasher", ("hot",), 1.5),
    ("LV", "lavatory", ("cold", "hot"), 2.5),
    ("WC", "water-closet-tank", ("cold",), 1.0),
    ("SH", "shower", ("cold", "hot"), 4.5),
    ("CW", "clothes-washer", ("cold", "hot"), 3.5),
)
SOLENOID = frozenset({"DW", "CW"})  # appliances closing in about 30 ms (catalog valve data)
MIN_SIZE = {"service": "1-1/4", "riser": "1", "header": "3/4", "stub": "1/2"}  # [CP]


@dataclass
class _Pipe:
    start: str
    end: str
    role: str  # service | riser | header | stub
    service: str  # cold | hot
    length_ft: float
    size: str = ""
    material: str = ""


@dataclass
class _Load:
    wsfu: float = 0.0
    count: int = 0
    largest: float = 0.0  # [m³/s]

    def add(self, other: _Load) -> None:
        self.wsfu += other.wsfu
        self.count += other.count
        self.largest = max(self.largest, other.largest)


@dataclass
class _Tower:
    floors: int
    fixtures: int
    points: list[str] = field(default_factory=list)
    supplies: list[str] = field(default_factory=list)
    heaters: list[str] = field(default_factory=list)
    pipes: list[_Pipe] = field(default_factory=list)
    fixture_lines: list[str] = field(default_factory=list)
    arresters: list[str] = field(default_factory=list)
    devices: list[str] = field(default_factory=list)


def suites_per_floor(fixtures: int) -> list[int]:
    """Fixture count of each suite on a floor of ``fixtures`` fixtures."""
    full, rest = divmod(fixtures, len(SUITE))
    return [len(SUITE)] * full + ([rest] if rest else [])


def count_pipes(floors: int, fixtures: int) -> int:
    """Number of pipes :func:`generate` writes for ``floors`` x ``fixtures``."""
    stubs = [sum(len(s[2]) for s in SUITE[:n]) for n in range(len(SUITE) + 1)]
    suites = suites_per_floor(fixtures)
    wings = [suites[i : i + SUITES_PER_WING] for i in range(0, len(suites), SUITES_PER_WING)]
    zones = math.ceil(floors / ZONE_FLOORS)
    per_floor = sum(2 + sum(2 + stubs[n] for n in wing) for wing in wings)
    return zones * len(wings) + floors * per_floor


def shape_for(pipes: int) -> tuple[int, int]:
    """(floors, fixtures per floor) whose layout has about ``pipes`` pipes."""
    floors = max(2, min(200, round(math.sqrt(pipes / 14))))
    low, high = 1, 1
    while count_pipes(floors, high) < pipes:
        high *= 2
    while high - low > 1:
        mid = (low + high) // 2
        low, high = (mid, high) if count_pipes(floors, mid) < pipes else (low, mid)
    best = min((low, high), key=lambda m: abs(count_pipes(floors, m) - pipes))
    return floors, best


def _fmt(x: float) -> str:
    return f"{round(x * 2) / 2:g}"


def _build(floors: int, fixtures: int, seed: int) -> tuple[_Tower, dict[str, _Load]]:
    """Lay out the tower; returns it with the fixture-unit load deposited at each node."""
    rng = random.Random(seed)
    catalog = builtin_catalog().fixture_types
    tower = _Tower(floors, fixtures)
    loads: dict[str, _Load] = {}
    suites = suites_per_floor(fixtures)
    wings = [suites[i : i + SUITES_PER_WING] for i in range(0, len(suites), SUITES_PER_WING)]
    zones = math.ceil(floors / ZONE_FLOORS)

    def point(name: str, elevation_ft: float) -> str:
        tower.points.append(f"  - {{id: {name}, elevation: {_fmt(elevation_ft)} ft}}")
        return name

    def pipe(start: str, end: str, role: str, service: str, length_ft: float) -> None:
        tower.pipes.append(_Pipe(start, end, role, service, round(length_ft * 2) / 2))

    for z in range(zones):
        first = z * ZONE_FLOORS + 1
        zone_floors = range(first, min(floors, first + ZONE_FLOORS - 1) + 1)
        base_ft = (first - 1) * FLOOR_HEIGHT_FT
        for w, wing in enumerate(wings, start=1):
            tag = f"Z{z + 1}W{w}"
            supply, cb, h0 = f"SVC-{tag}", f"{tag}-CB", f"{tag}-H0"
            tower.supplies.append(
                f"  - {{id: {supply}, pressure: {{min: {SUPPLY_PSI[0]} psi, max: "
                f"{SUPPLY_PSI[1]} psi}}, elevation: {_fmt(base_ft)} ft}}"
            )
            point(cb, base_ft + 1)
            point(h0, base_ft + 5)
            tower.heaters.append(
                f"  - {{id: WH-{tag}, inlet: {cb}, outlet: {h0}, loss: {HEATER_LOSS_PSI} psi}}"
            )
            pipe(supply, cb, "service", "cold", 20)
            index = len(tower.pipes)
            tower.devices.append(
                f"  - {{id: M-{tag}, kind: meter, on: P{index}, loss: {METER_LOSS_PSI} psi}}"
            )
            tower.devices.append(
                f"  - {{id: PRV-{tag}, kind: pressure-reducing, on: P{index}, "
                f"set_pressure: {PRV_SET_PSI} psi}}"
            )
            below = {"cold": cb, "hot": h0}
            hot_fixtures: list[tuple[float, float]] = []  # (total - cold WSFU, flow) per fixture
            for floor in zone_floors:
                floor_ft = (floor - 1) * FLOOR_HEIGHT_FT
                riser = {
                    "cold": point(f"{tag}-CR{floor}", floor_ft + TAKEOFF_FT),
                    "hot": point(f"{tag}-HR{floor}", floor_ft + TAKEOFF_FT),
                }
                for service in ("cold", "hot"):
                    rise = floor_ft + TAKEOFF_FT - (base_ft + (1 if service == "cold" else 5))
                    length = rise + 12 if floor == first else FLOOR_HEIGHT_FT
                    pipe(below[service], riser[service], "riser", service, length)
                below = riser
                previous = dict(riser)
                for s, size in enumerate(wing, start=1):
                    room = f"{tag}-F{floor}S{s}"
                    manifold = {
                        svc: point(f"{room}-{svc[0].upper()}", floor_ft + 8)
                        for svc in ("cold", "hot")
                    }
                    for svc in ("cold", "hot"):
                        pipe(previous[svc], manifold[svc], "header", svc, rng.uniform(15, 35))
                    previous = manifold
                    for svc in ("cold", "hot"):  # the suite branch's arrester (faucets)
                        tower.arresters.append(
                            f"  - {{id: A-{room}-{svc[0].upper()}, "
                            f"at: {manifold[svc]}, rating: A, kind: sealed}}"
                        )
                    for code, type_id, sides, height in SUITE[:size]:
                        ftype = catalog[type_id]
                        ends = {}
                        for svc in sides:
                            end = point(f"{room}-{code}{svc[0].upper()}", floor_ft + height)
                            pipe(manifold[svc], end, "stub", svc, 8 - height + rng.uniform(2, 10))
                            units = getattr(ftype.wsfu_private, svc)
                            slot = loads.setdefault(end, _Load())
                            slot.add(_Load(units, 1, ftype.flow))
                            ends[svc] = end
                            if code in SOLENOID:
                                tower.arresters.append(
                                    f"  - {{id: A-{room}-{code}{svc[0].upper()}, at: {end}, "
                                    "rating: AA, kind: sealed}"
                                )
                        sides_text = ", ".join(f"{svc}: {ends[svc]}" for svc in sides)
                        tower.fixture_lines.append(
                            f"  - {{id: {room}-{code}, type: {type_id}, {sides_text}}}"
                        )
                        if "hot" in sides:
                            hot_fixtures.append(
                                (ftype.wsfu_private.total - ftype.wsfu_private.cold, ftype.flow)
                            )
            # The heater inlet carries the hot side; with the cold sides met at the base tee
            # the service pipe carries each fixture's total (as rulecheck.analysis counts it).
            extra = loads.setdefault(cb, _Load())
            hot_only = sum(1 for n in wing for _, _, sides, _ in SUITE[:n] if sides == ("hot",))
            extra.add(
                _Load(
                    sum(u for u, _ in hot_fixtures),
                    hot_only * len(zone_floors),
                    max((f for _, f in hot_fixtures), default=0.0),
                )
            )
    return tower, loads


def _size(tower: _Tower, loads: dict[str, _Load]) -> None:
    """Pick material and size of every pipe from the load it carries (see module docstring)."""
    carried: list[_Load] = [_Load() for _ in tower.pipes]
    node_load: dict[str, _Load] = {}
    for i in range(len(tower.pipes) - 1, -1, -1):  # children were laid after their parents
        p = tower.pipes[i]
        own = node_load.pop(p.end, _Load())
        own.add(loads.get(p.end, _Load()))
        carried[i] = own
        node_load.setdefault(p.start, _Load()).add(own)
    wsfu = np.array([c.wsfu for c in carried])
    hunter = np.asarray(demand_flow(wsfu, np.zeros(len(carried), dtype=bool)), dtype=float)
    spec = rule_specs()["velocity-limit"]
    limits = {
        "cold": spec.limit(PROFILE, "cold", "velocity"),
        "hot_copper": spec.limit(PROFILE, "hot_copper", "velocity"),
        "hot_other": spec.limit(PROFILE, "hot_other", "velocity"),
    }
    hot_k = to_si(f"{HOT_TEMPERATURE_F} degF", "temperature", "us")
    if hot_k > spec.limit(PROFILE, "hot_copper_threshold", "temperature"):
        limits["hot_copper"] = spec.limit(PROFILE, "hot_copper_above_threshold", "velocity")
    materials = builtin_catalog().materials
    tables = {
        m: sorted(
            ((od - 2 * wall) ** 2 * math.pi / 4, label)
            for label, (od, wall) in materials[m].sizes.items()
        )
        for m in ("copper-l", "pex-sdr9")
    }
    for p, load, q in zip(tower.pipes, carried, hunter, strict=True):
        flow = (
            0.0
            if load.count == 0
            else (load.largest if load.count == 1 else max(float(q), load.largest))
        )
        choices = ("copper-l",) if p.role in ("service", "riser") else ("pex-sdr9", "copper-l")
        for material in choices:
            limit = (
                limits["cold"]
                if p.service == "cold"
                else (limits["hot_copper"] if material == "copper-l" else limits["hot_other"])
            )
            table = tables[material]
            smallest = next(i for i, (_, label) in enumerate(table) if label == MIN_SIZE[p.role])
            fits = [
                label for area, label in table[smallest:] if flow / area <= VELOCITY_SHARE * limit
            ]
            if fits:
                p.material, p.size = material, fits[0]
                break
        else:  # more than the largest size carries: take it ("mostly sane" velocities)
            p.material, p.size = choices[-1], tables[choices[-1]][-1][1]


def generate(floors: int, fixtures: int, seed: int = 1, arresters: bool = True) -> str:
    """The YAML text of a tower of ``floors`` floors with ``fixtures`` fixtures each.

    ``arresters=False`` leaves the water-hammer arresters out: every quick-closing
    valve then gives findings (a findings-heavy variant of the same layout).
    """
    tower, loads = _build(floors, fixtures, seed)
    if not arresters:
        tower.arresters.clear()
    _size(tower, loads)
    pipe_lines = [
        f"  - {{id: P{i}, from: {p.start}, to: {p.end}, material: {p.material}, "
        f"size: {p.size}, length: {_fmt(p.length_ft)} ft, service: {p.service}}}"
        for i, p in enumerate(tower.pipes, start=1)
    ]
    head = [
        "# yaml-language-server: $schema=../../schemas/layout.schema.json",
        "# Invented scenario: Larchmont Tower, a residential tower drawn by the (invented)",
        "# firm Quarry Hill Mechanical. Generated by benchmarks/generate_tower.py:",
        f"# {floors} floors x {fixtures} fixtures, {len(pipe_lines)} pipes, seed {seed}.",
        "version: 1",
        "project:",
        f"  name: Larchmont Tower, {floors} floors",
        "  units: us",
        f"  profile: {PROFILE}",
        "water:",
        "  cold_temperature: 55 degF",
        f"  hot_temperature: {HOT_TEMPERATURE_F} degF",
    ]
    sections = [
        ("supplies", tower.supplies),
        ("heaters", tower.heaters),
        ("points", tower.points),
        ("pipes", pipe_lines),
        ("fixtures", tower.fixture_lines),
        ("arresters", tower.arresters),
        ("devices", tower.devices),
    ]
    body = [line for name, lines in sections if lines for line in (f"{name}:", *lines)]
    return "\n".join(head + body) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument("--pipes", type=int, help="aim for about this many pipes")
    parser.add_argument("--floors", type=int, help="number of floors")
    parser.add_argument("--fixtures", type=int, help="fixtures per floor")
    parser.add_argument("--seed", type=int, default=1, help="seed of the run-length variations")
    parser.add_argument(
        "--no-arresters", action="store_true", help="leave the arresters out (many findings)"
    )
    parser.add_argument("-o", "--output", help="output file (default: standard output)")
    args = parser.parse_args(argv)
    if args.pipes is not None:
        if args.floors is not None or args.fixtures is not None:
            parser.error("give either --pipes or --floors/--fixtures")
        floors, fixtures = shape_for(args.pipes)
    elif args.floors is not None and args.fixtures is not None:
        floors, fixtures = args.floors, args.fixtures
    else:
        parser.error("give --pipes, or both --floors and --fixtures")
    if floors < 1 or fixtures < 1:
        parser.error("floors and fixtures must be at least 1")
    text = generate(floors, fixtures, args.seed, arresters=not args.no_arresters)
    if args.output:
        Path(args.output).parent.mkdir(parents=True, exist_ok=True)
        Path(args.output).write_text(text, encoding="utf-8")
    else:
        sys.stdout.write(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
