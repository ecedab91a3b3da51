"""Reynolds number, Colebrook-White friction factor and Darcy-Weisbach loss against fluids."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from fluids.core import Reynolds
from fluids.friction import friction_factor as fluids_friction_factor
from fluids.friction import one_phase_dP
from hypothesis import given
from hypothesis import strategies as st

from rulecheck.physics.friction import darcy_pressure_drop, friction_factor, reynolds_number

RE_GRID = np.logspace(math.log10(4e3), 7, 40)
ED_GRID = np.concatenate([[0.0], np.logspace(-6, -2, 17)])


def _fluids_colebrook(re: float, ed: float) -> float:
    with warnings.catch_warnings(), np.errstate(over="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)  # fluids' Lambert-W route may overflow
        return float(fluids_friction_factor(Re=float(re), eD=float(ed), Method="Colebrook"))


def test_colebrook_against_fluids_grid() -> None:
    """Colebrook-White vs fluids.friction.friction_factor(Method="Colebrook") [fluids package].

    Re 4e3 .. 1e7, eps/D 0 .. 0.01, vectorised call; relative tolerance 1e-9
    (both solve the same equation, ours to 1e-12 in 1/sqrt(f)).
    """
    re, ed = np.meshgrid(RE_GRID, ED_GRID)
    ours = friction_factor(re, ed)
    reference = np.array([_fluids_colebrook(r, e) for r, e in zip(re.flat, ed.flat, strict=True)])
    reference = reference.reshape(re.shape)
    assert ours.shape == re.shape
    np.testing.assert_allclose(ours, reference, rtol=1e-9)


def test_colebrook_residual() -> None:
    """The result satisfies Colebrook (1939) itself: residual of 1/sqrt(f) below 1e-10."""
    re, ed = np.meshgrid(RE_GRID, ED_GRID)
    f = friction_factor(re, ed)
    residual = 1 / np.sqrt(f) + 2 * np.log10(ed / 3.7 + 2.51 / (re * np.sqrt(f)))
    assert np.max(np.abs(residual)) < 1e-10


@pytest.mark.parametrize("re", [1.0, 100.0, 1000.0, 1999.0])
def test_laminar_hagen_poiseuille(re: float) -> None:
    """Laminar f = 64/Re (Hagen-Poiseuille, exact), independent of roughness."""
    assert friction_factor(re, 0.01) == pytest.approx(64.0 / re, rel=1e-15)


def test_zero_reynolds_and_scalar_type() -> None:
    assert friction_factor(0.0, 0.001) == 0.0
    assert type(friction_factor(1e5, 1e-4)) is float
    assert type(friction_factor(500.0, 0.0)) is float


def test_mixed_array() -> None:
    """Zero, laminar and turbulent entries in one array, each against its own reference."""
    f = friction_factor(np.array([0.0, 500.0, 2e5]), np.array([0.0, 0.0, 1e-4]))
    np.testing.assert_allclose(f[:2], [0.0, 64.0 / 500.0], rtol=1e-15)
    assert f[2] == pytest.approx(_fluids_colebrook(2e5, 1e-4), rel=1e-9)


def test_negative_inputs_raise() -> None:
    with pytest.raises(ValueError):
        friction_factor(-1e4, 0.0)
    with pytest.raises(ValueError):
        friction_factor(1e4, -1e-3)


@given(
    st.floats(min_value=2000.0, max_value=1e8),
    st.floats(min_value=0.0, max_value=0.05),
    st.floats(min_value=1.01, max_value=10.0),
)
def test_colebrook_monotone(re: float, ed: float, factor: float) -> None:
    """Moody (1944) chart: turbulent f falls with Re and rises with roughness."""
    assert friction_factor(re * factor, ed) <= friction_factor(re, ed)
    assert friction_factor(re, ed * factor) >= friction_factor(re, ed)


@pytest.mark.parametrize(
    "velocity, diameter, density, viscosity",
    [(1.0, 0.025, 998.2, 1.0016e-3), (-2.5, 0.1, 983.2, 4.66e-4), (0.0, 0.02, 1000.0, 1e-3)],
)
def test_reynolds_against_fluids(velocity, diameter, density, viscosity) -> None:
    """Re = rho |v| D / mu vs fluids.core.Reynolds (magnitude), rel 1e-14."""
    expected = abs(Reynolds(V=velocity, D=diameter, rho=density, mu=viscosity))
    assert reynolds_number(velocity, diameter, density, viscosity) == pytest.approx(
        expected, rel=1e-14
    )


def test_hagen_poiseuille_pressure_drop() -> None:
    """Laminar Darcy-Weisbach equals Hagen-Poiseuille dp = 128 mu L Q / (pi D^4) exactly."""
    q, d, length, mu = 2e-6, 0.012, 3.0, 1.0016e-3
    expected = 128 * mu * length * q / (math.pi * d**4)
    assert darcy_pressure_drop(q, d, length, 1.5e-6, 998.2, mu) == pytest.approx(
        expected, rel=1e-12
    )


@pytest.mark.parametrize(
    "flow, diameter, length, roughness",
    [
        (0.25e-3, 0.0199, 10.0, 1.5e-6),  # 4 gpm in 3/4 in copper
        (1.3e-3, 0.02664, 30.0, 45e-6),  # 1 in sch 40 steel
        (0.08, 0.2, 100.0, 45e-6),
        (2e-4, 0.0123, 5.0, 7e-6),  # 1/2 in PEX
    ],
)
def test_turbulent_pressure_drop_against_fluids(flow, diameter, length, roughness) -> None:
    """Darcy-Weisbach vs fluids.friction.one_phase_dP(Method="Colebrook"), rel 1e-9, water 20 C."""
    rho, mu = 998.2, 1.0016e-3
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        expected = one_phase_dP(
            flow * rho, rho, mu, diameter, roughness, length, Method="Colebrook"
        )
    assert darcy_pressure_drop(flow, diameter, length, roughness, rho, mu) == pytest.approx(
        expected, rel=1e-9
    )


def test_pressure_drop_sign_zero_and_arrays() -> None:
    """Sign follows flow (odd in Q); zero flow, zero loss; arrays give the scalar results."""
    args = (0.02, 10.0, 1.5e-6, 998.2, 1.0016e-3)
    forward = darcy_pressure_drop(3e-4, *args)
    assert forward > 0
    assert darcy_pressure_drop(-3e-4, *args) == -forward
    assert darcy_pressure_drop(0.0, *args) == 0.0
    flows = np.array([-3e-4, 0.0, 1e-6, 3e-4])
    np.testing.assert_allclose(
        darcy_pressure_drop(flows, *args),
        [darcy_pressure_drop(q, *args) for q in flows],
        rtol=1e-15,
    )
