"""Pipe friction: Reynolds number, Colebrook-White friction factor, Darcy-Weisbach loss."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # numpy.typing costs start-up; the names are for annotations
    from numpy.typing import ArrayLike

LAMINAR_LIMIT = 2000.0  # Re below which flow is taken as laminar [CP]
_TOLERANCE = 1e-12  # relative change of 1/sqrt(f) that ends the Newton iteration
_MAX_ITERATIONS = 50


def _out(value: np.ndarray) -> float | np.ndarray:
    """Return a Python float for 0-d results, the array otherwise."""
    return float(value) if np.ndim(value) == 0 else value


def reynolds_number(
    velocity: ArrayLike, diameter: ArrayLike, density: ArrayLike, viscosity: ArrayLike
) -> float | np.ndarray:
    """Reynolds number of pipe flow from its definition.

    Re = rho * |v| * D / mu

    Parameters
    ----------
    velocity : float or ndarray
        Mean velocity [m/s]; the sign is ignored.
    diameter : float or ndarray
        Inside diameter [m].
    density : float or ndarray
        Fluid density [kg/m^3].
    viscosity : float or ndarray
        Dynamic viscosity [Pa s].

    Returns
    -------
    float or ndarray
        Reynolds number [-], never negative.

    Examples
    --------
    Water at 20 degC (998.2 kg/m^3, 1.0016e-3 Pa s [2]) at 1 m/s in a 25 mm
    bore; worked by hand: 998.2 * 1 * 0.025 / 1.0016e-3 = 24915 [D]:

    >>> print(round(reynolds_number(1.0, 0.025, 998.2, 1.0016e-3)))
    24915

    References
    ----------
    1. Reynolds, O. (1883). An experimental investigation of the circumstances
       which determine whether the motion of water shall be direct or sinuous.
       Phil. Trans. R. Soc. 174, 935-982.
    2. IAPWS-95 via the ``iapws`` package (``rulecheck.physics.water``).
    """
    re = np.asarray(density) * np.abs(np.asarray(velocity)) * np.asarray(diameter)
    return _out(re / np.asarray(viscosity))


def friction_factor(reynolds: ArrayLike, relative_roughness: ArrayLike) -> float | np.ndarray:
    """Darcy friction factor: laminar 64/Re, else the Colebrook-White equation solved by Newton.

    Laminar (0 < Re < 2000): f = 64 / Re. Otherwise the implicit Colebrook-White
    equation 1/sqrt(f) = -2 log10( (eps/D)/3.7 + 2.51 / (Re sqrt(f)) ) is solved
    for x = 1/sqrt(f) by Newton's method from the Swamee-Jain estimate
    f0 = 0.25 / log10( (eps/D)/3.7 + 5.74 / Re**0.9 )**2, to a relative change
    below 1e-12 in x (1e-10 is needed). Re = 0 gives f = 0.

    Parameters
    ----------
    reynolds : float or ndarray
        Reynolds number [-], >= 0.
    relative_roughness : float or ndarray
        Roughness over inside diameter, eps/D [-], >= 0.

    Returns
    -------
    float or ndarray
        Darcy (Moody) friction factor [-].

    Raises
    ------
    ValueError
        On a negative Reynolds number or roughness.

    Notes
    -----
    Colebrook-White is applied from Re 2000 up, through the transition zone
    (2000-4000) where no correlation is reliable; it gives the higher, safer
    loss there [CP]. f jumps from 64/2000 = 0.032 to about 0.05 at Re 2000.

    Examples
    --------
    Smooth pipe at Re = 1e5: the Moody chart [3] reads about 0.018; Blasius'
    0.316 Re**-0.25 [4] gives 0.0178:

    >>> print(f"{friction_factor(1e5, 0.0):.4f}")
    0.0180

    References
    ----------
    1. Colebrook, C. F. (1939). Turbulent flow in pipes, with particular
       reference to the transition region between the smooth and rough pipe
       laws. J. Inst. Civ. Eng. 11(4), 133-156.
    2. Swamee, P. K., Jain, A. K. (1976). Explicit equations for pipe-flow
       problems. J. Hydraul. Div. ASCE 102(5), 657-664.
    3. Moody, L. F. (1944). Friction factors for pipe flow. Trans. ASME 66,
       671-684.
    4. Blasius, H. (1913). Das Aehnlichkeitsgesetz bei Reibungsvorgaengen in
       Fluessigkeiten. VDI Forschungsheft 131.
    """
    re, ed = np.broadcast_arrays(
        np.asarray(reynolds, dtype=float), np.asarray(relative_roughness, dtype=float)
    )
    if np.any(re < 0) or np.any(ed < 0):
        raise ValueError("Reynolds number and relative roughness must not be negative")
    f = np.zeros(re.shape)
    laminar = (re > 0) & (re < LAMINAR_LIMIT)
    f[laminar] = 64.0 / re[laminar]
    turbulent = re >= LAMINAR_LIMIT
    if np.any(turbulent):
        f[turbulent] = _colebrook(re[turbulent], ed[turbulent])
    return _out(f)


def _colebrook(re: np.ndarray, ed: np.ndarray) -> np.ndarray:
    """Solve Colebrook-White for f by Newton's method on x = 1/sqrt(f)."""
    a, b = ed / 3.7, 2.51 / re
    x = -2.0 * np.log10(a + 5.74 / re**0.9)  # Swamee-Jain: x0 = 1/sqrt(f0)
    k = 2.0 / math.log(10.0)
    for _ in range(_MAX_ITERATIONS):
        inner = a + b * x
        step = (x + 2.0 * np.log10(inner)) / (1.0 + k * b / inner)
        x = x - step
        if np.all(np.abs(step) <= _TOLERANCE * np.abs(x)):
            return 1.0 / (x * x)
    raise ArithmeticError("Colebrook-White iteration did not converge")  # pragma: no cover


