"""Sealed water-hammer arresters: the gas volume that absorbs a column's energy.

Used when a layout names an arrester by its class but gives no ``gas_volume``: the
transient model then needs an equivalent gas volume, sized here by the energy method.
"""

from __future__ import annotations

#: Design column for an arrester class when the layout gives no gas volume: PDI-WH 201
#: rates arresters on a column moving at 10 ft/s (from memory; verify against the adopted
#: edition); the 50 ft column length is our own assumption [D]. Give ``gas_volume`` and
#: ``precharge`` from the manufacturer's data instead wherever they are known.
DESIGN_VELOCITY = 3.048  # 10 ft/s [m/s]
DESIGN_LENGTH = 15.24  # 50 ft [m]


def gas_volume_for_energy(
    energy: float, p_static_abs: float, p_limit_abs: float, exponent: float
) -> float:
    """Energy method: the gas volume that absorbs a kinetic energy in a polytropic squeeze.

    W = p1 V1 ((p2/p1)^((n-1)/n) - 1) / (n - 1)  =>  V1 = W (n - 1) / (p1 ((p2/p1)^((n-1)/n) - 1))

    Parameters
    ----------
    energy : float
        Kinetic energy the gas must absorb W [J].
    p_static_abs : float
        Absolute gas pressure before the surge, p1 [Pa].
    p_limit_abs : float
        Absolute pressure the compression may reach, p2 [Pa].
    exponent : float
        Polytropic exponent n of the gas, n > 1 [-].

    Returns
    -------
    float
        Gas volume at p1, V1 [m^3].

    Notes
    -----
    The work of a polytropic compression p V^n = const from p1 to p2 [1]; the column's
    energy is taken to go into the gas alone (no friction, no pipe strain), which sizes
    the volume on the safe side [D]. Needs p2 > p1 and n > 1.

    Examples
    --------
    1 J into gas at 1 bar abs compressed to 2 bar abs with n = 1.2: the work per unit
    volume is 1e5 * (2^(1/6) - 1) / 0.2 = 61231 J/m^3, so V1 = 1.633e-5 m^3 [D]:

    >>> print(f"{gas_volume_for_energy(1.0, 1e5, 2e5, 1.2):.4e}")
    1.6332e-05

    References
    ----------
    1. Cengel & Boles, Thermodynamics: An Engineering Approach, boundary work of a
       polytropic process (from memory; verify against the adopted edition).
    """
    ratio = (p_limit_abs / p_static_abs) ** ((exponent - 1) / exponent) - 1
    return energy * (exponent - 1) / (p_static_abs * ratio)


def design_column_energy(
    flow: float,
    density: float,
    length: float = DESIGN_LENGTH,
    velocity: float = DESIGN_VELOCITY,
) -> float:
    """Kinetic energy of an arrester class's design column: one half rho Q L v.

    E = 1/2 rho A L v^2 = 1/2 rho Q L v,  with Q = A v

    Parameters
    ----------
    flow : float
        Design flow of the fixture units the class serves Q [m^3/s].
    density : float
        Water density rho [kg/m^3].
    length : float
        Length of the design column L [m].
    velocity : float
        Velocity of the design column v [m/s].

    Returns
    -------
    float
        Kinetic energy of the column E [J].

    Notes
    -----
    The design column (``DESIGN_LENGTH`` at ``DESIGN_VELOCITY``) stands in for the rating
    test of the class; the area follows from the class's design flow at that velocity [D].

    Examples
    --------
    1 L/s at 10 ft/s over 50 ft in water of 998.2 kg/m^3:
    0.5 * 998.2 * 0.001 * 15.24 * 3.048 = 23.18 J [D]:

    >>> print(f"{design_column_energy(0.001, 998.2):.2f}")
    23.18

    References
    ----------
    1. Kinetic energy of a uniform column, engineering-basis section 10 [D].
    """
    return 0.5 * density * flow * length * velocity
