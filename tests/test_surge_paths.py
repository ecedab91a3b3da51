"""``physics.surge_paths.path_surges`` (all valve paths at once) against the per-path
functions of ``physics.surge`` (themselves checked against Massoud's worked example and
the PDI quick-closure criterion in tests/test_physics_surge.py): equal to the last bit."""

from __future__ import annotations

import numpy as np
import pytest

from rulecheck.physics.surge import critical_time, joukowsky, surge_pressure
from rulecheck.physics.surge_paths import path_surges


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_every_path_equals_its_own_computation_bit_for_bit(seed: int) -> None:
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 160, 300)  # past numpy's 8-way and 128-element summation blocks
    starts = np.concatenate(([0], np.cumsum(sizes)[:-1]))
    total = int(sizes.sum())
    lengths = rng.uniform(0.05, 40.0, total)
    speeds = rng.uniform(250.0, 1450.0, total)
    stopped = rng.uniform(0.0, 4.0, total)
    rho = rng.uniform(950.0, 1000.0, sizes.size)
    closure = rng.choice([0.0, 0.005, 0.02, 0.1, 0.5], sizes.size)
    t_c, rise, surge, column = path_surges(rho, lengths, speeds, stopped, closure, starts)
    for e, (first, size) in enumerate(zip(starts.tolist(), sizes.tolist(), strict=True)):
        part = slice(first, first + size)
        assert t_c[e] == critical_time(lengths[part], speeds[part])
        assert rise[e] == joukowsky(rho[e], speeds[first], stopped[first])
        assert surge[e] == surge_pressure(
            rho[e], lengths[part], speeds[part], stopped[part], closure[e]
        )
        assert column[e] == np.sum(lengths[part] * stopped[part])


def test_massoud_joukowsky_and_michaud_cases() -> None:
    # Massoud IIIb.7.1: a = 4900 ft/s, dv = 1 ft/s, about 66 psi for a quick closure;
    # the same 400 ft path closed in 2 s takes Michaud's 2 rho L dv / t [S: Massoud IIIb.7]
    ft, psi = 0.3048, 6894.757
    _, rise, surge, _ = path_surges(
        [999.0, 999.0], [400 * ft, 400 * ft], [4900 * ft] * 2, [ft, ft], [0.0, 2.0], [0, 1]
    )
    assert round(rise[0] / psi) == 66 and surge[0] == rise[0]
    assert surge[1] == pytest.approx(2 * 999.0 * 400 * ft * ft / 2.0, rel=1e-12)


@pytest.mark.parametrize(
    ("starts", "speeds"),
    [([0, 0], [1300.0, 1300.0]), ([1, 2], [1300.0, 1300.0]), ([0, 1], [1300.0, 0.0])],
)
def test_refuses_empty_paths_and_non_positive_speeds(
    starts: list[int], speeds: list[float]
) -> None:
    with pytest.raises(ValueError):
        path_surges([998.0, 998.0], [1.0, 2.0], speeds, [1.0, 1.0], [0.1, 0.1], starts)


def test_no_paths() -> None:
    assert all(x.size == 0 for x in path_surges([], [], [], [], [], []))
