"""The finding record: one rule's verdict on one element. One ``to_dict`` feeds every output."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

#: Severities from most to least serious.
SEVERITIES = ("hazard", "violation", "caution", "advisory")
SEVERITY_RANK = {name: rank for rank, name in enumerate(SEVERITIES)}

#: SI unit printed in machine output for each kind of quantity.
SI_UNIT = {
    "velocity": "m/s",
    "pressure": "Pa",
    "time": "s",
    "length": "m",
    "flow": "m^3/s",
    "wsfu": "WSFU",
    "speed": "m/s",
}


@dataclass(frozen=True)
class Finding:
    rule: str
    severity: str
    message: str
    path: str
    line: int
    column: int
    element: str
    source: str
    measured: float | None = None  # SI
    limit: float | None = None  # SI
    kind: str | None = None  # quantity kind of measured/limit
    fix: str = ""
    method: str = ""  # how the number was obtained (e.g. "screening", "transient")
    waived: str | None = None  # the waiver's reason, when a waiver matched

    def sort_key(self) -> tuple[str, int, int, str, str]:
        return (self.path, self.line, self.column, self.rule, self.element)

    def to_dict(self) -> dict[str, Any]:
        data: dict[str, Any] = {
            "rule": self.rule,
            "severity": self.severity,
            "element": self.element,
            "line": self.line,
            "column": self.column,
            "message": self.message,
        }
        if self.measured is not None or self.limit is not None:
            # measured is null where there is no such quantity to show (a shortfall, not a
            # pressure); the message says what happens instead
            data["measured"] = _clean(self.measured) if self.measured is not None else None
            data["limit"] = _clean(self.limit) if self.limit is not None else None
            data["unit"] = SI_UNIT.get(self.kind or "", self.kind or "")
        data["source"] = self.source
        if self.fix:
            data["fix"] = self.fix
        if self.method:
            data["method"] = self.method
        if self.waived is not None:
            data["waived"] = {"reason": self.waived}
        return data


def _clean(value: float) -> float | None:
    """Round to 6 significant figures so output bytes do not depend on float noise;
    a non-finite value (an overflow from absurd input) becomes ``None`` (JSON null)."""
    if not math.isfinite(value):
        return None
    return float(f"{value:.6g}")
