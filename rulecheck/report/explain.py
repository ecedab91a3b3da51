"""``rulecheck explain RULE`` and ``rulecheck rules``: why each rule exists, for trainees."""

from __future__ import annotations

from typing import Any

from rulecheck.rulebook import RuleSpec, rule_specs
from rulecheck.units import QuantityError, fmt, to_si

_KIND_BY_UNIT = ("velocity", "pressure", "temperature", "length", "time", "flow")


def _show_limit(raw: Any, units: str) -> str:
    """A limit from the rule data in the reader's units (the data's own text if not a quantity)."""
    if not isinstance(raw, str):
        return str(raw)
    for kind in _KIND_BY_UNIT:
        try:
            return fmt(to_si(raw, kind, "si"), kind, units)
        except QuantityError:
            continue
    return raw


def rules_table() -> str:
    specs = rule_specs()
    width = max(len(i) for i in specs)
    lines = [f"{'rule'.ljust(width)}  {'severity':<9}  title"]
    for spec in specs.values():
        lines.append(f"{spec.id.ljust(width)}  {spec.severity:<9}  {spec.title}")
    return "\n".join(lines) + "\n"


def explain_text(spec: RuleSpec, profile: str, units: str, worked: str = "") -> str:
    out = [f"{spec.id} — {spec.title}", f"default severity: {spec.severity}", "",
           "Why:", _indent(spec.rationale), ""]
    if spec.formula:
        out += ["Formula:", _indent(spec.formula), ""]
    limits = spec.raw_limits(profile)
    if limits:
        out.append(f"Limits (profile {profile}):")
        out += [f"  {name}: {_show_limit(raw, units)}" for name, raw in limits.items()]
        out.append("")
    if worked:
        out += ["Worked example (computed by rulecheck on a small built-in layout):",
                _indent(worked), ""]
    out += ["Source:", _indent(spec.source), "", "Fix:", _indent(spec.fix), ""]
    for key in ("failing", "passing"):
        if key in spec.examples:
            out += [f"A {key} layout snippet:", _indent(spec.examples[key].rstrip()), ""]
    return "\n".join(out)


def _indent(text: str) -> str:
    return "\n".join("  " + line if line else "" for line in text.splitlines())
