"""Water-hammer screening: Joukowsky, critical time, Michaud, closure time, column separation."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from rulecheck.physics.constants import STANDARD_ATMOSPHERE

if TYPE_CHECKING:  # numpy.typing costs start-up; the names are for annotations
    from numpy.typing import ArrayLike


def _path(
    lengths: Sequence[float], other: Sequence[float], name: str
) -> tuple[np.ndarray, np.ndarray]:
    """Check a path: equal, non-zero lengths of ``lengths`` and ``other``; return arrays."""
    length, values = np.asarray(lengths, dtype=float), np.asarray(other, dtype=float)
    if length.ndim != 1 or length.size == 0 or length.shape != values.shape:
        raise ValueError(f"lengths and {name} must be non-empty sequences of equal length")
    return length, values


def joukowsky(
    density: ArrayLike, wave_speed: ArrayLike, velocity_change: ArrayLike
) -> float | np.ndarray:
    """Pressure rise of an instantaneous velocity change by the Joukowsky equation.

    dp = rho * a * dv

    Parameters
    ----------
    density : float or ndarray
        Liquid density rho [kg/m^3].
    wave_speed : float or ndarray
        Pressure-wave speed a [m/s].
    velocity_change : float or ndarray
        Velocity stopped dv [m/s].

    Returns
    -------
    float or ndarray
        Pressure rise dp [Pa].

    Notes
    -----
    Holds for a closure within the critical time 2L/a; friction (line
    packing) is neglected.

    Examples
    --------
    Massoud, Example IIIb.7.1 [1]: a = 4,900 ft/s, dv = 1 ft/s gives about
    152 ft of water, about 66 psi (water 999 kg/m^3; 1 psi = 6894.757 Pa):

    >>> dp = joukowsky(999.0, 4900 * 0.3048, 0.3048)
    >>> print(round(dp / (999.0 * 9.80665 * 0.3048)), round(dp / 6894.757))
    152 66

    References
    ----------
    1. Massoud, M. Engineering Thermofluids, section IIIb.7, Example IIIb.7.1
       [S: Massoud, Engineering Thermofluids section IIIb.7].
    2. Joukowsky, N. (1898). Ueber den hydraulischen Stoss in Wasserleitungsroehren.
    """
    dp = np.asarray(density) * np.asarray(wave_speed) * np.asarray(velocity_change)
    return float(dp) if np.ndim(dp) == 0 else dp


def critical_time(lengths: Sequence[float], wave_speeds: Sequence[float]) -> float:
    """Critical (reflection) time of a pipe path: the round trip of a pressure wave.

    T_c = sum_i 2 L_i / a_i

    Parameters
    ----------
    lengths : sequence of float
        Developed length of each pipe on the path L_i [m].
    wave_speeds : sequence of float
        Wave speed of each pipe a_i [m/s], > 0.

    Returns
    -------
    float
        Critical time T_c [s]; a closure within it is a quick closure.

    Notes
    -----
    The wave reflects at the end of the path (supply or heater outlet);
    partial reflections at junctions along the way are ignored.

    Examples
    --------
    National Driller [1]: 400 ft at 4,860 ft/s gives 2L/a = 0.16 s:

    >>> print(f"{critical_time([400 * 0.3048], [4860 * 0.3048]):.2f}")
    0.16

    References
    ----------
    1. National Driller, water hammer article (2L/a example)
       [S: National Driller].
    2. PM Engineer on PDI-WH 201: quick closure is closure <= 2L/a
       [S: PDI-WH 201 via PM Engineer].
    """
    length, speed = _path(lengths, wave_speeds, "wave_speeds")
    if np.any(speed <= 0):
        raise ValueError("wave speeds must be positive")
    return float(np.sum(2.0 * length / speed))


def michaud(
    density: float,
    lengths: Sequence[float],
    velocity_changes: Sequence[float],
    closure_time: float,
) -> float:
    """Pressure rise of a slow closure by Michaud's formula, summed over the path.

    dp = 2 * rho * sum_i(L_i * dv_i) / t

    Parameters
    ----------
    density : float
        Liquid density rho [kg/m^3].
    lengths : sequence of float
        Developed length of each pipe on the path L_i [m].
    velocity_changes : sequence of float
        Velocity stopped in each pipe dv_i [m/s].
    closure_time : float
        Valve closure time t [s], > 0.

    Returns
    -------
    float
        Pressure rise dp [Pa].

    Notes
    -----
    Meant for closures slower than the critical time; for a single pipe it
    equals Joukowsky at t = 2L/a [D] [M: from memory; verify against the
    adopted edition].

    Examples
    --------
    For one pipe, t = 2L/a returns the Joukowsky rise [D]: 10 m, a = 1300 m/s,
    dv = 1 m/s, rho 998.2 kg/m^3 gives 998.2 * 1300 = 1297660 Pa:

    >>> print(round(michaud(998.2, [10.0], [1.0], 2 * 10.0 / 1300.0)))
    1297660

    References
    ----------
    1. Michaud, J. (1878). Coups de belier dans les conduites. Bulletin de la
       Societe vaudoise des ingenieurs et des architectes.
    2. Wylie, E. B., Streeter, V. L. (1993). Fluid Transients in Systems.
    """
    length, dv = _path(lengths, velocity_changes, "velocity_changes")
    if not closure_time > 0:
        raise ValueError("closure time must be positive")
    return float(2.0 * density * np.sum(length * dv) / closure_time)


def surge_pressure(
    density: float,
    lengths: Sequence[float],
    wave_speeds: Sequence[float],
    velocity_changes: Sequence[float],
    closure_time: float,
) -> float:
    """Surge pressure rise of a valve closure: Joukowsky, or Michaud when slower than 2L/a.

    dp = rho a_1 dv_1                                 if t <= T_c = sum 2 L_i / a_i
    dp = min(rho a_1 dv_1, 2 rho sum(L_i dv_i) / t)   otherwise

    Parameters
    ----------
    density : float
        Liquid density rho [kg/m^3].
    lengths : sequence of float
        Developed length of each pipe from the valve to the path end L_i [m];
        index 0 is the pipe at the valve.
    wave_speeds : sequence of float
        Wave speed of each pipe a_i [m/s].
    velocity_changes : sequence of float
        Velocity stopped in each pipe dv_i [m/s].
    closure_time : float
        Valve closure time t [s], >= 0.

    Returns
    -------
    float
        Pressure rise at the valve dp [Pa].

    Notes
    -----
    A screening estimate (engineering-basis section 7); friction, junction
    reflections and cavitation are ignored.

    Examples
    --------
    One pipe of 20 m at a = 1300 m/s (T_c = 30.8 ms), dv = 1 m/s,
    rho 998.2 kg/m^3: a 0.1 s closure gives Michaud 2 * 998.2 * 20 / 0.1 =
    399280 Pa [D], below Joukowsky's 1297660 Pa:

    >>> print(round(surge_pressure(998.2, [20.0], [1300.0], [1.0], 0.1)))
    399280

    References
    ----------
    1. Massoud, M. Engineering Thermofluids, section IIIb.7
       [S: Massoud, Engineering Thermofluids section IIIb.7].
    2. PM Engineer on PDI-WH 201 (quick closure <= 2L/a)
       [S: PDI-WH 201 via PM Engineer].
    3. Michaud's formula [M: from memory; verify against the adopted edition].
    """
    t_c = critical_time(lengths, wave_speeds)
    _, dv = _path(lengths, velocity_changes, "velocity_changes")
    instant = joukowsky(density, float(np.asarray(wave_speeds, dtype=float)[0]), float(dv[0]))
    if closure_time <= t_c:
        return float(instant)
    return min(float(instant), michaud(density, lengths, velocity_changes, closure_time))


def min_safe_closure_time(
    density: float,
    lengths: Sequence[float],
    velocity_changes: Sequence[float],
    static_max: float,
    limit: float,
) -> float:
    """Shortest closure time that keeps the Michaud peak within a pressure limit.

    t_min = 2 rho sum(L_i dv_i) / (P - p_static,max)

    Parameters
    ----------
    density : float
        Liquid density rho [kg/m^3].
    lengths : sequence of float
        Developed length of each pipe on the path L_i [m].
    velocity_changes : sequence of float
        Velocity stopped in each pipe dv_i [m/s].
    static_max : float
        Highest static gauge pressure at the valve [Pa].
    limit : float
        Allowed peak gauge pressure P [Pa].

    Returns
    -------
    float
        Minimum closure time t_min [s]; ``math.inf`` when the static pressure
        already reaches the limit.

    Notes
    -----
    Inverts Michaud's formula [D]. When even the Joukowsky rise of an
    instantaneous closure stays within the limit, any closure is safe and the
    returned time is merely sufficient.

    Examples
    --------
    20 m path, dv = 1 m/s, rho 998.2 kg/m^3, static 60 psi, limit 150 psi
    (620528 Pa of margin): 2 * 998.2 * 20 / 620528 = 0.0643 s [D]:

    >>> psi = 6894.757
    >>> print(f"{min_safe_closure_time(998.2, [20.0], [1.0], 60 * psi, 150 * psi):.4f}")
    0.0643

    References
    ----------
    1. Derived from Michaud's formula, engineering-basis section 7 [D].
    """
    length, dv = _path(lengths, velocity_changes, "velocity_changes")
    return closure_time_for_limit(float(density * np.sum(length * dv)), static_max, limit)


def closure_time_for_limit(column_momentum: float, static_max: float, limit: float) -> float:
    """Michaud's formula solved for the closure time that brings the peak to a limit.

    t = 2 M / (P - p_static,max),  M = rho sum(L_i dv_i)

    Parameters
    ----------
    column_momentum : float
        Momentum of the stopped column per unit area, M = rho sum(L_i dv_i) [Pa s].
    static_max : float
        Highest static gauge pressure at the valve [Pa].
    limit : float
        Allowed peak gauge pressure P [Pa].

    Returns
    -------
    float
        Closure time t [s]; ``math.inf`` when the static pressure already reaches the
        limit.

    Notes
    -----
    The same inversion as :func:`min_safe_closure_time`, for a rule that judges against
    its own limit while the analysis keeps M [D].

    Examples
    --------
    M = 998.2 kg/m^3 * 20 m * 1 m/s = 19964 Pa s, static 60 psi, limit 150 psi:
    2 * 19964 / 620528 = 0.0643 s [D], as in :func:`min_safe_closure_time`:

    >>> psi = 6894.757
    >>> print(f"{closure_time_for_limit(19964.0, 60 * psi, 150 * psi):.4f}")
    0.0643

    References
    ----------
    1. Derived from Michaud's formula, engineering-basis section 7 [D].
    """
    if static_max >= limit:
        return math.inf
    return 2.0 * column_momentum / (limit - static_max)


def column_separates(
    min_pressure: float, vapour_pressure: float, atmospheric: float = STANDARD_ATMOSPHERE
) -> bool:
    """Column-separation test: the absolute minimum pressure reaches the vapour pressure.

    separates when p_min + p_atm <= p_v

    Parameters
    ----------
    min_pressure : float
        Lowest gauge pressure during the transient p_min [Pa].
    vapour_pressure : float
        Absolute vapour pressure of the liquid p_v [Pa].
    atmospheric : float
        Atmospheric pressure p_atm [Pa], default 101325 Pa [S: ISO 2533].

    Returns
    -------
    bool
        True when the column separates [-].

    Notes
    -----
    A screening criterion; the collapse of the vapour cavity can raise the
    pressure above the Joukowsky value [1].

    Examples
    --------
    Water at 20 degC, p_v = 2339 Pa [S: IAPWS-IF97]: -99.0 kPa gauge is
    2325 Pa absolute and separates [D]:

    >>> column_separates(-99000.0, 2339.0)
    True

    References
    ----------
    1. Bergant, A., Simpson, A. R., Tijsseling, A. S. (2006). Water hammer with
       column separation: a historical review. J. Fluids Struct. 22, 135-171
       [S: Bergant, Simpson & Tijsseling 2006].
    """
    return bool(min_pressure + atmospheric <= vapour_pressure)


def screening_minimum(
    static_min: float,
    surge: float,
    vapour_pressure: float,
    atmospheric: float = STANDARD_ATMOSPHERE,
) -> float:
    """Lowest gauge pressure of the screening, floored at the vapour pressure.

    p_min = max(p_static,min - dp, p_v - p_atm)

    Parameters
    ----------
    static_min : float
        Lowest static gauge pressure at the valve p_static,min [Pa].
    surge : float
        Pressure change of the closure dp [Pa], >= 0.
    vapour_pressure : float
        Absolute vapour pressure of the water p_v [Pa].
    atmospheric : float
        Atmospheric pressure p_atm [Pa], default 101325 Pa [S: ISO 2533].

    Returns
    -------
    float
        Minimum gauge pressure the water reaches [Pa], never below p_v - p_atm.

    Notes
    -----
    Water cannot be pulled below its vapour pressure: where p_static,min - dp
    would fall lower, the column separates at p_v instead (engineering-basis
    section 7) and the difference is not a pressure [1]. Use
    ``column_separates`` on the unfloored value to tell the two apart.

    Examples
    --------
    Water at 20 degC, p_v = 2339 Pa [S: IAPWS-IF97]: 400 kPa static less a
    3000 kPa surge stops at 2339 - 101325 = -98986 Pa gauge [D]:

    >>> screening_minimum(400e3, 3000e3, 2339.0)
    -98986.0

    References
    ----------
    1. Bergant, A., Simpson, A. R., Tijsseling, A. S. (2006). Water hammer with
       column separation: a historical review. J. Fluids Struct. 22, 135-171
       [S: Bergant, Simpson & Tijsseling 2006].
    """
    return float(max(static_min - surge, vapour_pressure - atmospheric))
