"""The tower's simulation against a plain C loop of the same MOC update (node-updates/s).

1. ``check --transient``'s simulation step (``analysis.transient_run.simulate_valves``, one
   worker, in process) on the 500-fixture tower (20 floors x 25 fixtures, from
   ``generate_tower.py``); node-updates = sections x steps of every simulated network
   (the steps a stacked run spends on members that have ended are not counted).
2. On the largest stacked grid of that run: the numpy interior update alone
   (``physics.transient_grid.InteriorUpdate``) and ``moc_reference.c``, the same update as a
   plain C loop, compiled here with the system compiler (``cc -O2``, no fast-math), from the
   same state for the same steps; their heads are compared.

The three take turns for ``--repeat`` rounds; figures are medians; ratios are of figures
measured in this run. Without a C compiler the script says so and prints the Python ones.

    python benchmarks/bench_moc_c.py                  # 3 rounds
    python benchmarks/bench_moc_c.py --repeat 5 --kernel-steps 4000

Target (issue 14): the tower's simulation at 30 % or more of the C loop's node-updates/s.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(ROOT))

from generate_tower import generate  # noqa: E402

from rulecheck.analysis import AnalysisOptions, transient_run  # noqa: E402
from rulecheck.physics import _moc_compiled as moc_compiled  # noqa: E402
from rulecheck.physics import transient_grid, transient_stack  # noqa: E402
from rulecheck.pipeline import analyse_file  # noqa: E402

TARGET = 0.30
_COUNT = {"updates": 0}
_LARGEST: dict[str, object] = {}


def _instrument() -> None:
    """Count each simulated network's sections x steps (at the split of the stacked run's
    results, whichever step loop ran); keep the largest grid and its first state (the
    interior update is bound to the state before the first step)."""
    cls = transient_grid.InteriorUpdate
    init = cls.__init__
    split = transient_stack.NetworkStack.split

    def keeping_init(self, grid, head, q, c):  # type: ignore[no-untyped-def]
        init(self, grid, head, q, c)
        if grid.n_sections > getattr(_LARGEST.get("grid"), "n_sections", 0):
            _LARGEST.update(grid=grid, start=(head.copy(), q.copy(), c.copy()))

    def counting_split(self, grid, record):  # type: ignore[no-untyped-def]
        # each network's sections x its own steps: what the simulation needs, not the
        # steps a stacked run could spend on members that have already ended
        sections = np.diff(np.append(grid.offset, grid.n_sections)[self.pipe_off])
        _COUNT["updates"] += int((sections * record.n_steps).sum())
        return split(self, grid, record)

    cls.__init__ = keeping_init  # type: ignore[method-assign]
    transient_stack.NetworkStack.split = counting_split  # type: ignore[method-assign]


def tower_run(path: Path) -> tuple[float, int]:
    analysis = analyse_file(path)
    _COUNT["updates"] = 0
    start = time.perf_counter()
    transient_run.simulate_valves(analysis, AnalysisOptions(transient=True, workers=1))
    return time.perf_counter() - start, _COUNT["updates"]


def kernel_numpy(steps: int) -> tuple[float, np.ndarray]:
    head, q, c = (x.copy() for x in _LARGEST["start"])  # type: ignore[union-attr]
    update = transient_grid.InteriorUpdate(_LARGEST["grid"], head, q, c)  # type: ignore[arg-type]
    start = time.perf_counter()
    for _ in range(steps):
        update()
    return time.perf_counter() - start, head


def compile_reference(folder: Path) -> Path | None:
    cc = shutil.which("cc") or shutil.which("gcc") or shutil.which("clang")
    if cc is None:
        return None
    exe = folder / "moc_reference"
    flags = ["-O2", "-ffp-contract=off", "-fno-fast-math"]
    done = subprocess.run(
        [cc, *flags, str(HERE / "moc_reference.c"), "-o", str(exe), "-lm"], capture_output=True
    )
    if done.returncode != 0:
        print(f"C compiler failed: {done.stderr.decode()[:300]}")
        return None
    return exe


def kernel_c(exe: Path, folder: Path, steps: int) -> tuple[float, np.ndarray]:
    grid = _LARGEST["grid"]
    head, q, c = _LARGEST["start"]  # type: ignore[misc]
    n = grid.n_sections  # type: ignore[attr-defined]
    parts = [np.array([float(n)]), head, q[:n], q[n:], c[:n], c[n:]]
    parts += [grid.Bm, grid.Bp, grid.Rm, grid.Rp, grid.inv2B]  # type: ignore[attr-defined]
    source, result = folder / "state.bin", folder / "head.bin"
    np.concatenate([np.asarray(p, dtype=np.float64) for p in parts]).tofile(source)
    done = subprocess.run(
        [str(exe), str(source), str(result), str(steps)], capture_output=True, text=True
    )
    if done.returncode != 0:
        raise SystemExit(f"moc_reference failed: {done.stderr}")
    return float(done.stdout), np.fromfile(result, dtype=np.float64)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--floors", type=int, default=20)
    parser.add_argument("--fixtures", type=int, default=25, help="fixtures per floor")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--kernel-steps", type=int, default=2000)
    args = parser.parse_args()
    out = HERE / "out"
    out.mkdir(exist_ok=True)
    tower = out / f"tower-{args.floors}x{args.fixtures}.yaml"
    tower.write_text(generate(args.floors, args.fixtures), encoding="utf-8")
    _instrument()
    tower_run(tower)  # warm-up; finds the largest grid
    tower_rate, numpy_rate, c_rate = [], [], []
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        exe = compile_reference(folder)
        agree = None
        for _ in range(args.repeat):
            seconds, updates = tower_run(tower)
            tower_rate.append(updates / seconds)
            n = _LARGEST["grid"].n_sections  # type: ignore[attr-defined]
            seconds, head_np = kernel_numpy(args.kernel_steps)
            numpy_rate.append(n * args.kernel_steps / seconds)
            if exe is not None:
                seconds, head_c = kernel_c(exe, folder, args.kernel_steps)
                c_rate.append(n * args.kernel_steps / seconds)
                agree = float(np.max(np.abs(head_c - head_np)))
    sim, kern = statistics.median(tower_rate), statistics.median(numpy_rate)
    print(f"tower {tower.name}: {updates:,} node-updates a run; largest stacked grid {n} sections")
    print(f"step loop: {moc_compiled.engine()}")
    print(f"tower simulation (1 worker):     {sim:10.3e} node-updates/s")
    print(f"numpy interior update alone:     {kern:10.3e} node-updates/s")
    if not c_rate:
        print("no C compiler: no reference figure")
        return 0
    c = statistics.median(c_rate)
    print(f"C loop of the same update:       {c:10.3e} node-updates/s")
    print(f"heads after {args.kernel_steps} steps, C vs numpy: max difference {agree:.3g} m")
    print(f"numpy interior update / C: {kern / c:.1%}")
    verdict = "met" if sim / c >= TARGET else "not met"
    print(f"target: tower simulation >= {TARGET:.0%} of the C loop: {sim / c:.1%}, {verdict}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
