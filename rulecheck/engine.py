"""Run the registered rules over an analysis, apply waivers, and collect findings.

A rule is one function ``(ctx) -> Iterable[Finding]``, listed in
:data:`rulecheck.checks.REGISTRY`. A rule that raises becomes an internal-error
finding about that rule, and the run goes on.
"""

from __future__ import annotations

import traceback
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

from rulecheck.analysis import Analysis
from rulecheck.errors import Position
from rulecheck.findings import Finding
from rulecheck.rulebook import RuleSpec, rule_specs
from rulecheck.units import fmt


@dataclass
class Settings:
    """Per-run choices: disabled rules, severity and limit overrides, waivers honoured."""

    disabled: set[str] = field(default_factory=set)
    severity: dict[str, str] = field(default_factory=dict)
    limits: dict[str, dict[str, Any]] = field(default_factory=dict)
    honour_waivers: bool = True
    transient: bool = False


@dataclass
class RuleContext:
    """What a rule function sees: the analysis, its own data, and a finding factory."""

    analysis: Analysis
    spec: RuleSpec
    settings: Settings
    extra: dict[str, Any] = field(default_factory=dict)  # shared results (e.g. surge events)

    @property
    def units(self) -> str:
        return self.analysis.layout.units

    def limit(self, name: str, kind: str) -> float:
        return self.spec.limit(
            self.analysis.layout.profile, name, kind, self.settings.limits.get(self.spec.id)
        )

    def fmt(self, value: float, kind: str) -> str:
        return fmt(value, kind, self.units)

    def finding(
        self,
        element: str,
        message: str,
        *,
        measured: float | None = None,
        limit: float | None = None,
        kind: str | None = None,
        fix: str = "",
        severity: str | None = None,
        method: str = "",
        pos: Position | None = None,
    ) -> Finding:
        layout = self.analysis.layout
        pos = pos or layout.positions.get(element)
        line, column = (pos.line, pos.column) if pos else (1, 1)
        return Finding(
            rule=self.spec.id,
            severity=self.settings.severity.get(self.spec.id, severity or self.spec.severity),
            message=message,
            path=layout.path,
            line=line,
            column=column,
            element=element,
            source=self.spec.source,
            measured=measured,
            limit=limit,
            kind=kind,
            fix=fix,
            method=method,
        )


def run_rules(analysis: Analysis, settings: Settings | None = None) -> list[Finding]:
    """Evaluate every enabled rule; return the findings sorted, waivers applied."""
    from rulecheck.checks import REGISTRY  # the registry imports rule modules that import us

    settings = settings or Settings()
    specs = rule_specs()
    shared: dict[str, Any] = {}
    findings: list[Finding] = []
    for rule_id, check in REGISTRY.items():
        if rule_id in settings.disabled or rule_id == "waiver-unused":
            continue
        ctx = RuleContext(analysis, specs[rule_id], settings, shared)
        findings.extend(_guarded(check, ctx))
    findings = _apply_waivers(analysis, findings, settings, shared)
    return sorted(findings, key=Finding.sort_key)


def _guarded(check: Any, ctx: RuleContext) -> Iterable[Finding]:
    try:
        return list(check(ctx))
    except Exception as exc:  # noqa: BLE001 - a broken rule must not stop the run
        last = traceback.extract_tb(exc.__traceback__)[-1]
        where = f"{last.filename.rsplit('/', 1)[-1]}:{last.lineno}"
        return [
            ctx.finding(
                ctx.spec.id,
                (
                    f"internal error in rule {ctx.spec.id}: {type(exc).__name__}: {exc} "
                    f"(at {where}); the rest of the check ran — please report this"
                ),
                severity="hazard",
            )
        ]


def _apply_waivers(
    analysis: Analysis, findings: list[Finding], settings: Settings, shared: dict[str, Any]
) -> list[Finding]:
    from dataclasses import replace

    from rulecheck.checks import REGISTRY

    waivers = analysis.layout.waivers
    if not settings.honour_waivers or not waivers:
        return findings
    used: set[int] = set()
    result = []
    for finding in findings:
        for index, waiver in enumerate(waivers):
            if waiver.rule == finding.rule and waiver.element == finding.element:
                used.add(index)
                finding = replace(finding, waived=waiver.reason)
                break
        result.append(finding)
    if "waiver-unused" not in settings.disabled:
        ctx = RuleContext(
            analysis,
            rule_specs()["waiver-unused"],
            settings,
            {**shared, "unused_waivers": [w for i, w in enumerate(waivers) if i not in used]},
        )
        result.extend(_guarded(REGISTRY["waiver-unused"], ctx))
    return result
