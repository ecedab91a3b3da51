"""Surge screening formulas against published check values, limits and an ODE reference."""

from __future__ import annotations

import math

import numpy as np
import pytest
from fluids.piping import nearest_pipe
from hypothesis import assume, given
from hypothesis import strategies as st
from iapws import IAPWS97
from scipy.integrate import solve_ivp

from rulecheck.physics.column import allievi_peak_ratio
from rulecheck.physics.surge import (
    column_separates,
    critical_time,
    joukowsky,
    michaud,
    min_safe_closure_time,
    surge_pressure,
)
from rulecheck.physics.water import water_properties
from rulecheck.physics.wavespeed import wave_speed

FT = 0.3048  # [m], exact [S: NIST SP 811]
INCH = 0.0254  # [m], exact [S: NIST SP 811]
PSI = 6894.757293168  # [Pa] [S: NIST SP 811]
G = 9.80665  # [m/s^2] [S: CGPM 1901 standard gravity]

positive = st.floats(min_value=0.1, max_value=100.0)


def test_massoud_example() -> None:
    """a = 4,900 ft/s, dv = 1 ft/s -> about 152 ft of water, about 66 psi
    [S: Massoud, Engineering Thermofluids, Example IIIb.7.1].

    Water at 60 degF; tolerance half a unit of the quoted figures (0.5 ft, 0.5 psi).
    """
    rho = water_properties(273.15 + (60 - 32) / 1.8).density
    dp = joukowsky(rho, 4900 * FT, 1 * FT)
    assert dp / (rho * G) / FT == pytest.approx(152.0, abs=0.5)
    assert dp / PSI == pytest.approx(66.0, abs=0.5)


def test_national_driller_critical_time() -> None:
    """L = 400 ft at 4,860 ft/s -> 2L/a = 0.16 s [S: National Driller]; quoted to 0.01 s."""
    assert critical_time([400 * FT], [4860 * FT]) == pytest.approx(0.16, abs=0.005)


def test_pm_engineer_critical_time() -> None:
    """80 ft at 4,000 ft/s -> 40 ms [S: PM Engineer]; exact in any units (rel 1e-12)."""
    assert critical_time([80 * FT], [4000 * FT]) == pytest.approx(0.040, rel=1e-12)


def test_critical_time_sums_path() -> None:
    """T_c = sum 2 L_i / a_i over the path (engineering-basis section 7), by hand [D]."""
    assert critical_time([10.0, 20.0], [1000.0, 400.0]) == pytest.approx(0.02 + 0.1, rel=1e-12)
    with pytest.raises(ValueError):
        critical_time([10.0, 20.0], [1000.0])
    with pytest.raises(ValueError):
        critical_time([], [])
    with pytest.raises(ValueError):
        critical_time([10.0], [0.0])


@pytest.mark.parametrize(
    "modulus, poisson, outside, wall",
    [
        (117e9, 0.34, 0.875 * INCH, 0.045 * INCH),  # copper L 3/4 [S: ASTM B88 via eng. tables]
        (117e9, 0.34, 0.625 * INCH, 0.049 * INCH),  # copper K 1/2 [S: ASTM B88 via eng. tables]
        (207e9, 0.29, None, None),  # steel 1 in sch 40, dims from fluids (ASME B36.10M)
    ],
)
def test_sixty_psi_per_fps_rule_of_thumb(modulus, poisson, outside, wall) -> None:
    """About 60 psi per ft/s stopped in a rigid metal pipe [CP].

    Copper and steel give a = 1200-1420 m/s here, i.e. 52-62 psi per ft/s; the
    rule of thumb is rounded, so the tolerance is 15 % of 60 psi.
    """
    if outside is None:
        _, inside, _, wall = nearest_pipe(NPS=1, schedule="40")
    else:
        inside = outside - 2 * wall
    water = water_properties(293.15)
    a = wave_speed(water.bulk_modulus, water.density, modulus, poisson, inside, wall)
    assert joukowsky(water.density, a, 1 * FT) / PSI == pytest.approx(60.0, rel=0.15)


def test_michaud_continuity_and_scaling() -> None:
    """Single pipe: Michaud at t = 2L/a equals Joukowsky; doubling t halves it [D]."""
    rho, length, a, dv = 998.2, 25.0, 1300.0, 1.5
    t_c = critical_time([length], [a])
    assert michaud(rho, [length], [dv], t_c) == pytest.approx(joukowsky(rho, a, dv), rel=1e-12)
    assert michaud(rho, [length], [dv], 2 * t_c) == pytest.approx(
        michaud(rho, [length], [dv], t_c) / 2, rel=1e-12
    )
    with pytest.raises(ValueError):
        michaud(rho, [length], [dv], 0.0)


