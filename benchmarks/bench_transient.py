"""Wall time of ``rulecheck check --transient`` against the screening-only check.

    python benchmarks/bench_transient.py            # clinic + 500-fixture tower (20 x 25)
    python benchmarks/bench_transient.py --floors 10 --fixtures 50
    python benchmarks/bench_transient.py --batches 1 16 64 128   # also: events per stacked run

Each layout is checked in a subprocess, as a user runs it (start-up included,
``--format json``), in interleaved rounds (``--repeat``), medians reported:

* screening: ``check FILE``;
* transient: ``check FILE --transient`` with the compiled step loop already in its cache;
* first run: the same with an empty cache folder (``RULECHECK_CACHE_DIR``), so the run
  compiles ``physics/moc_kernel.c`` first, as the first run after an install does;
* numpy loop: the same with ``RULECHECK_KERNEL=numpy`` (the loop without a compiler).

Targets (issue 14), on the 500-fixture tower: transient <= 1.5x screening, first run <= 3x.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from generate_tower import generate  # noqa: E402


def timed(args: list[str], repeat: int, env: dict[str, str] | None = None) -> tuple[float, dict]:
    best, summary = float("inf"), {}
    for _ in range(repeat):
        start = time.perf_counter()
        run = subprocess.run(
            [
                sys.executable,
                "-m",
                "rulecheck",
                "check",
                *args,
                "--format",
                "json",
                "--fail-on",
                "never",
            ],
            capture_output=True,
            text=True,
            cwd=ROOT,
            check=False,
            env=env,
        )
        best = min(best, time.perf_counter() - start)
        if run.returncode != 0:
            raise SystemExit(f"check failed ({run.returncode}): {run.stderr[:500]}")
        summary = json.loads(run.stdout)["summary"]
    return best, summary


def quick_valves(path: Path) -> int:
    sys.path.insert(0, str(ROOT))
    from rulecheck.pipeline import analyse_file

    return sum(1 for e in analyse_file(path).surge.events if e.quick)


def sweep(path: Path, batches: list[int], repeat: int) -> None:
    """In-process time of the transient step alone for several batch sizes, 1 and 2 workers."""
    sys.path.insert(0, str(ROOT))
    from rulecheck.analysis import AnalysisOptions, transient_run
    from rulecheck.pipeline import analyse_file

    print(f"\n{path.name}: simulation step only (simulate_valves), best of {repeat}")
    print(f"{'events per run':>14} {'1 worker s':>11} {'2 workers s':>12}")
    for batch in batches:
        transient_run.BATCH_EVENTS = batch
        row = []
        for workers in (1, 2):
            best = float("inf")
            for _ in range(repeat):
                analysis = analyse_file(path)
                options = AnalysisOptions(transient=True, workers=workers)
                start = time.perf_counter()
                transient_run.simulate_valves(analysis, options)
                best = min(best, time.perf_counter() - start)
            row.append(best)
        print(f"{batch:>14} {row[0]:>11.2f} {row[1]:>12.2f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--floors", type=int, default=20)
    parser.add_argument("--fixtures", type=int, default=25, help="fixtures per floor")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument(
        "--batches", type=int, nargs="*", default=[], help="also time these events-per-run sizes"
    )
    args = parser.parse_args()
    out = HERE / "out"
    out.mkdir(exist_ok=True)
    tower = out / f"tower-{args.floors}x{args.fixtures}.yaml"
    tower.write_text(generate(args.floors, args.fixtures), encoding="utf-8")
    cache = Path(tempfile.mkdtemp(prefix="bench-kernel-"))
    warm = {**os.environ, "RULECHECK_CACHE_DIR": str(cache / "warm")}
    plain = {**os.environ, "RULECHECK_KERNEL": "numpy"}
    timed(["samples/two-bath-house.yaml", "--transient"], 1, warm)  # fills the warm cache
    print(
        f"{'layout':<24} {'valves':>6} {'screening s':>11} {'transient s':>11} "
        f"{'first run s':>11} {'numpy loop s':>12} {'ratio':>6} {'first':>6}"
    )
    for path in (ROOT / "samples" / "fernhill-clinic.yaml", tower):
        rows: dict[str, list[float]] = {"s": [], "t": [], "f": [], "n": []}
        for r in range(args.repeat):
            fresh = {**os.environ, "RULECHECK_CACHE_DIR": str(cache / f"fresh-{path.stem}-{r}")}
            rows["s"].append(timed([str(path)], 1)[0])
            rows["t"].append(timed([str(path), "--transient"], 1, warm)[0])
            rows["f"].append(timed([str(path), "--transient"], 1, fresh)[0])
            rows["n"].append(timed([str(path), "--transient"], 1, plain)[0])
        med = {k: statistics.median(v) for k, v in rows.items()}
        print(
            f"{path.name:<24} {quick_valves(path):>6} {med['s']:>11.2f} {med['t']:>11.2f} "
            f"{med['f']:>11.2f} {med['n']:>12.2f} {med['t'] / med['s']:>6.2f} "
            f"{med['f'] / med['s']:>6.2f}"
        )
    shutil.rmtree(cache, ignore_errors=True)
    print(
        "targets (tower): transient <= 1.5x screening, first run <= 3x; "
        f"load average {os.getloadavg()[0]:.2f}"
    )
    if args.batches:
        sweep(tower, args.batches, args.repeat)


if __name__ == "__main__":
    main()
