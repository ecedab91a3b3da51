"""The records of pipe sizing and the size-label helpers (see :mod:`rulecheck.analysis.sizing`)."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, replace
from functools import cache

from rulecheck.input.model import Layout, Pipe

#: pressure kept in hand at each fixture [Pa], so float rounding never turns a pass into
#: a shortfall by a billionth of a pascal in the analysis of the sized layout
MARGIN = 1e-6
_TOL = 1e-9

Front = tuple[list[float], list[float], list[int]]  # need [Pa] rising, cost falling, size index


@dataclass(frozen=True)
class Minimum:
    """A code minimum size for one pipe: nominal inches and why (with its source)."""

    inches: float
    reason: str


@dataclass(frozen=True)
class Change:
    pipe: str
    old: str
    new: str
    reason: str


@dataclass(frozen=True)
class Shortfall:
    """A fixture that cannot get its pressure even with every pipe at its largest size."""

    fixture: str
    point: str
    need: float  # [Pa]
    best: float  # residual with every pipe on its path at its largest candidate [Pa]
    lift: float  # ρ·g·(z_fixture − z_supply) over the path [Pa]
    device_loss: float  # devices and heater on the path at design flow [Pa]
    supply: str


@dataclass(frozen=True)
class TooFast:
    """A pipe whose flow runs over its limit even in its material's largest size."""

    pipe: str
    flow: float  # [m³/s]
    largest: str
    velocity: float  # at the largest size [m/s]
    limit: float  # [m/s]


@dataclass(frozen=True)
class SizingResult:
    sizes: dict[str, str]  # pipe id -> size label (every pipe)
    reasons: dict[str, str]  # pipe id -> what keeps it from the next size down
    changes: tuple[Change, ...]
    material_before: float  # Σ length × outside diameter [m²]
    material_after: float
    shortfalls: tuple[Shortfall, ...] = ()
    too_fast: tuple[TooFast, ...] = ()
    notes: tuple[str, ...] = ()
    residual: dict[str, float] = field(default_factory=dict)  # predicted, sized [Pa]
    # every fixture can be fed in itself, but no combination of sizes meets them all with
    # the order of sizes and the kept sizes
    unsolved: bool = False

    @property
    def feasible(self) -> bool:
        return not self.shortfalls and not self.too_fast and not self.unsolved


_INCH = re.compile(r"(?:(\d+)-)?(\d+)/(\d+)|(\d+(?:\.\d+)?)")


@cache
def nominal_inches(label: str) -> float | None:
    """Nominal size of an inch label (``3/4``, ``1-1/4``, ``2``) [in], else ``None``."""
    m = _INCH.fullmatch(label.strip())
    if m is None:
        return None
    if m.group(4) is not None:
        return float(m.group(4))
    return float(m.group(1) or 0) + int(m.group(2)) / int(m.group(3))


def inch_labelled(pipe: Pipe) -> bool:
    """Whether the material's size labels are inch nominal sizes (metric tables label in
    millimetres: 15, 22, 28, …; an inch table has a fraction or stays at 12 and under)."""
    return _inch_table(tuple(pipe.material.sizes))


@cache
def _inch_table(labels: tuple[str, ...]) -> bool:
    values = [nominal_inches(label) for label in labels]
    known = [v for v in values if v is not None]
    if len(known) < len(values):
        return False
    return any("/" in label for label in labels) or max(known, default=0.0) <= 12


def catalog_order(pipe: Pipe) -> list[str]:
    """The material's sizes, smallest first (by outside diameter, as the velocity rule)."""
    return list(_order(tuple(pipe.material.sizes.items())))


@cache
def _order(items: tuple[tuple[str, tuple[float, float]], ...]) -> tuple[str, ...]:
    return tuple(label for label, _ in sorted(items, key=lambda kv: kv[1][0]))


def area(od: float, wall: float) -> float:
    return math.pi * (od - 2.0 * wall) ** 2 / 4.0  # as Pipe.area


@dataclass
class _Edge:
    index: int  # pipe index, -1 for a heater
    start: str
    end: str
    labels: list[str]
    nominal: list[float]
    loss: list[float]  # A: lift + friction + device losses at design flow [Pa]
    cost: list[float]
    cap: float
    ordered: bool
    prefix: list[Front] = field(default_factory=list)


def nominal(pipe: Pipe, label: str, inch: bool) -> float:
    if inch:
        return nominal_inches(label) or 0.0
    od, wall = pipe.material.sizes[label]
    return (od - 2.0 * wall) / 0.0254


def sized_layout(layout: Layout, sizes: dict[str, str]) -> Layout:
    """``layout`` with every pipe at ``sizes[pipe.id]``."""
    pipes = []
    for p in layout.pipes:
        label = sizes.get(p.id, p.size)
        if label == p.size:
            pipes.append(p)
            continue
        od, wall = p.material.sizes[label]
        pipes.append(replace(p, size=label, outside_diameter=od, wall=wall))
    return replace(layout, pipes=pipes)
