"""The surge screening formulas of :mod:`rulecheck.physics.surge` for many pipe paths at once.

Every valve side of a building has its own path of pipes to its source. Held as flat
arrays (one entry per pipe of each path, the paths one after another, ``starts`` giving
where each begins), all paths are screened in a handful of numpy calls instead of some
twenty-five calls per valve on short lists. The paths of one length are summed as the
rows of one matrix, which numpy sums exactly as it sums each row alone
(``np.add.reduceat`` would not: it adds in another order), so every figure is, to the
last bit, the one :func:`~rulecheck.physics.surge.critical_time`,
:func:`~rulecheck.physics.surge.joukowsky` and
:func:`~rulecheck.physics.surge.surge_pressure` give for that path alone.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # numpy.typing costs start-up; the names are for annotations
    from numpy.typing import ArrayLike


def path_surges(
    density: ArrayLike,
    lengths: ArrayLike,
    wave_speeds: ArrayLike,
    velocity_changes: ArrayLike,
    closure_time: ArrayLike,
    starts: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Critical time, Joukowsky rise and surge (Joukowsky or Michaud) of many pipe paths.

    T_c = sum_i 2 L_i / a_i;  dp_J = rho a_1 dv_1;  S = sum_i L_i dv_i;
    dp = dp_J if t <= T_c, else min(dp_J, 2 rho S / t)   (per path; i = 1 at the valve)

    Parameters
    ----------
    density : ndarray
        Liquid density of each path rho [kg/m^3].
    lengths : ndarray
        Developed length of every pipe of every path L_i [m], the paths one after
        another, each from the valve towards its source.
    wave_speeds : ndarray
        Wave speed of every pipe a_i [m/s], > 0, aligned with ``lengths``.
    velocity_changes : ndarray
        Velocity stopped in every pipe dv_i [m/s], aligned with ``lengths``.
    closure_time : ndarray
        Valve closure time of each path t [s], >= 0.
    starts : ndarray
        Index [-] in ``lengths`` of each path's first pipe, increasing; every path has at
        least one pipe.

    Returns
    -------
    tuple of ndarray
        Per path: critical time T_c [s], Joukowsky rise dp_J [Pa], surge dp [Pa], and
        S = sum L_i dv_i [m^2/s] (rho S is the column momentum per area [Pa s]).

    Notes
    -----
    The screening formulas of engineering-basis section 7, as in
    :func:`rulecheck.physics.surge.surge_pressure`; friction, junction reflections and
    cavitation are ignored.

    Examples
    --------
    Two paths: 20 m at a = 1300 m/s with dv = 1 m/s closing in 0.1 s (Michaud
    2 * 998.2 * 20 / 0.1 = 399280 Pa [D], below Joukowsky's 1297660 Pa), and 10 m at
    1300 m/s closing in 5 ms, within T_c = 15.4 ms (Joukowsky, 998.2 * 1300 * 2 Pa):

    >>> t_c, rise, dp, s = path_surges([998.2, 998.2], [20.0, 10.0], [1300.0, 1300.0],
    ...                                [1.0, 2.0], [0.1, 0.005], [0, 1])
    >>> print([round(x) for x in dp], f"{t_c[1] * 1000:.1f}")
    [399280, 2595320] 15.4

    References
    ----------
    1. Massoud, M. Engineering Thermofluids, section IIIb.7
       [S: Massoud, Engineering Thermofluids section IIIb.7].
    2. PM Engineer on PDI-WH 201 (quick closure <= 2L/a)
       [S: PDI-WH 201 via PM Engineer].
    3. Michaud's formula [M: from memory; verify against the adopted edition].
    """
    rho = np.asarray(density, dtype=float)
    length = np.asarray(lengths, dtype=float)
    speed = np.asarray(wave_speeds, dtype=float)
    dv = np.asarray(velocity_changes, dtype=float)
    t = np.asarray(closure_time, dtype=float)
    first = np.asarray(starts, dtype=np.intp)
    if not (length.shape == speed.shape == dv.shape) or length.ndim != 1:
        raise ValueError("lengths, wave_speeds and velocity_changes must be aligned 1-d arrays")
    if rho.shape != first.shape or t.shape != first.shape:
        raise ValueError("density, closure_time and starts must have one entry per path")
    if first.size == 0:
        empty = np.zeros(0)
        return empty, empty.copy(), empty.copy(), empty.copy()
    if first[0] != 0 or np.any(np.diff(first) <= 0) or first[-1] >= length.size:
        raise ValueError("every path needs at least one pipe; starts must increase from 0")
    if np.any(speed <= 0):
        raise ValueError("wave speeds must be positive")
    critical = _path_sums(2.0 * length / speed, first)
    rise = rho * speed[first] * dv[first]
    column = _path_sums(length * dv, first)
    with np.errstate(divide="ignore", invalid="ignore"):  # t = 0 only where t <= T_c
        slow = 2.0 * rho * column / t
    surge = np.where(t <= critical, rise, np.minimum(rise, slow))
    return critical, rise, surge, column


def _path_sums(values: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Sum of ``values`` over each path, bit for bit ``np.sum`` of that path alone: the
    paths of each length form the rows of one C-ordered matrix, summed along the rows."""
    sizes = np.diff(np.append(starts, values.size))
    sums = np.empty(starts.size)
    for size in sorted(set(sizes.tolist())):  # np.unique would import numpy.ma (~20 ms)
        rows = np.flatnonzero(sizes == size)
        sums[rows] = values[starts[rows, None] + np.arange(size)].sum(axis=1)
    return sums
