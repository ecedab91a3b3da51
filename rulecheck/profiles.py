"""Rule profiles (``rules/profiles.yaml``): shared design parameters, in SI."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import yaml

from rulecheck.resources import read_text
from rulecheck.units import to_si


@dataclass(frozen=True)
class Profile:
    id: str
    title: str
    fittings_allowance: float  # fraction of developed length [-]
    arrester_distance: float  # [m]
    surge_limit: float  # gauge [Pa]
    air_chamber_severity: str
    polytropic_exponent: float  # [-]


@cache
def _raw() -> dict:
    data: dict = yaml.safe_load(read_text("rules", "profiles.yaml"))
    return data


def default_profile_id() -> str:
    return str(_raw()["default"])


def profile_ids() -> list[str]:
    return sorted(_raw()["profiles"])


@cache
def get_profile(profile_id: str) -> Profile:
    """The named profile; ``KeyError`` when there is none."""
    raw = _raw()["profiles"][profile_id]
    return Profile(
        id=profile_id,
        title=raw["title"],
        fittings_allowance=float(raw["fittings_allowance"]),
        arrester_distance=to_si(raw["arrester_distance"], "length", "si"),
        surge_limit=to_si(raw["surge_limit"], "pressure", "si"),
        air_chamber_severity=raw["air_chamber_severity"],
        polytropic_exponent=float(raw["polytropic_exponent"]),
    )


@dataclass(frozen=True)
class ArresterClass:
    name: str
    min_wsfu: float
    max_wsfu: float
    single_residential_appliance: bool


@cache
def arrester_classes() -> dict[str, ArresterClass]:
    raw = yaml.safe_load(read_text("rules", "arresters.yaml"))["classes"]
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
    return frozenset(yaml.safe_load(read_text("rules", "arresters.yaml"))["aa_appliances"])
