"""One file through the whole pipeline: input → analysis → rules.

``rulecheck.input.load_layout`` (read, validate, build) → ``rulecheck.analysis.analyse``
(network, steady, screening, transient) → ``rulecheck.engine.run.run_rules`` (findings,
waivers). The command line calls these two functions; reporters format what they return.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from rulecheck.analysis import Analysis, AnalysisOptions, analyse
from rulecheck.engine.context import Settings
from rulecheck.engine.run import run_rules
from rulecheck.findings import Finding
from rulecheck.input import load_layout


@dataclass(frozen=True)
class FileResult:
    path: str
    profile: str
    findings: list[Finding]
    analysis: Analysis


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


def analyse_file(
    path: str | Path, profile: str | None = None, options: AnalysisOptions | None = None
) -> Analysis:
    """The analysis of one layout file (``InputError`` for a bad file)."""
    with _collector_paused():
        return analyse(load_layout(path, profile), options)


def check_file(
    path: str | Path,
    settings: Settings | None = None,
    profile: str | None = None,
    options: AnalysisOptions | None = None,
) -> FileResult:
    """The analysis of one layout file and the findings of the rules on it."""
    if options is not None and options.transient:
        from rulecheck.physics.transient import start_step_loop

        start_step_loop()  # the compiler (first run only) works while the file is read
    with _collector_paused():
        analysis = analyse(load_layout(path, profile), options)
        findings = run_rules(analysis, settings)
    return FileResult(analysis.layout.path, analysis.layout.profile, findings, analysis)
