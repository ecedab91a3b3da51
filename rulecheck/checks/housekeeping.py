"""Rules about the layout file itself rather than the water in it."""

from __future__ import annotations

from collections.abc import Iterator

from rulecheck.engine.context import RuleContext
from rulecheck.findings import Finding


def waiver_unused(ctx: RuleContext) -> Iterator[Finding]:
    """A waiver that matched no finding is stale: the problem is gone or the id is wrong."""
    for waiver in ctx.extra.get("unused_waivers", ()):
        yield ctx.finding(
            waiver.element,
            f"waiver for {waiver.rule} on {waiver.element} matched no finding",
            fix="remove the waiver, or correct its 'rule' or 'element'",
            pos=waiver.pos,
        )
