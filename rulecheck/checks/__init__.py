"""The rule registry: one explicit table from rule id to the function that evaluates it.

To add a rule: put its data in ``rules/*-rules.yaml``, write one function
``(ctx: RuleContext) -> Iterable[Finding]`` in a module here, and list it below.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

from rulecheck.checks import housekeeping, hydraulic, surge
from rulecheck.engine.context import RuleContext
from rulecheck.findings import Finding

Check = Callable[[RuleContext], Iterable[Finding]]

REGISTRY: dict[str, Check] = {
    "velocity-limit": hydraulic.velocity_limit,
    "static-pressure": hydraulic.static_pressure,
    "residual-pressure": hydraulic.residual_pressure,
    "closure-time": surge.closure_time,
    "surge-peak": surge.surge_peak,
    "column-separation": surge.column_separation,
    "arrester-required": surge.arrester_required,
    "arrester-capacity": surge.arrester_capacity,
    "arrester-kind": surge.arrester_kind,
    "waiver-unused": housekeeping.waiver_unused,
}
