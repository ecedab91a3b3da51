"""Run the registered rules over an analysis, apply waivers, and collect findings.

A rule is one function ``(ctx) -> Iterable[Finding]``, listed in
:data:`rulecheck.checks.REGISTRY`. A rule that raises becomes an internal-error
finding about that rule, and the run goes on.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import replace
from typing import Any

from rulecheck.analysis import Analysis
from rulecheck.checks import REGISTRY
from rulecheck.engine.context import RuleContext, Settings
from rulecheck.findings import Finding
from rulecheck.input.rulebook import rule_specs


def run_rules(analysis: Analysis, settings: Settings | None = None) -> list[Finding]:
    """Evaluate every enabled rule; return the findings sorted, waivers applied."""
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
        import traceback

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
