"""SARIF 2.1.0 output (``check --format sarif``) for code-scanning services and review tools.

One run. ``tool.driver`` lists every rule of the rule data; each finding becomes
a result with its level, message, position and element (a logical location);
waived findings stay in the log, suppressed ``inSource`` (the waiver is in the
layout) with the waiver's reason as justification. Input errors become
tool-execution notifications. Same findings → same bytes: no time stamps, no
absolute paths.

References: OASIS, Static Analysis Results Interchange Format (SARIF) Version
2.1.0, errata 01 — §3.27 result, §3.28 location, §3.33 logicalLocation,
§3.34 suppression, §3.49 reportingDescriptor, §3.58 notification.
"""

from __future__ import annotations

import hashlib
from collections import Counter
from pathlib import Path
from typing import Any
from urllib.parse import quote

from rulecheck import __version__
from rulecheck.errors import InputError, InputProblem
from rulecheck.files import relative_posix
from rulecheck.findings import Finding
from rulecheck.input.profiles import profile_ids
from rulecheck.input.rulebook import RuleSpec, rule_specs
from rulecheck.report import CAUTION

SARIF_VERSION = "2.1.0"
SARIF_SCHEMA = (
    "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
)

#: SARIF level for each rulecheck severity.
LEVEL = {"hazard": "error", "violation": "error", "caution": "warning", "advisory": "note"}

#: Finding fields that already have a place in a SARIF result (the rest go to properties).
_PLACED = ("rule", "element", "line", "column", "message", "waived")


def sarif_document(
    results: list[tuple[str, str, list[Finding]]],
    errors: list[InputError],
    hidden: int | None = None,
    cwd: Path | None = None,
) -> dict[str, Any]:
    """The SARIF log of one ``check`` run; ``hidden`` is the baseline's count, if one was used."""
    specs = rule_specs()
    index = {rule_id: i for i, rule_id in enumerate(specs)}
    seen: Counter[tuple[str, str, str]] = Counter()
    sarif_results = []
    for path, profile, findings in results:
        uri = _uri(path, cwd)
        for finding in findings:
            seen[uri, finding.rule, finding.element] += 1
            occurrence = seen[uri, finding.rule, finding.element]
            sarif_results.append(
                _result(finding, uri, profile, index, occurrence, baseline=hidden is not None)
            )
    notifications = [_notification(problem, cwd) for error in errors for problem in error.problems]
    run: dict[str, Any] = {
        "tool": {
            "driver": {
                "name": "rulecheck",
                "version": __version__,
                "semanticVersion": __version__,
                "fullDescription": {
                    "text": "Design-rule checks for building water-supply layouts. " + CAUTION
                },
                "rules": [rule_descriptor(spec) for spec in specs.values()],
            }
        },
        "invocations": [
            {"executionSuccessful": not errors, "toolExecutionNotifications": notifications}
        ],
        "columnKind": "unicodeCodePoints",  # YAML marks count characters
        "results": sarif_results,
    }
    if hidden is not None:
        run["properties"] = {"baselineHidden": hidden}
    return {"$schema": SARIF_SCHEMA, "version": SARIF_VERSION, "runs": [run]}


def rule_descriptor(spec: RuleSpec) -> dict[str, Any]:
    """A SARIF ``reportingDescriptor`` from the rule data."""
    help_text = f"{spec.rationale}\n\nSource: {spec.source}\n\nFix: {spec.fix}"
    markdown = [f"**{spec.title}**", "", spec.rationale, ""]
    if spec.formula:
        markdown += ["Formula: `" + spec.formula.replace("`", "'") + "`", ""]
    limits = {p: spec.raw_limits(p) for p in profile_ids()}
    for profile, values in limits.items():
        if values:
            shown = ", ".join(f"{name} = {raw}" for name, raw in values.items())
            markdown += [f"Limits (profile {profile}): {shown}", ""]
    markdown += [f"Source: {spec.source}", "", f"Fix: {spec.fix}"]
    return {
        "id": spec.id,
        "name": "".join(part.capitalize() for part in spec.id.split("-")),
        "shortDescription": {"text": spec.title},
        "fullDescription": {"text": spec.rationale},
        "help": {"text": help_text, "markdown": "\n".join(markdown)},
        "defaultConfiguration": {"level": LEVEL[spec.severity]},
        "properties": {
            "severity": spec.severity,
            "source": spec.source,
            "tags": ["plumbing", "water-supply"],
        },
    }


def _result(
    finding: Finding, uri: str, profile: str, index: dict[str, int], occurrence: int, baseline: bool
) -> dict[str, Any]:
    data = finding.to_dict()
    text = finding.message + (f" (fix: {finding.fix})" if finding.fix else "")
    result: dict[str, Any] = {"ruleId": finding.rule}
    if finding.rule in index:
        result["ruleIndex"] = index[finding.rule]
    result.update(
        {
            "level": LEVEL[finding.severity],
            "message": {"text": text},
            "locations": [
                {
                    "physicalLocation": {
                        "artifactLocation": {"uri": uri},
                        "region": {"startLine": finding.line, "startColumn": finding.column},
                    },
                    "logicalLocations": [{"name": finding.element, "kind": "element"}],
                }
            ],
            # Stable across line shifts, like the baseline key: file, rule, element, occurrence.
            "partialFingerprints": {
                "rulecheckElement/v1": hashlib.sha256(
                    f"{uri}\0{finding.rule}\0{finding.element}\0{occurrence}".encode()
                ).hexdigest()[:32]
            },
        }
    )
    if baseline:
        result["baselineState"] = "new"
    if finding.waived is not None:
        result["suppressions"] = [{"kind": "inSource", "justification": finding.waived}]
    properties = {k: v for k, v in data.items() if k not in _PLACED}
    properties["profile"] = profile
    result["properties"] = properties
    return result


def _notification(problem: InputProblem, cwd: Path | None) -> dict[str, Any]:
    text = problem.message + (f" ({problem.hint})" if problem.hint else "")
    return {
        "level": "error",
        "message": {"text": text},
        "descriptor": {"id": "input-error"},
        "locations": [
            {
                "physicalLocation": {
                    "artifactLocation": {"uri": _uri(problem.path, cwd)},
                    "region": {
                        "startLine": problem.position.line,
                        "startColumn": problem.position.column,
                    },
                }
            }
        ],
    }


def _uri(path: str, cwd: Path | None) -> str:
    """A relative URI reference for ``path``: relative to ``cwd``, ``/`` separators, escaped."""
    return quote(relative_posix(path, cwd), safe="/")
