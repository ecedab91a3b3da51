"""Validation of the method-of-characteristics transient solver against outside references.

Each test names its reference and tolerance. Networks are small so that every
test runs in well under a second.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from fluids.core import K_from_f, dP_from_K
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from rulecheck.physics.transient import (
    ClosingValve,
    GasArrester,
    TransientNetwork,
    TransientPipe,
    simulate,
)
from rulecheck.physics.transient_grid import choose_time_step

G = 9.80665  # [m/s^2] [S: CGPM 1901 standard gravity]
RHO = 998.2  # [kg/m^3] water 20 °C [S: LSBU water data; engineering-basis §2]
P_ATM = 101325.0  # [Pa] [S: ISO 2533]
P_VAP = 2339.0  # [Pa] absolute, water 20 °C [S: IAPWS-IF97]


def area(d: float) -> float:
    return math.pi * d * d / 4.0


def single_pipe(
    length: float = 100.0,
    a: float = 1000.0,
    d: float = 0.1,
    v0: float = 0.5,
    head: float = 100.0,
    f: float = 0.0,
    closure: float = 0.0,
    arresters: tuple[GasArrester, ...] = (),
) -> TransientNetwork:
    """Reservoir (node 0, head ``head`` above the horizontal pipe) -> pipe -> valve (node 1)."""
    pipe = TransientPipe(0, 1, length, d, a, f, v0 * area(d))
    return TransientNetwork(
        2, (pipe,), (0.0, 0.0), {0: head}, ClosingValve(1, closure), arresters, density=RHO
    )


def tee(
    f: float, v0: float = 0.3, head: float = 60.0, closure: float = 0.0, branches: int = 2
) -> TransientNetwork:
    """Root 0 -> junction 1 -> valve 2; dead-end branches 1 -> 3 (and 1 -> 4)."""
    d = 0.05
    q = v0 * area(d)
    pipes = [
        TransientPipe(0, 1, 50.0, d, 1000.0, f, q),
        TransientPipe(1, 2, 30.0, d, 1000.0, f, q),
        TransientPipe(1, 3, 20.0, 0.04, 1000.0, f, 0.0),
    ]
    if branches == 3:
        pipes.append(TransientPipe(1, 4, 10.0, 0.03, 1000.0, f, 0.0))
    n = 2 + branches
    elevation = (0.0, 3.0, 5.0, 4.0, 2.0)[:n]
    return TransientNetwork(
        n, tuple(pipes), elevation, {0: head}, ClosingValve(2, closure), density=RHO
    )


def test_instantaneous_closure_square_wave():
    """Frictionless pipe, instantaneous closure: square wave rho*a*v0 high, period 4L/a.

    [S: Wylie & Streeter 1993, Joukowsky; analytic.] Tolerance 1 % on height and period.
    """
    length, a, v0 = 100.0, 1000.0, 0.5
    r = simulate(single_pipe(length, a, v0=v0), duration=16 * length / a, dt=length / a / 10)
    assert r.max_wave_speed_adjustment == 0.0
    dp = r.valve_pressure - r.node_initial_pressure[1]
    jouk = RHO * a * v0
    half = 2 * length / a
    phase = np.mod(r.t, 2 * half)
    high = dp[(phase > 0.1 * half) & (phase < 0.9 * half) & (r.t > 0)]
    low = dp[(phase > 1.1 * half) & (phase < 1.9 * half)]
    assert np.median(high) == pytest.approx(jouk, rel=0.01)
    assert np.median(low) == pytest.approx(-jouk, rel=0.01)
    assert np.all(np.abs(np.abs(dp[r.t > 0]) - jouk) <= 0.01 * jouk)  # square: no other level
    sign = np.sign(dp)
    down = r.t[1:][(sign[:-1] > 0) & (sign[1:] < 0)]
    assert len(down) >= 3
    assert np.mean(np.diff(down)) == pytest.approx(4 * length / a, rel=0.01)
    assert not r.cavitation


def test_adjusted_wave_speed_is_the_one_used_and_reported():
    """A dt that does not fit the pipe: the Joukowsky jump uses a_adj = L / (N dt) and
    |a_adj / a - 1| is reported [S: Wylie & Streeter 1993, wave-speed adjustment].
    Tolerance 1e-9 relative.
    """
    length, a, v0 = 100.0, 1000.0, 0.5
    r = simulate(single_pipe(length, a, v0=v0), duration=0.15, dt=length / a / 9.6)
    assert r.reaches == (10,)
    assert r.max_wave_speed_adjustment == pytest.approx(0.04, rel=1e-9)
    jump = r.valve_pressure[1] - r.node_initial_pressure[1]
    assert abs(jump / (RHO * a * v0) - 1.0) == pytest.approx(r.max_wave_speed_adjustment, 1e-9)


@pytest.mark.parametrize("tau", [0.25, 0.5, 0.8])
def test_tabled_partial_closure_matches_the_valve_characteristic(tau):
    """A closure table that drops the opening at once to tau and holds it: the first wave
    satisfies Joukowsky with the orifice law at the valve,

        dH = (a / g) (v0 - v1),  v1 = tau v0 sqrt((H0 + dH) / H0),

    solved for dH (H above the valve outlet) [S: Wylie & Streeter 1993, valve boundary
    with the C+ characteristic; frictionless pipe, so H0 is the reservoir head].
    Tolerance 1e-6 relative; the valve then still passes v1.
    """
    length, a, v0, head = 100.0, 1000.0, 1.0, 60.0
    net = single_pipe(length, a, v0=v0, head=head)
    net = TransientNetwork(
        2,
        net.pipes,
        net.elevation,
        net.fixed_heads,
        ClosingValve(1, 0.0, law=((0.0, 1.0), (1.0, tau))),
        density=RHO,
    )
    r = simulate(net, 1.5 * length / a, dt=length / a / 10)

    def first_wave(dh: float) -> float:
        return dh - a / G * (v0 - tau * v0 * math.sqrt((head + dh) / head))

    dh = brentq(first_wave, 0.0, a * v0 / G)
    before_return = r.t < 2 * length / a - 1e-9
    rise = (r.valve_pressure[before_return][1:] - r.node_initial_pressure[1]) / (RHO * G)
    assert np.allclose(rise, dh, rtol=1e-6)
    area_ = area(0.1)
    assert r.valve_flow[1] == pytest.approx(tau * v0 * math.sqrt((head + dh) / head) * area_)


@pytest.mark.parametrize("head, v0", [(20.0, 0.5), (50.0, 1.0), (100.0, 2.0)])
def test_slow_linear_closure_matches_allievi(head, v0):
    """Linear closure over 10 x 2L/a: peak head rise vs Allievi's rigid-column formula.

    h/H0 = N/2 + sqrt(N + N^2/4), N = (L v0 / (g H0 T))^2 [M: Allievi; engineering-basis
    §10]; tolerance 10 %. The rigid-column limit holds when the valve absorbs the first
    elastic wave, i.e. its linearised resistance 2 H0 / Q0 does not exceed the pipe
    impedance a / (g A) (a v0 / g >= 2 H0) [D]; all cases here satisfy that.
    """
    length, a = 100.0, 1000.0
    t_close = 10 * 2 * length / a
    assert a * v0 / G >= 2 * head
    r = simulate(
        single_pipe(length, a, v0=v0, head=head, closure=t_close),
        duration=t_close + 8 * length / a,
        dt=length / a / 10,
    )
    n = (length * v0 / (G * head * t_close)) ** 2
    expected = head * (n / 2 + math.sqrt(n + n * n / 4))
    rise = (r.peak_pressure - r.node_initial_pressure[1]) / (RHO * G)
    assert rise == pytest.approx(expected, rel=0.10)


def test_column_separation_at_valve_and_collapse_pulse():
    """Low static pressure, instantaneous closure: vapour cavity at the valve; its collapse
    peak exceeds the Joukowsky pressure above static.

    Phenomenon: [S: Bergant, Simpson & Tijsseling, J. Fluids Struct. 22 (2006) 135-171]
    (short pressure pulse after collapse, larger than Joukowsky). Check values [D] from
    frictionless wave theory with one cavity at the valve (s = H_R - H_v, J = a v0 / g,
    r = J / s, k = ceil(r) - 1): cavity volume after m round trips A v_s (2L/a)(m r - m^2)
    with v_s = g s / a; collapse at (2L/a)(1 + k + (k r - k^2) / (2k + 1 - r)); peak
    head H_R + 2 ceil(r) s - J. Tolerances: 0.5 % peak, 1 % volume, 2 dt collapse time.
    """
    length, a, d, h_r = 100.0, 1000.0, 0.1, 10.0
    s = h_r - (P_VAP - P_ATM) / (RHO * G)
    ratio = 2.5
    jouk_head = ratio * s
    v0 = G * jouk_head / a
    dt = length / a / 40
    r = simulate(single_pipe(length, a, d, v0, h_r), duration=12 * length / a, dt=dt)
    assert r.cavitation
    valve_events = [e for e in r.cavity_events if e[0] == 1]
    assert valve_events
    node, t_formed, t_collapsed = valve_events[0]
    assert 2 * length / a <= t_formed <= 2 * length / a + 2 * dt
    k = math.ceil(ratio) - 1
    t_c = 2 * length / a * (1 + k + (k * ratio - k * k) / (2 * k + 1 - ratio))
    assert abs(t_collapsed - t_c) <= 2 * dt
    v_s = G * s / a
    vol = area(d) * v_s * 2 * length / a * max(m * ratio - m * m for m in range(k + 1))
    assert r.max_cavity_volume == pytest.approx(vol, rel=0.01)
    peak_head = r.peak_pressure / (RHO * G)
    assert peak_head == pytest.approx(h_r + 2 * math.ceil(ratio) * s - jouk_head, rel=0.005)
    static = r.node_initial_pressure[1]
    assert r.peak_pressure - static > RHO * a * v0
    assert r.time_of_peak > t_collapsed
    assert r.min_pressure == pytest.approx(P_VAP - P_ATM, rel=1e-9)


def column_at_rest(
    length: float, d: float, v0: float, p1: float, v1: float, n: float
) -> tuple[float, float]:
    """Gas volumes where a rigid water column (length, diameter d, initial velocity v0)
    stops against a polytropic gas volume v1 at absolute pressure p1 fed from a constant
    reservoir pressure p1: the roots of

        1/2 rho L A v0^2 + p1 (V1 - V) = (p V - p1 V1) / (n - 1),  p = p1 (V1 / V)^n

    (smaller: the compression, larger: the expansion) [D: energy of the water column and
    the reservoir against the work on the gas].
    """
    ke = 0.5 * RHO * length * area(d) * v0**2

    def balance(v: float) -> float:
        return ke + p1 * (v1 - v) - (p1 * (v1 / v) ** n * v - p1 * v1) / (n - 1)

    return (
        brentq(balance, 1e-3 * v1, v1 * (1 - 1e-12)),
        brentq(balance, v1 * (1 + 1e-12), 100 * v1),
    )


def test_gas_arrester_lowers_peak_and_follows_gas_law():
    """A sealed gas arrester at the valve lowers the peak; p_abs V^n stays constant.

    The liquid pressure at the node times the recorded gas volume to the n stays
    constant within 1 % (polytropic gas, n = 1.2 [CP]). The peak matches the
    rigid-column energy balance 1/2 rho L A v0^2 + p1 (V1 - V2) = (p2 V2 - p1 V1) / (n - 1)
    within 5 % [D: energy of the water column and the reservoir vs work on the gas;
    the elastic pipe stores a little of the energy].
    """
    length, d, a, v0, head = 20.0, 0.02, 1300.0, 1.5, 40.0
    arrester = GasArrester(node=1, gas_volume=100e-6, precharge=200e3)
    dt = length / a / 20
    bare = simulate(single_pipe(length, a, d, v0, head), 0.4, dt=dt)
    prot = simulate(single_pipe(length, a, d, v0, head, arresters=(arrester,)), 0.4, dt=dt)
    assert prot.peak_pressure < 0.5 * bare.peak_pressure
    vol = prot.arrester_gas[0]
    assert np.all(vol < arrester.gas_volume)  # piston never on its stop: the gas law applies
    pv = (prot.valve_pressure + P_ATM) * vol**arrester.polytropic_exponent
    assert np.ptp(pv) <= 0.01 * pv[0]
    assert np.allclose(prot.arrester_gas_pressure[0], prot.valve_pressure + P_ATM, rtol=1e-9)
    n = arrester.polytropic_exponent
    p1, v1 = prot.node_initial_pressure[1] + P_ATM, vol[0]
    v2, _ = column_at_rest(length, d, v0, p1, v1, n)
    assert prot.peak_pressure + P_ATM == pytest.approx(p1 * (v1 / v2) ** n, rel=0.05)


def test_arrester_without_a_stop_swings_both_ways_like_a_gas_spring():
    """A gas volume without a piston stop (no precharge given in a layout) compresses and
    then expands past its starting volume: both extreme volumes are the roots of the
    rigid-column energy balance of the previous test (the column at rest), the smaller
    within 1 %, the larger within 5 % [D: water-column energy against polytropic work;
    the elastic pipe stores a little of the energy]. With a stop at the starting volume
    the gas never expands past it.
    """
    length, d, a, v0, head = 20.0, 0.02, 1300.0, 1.5, 40.0
    p_static = RHO * G * head + P_ATM
    dt = length / a / 20
    free = GasArrester(1, 100e-6, p_static, stop=False)
    r = simulate(single_pipe(length, a, d, v0, head, arresters=(free,)), 0.4, dt=dt)
    vol = r.arrester_gas[0]
    p1, v1 = r.node_initial_pressure[1] + P_ATM, vol[0]
    smallest, largest = column_at_rest(length, d, v0, p1, v1, free.polytropic_exponent)
    assert vol.min() == pytest.approx(smallest, rel=0.01)
    assert vol.max() == pytest.approx(largest, rel=0.05)
    assert not r.cavitation
    stopped = GasArrester(1, 100e-6, p_static)
    s = simulate(single_pipe(length, a, d, v0, head, arresters=(stopped,)), 0.4, dt=dt)
    assert s.arrester_gas[0].max() <= stopped.gas_volume * (1 + 1e-12)


@pytest.mark.parametrize("branches", [2, 3])
def test_junction_conserves_mass(branches):
    """Junction continuity: sum of pipe flows at the junction is zero at every step.

    [S: Wylie & Streeter 1993, branching junction: continuity and a common head.]
    Tolerance 1e-9 of the initial flow.
    """
    net = tee(f=0.02, branches=branches)
    q0 = net.pipes[0].flow
    sums: list[float] = []
    branch: list[float] = []

    def monitor(t: float, heads: np.ndarray, ends: np.ndarray) -> None:
        inflow = ends[1, 0]  # downstream end of pipe 0
        outflow = ends[0, 1:].sum()  # upstream ends of the branches
        sums.append(inflow - outflow)
        branch.append(abs(ends[0, 2]))

    r = simulate(net, 0.5, monitor=monitor)
    assert len(sums) == len(r.t) - 1
    assert max(branch) > 0.05 * q0  # the dead branch really takes part
    assert np.max(np.abs(sums)) <= 1e-9 * q0
    assert not r.cavitation


@pytest.mark.parametrize("split", [1.0, 30.0, 99.0])
def test_series_junction_is_transparent(split):
    """Splitting a pipe at a node (two identical pipes in series) leaves the valve history
    unchanged, also with a one-reach piece.

    [S: Wylie & Streeter 1993, series junction: common head and continuity.] With equal
    B and R the junction node is an ordinary interior section [D]; tolerance 1e-6 Pa.
    """
    d, f, q = 0.05, 0.02, 1.0 * area(0.05)
    one = TransientNetwork(
        2,
        (TransientPipe(0, 1, 100.0, d, 1000.0, f, q),),
        (0.0, 0.0),
        {0: 150.0},
        ClosingValve(1, 0.03),
    )
    two = TransientNetwork(
        3,
        (
            TransientPipe(0, 2, 100.0 - split, d, 1000.0, f, q),
            TransientPipe(2, 1, split, d, 1000.0, f, q),
        ),
        (0.0, 0.0, 0.0),
        {0: 150.0},
        ClosingValve(1, 0.03),
    )
    a = simulate(one, 0.5, dt=0.001)
    b = simulate(two, 0.5, dt=0.001)
    assert sum(b.reaches) == a.reaches[0]
    assert a.peak_pressure - a.node_initial_pressure[1] > 1e6  # a real surge
    assert np.max(np.abs(a.valve_pressure - b.valve_pressure)) <= 1e-6


def test_halving_time_step_changes_peak_little():
    """Grid convergence: halving dt changes the valve peak by under 2 %.

    [S: Wylie & Streeter 1993, MOC with exact grid (no wave-speed adjustment).]
    """
    net = tee(f=0.02, v0=1.0, head=150.0, closure=0.03)
    coarse = simulate(net, 0.4, dt=0.005)
    fine = simulate(net, 0.4, dt=0.0025)
    assert coarse.max_wave_speed_adjustment < 1e-12
    assert fine.max_wave_speed_adjustment < 1e-12
    assert fine.reaches == tuple(2 * n for n in coarse.reaches)
    rise = coarse.peak_pressure - coarse.node_initial_pressure[2]
    assert rise > 0.5 * RHO * 1000.0 * 1.0  # a real surge, not the static value
    assert abs(fine.peak_pressure - coarse.peak_pressure) < 0.02 * fine.peak_pressure


def test_steady_state_is_held():
    """A valve that never moves: the Darcy–Weisbach steady state is held, no transient.

    Initial pressures vs `fluids` (K = f L / D, dp = K rho v^2 / 2) plus hydrostatics
    within 1e-6 relative; the run then stays within 1e-3 Pa of them.
    """
    f, v0, h0 = 0.03, 1.2, 50.0
    net = tee(f=f, v0=v0, head=h0, closure=math.inf)
    r = simulate(net, 0.5)
    z = net.elevation
    dp0 = dP_from_K(K_from_f(f, 50.0, 0.05), RHO, v0)
    dp1 = dP_from_K(K_from_f(f, 30.0, 0.05), RHO, v0)
    expected = [
        RHO * G * h0,
        RHO * G * (h0 - z[1]) - dp0,
        RHO * G * (h0 - z[2]) - dp0 - dp1,
        RHO * G * (h0 - z[3]) - dp0,
    ]
    assert np.allclose(r.node_initial_pressure, expected, rtol=1e-6)
    assert np.max(r.node_max_pressure - r.node_initial_pressure) <= 1e-3
    assert np.max(r.node_initial_pressure - r.node_min_pressure) <= 1e-3
    assert np.ptp(r.valve_flow) <= 1e-9 * net.pipes[1].flow
    assert not r.cavitation


def test_progress_is_called_at_most_100_times():
    """The progress callback gets increasing fractions, at most 100 calls, ending at 1."""
    calls: list[float] = []
    r = simulate(single_pipe(), 2.0, dt=0.001, progress=calls.append)
    assert len(r.t) - 1 == 2000
    assert 1 <= len(calls) <= 100
    assert calls[-1] == 1.0 and calls == sorted(calls)


def discontinuous() -> TransientNetwork:
    """Two pipes in series whose steady flows differ: continuity fails at node 1 [D]."""
    return TransientNetwork(
        3,
        (
            TransientPipe(0, 1, 10.0, 0.02, 1300.0, 0.02, 1e-4),
            TransientPipe(1, 2, 10.0, 0.02, 1300.0, 0.02, 2e-4),
        ),
        (0.0, 0.0, 0.0),
        {0: 30.0},
        ClosingValve(2, 0.0),
        density=RHO,
    )


def test_inconsistent_steady_flows_are_rejected():
    """Steady flows must satisfy continuity at dead ends and junctions [D]."""
    with pytest.raises(ValueError, match=r"continuity at nodes \[1\]"):
        simulate(discontinuous(), 0.1)


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(1e-4, 0.05), min_size=1, max_size=30))
def test_time_step_keeps_wave_speed_adjustment_small(travel_times):
    """Every pipe gets >= 1 reach and |a_adj / a - 1| <= 5 % [S: engineering-basis §10]."""
    dt, reaches, adj = choose_time_step(travel_times, 0.05)
    tt = np.asarray(travel_times)
    assert np.all(reaches >= 1)
    assert adj <= 0.05 + 1e-12
    assert np.max(np.abs(tt / (reaches * dt) - 1.0)) == pytest.approx(adj, abs=1e-12)
    assert dt <= 1.05 * tt.min() * (1 + 1e-12)
