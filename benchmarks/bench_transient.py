"""Wall time of ``rulecheck check --transient`` on the clinic sample and a generated building.

    python benchmarks/bench_transient.py            # clinic + 500-fixture tower (20 x 25)
    python benchmarks/bench_transient.py --floors 10 --fixtures 50
    python benchmarks/bench_transient.py --batches 1 16 64 128   # also: events per stacked run

Each layout is checked in a subprocess, as a user runs it (start-up included), best of
``--repeat`` runs; the screening-only check is timed beside it. Target (issue: transient
simulation): the 500-fixture building in 10 s or less on a 2-core machine.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from generate_tower import generate  # noqa: E402


def timed(args: list[str], repeat: int) -> tuple[float, dict]:
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
    print(f"{'layout':<34} {'quick valves':>12} {'screening s':>12} {'transient s':>12}")
    for path in (ROOT / "samples" / "fernhill-clinic.yaml", tower):
        screening, _ = timed([str(path)], args.repeat)
        transient, summary = timed([str(path), "--transient"], args.repeat)
        print(f"{path.name:<34} {quick_valves(path):>12} {screening:>12.2f} {transient:>12.2f}")
    print("target: the 500-fixture building in <= 10 s (check --transient, whole command)")
    if args.batches:
        sweep(tower, args.batches, args.repeat)


if __name__ == "__main__":
    main()