def darcy_pressure_drop(
    flow: ArrayLike,
    diameter: ArrayLike,
    length: ArrayLike,
    roughness: ArrayLike,
    density: ArrayLike,
    viscosity: ArrayLike,
) -> float | np.ndarray:
    """Friction pressure drop along a pipe by Darcy-Weisbach with the Colebrook-White factor.

    dp = f * (L / D) * rho * v * |v| / 2, v = Q / (pi D**2 / 4),
    f = friction_factor(Re, eps / D), Re = rho |v| D / mu.

    Parameters
    ----------
    flow : float or ndarray
        Volume flow [m^3/s]; negative for flow against the pipe direction.
    diameter : float or ndarray
        Inside diameter [m].
    length : float or ndarray
        Pipe length including any fittings allowance [m].
    roughness : float or ndarray
        Absolute wall roughness eps [m].
    density : float or ndarray
        Fluid density [kg/m^3].
    viscosity : float or ndarray
        Dynamic viscosity [Pa s].

    Returns
    -------
    float or ndarray
        Pressure drop from pipe start to end [Pa]; its sign follows ``flow``.

    Notes
    -----
    Steady, fully developed, incompressible flow; see ``friction_factor`` for
    the laminar and transition treatment.

    Examples
    --------
    Laminar flow reproduces the exact Hagen-Poiseuille loss
    128 mu L Q / (pi D**4) [3]: 1 mL/s of water (mu 1e-3 Pa s) through 1 m of
    10 mm bore (Re 127) loses 128e-9 / (pi 1e-8) = 4.074 Pa:

    >>> print(f"{darcy_pressure_drop(1e-6, 0.01, 1.0, 0.0, 998.0, 1e-3):.3f}")
    4.074

    References
    ----------
    1. Weisbach, J. (1845). Lehrbuch der Ingenieur- und Maschinen-Mechanik.
    2. Colebrook, C. F. (1939), see ``friction_factor``.
    3. White, F. M., Fluid Mechanics, Hagen-Poiseuille flow in a circular pipe.
    """
    d = np.asarray(diameter, dtype=float)
    velocity = np.asarray(flow, dtype=float) / (math.pi * d * d / 4.0)
    re = reynolds_number(velocity, d, density, viscosity)
    f = friction_factor(re, np.asarray(roughness) / d)
    dp = f * np.asarray(length) / d * np.asarray(density) * velocity * np.abs(velocity) / 2.0
    return _out(dp)