def test_surge_pressure_regimes() -> None:
    """Joukowsky on the valve pipe (index 0) up to T_c, then min(Joukowsky, Michaud) [D]."""
    rho, lengths, speeds, dvs = 998.2, [3.0, 40.0], [1250.0, 1350.0], [2.0, 0.5]
    t_c = critical_time(lengths, speeds)
    first = joukowsky(rho, speeds[0], dvs[0])
    assert surge_pressure(rho, lengths, speeds, dvs, 0.0) == first
    assert surge_pressure(rho, lengths, speeds, dvs, t_c) == first
    slow = 4 * t_c
    expected = min(first, michaud(rho, lengths, dvs, slow))
    assert surge_pressure(rho, lengths, speeds, dvs, slow) == pytest.approx(expected, rel=1e-12)
    assert surge_pressure(rho, lengths, speeds, dvs, slow) < first
    # single pipe: continuous across T_c
    just_after = surge_pressure(
        rho, [20.0], [1300.0], [1.0], critical_time([20.0], [1300.0]) * 1.000001
    )
    assert just_after == pytest.approx(joukowsky(rho, 1300.0, 1.0), rel=1e-5)


@given(
    st.floats(min_value=1.0, max_value=100.0),  # length [m]
    st.floats(min_value=200.0, max_value=1500.0),  # wave speed [m/s]
    st.floats(min_value=0.1, max_value=5.0),  # velocity stopped [m/s]
    st.floats(min_value=0.0, max_value=800e3),  # static max [Pa]
    st.floats(min_value=100e3, max_value=2e6),  # limit [Pa]
)
def test_min_safe_closure_time_round_trip(length, speed, dv, static, limit) -> None:
    """Closing in t_min puts surge + static max exactly on the limit, whenever an instant
    closure would exceed it (otherwise Joukowsky already governs) [D]."""
    rho = 998.2
    assume(static + joukowsky(rho, speed, dv) > limit * (1 + 1e-9) and limit > static)
    t_min = min_safe_closure_time(rho, [length], [dv], static, limit)
    peak = static + surge_pressure(rho, [length], [speed], [dv], t_min)
    assert peak == pytest.approx(limit, rel=1e-9)


def test_min_safe_closure_time_multi_pipe_and_inf() -> None:
    rho, lengths, dvs = 998.2, [3.0, 40.0], [2.0, 0.5]
    t_min = min_safe_closure_time(rho, lengths, dvs, 400e3, 1034e3)
    assert michaud(rho, lengths, dvs, t_min) == pytest.approx(1034e3 - 400e3, rel=1e-12)
    assert min_safe_closure_time(rho, lengths, dvs, 1034e3, 1034e3) == math.inf


def test_column_separation_at_vapour_pressure() -> None:
    """Separation when p_min + p_atm <= p_v [S: Bergant, Simpson & Tijsseling 2006];
    p_v at 20 degC from IAPWS-IF97 (iapws), p_atm 101325 Pa [S: ISO 2533]."""
    p_v = IAPWS97(T=293.15, x=0).P * 1e6
    threshold = p_v - 101325.0
    assert column_separates(threshold - 0.01, p_v) is True
    assert column_separates(threshold + 0.01, p_v) is False
    assert column_separates(-1.0, 101325.0 - 1.0) is True  # equality separates (exact numbers)
    assert column_separates(-101325.0, p_v) is True  # full vacuum
    assert column_separates(-50e3, p_v) is False
    assert column_separates(-50e3, p_v, atmospheric=50e3) is True  # high altitude, extreme


def _rigid_column_peak(length: float, v0: float, head: float, closure: float) -> float:
    """Peak h/H0 - 1 from the rigid-column equations, integrated by scipy.

    (L/g) dv/dt = H0 - H, valve v = v0 (1 - t/T) sqrt(H/H0), no friction
    (Wylie & Streeter, rigid water column theory); stops at T (1 - 1e-7).
    """

    def rhs(t: float, y: np.ndarray) -> list[float]:
        ratio = y[0] / (v0 * (1 - t / closure))
        return [G * head / length * (1 - ratio**2)]

    end = closure * (1 - 1e-7)
    sol = solve_ivp(rhs, (0, end), [v0], method="Radau", rtol=1e-12, atol=1e-14, dense_output=True)
    t = np.linspace(0, end, 4001)
    return float(np.max((sol.sol(t)[0] / (v0 * (1 - t / closure))) ** 2 - 1))


@pytest.mark.parametrize(
    "length, v0, head, closure",
    [
        (100.0, 1.0, 50.0, 1.0),
        (300.0, 2.0, 30.0, 2.0),
        (50.0, 0.5, 60.0, 5.0),
        (400.0, 3.0, 20.0, 1.0),
    ],
)
def test_allievi_against_rigid_column_ode(length, v0, head, closure) -> None:
    """Allievi's closed form vs a numerical solution of the same rigid-column model
    (N from 7e-5 to 37); relative tolerance 1e-6 (the integration stops 1e-7 T early)."""
    ratio = allievi_peak_ratio(length, v0, head, closure)
    assert ratio == pytest.approx(_rigid_column_peak(length, v0, head, closure), rel=1e-6)


def test_allievi_small_n_limit() -> None:
    """Slow closure: the rise tends to the uniform-deceleration value L v0 / (g T), i.e.
    h/H0 -> sqrt(N); at N = 1e-6 the relative difference is sqrt(N)/2 = 5e-4 [D]."""
    length, v0, head = 10.0, 0.5, 40.0
    closure = length * v0 / (G * head * 1e-3)  # sqrt(N) = 1e-3
    assert allievi_peak_ratio(length, v0, head, closure) == pytest.approx(1e-3, rel=1e-3)
    with pytest.raises(ValueError):
        allievi_peak_ratio(length, v0, 0.0, 1.0)
