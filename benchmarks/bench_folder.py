"""A folder of layouts: ``rulecheck check FOLDER`` on 2 worker processes against 1.

Generates 200 small layouts into ``benchmarks/out/folder-200/`` (towers of 1-4 floors and
6-30 fixtures a floor from ``generate_tower.py``, seeds varied, plus the samples), then
times the whole command (``python -m rulecheck check FOLDER --format json --jobs N``, a
subprocess, output discarded) for N = 1 and N = 2, the two taking turns round after round;
the figure is the median of each and the ratio is of the medians measured in this run. The
two reports are compared byte for byte.

    python benchmarks/bench_folder.py                  # 200 files, 5 rounds
    python benchmarks/bench_folder.py --files 60 --repeat 3

Target (issue 14): 2 workers within 0.6x of 1 worker.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from generate_tower import generate  # noqa: E402

TARGET = 0.6


def make_folder(count: int) -> Path:
    folder = HERE / "out" / f"folder-{count}"
    if folder.is_dir() and len(list(folder.glob("*.yaml"))) == count:
        return folder
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    samples = sorted((ROOT / "samples").glob("*.yaml"))
    for i in range(count):
        if i % 10 == 0:  # one in ten a sample
            sample = samples[(i // 10) % len(samples)]
            (folder / f"{i:03d}-{sample.name}").write_bytes(sample.read_bytes())
            continue
        floors, fixtures = 1 + i % 4, 6 + (i * 7) % 25
        text = generate(floors, fixtures, seed=1 + i)
        (folder / f"{i:03d}-tower-{floors}x{fixtures}.yaml").write_text(text, encoding="utf-8")
    return folder


def _cpu() -> float:
    used = resource.getrusage(resource.RUSAGE_CHILDREN)
    return used.ru_utime + used.ru_stime


def run(folder: Path, jobs: int) -> tuple[float, float, bytes]:
    """Wall seconds, CPU seconds (the command and its workers) and the report."""
    command = [sys.executable, "-m", "rulecheck", "check", str(folder), "--format", "json"]
    cpu = _cpu()
    start = time.perf_counter()
    done = subprocess.run([*command, "--jobs", str(jobs)], capture_output=True)
    elapsed = time.perf_counter() - start
    cpu = _cpu() - cpu
    if done.returncode not in (0, 1):
        raise SystemExit(f"check failed ({done.returncode}): {done.stderr.decode()[:500]}")
    return elapsed, cpu, done.stdout


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=200, help="layouts in the folder")
    parser.add_argument("--repeat", type=int, default=5, help="rounds (default 5)")
    args = parser.parse_args()
    folder = make_folder(args.files)
    times: dict[int, list[float]] = {1: [], 2: []}
    cpus: dict[int, list[float]] = {1: [], 2: []}
    reports: dict[int, bytes] = {}
    run(folder, 1)  # warm the file cache
    for _ in range(args.repeat):
        for jobs in (1, 2):
            elapsed, cpu, reports[jobs] = run(folder, jobs)
            times[jobs].append(elapsed)
            cpus[jobs].append(cpu)
    one, two = statistics.median(times[1]), statistics.median(times[2])
    load = f"load average {os.getloadavg()[0]:.2f}" if hasattr(os, "getloadavg") else ""
    print(f"{args.files} layouts in {folder.relative_to(ROOT)}; {args.repeat} rounds; {load}")
    for jobs, label in ((1, "1 worker: "), (2, "2 workers:")):
        wall, cpu = statistics.median(times[jobs]), statistics.median(cpus[jobs])
        print(
            f"{label} median {wall:.2f} s (min {min(times[jobs]):.2f}); CPU {cpu:.2f} s, "
            f"{cpu / wall:.2f} cores obtained"
        )
    print("(on a shared machine fewer than 2 cores may be free: see 'cores obtained')")
    print(f"same report bytes: {reports[1] == reports[2]}")
    verdict = "met" if two / one <= TARGET else "not met"
    print(f"target: 2 workers <= {TARGET}x 1 worker: {two / one:.2f}x, {verdict}")
    return 0 if reports[1] == reports[2] else 1


if __name__ == "__main__":
    raise SystemExit(main())
