"""Many layout files on a pool of worker processes, results in input order.

``check`` of a folder checks its files independently, so they can run on all cores. The
parent checks the first file itself, which imports every module and fills the one-time
caches (catalog, rule data, compiled schema); the workers are then forked from it and
share all that, so no worker pays the start-up again. Each worker returns only what the
report needs (path, profile, findings, or the file's input error), and results come back
in input order, so the report is the same bytes on any number of workers
(``tests/test_folder_pool.py``). Without ``fork`` (Windows, macOS' default), or for one
file, the files are checked in this process, one after another.
"""

from __future__ import annotations

import gc
import os
from collections.abc import Callable, Iterator
from dataclasses import replace
from pathlib import Path

from rulecheck import pipeline
from rulecheck.analysis.result import AnalysisOptions
from rulecheck.engine.context import Settings
from rulecheck.errors import InputError
from rulecheck.findings import Finding

#: one file's outcome: (path, profile, findings), or the input error that stopped it
Outcome = tuple[str, str, list[Finding]] | InputError


#: what a worker checks with: settings, profile per path, analysis options
Job = tuple[Settings, Callable[[Path], str | None], AnalysisOptions]


class _Job:
    """What a worker checks with (settings, profile per path, analysis options): set once
    per process by the pool's initializer (forked workers inherit it, nothing is pickled),
    and in the parent for the files it checks itself."""

    work: Job | None = None


def _start(
    settings: Settings, profile_for: Callable[[Path], str | None], options: AnalysisOptions
) -> None:
    _Job.work = (settings, profile_for, options)


def _check_one(path: Path) -> Outcome:
    if _Job.work is None:
        raise RuntimeError("folder worker started without its job")
    settings, profile_for, options = _Job.work
    try:
        result = pipeline.check_file(path, settings, profile_for(path), options)
    except InputError as exc:
        return exc
    return (result.path, result.profile, result.findings)


def default_workers() -> int:
    """The cores this process may use."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not on Linux
        return os.cpu_count() or 1


def check_files(
    paths: list[Path],
    settings: Settings,
    profile_for: Callable[[Path], str | None],
    options: AnalysisOptions,
    workers: int | None = None,
) -> Iterator[Outcome]:
    """Check ``paths``, yielding one outcome per path in input order.

    ``workers``: processes (default: the usable cores; 1 checks in this process). With
    more than one file per worker, a transient run inside a file stays in its worker
    (``AnalysisOptions.workers = 1``): the files are the parallel unit.
    """
    _start(settings, profile_for, options)
    count = min(workers or default_workers(), max(len(paths) - 1, 1))
    if count > 1:
        import multiprocessing as mp  # some 15 ms of imports: only for a pool

        if "fork" not in mp.get_all_start_methods():
            count = 1
    if count <= 1:
        for path in paths:
            yield _check_one(path)
        return
    yield _check_one(paths[0])  # imports and caches, before the fork
    rest = paths[1:]
    # one file per task: files differ in size, and a task's round trip (under a
    # millisecond) is small beside a file's check, so the workers end close together
    one_process = replace(options, workers=1)  # the files are the parallel unit
    # objects made so far are kept out of the collector's walks, which would otherwise
    # write to (and so copy) every page the forked workers share with this process
    gc.freeze()
    try:
        with mp.get_context("fork").Pool(
            count, initializer=_start, initargs=(settings, profile_for, one_process)
        ) as pool:
            yield from pool.imap(_check_one, rest, chunksize=1)
    finally:
        gc.unfreeze()
