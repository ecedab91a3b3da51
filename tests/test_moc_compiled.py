"""The compiled step loop (``physics/moc_kernel.c``) against the numpy loop it repeats.

The C kernel does the numpy loop's operations in the same order, so the two give the same
results to round-off (1e-9 relative, the bound the speed work promised; on the project's
machine they agree to the last bit). The numpy loop is the one checked against analytic
solutions and published figures (``test_transient_validation.py``); these tests tie the
kernel to it on every kind of part: arresters on and off their stop, cavities at nodes and
in pipes, stacked networks of different dt and duration, progress reports, event tables
that must grow, and every valve event of the samples. Without a C compiler on the machine
they are skipped: then the numpy loop is the only one that runs.
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
from test_transient_batch import CASES, assert_same, hot_branch

from rulecheck.analysis.result import AnalysisOptions
from rulecheck.analysis.transient_run import simulate_valves
from rulecheck.physics import _moc_compiled as moc_compiled
from rulecheck.physics.transient import (
    ClosingValve,
    TransientNetwork,
    TransientPipe,
    simulate,
    simulate_many,
)
from rulecheck.pipeline import analyse_file

SAMPLES = Path(__file__).resolve().parent.parent / "samples"


def over_a_crest(v0: float = 1.0) -> TransientNetwork:
    """Reservoir at 12 m head -> 60 m rising to a crest 6 m up -> 60 m down to a valve shut at
    once: the column parts at the valve and all along the pipes [D: test network]."""
    d = 0.05
    q = v0 * math.pi * d * d / 4
    pipes = (
        TransientPipe(0, 1, 60.0, d, 1000.0, 0.02, q),
        TransientPipe(1, 2, 60.0, d, 1000.0, 0.02, q),
    )
    return TransientNetwork(
        3, pipes, (0.0, 6.0, 0.0), {0: 12.0}, ClosingValve(2, 0.0), density=998.2
    )


needs_compiler = pytest.mark.skipif(
    moc_compiled.load() is None, reason=f"no compiled kernel: {moc_compiled.reason()}"
)


@pytest.fixture
def numpy_loop(monkeypatch: pytest.MonkeyPatch) -> None:
    """Make this process run the numpy step loop."""
    monkeypatch.setattr(moc_compiled._Loaded, "library", None)
    monkeypatch.setattr(moc_compiled._Loaded, "tried", True)
    monkeypatch.setattr(moc_compiled._Loaded, "reason", "test")


def _numpy(run, monkeypatch: pytest.MonkeyPatch):  # type: ignore[no-untyped-def]
    with monkeypatch.context() as m:
        m.setattr(moc_compiled._Loaded, "library", None)
        m.setattr(moc_compiled._Loaded, "tried", True)
        return run()


@needs_compiler
@pytest.mark.parametrize("case", range(len(CASES)))
def test_kernel_matches_the_numpy_loop_on_each_kind_of_part(
    case: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    network, duration, dt = CASES[case]
    compiled = simulate(network, duration, dt)
    reference = _numpy(lambda: simulate(network, duration, dt), monkeypatch)
    assert_same(compiled, reference)


@needs_compiler
def test_kernel_matches_with_cavities_at_nodes_and_in_pipes(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    compiled = simulate(over_a_crest(), 1.0, 0.003)
    reference = _numpy(lambda: simulate(over_a_crest(), 1.0, 0.003), monkeypatch)
    assert_same(compiled, reference)
    assert len(compiled.cavity_events) > 10 and len(compiled.pipe_cavity_events) > 100


@needs_compiler
def test_kernel_matches_on_a_stack_of_different_networks(monkeypatch: pytest.MonkeyPatch) -> None:
    nets = [c[0] for c in CASES] + [over_a_crest(2.0)]
    durations = [c[1] for c in CASES] + [0.7]
    dts = [c[2] for c in CASES] + [0.004]
    compiled = simulate_many(nets, durations, dts)
    reference = _numpy(lambda: simulate_many(nets, durations, dts), monkeypatch)
    for a, b in zip(compiled, reference, strict=True):
        assert_same(a, b)


@needs_compiler
def test_progress_reports_and_growing_event_tables_change_nothing(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    network = over_a_crest()  # cavities open and close many times
    plain = simulate(network, 1.0, 0.003)
    seen: list[float] = []
    grown = []
    grow = moc_compiled._PlaceBuffers.grow
    monkeypatch.setattr(moc_compiled, "SPARE_EVENTS", 0)  # tables start one step deep
    monkeypatch.setattr(moc_compiled._PlaceBuffers, "grow", lambda b: grown.append(grow(b)))
    chunked = simulate(network, 1.0, 0.003, progress=seen.append)
    assert_same(plain, chunked)
    assert grown  # the tables had to grow
    assert 1 < len(seen) <= 100 and seen[-1] == 1.0 and seen == sorted(seen)


@needs_compiler
@pytest.mark.parametrize("sample", sorted(p.name for p in SAMPLES.glob("*.yaml")))
def test_every_valve_event_of_the_samples_runs_the_same(
    sample: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    analysis = analyse_file(SAMPLES / sample)
    options = AnalysisOptions(transient=True, all_valves=True, workers=1)
    compiled = simulate_valves(analysis, options)
    reference = _numpy(lambda: simulate_valves(analysis, options), monkeypatch)
    assert len(compiled) == len(reference) and any(o and o.ran for o in compiled)
    for a, b in zip(compiled, reference, strict=True):
        if a is None or b is None:
            assert a is b
            continue
        assert (a.method, a.ran, a.column_separation, a.cavity_at, a.note) == (
            b.method,
            b.ran,
            b.column_separation,
            b.cavity_at,
            b.note,
        )
        for field in ("peak", "minimum"):
            x, y = getattr(a, field), getattr(b, field)
            assert x == pytest.approx(y, rel=1e-9, abs=1e-6), field
        assert [p for p, _ in a.pipe_peaks] == [p for p, _ in b.pipe_peaks]
        assert [v for _, v in a.pipe_peaks] == pytest.approx(
            [v for _, v in b.pipe_peaks], rel=1e-9, abs=1e-6
        )


def test_numpy_loop_runs_where_no_kernel_can_be_built(numpy_loop: None) -> None:
    assert moc_compiled.engine() == "numpy (test)"
    result = simulate(hot_branch(), 0.3)
    assert result.peak_pressure > result.node_initial_pressure[2]


#: a fresh process's answer to which step loop runs
STEP_LOOP = "from rulecheck.physics.transient import step_loop; print(step_loop())"


def _kernel_env(cache: Path) -> dict[str, str]:
    """This environment with the compiled loop allowed and its cache in ``cache``."""
    env = {**os.environ, "RULECHECK_CACHE_DIR": str(cache)}
    env.pop("RULECHECK_KERNEL", None)
    return env


def _fresh(env: dict[str, str], code: str) -> str:
    done = subprocess.run(
        [sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True
    )
    return done.stdout.strip()


def test_no_compiler_falls_back_with_its_reason(tmp_path: Path) -> None:
    env = {**os.environ, "CC": str(tmp_path / "no-such-cc"), "RULECHECK_CACHE_DIR": str(tmp_path)}
    env["PATH"] = str(tmp_path)  # neither sysconfig's compiler nor cc on the path
    code = STEP_LOOP
    assert _fresh(env, code) == "numpy (no C compiler found (set CC to use one))"
    assert not list(tmp_path.glob("moc_kernel-*"))


def test_environment_switch_selects_the_numpy_loop(tmp_path: Path) -> None:
    env = {**os.environ, "RULECHECK_KERNEL": "numpy", "RULECHECK_CACHE_DIR": str(tmp_path)}
    code = STEP_LOOP
    assert _fresh(env, code) == "numpy (RULECHECK_KERNEL=numpy)"


@needs_compiler
def test_kernel_is_built_once_into_the_cache_and_reused(tmp_path: Path) -> None:
    env, code = _kernel_env(tmp_path / "cache"), STEP_LOOP
    assert _fresh(env, code) == "compiled C"
    built = list((tmp_path / "cache").glob("moc_kernel-*.so"))
    assert len(built) == 1
    stamp = built[0].stat().st_mtime_ns
    assert _fresh(env, code) == "compiled C"
    assert list((tmp_path / "cache").glob("moc_kernel-*")) == built  # no second build, no leftovers
    assert built[0].stat().st_mtime_ns == stamp


@needs_compiler
def test_a_compiler_that_fails_leaves_the_numpy_loop_and_no_file(tmp_path: Path) -> None:
    failing = tmp_path / "cc"
    failing.write_text("#!/bin/sh\necho 'cc: cannot compile today' >&2\nexit 1\n")
    failing.chmod(0o755)
    env = {**os.environ, "CC": str(failing), "RULECHECK_CACHE_DIR": str(tmp_path / "cache")}
    code = STEP_LOOP
    assert _fresh(env, code) == "numpy (the C kernel did not compile: cc: cannot compile today)"
    assert not list((tmp_path / "cache").glob("*"))


def test_kernel_slots_match_the_c_source() -> None:
    """The Python slot names and the C enums are the same list, in the same order."""
    text = moc_compiled.SOURCE.read_text(encoding="utf-8")
    body = text[text.index("enum {") : text.index("P_CAV,")]
    enum = [w.strip()[2:].lower() for w in body[len("enum {") :].split(",") if w.strip()]
    assert enum == [name.lower() for name in moc_compiled.POINTERS]
    places = text[text.index("enum { CV_") : text.index("CAV_SLOTS };")]
    names = [w.strip()[3:].lower() for w in places[len("enum {") :].split(",") if w.strip()]
    assert names == list(moc_compiled.PLACE_SLOTS)


@needs_compiler
def test_a_build_started_early_is_collected_once(tmp_path: Path) -> None:
    """``start_step_loop`` starts the compiler in the background; the first ``step_loop``
    waits for that build instead of starting another, and leaves one library, no
    temporary files."""
    env = _kernel_env(tmp_path / "cache")
    code = (
        "from rulecheck import native\n"
        "from rulecheck.physics.transient import start_step_loop, step_loop\n"
        "start_step_loop()\n"
        "print(len(native._PENDING), end=' ')\n"
        "print(step_loop(), len(native._PENDING))\n"
    )
    assert _fresh(env, code) == "1 compiled C 0"
    assert [p.name.startswith("moc_kernel-") for p in (tmp_path / "cache").iterdir()] == [True]
    assert _fresh(env, code) == "0 compiled C 0"  # cached: nothing to start


@needs_compiler
def test_check_transient_on_a_fresh_cache_builds_and_reports(tmp_path: Path) -> None:
    """The whole command on an empty cache: the build runs beside the screening and the
    report is the same bytes as with the numpy loop."""
    layout = SAMPLES / "fernhill-clinic.yaml"
    argv = [sys.executable, "-m", "rulecheck", "check", str(layout), "--transient"]
    argv += ["--format", "json", "--fail-on", "never"]
    fresh = {**os.environ, "RULECHECK_CACHE_DIR": str(tmp_path / "cache")}
    fresh.pop("RULECHECK_KERNEL", None)
    plain = {**os.environ, "RULECHECK_KERNEL": "numpy"}
    built = subprocess.run(argv, env=fresh, capture_output=True, check=True).stdout
    reference = subprocess.run(argv, env=plain, capture_output=True, check=True).stdout
    assert built == reference
    assert len(list((tmp_path / "cache").glob("moc_kernel-*.so"))) == 1


@needs_compiler
def test_a_torn_library_in_the_cache_is_built_again(tmp_path: Path) -> None:
    env, code = _kernel_env(tmp_path / "cache"), STEP_LOOP
    assert _fresh(env, code) == "compiled C"
    (built,) = (tmp_path / "cache").glob("moc_kernel-*.so")
    built.write_bytes(built.read_bytes()[:100])  # as a crash or a full disk would leave it
    assert _fresh(env, code) == "compiled C"
    assert built.stat().st_size > 1000


@needs_compiler
@pytest.mark.skipif(not hasattr(os, "getuid"), reason="POSIX permissions")
def test_a_folder_others_may_write_to_is_not_loaded_from(tmp_path: Path) -> None:
    """A library is code: one in a folder that anybody may write to is never loaded;
    the spare folder (in the temporary directory, made owner-only) is used instead."""
    shared = tmp_path / "shared"
    shared.mkdir()
    shared.chmod(0o777)
    spare_root = tmp_path / "tmp"
    spare_root.mkdir()
    env = {**_kernel_env(shared), "TMPDIR": str(spare_root)}
    assert _fresh(env, STEP_LOOP) == "compiled C"
    assert not list(shared.glob("moc_kernel-*"))
    (spare,) = spare_root.iterdir()
    assert list(spare.glob("moc_kernel-*.so")) and spare.stat().st_mode & 0o077 == 0


@needs_compiler
def test_a_build_nobody_collects_is_stopped_and_removed_at_exit(tmp_path: Path) -> None:
    env = _kernel_env(tmp_path / "cache")
    code = "from rulecheck.physics.transient import start_step_loop; start_step_loop()"
    _fresh(env, code)
    assert [p.name for p in (tmp_path / "cache").iterdir()] == []
