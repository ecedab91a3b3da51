"""``rulecheck explain RULE`` and ``rulecheck rules``: why each rule exists, for trainees."""

from __future__ import annotations

from typing import Any

from rulecheck.input.profiles import get_profile, parameters
from rulecheck.input.rulebook import RuleSpec, rule_specs
from rulecheck.units import fmt, quantity_kind, to_si


def show_limit(raw: Any, units: str) -> str:
    """A limit from the rule data in the reader's units (the data's own text if not a quantity)."""
    kind = quantity_kind(raw)
    return fmt(to_si(raw, kind, "si"), kind, units) if kind else str(raw)


def show_profile_parameter(name: str, profile: str, units: str) -> str:
    """A profile parameter of ``profile`` in the reader's units."""
    value = get_profile(profile).value(name)
    kind = parameters()[name].kind
    if kind == "fraction":
        return f"{value:g} ({value * 100:g} %)"
    if kind in ("text", "number"):
        return str(value) if kind == "text" else f"{value:g}"
    return fmt(value, kind, units)


def rules_table() -> str:
    specs = rule_specs()
    width = max(len(i) for i in specs)
    lines = [f"{'rule'.ljust(width)}  {'severity':<9}  title"]
    for spec in specs.values():
        lines.append(f"{spec.id.ljust(width)}  {spec.severity:<9}  {spec.title}")
    lines += ["", "Details, limits and sources: rulecheck explain RULE"]
    return "\n".join(lines) + "\n"


def explain_text(
    spec: RuleSpec,
    profile: str,
    units: str,
    worked: str = "",
    snippets: dict[str, str] | None = None,
) -> str:
    """Format one rule's explanation; ``worked`` and the filled ``snippets`` (the rule's
    example snippets with their catalog references resolved) come from rulecheck.cli.explain."""
    snippets = spec.examples if snippets is None else snippets
    out = [
        f"{spec.id} — {spec.title}",
        f"default severity: {spec.severity}",
        "",
        "Why:",
        _indent(spec.rationale),
        "",
    ]
    if spec.formula:
        out += ["Formula:", _indent(spec.formula), ""]
    limits = spec.raw_limits(profile)
    if limits:
        out.append(f"Limits (profile {profile}):")
        out += [f"  {name}: {show_limit(raw, units)}" for name, raw in limits.items()]
        out.append("")
    if spec.uses:
        sources = get_profile(profile).sources
        out.append(f"From the profile {profile} (rules/profiles.yaml):")
        out += [
            f"  {parameters()[name].label}: {show_profile_parameter(name, profile, units)}"
            f"  [{sources[name]}]"
            for name in spec.uses
        ]
        out.append("")
    if worked:
        out += [
            "Worked example (computed by rulecheck on a small built-in layout):",
            _indent(worked),
            "",
        ]
    out += ["Source:", _indent(spec.source), "", "Fix:", _indent(spec.fix), ""]
    example = next(
        (
            (name, f'"{raw}"' if isinstance(raw, str) else raw)
            for name, raw in limits.items()
            if isinstance(raw, (str, int, float))
        ),
        None,
    )
    setting = (
        f"limits = {{ {example[0]} = {example[1]} }}"
        if example
        else f'severity = "{spec.severity}"'
    )
    out += [
        "For one project (rulecheck.toml):",
        _indent(f"[rules.{spec.id}]\n{setting}    # or: enabled = false"),
        "",
    ]
    for key in ("failing", "passing"):
        if key in snippets:
            out += [f"A {key} layout snippet:", _indent(snippets[key].rstrip()), ""]
    return "\n".join(out)


def _indent(text: str) -> str:
    return "\n".join("  " + line if line else "" for line in text.splitlines())
