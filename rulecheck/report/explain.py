"""``rulecheck explain RULE`` and ``rulecheck rules``: why each rule exists, for trainees."""

from __future__ import annotations

from typing import Any

from rulecheck.config import quantity_kind
from rulecheck.profiles import get_profile
from rulecheck.rulebook import RuleSpec, rule_specs
from rulecheck.units import fmt, to_si

#: Profile parameters (rules/profiles.yaml) that act as a rule's limits: label, kind, and
#: the source with its tag as rules/profiles.yaml gives it.
PROFILE_PARAMETERS: dict[str, tuple[str, str, str]] = {
    "surge_limit": (
        "design surge limit, peak pressure",
        "pressure",
        "ASSE 1010 arrester rating [S: ASSE 1010 summary]",
    ),
    "arrester_distance": (
        "arrester placement distance, along the pipe path",
        "length",
        "PDI-WH 201 placement; from memory; verify against the adopted edition [M]",
    ),
    "fittings_allowance": (
        "fittings allowance, fraction of developed length",
        "fraction",
        "common practice [CP]",
    ),
    "air_chamber_severity": (
        "severity given to an air chamber",
        "text",
        "air chambers no longer recognised by IPC/NSPC, tolerated by UPC "
        '[S: PM Magazine, "Water hammer update"]',
    ),
}
#: Which of them each rule reads (see rulecheck/checks and rulecheck/surge_analysis.py).
RULE_PROFILE_PARAMETERS: dict[str, tuple[str, ...]] = {
    "residual-pressure": ("fittings_allowance",),
    "closure-time": ("surge_limit", "arrester_distance"),
    "surge-peak": ("surge_limit", "arrester_distance"),
    "column-separation": ("arrester_distance",),
    "arrester-required": ("arrester_distance", "surge_limit"),
    "arrester-capacity": ("arrester_distance",),
    "arrester-kind": ("air_chamber_severity",),
}


def show_limit(raw: Any, units: str) -> str:
    """A limit from the rule data in the reader's units (the data's own text if not a quantity)."""
    kind = quantity_kind(raw)
    return fmt(to_si(raw, kind, "si"), kind, units) if kind else str(raw)


def show_profile_parameter(name: str, profile: str, units: str) -> str:
    """A profile parameter (``PROFILE_PARAMETERS``) of ``profile`` in the reader's units."""
    value = getattr(get_profile(profile), name)
    kind = PROFILE_PARAMETERS[name][1]
    if kind == "fraction":
        return f"{value:g} ({value * 100:g} %)"
    return fmt(value, kind, units) if kind != "text" else str(value)


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
    example snippets with their catalog references resolved) come from rulecheck.explain_cmd."""
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
    shared = RULE_PROFILE_PARAMETERS.get(spec.id, ())
    if shared:
        out.append(f"From the profile {profile} (rules/profiles.yaml):")
        out += [
            f"  {PROFILE_PARAMETERS[name][0]}: {show_profile_parameter(name, profile, units)}"
            f"  [{PROFILE_PARAMETERS[name][2]}]"
            for name in shared
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
