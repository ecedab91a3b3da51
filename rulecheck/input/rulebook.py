"""Rule data from ``rules/*-rules.yaml``: id, title, severity, limits per profile, source, why.

The data says *what* a rule demands and *where that comes from*; the code in
:mod:`rulecheck.checks` says *how* it is evaluated.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cache
from typing import Any

from rulecheck.cache import cached
from rulecheck.findings import SEVERITIES
from rulecheck.resources import YAML_TAG, data_dir, load_yaml
from rulecheck.units import to_si

RULE_FILES = ("hydraulic-rules.yaml", "surge-rules.yaml", "housekeeping-rules.yaml")


@dataclass(frozen=True)
class RuleSpec:
    id: str
    title: str
    severity: str
    source: str
    rationale: str
    fix: str
    formula: str
    limits: dict[str, dict[str, Any]] = field(default_factory=dict)  # profile -> name -> raw
    examples: dict[str, str] = field(default_factory=dict)  # failing / passing layout snippets
    uses: tuple[str, ...] = ()  # profile parameters the rule reads (rules/profiles.yaml)

    def raw_limits(self, profile: str) -> dict[str, Any]:
        merged = dict(self.limits.get("default", {}))
        merged.update(self.limits.get(profile, {}))
        return merged

    def limit(
        self, profile: str, name: str, kind: str, overrides: dict[str, Any] | None = None
    ) -> float:
        """The limit ``name`` in SI for ``profile`` (an override, if given, wins)."""
        raw = (overrides or {}).get(name, self.raw_limits(profile)[name])
        return to_si(raw, kind, "si")


@cache
def rule_specs() -> dict[str, RuleSpec]:
    """All rule data, by id, in file order; from the per-user cache (:mod:`rulecheck.cache`)
    when it holds one built from the same files by the same code."""
    folder = data_dir("rules")
    entries = [folder / name for name in RULE_FILES if (folder / name).is_file()]
    return cached(
        "rule-specs",
        [*(entry.read_bytes() for entry in entries), YAML_TAG],
        ("rulecheck.input.rulebook", "rulecheck.findings"),
        lambda: read_rule_specs([entry.read_text(encoding="utf-8") for entry in entries]),
    )


def read_rule_specs(texts: list[str]) -> dict[str, RuleSpec]:
    """The rule data the texts of the rule files give, by id, in file order."""
    specs: dict[str, RuleSpec] = {}
    for text in texts:
        for raw in load_yaml(text)["rules"]:
            if raw["severity"] not in SEVERITIES:
                raise RuntimeError(f"rule {raw['id']}: unknown severity {raw['severity']!r}")
            specs[raw["id"]] = RuleSpec(
                id=raw["id"],
                title=raw["title"],
                severity=raw["severity"],
                source=raw["source"],
                rationale=raw["rationale"].strip(),
                fix=raw["fix"].strip(),
                formula=raw.get("formula", "").strip(),
                limits=raw.get("limits", {}),
                examples=raw.get("examples", {}),
                uses=tuple(raw.get("uses", ())),
            )
    return specs
