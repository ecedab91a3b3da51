"""Rule profiles (``rules/profiles.yaml``): shared design parameters, in SI."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from types import MappingProxyType
from typing import Any

from rulecheck.resources import read_yaml
from rulecheck.units import to_si


@dataclass(frozen=True)
class Parameter:
    """What a shared profile parameter is: label, quantity kind, and the stage that reads it
    (``analysis``: it shapes computed numbers, set by the profile alone; ``rule``: it only
    judges, and ``rulecheck.toml`` may override it per rule)."""

    name: str
    label: str
    kind: str  # a units kind (pressure, length), or fraction | number | text
    stage: str


@dataclass(frozen=True)
class Profile:
    id: str
    title: str
    fittings_allowance: float  # fraction of developed length [-]
    arrester_distance: float  # [m]
    surge_limit: float  # gauge [Pa]
    air_chamber_severity: str
    polytropic_exponent: float  # [-]
    arrester_required_when: str  # quick (every quick-closing valve) | over-limit
    demand_method: str  # hunter (WSFU, IPC Table E103.3(3)) | loading-units (LU, EN 806-3)
    raw: Mapping[str, Any]  # parameter -> its value as the data writes it
    sources: Mapping[str, str]  # parameter -> its source with its tag

    @property
    def fixture_unit(self) -> str:
        """The name of the fixture units the profile counts demand in: ``WSFU`` or ``LU``."""
        return "LU" if self.demand_method == "loading-units" else "WSFU"

    def value(self, name: str) -> Any:
        """Parameter ``name`` in SI (a number, or the text of a ``text`` parameter)."""
        return getattr(self, name)


@cache
def _raw() -> dict:
    data: dict = read_yaml("rules", "profiles.yaml")
    return data


def default_profile_id() -> str:
    return str(_raw()["default"])


def profile_ids() -> list[str]:
    return sorted(_raw()["profiles"])


@cache
def parameters() -> dict[str, Parameter]:
    """Every shared profile parameter, by name, in data order."""
    return {
        name: Parameter(name, str(v["label"]), str(v["kind"]), str(v["stage"]))
        for name, v in _raw()["parameters"].items()
    }


@cache
def get_profile(profile_id: str) -> Profile:
    """The named profile; ``KeyError`` when there is none."""
    raw = _raw()["profiles"][profile_id]
    value = {name: raw[name]["value"] for name in parameters()}
    return Profile(
        id=profile_id,
        title=raw["title"],
        fittings_allowance=float(value["fittings_allowance"]),
        arrester_distance=to_si(value["arrester_distance"], "length", "si"),
        surge_limit=to_si(value["surge_limit"], "pressure", "si"),
        air_chamber_severity=str(value["air_chamber_severity"]),
        polytropic_exponent=float(value["polytropic_exponent"]),
        arrester_required_when=str(value["arrester_required_when"]),
        demand_method=str(value["demand_method"]),
        raw=MappingProxyType(value),
        sources=MappingProxyType({name: str(raw[name]["source"]) for name in parameters()}),
    )


@dataclass(frozen=True)
class ArresterClass:
    name: str
    min_wsfu: float
    max_wsfu: float
    single_residential_appliance: bool


@cache
def arrester_classes() -> dict[str, ArresterClass]:
    raw = read_yaml("rules", "arresters.yaml")["classes"]
    return {
        name: ArresterClass(
            name,
            float(v["min_wsfu"]),
            float(v["max_wsfu"]),
            bool(v.get("single_residential_appliance", False)),
        )
        for name, v in raw.items()
    }


def smallest_class_for(wsfu: float) -> str | None:
    """The smallest class A–F whose range covers ``wsfu``; ``None`` above class F."""
    for name, cls in arrester_classes().items():
        if not cls.single_residential_appliance and wsfu <= cls.max_wsfu:
            return name
    return None


@cache
def aa_appliances() -> frozenset[str]:
    """Fixture types a class AA arrester may serve (one residential appliance)."""
    return frozenset(read_yaml("rules", "arresters.yaml")["aa_appliances"])
