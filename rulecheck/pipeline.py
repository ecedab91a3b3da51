"""One file through the whole pipeline: load → validate → build → network → analyse → rules."""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager
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


@contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while one file is processed.

    A layout becomes trees of dicts, lists and records, with no reference cycles, so a
    collection finds nothing; but full collections re-scan every live object, which
    made the cost per pipe grow with the file (×1.44 from 10k to 100k pipes, flat with
    the collector off; benchmarks/bench_check.py). Reference counting still frees
    everything; the collector resumes, as it was, after the file.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def load_layout(path: str | Path, profile: str | None = None) -> Layout:
    """Parse, validate and build one layout; raises InputError with every problem found."""
    doc = load_file(path)
    problems = ProblemCollector(doc.path)
    validate(doc, problems)
    problems.raise_if_any()
    return build_layout(doc, set(rule_specs()), profile)


def analyse_file(path: str | Path, profile: str | None = None) -> Analysis:
    with _collector_paused():
        return _analyse(path, profile)


def _analyse(path: str | Path, profile: str | None) -> Analysis:
    layout = load_layout(path, profile)
    analysis = analyse(layout, build_network(layout))
    analysis.surge = screen_surges(analysis)
    return analysis


def check_file(
    path: str | Path, settings: Settings | None = None, profile: str | None = None
) -> FileResult:
    with _collector_paused():
        return _check(path, settings, profile)


def _check(path: str | Path, settings: Settings | None, profile: str | None) -> FileResult:
    analysis = _analyse(path, profile)
    if settings is not None and settings.transient:
        from rulecheck.transient_setup import apply_transient

        apply_transient(analysis)
    findings = run_rules(analysis, settings)
    return FileResult(analysis.layout.path, analysis.layout.profile, findings, analysis)
