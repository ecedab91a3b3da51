"""`rulecheck size` on the generated towers, as a ratio to `check` of the same file.

Target (issue 12): size ≤ 3 × check on the 10k-pipe tower, and the cost per pipe flat
(linear) from 1k to 100k pipes. Both are timed in-process, best of ``--repeat``, the same
way: ``size_file`` (read, size, add arresters, check the sized layout) against
``check_file`` (read, analyse, check); ``--output`` adds the written file (the in-place
splice of the changed values, plus a re-read of the written file).

    python benchmarks/bench_size.py                     # 1k and 10k pipes
    python benchmarks/bench_size.py --sizes 1000 10000 100000
"""

from __future__ import annotations

import argparse
import contextlib
import functools
import io
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    from rulecheck.cli import main as cli
    from rulecheck.pipeline import check_file
    from rulecheck.sizing_run import size_file

    out = HERE / "out"
    out.mkdir(exist_ok=True)
    print(
        f"{'pipes':>7} {'check s':>8} {'size s':>8} {'ratio':>6} {'size+output s':>14} "
        f"{'size µs/pipe':>13} {'changes':>8}"
    )
    for n in args.sizes:
        path = out / f"tower-{n}.yaml"
        if not path.exists():
            subprocess.run(
                [
                    sys.executable,
                    str(HERE / "generate_tower.py"),
                    "--pipes",
                    str(n),
                    "-o",
                    str(path),
                ],
                check=True,
            )
        check = _best(functools.partial(check_file, path), args.repeat)
        result = size_file(path)
        size = _best(functools.partial(size_file, path), args.repeat)
        with tempfile.TemporaryDirectory() as tmp:
            target = Path(tmp) / "sized.yaml"

            def write(target: Path = target, path: Path = path) -> None:
                target.unlink(missing_ok=True)
                cli(["size", str(path), "--output", str(target), "--format", "json"])

            with contextlib.redirect_stdout(io.StringIO()):
                written = _best(write, 1)
        pipes = len(result.layout.pipes)
        print(
            f"{pipes:>7} {check:>8.2f} {size:>8.2f} {size / check:>6.2f} {written:>14.2f} "
            f"{size / pipes * 1e6:>13.0f} {len(result.sizing.changes):>8}"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
