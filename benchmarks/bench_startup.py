"""Start-up: ``rulecheck check`` on the smallest sample against ``import yaml, numpy``.

Each command runs as a fresh subprocess (output discarded); the commands take turns, round
after round, so a load that comes and goes on a shared machine hits them alike, and the
figure is the median of each. The ratio is of the medians measured in this run.

    python benchmarks/bench_startup.py                 # 15 rounds
    python benchmarks/bench_startup.py --repeat 31 --importtime
    python benchmarks/bench_startup.py --before /tmp/old   # also an older checkout, same rounds

Run with the package's bytecode compiled (``python -m compileall -q rulecheck``; a wheel
install compiles it): with PYTHONDONTWRITEBYTECODE set and no .pyc, every run compiles the
sources again, some 0.2 s that no installed copy pays.

The console script (``rulecheck check``, beside the interpreter when rulecheck is installed
in its environment) is timed too: it runs the same code without ``runpy``.

Target (issue 14): ``check`` (text report) within 1.5x the bare imports.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
TARGET = 1.5


def smallest_sample() -> Path:
    return min(sorted((ROOT / "samples").glob("*.yaml")), key=lambda p: p.stat().st_size)


def timed(command: list[str], env: dict[str, str] | None = None) -> float:
    start = time.perf_counter()
    done = subprocess.run(
        command,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        env=env,
        cwd=env["PYTHONPATH"] if env and env.get("BENCH_CWD") else ROOT,
    )
    elapsed = time.perf_counter() - start
    if done.returncode not in (0, 1):  # 1: the sample has findings
        raise SystemExit(f"{' '.join(command)} failed with exit status {done.returncode}")
    return elapsed


def importtime(command: list[str], top: int) -> None:
    """The slowest imports of ``command`` by cumulative time (``python -X importtime``)."""
    done = subprocess.run(
        [command[0], "-X", "importtime", *command[1:]],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )
    rows = []
    for line in done.stderr.splitlines():
        parts = line.split("|")
        if len(parts) == 3 and parts[1].strip().isdigit():
            rows.append((int(parts[1]), parts[2].rstrip()))
    for cumulative, name in sorted(rows, reverse=True)[:top]:
        print(f"  {cumulative / 1000:7.1f} ms  {name}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=15, help="rounds (default 15)")
    parser.add_argument("--importtime", action="store_true", help="also list the slow imports")
    parser.add_argument("--before", type=Path, help="a checkout of older code to time alike")
    args = parser.parse_args()
    sample = smallest_sample()
    python = sys.executable
    commands = {
        "import yaml, numpy": [python, "-c", "import yaml, numpy"],
        "check (text)": [python, "-m", "rulecheck", "check", str(sample)],
        "check --format json": [
            python,
            "-m",
            "rulecheck",
            "check",
            str(sample),
            "--format",
            "json",
        ],
    }
    script = Path(python).with_name("rulecheck")  # the console script, as a user types it
    if script.exists():
        commands["rulecheck check (script)"] = [str(script), "check", str(sample)]
    envs: dict[str, dict[str, str] | None] = {name: None for name in commands}
    if args.before is not None:
        # run in the old checkout: ``python -m`` puts the working folder first on the path
        old = dict(os.environ, PYTHONPATH=str(args.before.resolve()), BENCH_CWD="before")
        subprocess.run([python, "-m", "compileall", "-q", str(args.before / "rulecheck")])
        commands["before: check (text)"] = commands["check (text)"]
        envs["before: check (text)"] = old
    subprocess.run([python, "-m", "compileall", "-q", str(ROOT / "rulecheck")])
    env_note = f"load average {os.getloadavg()[0]:.2f}" if hasattr(os, "getloadavg") else ""
    for name, command in commands.items():  # warm the file cache
        timed(command, envs[name])
    times: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(args.repeat):
        for name, command in commands.items():
            times[name].append(timed(command, envs[name]))
    base = statistics.median(times["import yaml, numpy"])
    print(f"sample: {sample.relative_to(ROOT)}; {args.repeat} interleaved rounds; {env_note}")
    print(f"{'command':<24} {'median s':>9} {'min s':>7} {'ratio':>6}")
    for name, values in times.items():
        median = statistics.median(values)
        print(f"{name:<24} {median:9.3f} {min(values):7.3f} {median / base:6.2f}")
    ratio = statistics.median(times["check (text)"]) / base
    verdict = "met" if ratio <= TARGET else "not met"
    print(f"target: check (text) <= {TARGET}x the bare imports: {ratio:.2f}x, {verdict}")
    if args.importtime:
        print("slowest imports of check (text), cumulative:")
        importtime(commands["check (text)"], 15)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
