"""Rigid-column results: Allievi's slow-closure peak and the arrester-column oscillation.

Used to validate the transient solver (Allievi) and to choose how long a transient run
must last (the period of a water column on an arrester's gas cushion).
"""

from __future__ import annotations

import math

from rulecheck.physics.constants import STANDARD_GRAVITY


def allievi_peak_ratio(
    length: float, velocity: float, head: float, closure_time: float, g: float = STANDARD_GRAVITY
) -> float:
    """Peak head rise of a uniform valve closure by Allievi's rigid-column formula.

    h / H0 = N/2 + sqrt(N + N**2/4), N = (L v0 / (g H0 T))**2

    Parameters
    ----------
    length : float
        Pipe length L [m].
    velocity : float
        Initial velocity v0 [m/s].
    head : float
        Static head at the valve H0 [m], > 0.
    closure_time : float
        Closure time T [s], > 0; the valve area falls linearly to zero.
    g : float
        Gravitational acceleration [m/s^2], default 9.80665 [S: CGPM 1901].

    Returns
    -------
    float
        Peak head rise over static head h / H0 [-].

    Notes
    -----
    Rigid (incompressible) column, no friction, valve v = v0 tau sqrt(H/H0)
    with tau = 1 - t/T; valid for T well above 2L/a. Setting dH/dt = 0 in
    (L/g) dv/dt = H0 - H gives (H/H0 - 1)**2 = N H/H0, whose root is the
    formula [D] [M: from memory; verify against the adopted edition].

    Examples
    --------
    L 100 m, v0 1 m/s, H0 50 m, T 1 s: N = (100 / (9.80665 * 50))**2 = 0.0416,
    h/H0 = 0.0208 + sqrt(0.0416 + 0.0004) = 0.2258 [D]:

    >>> print(f"{allievi_peak_ratio(100.0, 1.0, 50.0, 1.0):.4f}")
    0.2258

    References
    ----------
    1. Allievi, L. (1902). Teoria generale del moto perturbato dell'acqua nei
       tubi in pressione.
    2. Wylie, E. B., Streeter, V. L. (1993). Fluid Transients in Systems,
       rigid water column theory.
    """
    if not (head > 0 and closure_time > 0):
        raise ValueError("static head and closure time must be positive")
    n = (length * velocity / (g * head * closure_time)) ** 2
    return float(n / 2.0 + math.sqrt(n + n * n / 4.0))


def column_period(
    density: float,
    inertance: float,
    gas_volume: float,
    gas_pressure: float,
    polytropic_exponent: float,
) -> float:
    """Period of a rigid water column oscillating on a sealed gas volume (small amplitude).

    T = 2π·√(ρ·(L/A)·V/(n·p)),  for one pipe of length L and area A:
    T = 2π·√(ρ·L·V/(n·p·A))

    Parameters
    ----------
    density : float
        Water density ρ [kg/m^3].
    inertance : float
        Σ L_i/A_i of the pipes from the gas volume to the constant-head root [1/m]
        (L/A for one pipe).
    gas_volume : float
        Gas volume at rest V [m^3].
    gas_pressure : float
        Absolute gas pressure at rest p [Pa], > 0.
    polytropic_exponent : float
        Polytropic exponent n of the gas [-] (1.2 [CP: engineering-basis §10]).

    Returns
    -------
    float
        Oscillation period T [s].

    Notes
    -----
    The column's mass ρ·L·A on the gas spring of stiffness n·p·A²/V (linearised
    p·Vⁿ = const) gives ω² = n·p·A/(ρ·L·V); with several pipes in series the column's
    kinetic energy is ½·ρ·Q²·Σ L_i/A_i, so L/A becomes Σ L_i/A_i [D]. Friction and the
    pipe's elasticity are left out; a large swing is a little slower (the gas law is
    stiffer in compression than in expansion) [D].

    Examples
    --------
    ρ 1000 kg/m³, L 10 m, A 1e-4 m², V 1 L, p 300 kPa, n 1.2:
    T = 2π·√(1000·1e5·1e-3/(1.2·3e5)) = 3.31 s [D]:

    >>> print(f"{column_period(1000.0, 10.0 / 1e-4, 1e-3, 3e5, 1.2):.2f}")
    3.31

    References
    ----------
    1. engineering-basis §10: run length from the arrester–column oscillation period
       [S: engineering-basis §10].
    2. Wylie, E. B., Streeter, V. L. (1993). Fluid Transients in Systems, rigid water
       column on an air chamber [M: from memory; verify against the adopted edition].
    """
    if not (density > 0 and inertance > 0 and gas_volume > 0 and gas_pressure > 0):
        raise ValueError("density, inertance, gas volume and gas pressure must be positive")
    if not polytropic_exponent > 0:
        raise ValueError("the polytropic exponent must be positive")
    return (
        2.0
        * math.pi
        * math.sqrt(density * inertance * gas_volume / (polytropic_exponent * gas_pressure))
    )
