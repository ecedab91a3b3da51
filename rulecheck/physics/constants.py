"""Physical constants and the one modelling default every stage shares, each with its source.

Defined here once; every other module imports them from here.
"""

from __future__ import annotations

#: standard gravity g [m/s²] [S: CGPM 1901, 3rd General Conference, standard gravity]
STANDARD_GRAVITY = 9.80665

#: standard atmosphere p_atm [Pa]: gauge = absolute − p_atm [S: ISO 2533:1975]
STANDARD_ATMOSPHERE = 101325.0

#: polytropic exponent n of the gas in a sealed arrester, p·Vⁿ = const [-]; between
#: isothermal (1.0) and adiabatic air (1.4) for the fast cycles of water hammer
#: [common practice; engineering-basis §10]
POLYTROPIC_EXPONENT = 1.2
