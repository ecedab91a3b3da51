"""How far the path model of ``check --transient`` is from a whole-service-tree run.

    python benchmarks/path_vs_whole.py                 # samples + every 19th valve of the tower
    python benchmarks/path_vs_whole.py --every 5       # more of the tower

For each quick-closing valve it runs the transient twice, on the whole service tree
and on the path model (the valve's path to its source plus the credited arrester), and
reports the ratio of the peaks (path / whole), the events where the path model is more
than 2 % low, the cavitation verdicts that differ, and what a whole-tree run costs in
section-steps (reaches x time steps) against the path model. The numbers behind
``rulecheck.analysis.result.WHOLE_TREE_PIPES``.
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(ROOT))

from generate_tower import generate  # noqa: E402

from rulecheck.analysis.transient_model import EventSetup, prepare_event, read_back  # noqa: E402
from rulecheck.physics.transient import simulate  # noqa: E402
from rulecheck.physics.transient_grid import reaches_for_time_step  # noqa: E402
from rulecheck.pipeline import analyse_file  # noqa: E402

PSI = 6894.757  # Pa [S: NIST SP 811]


def section_steps(setup: EventSetup) -> int:
    travel = [p.length / p.wave_speed for p in setup.network.pipes]
    reaches, _ = reaches_for_time_step(travel, setup.dt)
    return (int(reaches.sum()) + len(travel)) * math.ceil(setup.duration / setup.dt)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--every", type=int, default=19, help="every Nth quick valve of the tower")
    args = parser.parse_args()
    out = HERE / "out"
    out.mkdir(exist_ok=True)
    tower = out / "tower-20x25.yaml"
    tower.write_text(generate(20, 25), encoding="utf-8")
    layouts = [*sorted((ROOT / "samples").glob("*.yaml")), tower]
    rows = []
    for path in layouts:
        analysis = analyse_file(path)
        events = [e for e in analysis.surge.events if e.quick]
        if path == tower:
            events = events[:: args.every]
        for event in events:
            runs, cost = [], []
            for whole in (True, False):
                setup = prepare_event(analysis, event, whole_tree=whole)
                result = simulate(setup.network, setup.duration, dt=setup.dt)
                runs.append(read_back(analysis, setup, result))
                cost.append(section_steps(setup))
            rows.append((path.stem, event.fixture.id, event.side, *runs, *cost))
    ratio = np.array([path.peak / whole.peak for _, _, _, whole, path, _, _ in rows])
    low = [r for r, x in zip(rows, ratio, strict=True) if x < 0.98]
    differ = [r for r in rows if r[3].result.cavitation != r[4].result.cavitation]
    print(f"{len(rows)} quick valves ({', '.join(p.stem for p in layouts)})")
    print(
        f"peak, path model / whole tree: min {ratio.min():.3f}, median {np.median(ratio):.3f}, "
        f"max {ratio.max():.3f}"
    )
    print(f"path model more than 2 % low: {len(low)}; cavitation verdicts differ: {len(differ)}")
    for name, fixture, side, whole, path, _, _ in sorted(rows, key=lambda r: r[4].peak / r[3].peak)[
        :5
    ]:
        print(
            f"  {name} {fixture}:{side}: whole {whole.peak / PSI:.1f} psi, "
            f"path {path.peak / PSI:.1f} psi"
        )
    for name in dict.fromkeys(r[0] for r in rows):
        mine = [r for r in rows if r[0] == name]
        whole_cost = sum(r[5] for r in mine)
        path_cost = sum(r[6] for r in mine)
        print(f"{name}: whole tree costs {whole_cost / path_cost:.1f}x the path model")


if __name__ == "__main__":
    main()
