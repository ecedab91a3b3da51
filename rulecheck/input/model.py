"""The layout as typed records in SI units (m, s, Pa gauge, m³/s, K).

Built from a validated document by :mod:`rulecheck.input.build`. Everything downstream
(analysis, rules, reports) reads these records, never the raw YAML.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

from rulecheck.errors import Position


@dataclass(frozen=True)
class Material:
    id: str
    name: str
    family: str  # copper | steel | plastic | other
    modulus: float  # Young's modulus of the wall [Pa]
    poisson: float  # [-]
    roughness: float  # absolute roughness [m]
    pressure_rating: tuple[tuple[float, float], ...]  # (temperature [K], allowable [Pa]) rising
    sizes: dict[str, tuple[float, float]]  # label -> (outside diameter [m], wall [m])
    source: str
    modulus_vs_temperature: tuple[tuple[float, float], ...] = ()  # (temperature [K], E [Pa])
    # a size's own rating table where the rating differs by size (copper tube)
    size_ratings: dict[str, tuple[tuple[float, float], ...]] = field(default_factory=dict)
    # a size's own wall modulus where it differs by size (multilayer pipe: the aluminium share)
    size_moduli: dict[str, float] = field(default_factory=dict)
    standard: str = ""  # the product standard the sizes follow (EN 1057, ASTM B88, ...)

    def rating_at(self, temperature: float, size: str | None = None) -> float:
        """Allowable working pressure [Pa] at ``temperature`` [K] of ``size`` (its own table
        where it has one, else the material's), linear, clamped at the ends."""
        table = self.size_ratings.get(size, self.pressure_rating) if size else self.pressure_rating
        return _interp(temperature, table)

    def modulus_at(self, temperature: float, size: str | None = None) -> float:
        """Wall modulus [Pa] of ``size`` where it has its own (no temperature fall applied),
        else at ``temperature`` [K] where tabled, else the nominal modulus."""
        if size is not None and size in self.size_moduli:
            return self.size_moduli[size]
        if not self.modulus_vs_temperature:
            return self.modulus
        return _interp(temperature, self.modulus_vs_temperature)


def _interp(x: float, table: tuple[tuple[float, float], ...]) -> float:
    if x <= table[0][0]:
        return table[0][1]
    for (x0, y0), (x1, y1) in zip(table, table[1:], strict=False):
        if x <= x1:
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0)
    return table[-1][1]


@dataclass(frozen=True)
class Wsfu:
    cold: float
    hot: float
    total: float


@dataclass(frozen=True)
class ProfileFixture:
    """A fixture type's values under a profile that counts demand in its own units (en806)."""

    units: Wsfu  # loading units {cold, hot, total} [LU]
    flow: float  # [m³/s]
    min_pressure: float  # [Pa]
    source: str


@dataclass(frozen=True)
class FixtureType:
    id: str
    name: str
    wsfu_private: Wsfu
    wsfu_public: Wsfu
    flow: float  # [m³/s]
    min_pressure: float  # minimum flow pressure [Pa]
    sides: tuple[str, ...]
    flushometer: bool
    closing: str  # quick | slow
    closure_time: float  # [s]
    source: str
    profiles: dict[str, ProfileFixture] = field(default_factory=dict)  # profile id -> values


@dataclass(frozen=True)
class Supply:
    id: str
    pressure_min: float  # static [Pa]
    pressure_max: float  # static [Pa]
    elevation: float  # [m]
    pos: Position


@dataclass(frozen=True)
class Heater:
    id: str
    inlet: str
    outlet: str
    loss: float  # [Pa]
    pos: Position


@dataclass(frozen=True)
class Point:
    id: str
    elevation: float  # [m]
    pos: Position


@dataclass(frozen=True)
class Pipe:
    id: str
    start: str  # the end nearer the source ("from")
    end: str  # "to"
    material: Material
    size: str
    outside_diameter: float  # [m]
    wall: float  # [m]
    length: float  # developed length [m]
    fittings_length: float  # extra equivalent length [m]
    service: str  # cold | hot | hot-return
    anchoring: str
    demand: float | None  # design flow override [m³/s]
    pos: Position
    keep_size: bool = False  # `rulecheck size` keeps this size (layout key keep_size)

    @property
    def inner_diameter(self) -> float:
        return self.outside_diameter - 2.0 * self.wall

    @property
    def area(self) -> float:
        return math.pi * self.inner_diameter**2 / 4.0

    def rating_at(self, temperature: float) -> float:
        """Allowable working pressure [Pa] of this pipe's material and size at ``temperature``."""
        return self.material.rating_at(temperature, self.size)


@dataclass(frozen=True)
class Fixture:
    id: str
    type: FixtureType
    cold: str | None
    hot: str | None
    occupancy: str
    wsfu: Wsfu
    flow: float  # per side [m³/s]
    min_pressure: float  # [Pa]
    closing: str  # quick | slow
    closure_time: float  # [s]
    continuous: bool
    pos: Position
    # the fixture units demand is counted in under the layout's profile: WSFU, or LU (en806)
    demand_units: Wsfu | None = None

    @property
    def units(self) -> Wsfu:
        """Fixture units for the demand (the profile's kind; WSFU where none was set)."""
        return self.wsfu if self.demand_units is None else self.demand_units

    def side_point(self, side: str) -> str | None:
        return self.cold if side == "cold" else self.hot


@dataclass(frozen=True)
class Arrester:
    id: str
    at: str
    rating_class: str | None  # AA, A-F, or None when rated in fixture units
    capacity: float  # fixture units it may serve [WSFU]
    kind: str  # sealed | air-chamber
    gas_volume: float | None  # [m³]
    precharge: float | None  # gauge [Pa]
    pos: Position


@dataclass(frozen=True)
class Device:
    id: str
    kind: str
    on: str  # pipe id
    set_pressure: float | None  # [Pa]
    loss: float  # [Pa]
    pos: Position


@dataclass(frozen=True)
class Waiver:
    rule: str
    element: str
    reason: str
    pos: Position


@dataclass(frozen=True)
class Layout:
    path: str
    name: str
    units: str  # us | si
    profile: str
    cold_temperature: float  # [K]
    hot_temperature: float  # [K]
    # which column of IPC Table E103.3(3): auto (per pipe) | flush-tank | flushometer
    demand_curve: str = "auto"
    supplies: list[Supply] = field(default_factory=list)
    heaters: list[Heater] = field(default_factory=list)
    points: list[Point] = field(default_factory=list)
    pipes: list[Pipe] = field(default_factory=list)
    fixtures: list[Fixture] = field(default_factory=list)
    arresters: list[Arrester] = field(default_factory=list)
    devices: list[Device] = field(default_factory=list)
    waivers: list[Waiver] = field(default_factory=list)
    positions: dict[str, Position] = field(default_factory=dict)  # element id -> position

    def temperature(self, service: str) -> float:
        return self.cold_temperature if service == "cold" else self.hot_temperature

    @functools.cached_property
    def arrester_by_id(self) -> dict[str, Arrester]:
        """Arrester id -> arrester, the first of that id (built on first use; the layout
        itself never changes)."""
        found: dict[str, Arrester] = {}
        for a in self.arresters:
            found.setdefault(a.id, a)
        return found

    @functools.cached_property
    def sealed_arresters_at(self) -> dict[str, list[tuple[int, Arrester]]]:
        """Point -> (index in ``arresters``, arrester) of the sealed arresters there."""
        found: dict[str, list[tuple[int, Arrester]]] = {}
        for i, a in enumerate(self.arresters):
            if a.kind == "sealed":
                found.setdefault(a.at, []).append((i, a))
        return found
