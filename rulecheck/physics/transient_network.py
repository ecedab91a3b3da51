"""Input and output records of the transient solver: pipes, valve, arresters, network, result.

Plain SI dataclasses, shared by :mod:`rulecheck.physics.transient` (the solver)
and :mod:`rulecheck.physics.transient_stack` (several networks run as one).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rulecheck.physics.constants import POLYTROPIC_EXPONENT, STANDARD_ATMOSPHERE

WATER_DENSITY_20C = 998.2  # [kg/m^3] [S: LSBU water data, 20 °C; engineering-basis §2]
VAPOUR_PRESSURE_20C = 2339.0  # absolute [Pa] [S: IAPWS-IF97, 20 °C; engineering-basis §2]


@dataclass(frozen=True)
class TransientPipe:
    """One pipe: ends, geometry, wave speed, quasi-steady Darcy friction, initial flow (SI)."""

    upstream: int  # node index (end nearer the fixed-head root)
    downstream: int  # node index
    length: float  # [m]
    diameter: float  # inside diameter [m]
    wave_speed: float  # [m/s]
    friction_factor: float  # Darcy [-], quasi-steady
    flow: float  # initial steady flow [m^3/s], positive upstream -> downstream


@dataclass(frozen=True)
class ClosingValve:
    """The valve that closes: an orifice to atmosphere at ``node``'s elevation."""

    node: int
    closure_time: float  # [s]; 0 = instantaneous, math.inf = never moves
    law: tuple[tuple[float, float], ...] | None = None  # (t / closure_time, tau); None = linear


@dataclass(frozen=True)
class GasArrester:
    """A sealed gas arrester at a node: polytropic gas p_abs V^n = const behind a piston.

    With ``stop`` the piston rests on a stop at ``gas_volume``: below ``precharge``
    the arrester takes no flow, and a piston returning to the stop halts its outflow at
    once. Without it the gas volume follows p V^n = const both ways, (``gas_volume``,
    ``precharge``) being one point of that curve (engineering-basis §10's gas volume).
    """

    node: int
    gas_volume: float  # gas volume at ``precharge`` [m^3]
    precharge: float  # absolute gas pressure at that volume [Pa]
    polytropic_exponent: float = POLYTROPIC_EXPONENT  # [-] [CP]
    stop: bool = True  # a piston stop at ``gas_volume``


@dataclass(frozen=True)
class TransientNetwork:
    """A pipe tree with fixed-head roots, one closing valve and optional arresters (SI)."""

    n_nodes: int
    pipes: tuple[TransientPipe, ...]
    elevation: tuple[float, ...]  # per node [m]
    fixed_heads: dict[int, float]  # node -> constant piezometric head [m]
    valve: ClosingValve
    arresters: tuple[GasArrester, ...] = ()
    density: float = WATER_DENSITY_20C  # [kg/m^3]
    vapour_pressure: float = VAPOUR_PRESSURE_20C  # absolute [Pa]
    atmospheric: float = STANDARD_ATMOSPHERE  # [Pa]


@dataclass(frozen=True)
class TransientResult:
    """Histories and envelopes of one transient run (pressures gauge unless named absolute)."""

    t: np.ndarray  # [s], t[0] = 0 is the steady state
    valve_pressure: np.ndarray  # at the valve node vs t [Pa]
    valve_flow: np.ndarray  # valve outflow vs t [m^3/s]
    node_initial_pressure: np.ndarray  # steady pressure per node [Pa]
    node_max_pressure: np.ndarray  # per node [Pa]
    node_min_pressure: np.ndarray  # per node [Pa]
    pipe_max_pressure: np.ndarray  # per pipe, over all its sections [Pa]
    pipe_min_pressure: np.ndarray  # per pipe, over all its sections [Pa]
    peak_pressure: float  # at the valve node [Pa]
    min_pressure: float  # at the valve node [Pa]
    time_of_peak: float  # [s]
    cavitation: bool  # any vapour cavity formed, at a node or inside a pipe
    cavity_events: tuple[tuple[int, float, float], ...]  # (node, t_formed, t_collapsed or nan)
    pipe_cavity_events: tuple[tuple[int, float, float, float], ...]  # (pipe, x [m], t0, t1|nan)
    max_cavity_volume: float  # largest single cavity [m^3]
    dt: float  # [s]
    max_wave_speed_adjustment: float  # largest |a_adj / a - 1| [-]
    reaches: tuple[int, ...]  # reaches per pipe
    arrester_gas: tuple[np.ndarray, ...]  # per arrester: gas volume vs t [m^3]
    arrester_gas_law: tuple[tuple[float, float], ...]  # per arrester: K [Pa m^3n], n [-]

    @property
    def arrester_gas_pressure(self) -> tuple[np.ndarray, ...]:
        """Per arrester: absolute gas pressure vs t, p = K V^-n [Pa] (worked out when asked:
        most runs never look at it)."""
        return tuple(
            k * v**-n for (k, n), v in zip(self.arrester_gas_law, self.arrester_gas, strict=True)
        )


def validate_network(net: TransientNetwork) -> None:
    """Check a network's indices, sizes and values before a run (raises ValueError).

    Parameters
    ----------
    net : TransientNetwork
        Pipes (lengths [m], diameters [m], wave speeds [m/s], friction [-],
        flows [m^3/s]), elevations [m], fixed heads [m], valve, arresters.

    Returns
    -------
    None
        Nothing [-]; ValueError names the first thing wrong (pipe index, node).

    References
    ----------
    1. engineering-basis §10: the network the solver accepts [D].
    """
    n = net.n_nodes
    if n < 2 or len(net.elevation) != n or not net.pipes:
        raise ValueError("need n_nodes >= 2, one elevation per node and at least one pipe")
    for k, p in enumerate(net.pipes):
        if not (0 <= p.upstream < n and 0 <= p.downstream < n) or p.upstream == p.downstream:
            raise ValueError(f"pipe {k}: bad node indices")
        if not (p.length > 0 and p.diameter > 0 and p.wave_speed > 0 and p.friction_factor >= 0):
            raise ValueError(f"pipe {k}: length, diameter, wave speed must be > 0, friction >= 0")
        if not math.isfinite(p.flow):
            raise ValueError(f"pipe {k}: flow must be finite")
    if not net.fixed_heads or any(not 0 <= i < n for i in net.fixed_heads):
        raise ValueError("need at least one fixed-head node, with a valid index")
    v = net.valve.node
    if not 0 <= v < n or v in net.fixed_heads:
        raise ValueError("the valve node must be a valid node without a fixed head")
    nodes = [a.node for a in net.arresters]
    if len(set(nodes)) != len(nodes) or any(not 0 <= i < n or i in net.fixed_heads for i in nodes):
        raise ValueError("arresters: at most one per node, none at a fixed-head node")
    for a in net.arresters:
        if not (a.gas_volume > 0 and a.precharge > 0 and a.polytropic_exponent > 0):
            raise ValueError("arrester gas volume, precharge and exponent must be > 0")
    if not (net.density > 0 and net.atmospheric > net.vapour_pressure >= 0):
        raise ValueError("need density > 0 and atmospheric > vapour pressure >= 0")
