"""What a rule function sees: its settings, its own data, the analysis and a finding factory.

Rules (``rulecheck.checks``) import this module and nothing else of the engine, so the
registry can import the rules without a cycle.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from rulecheck.analysis import Analysis
from rulecheck.errors import Position
from rulecheck.findings import Finding
from rulecheck.input.profiles import parameters
from rulecheck.input.rulebook import RuleSpec
from rulecheck.units import fmt, to_si


@dataclass
class Settings:
    """Per-run choices: disabled rules, severity and limit overrides, waivers honoured."""

    disabled: set[str] = field(default_factory=set)
    severity: dict[str, str] = field(default_factory=dict)
    limits: dict[str, dict[str, Any]] = field(default_factory=dict)
    honour_waivers: bool = True


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
        """The rule's own limit ``name`` in SI (a rulecheck.toml override wins)."""
        return self.spec.limit(
            self.analysis.layout.profile, name, kind, self.settings.limits.get(self.spec.id)
        )

    def parameter(self, name: str) -> Any:
        """Profile parameter ``name`` as this rule reads it, in SI: a rulecheck.toml override
        for this rule (``rule``-stage parameters only), else the analysis's profile value.

        The rule must declare it under ``uses:`` in its data, so that ``explain`` and the
        configuration know what the rule reads; an undeclared name is a bug (KeyError).
        """
        if name not in self.spec.uses:
            raise KeyError(f"rule {self.spec.id} reads profile parameter {name!r} undeclared")
        override = self.settings.limits.get(self.spec.id, {}).get(name)
        kind = parameters()[name].kind
        if override is None:
            return self.analysis.profile.value(name)
        return override if kind in ("text", "number", "fraction") else to_si(override, kind, "si")

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
