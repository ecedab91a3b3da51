"""One file through the whole pipeline: load → validate → build → network → analyse → rules."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from rulecheck.analysis import Analysis, analyse
from rulecheck.build import build_layout
from rulecheck.engine import Settings, run_rules
from rulecheck.errors import ProblemCollector
from rulecheck.findings import Finding
from rulecheck.loader import load_file
from rulecheck.model import Layout
from rulecheck.network import build_network
from rulecheck.rulebook import rule_specs
from rulecheck.schema import validate
from rulecheck.surge_analysis import screen_surges


@dataclass
class FileResult:
    path: str
    profile: str
    findings: list[Finding] = field(default_factory=list)
    analysis: Analysis | None = None


def load_layout(path: str | Path, profile: str | None = None) -> Layout:
    """Parse, validate and build one layout; raises InputError with every problem found."""
    doc = load_file(path)
    problems = ProblemCollector(doc.path)
    validate(doc, problems)
    problems.raise_if_any()
    return build_layout(doc, set(rule_specs()), profile)


def analyse_file(path: str | Path, profile: str | None = None) -> Analysis:
    layout = load_layout(path, profile)
    analysis = analyse(layout, build_network(layout))
    analysis.surge = screen_surges(analysis)
    return analysis


def check_file(
    path: str | Path, settings: Settings | None = None, profile: str | None = None
) -> FileResult:
    analysis = analyse_file(path, profile)
    if settings is not None and settings.transient:
        from rulecheck.transient_setup import apply_transient

        apply_transient(analysis)
    findings = run_rules(analysis, settings)
    return FileResult(analysis.layout.path, analysis.layout.profile, findings, analysis)
