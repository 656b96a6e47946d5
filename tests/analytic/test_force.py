"""The force-field references (sweep.analytic.force, sweep.potentials) against
independent computations: the flat-potential interval formulas of sweep.analytic, a
boundary-value solve of the backward equation, a moment ODE and a renewal argument."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from sweep import analytic
from sweep.analytic import force as analytic_force
from sweep.potentials import Force, along, max_curvature, slope_coefficients
from tests.tolerances import RTOL_NUMERIC

#: An ODE shooting solve (DOP853, rtol 1e-12) of the backward equation vs quadrature.
RTOL_ODE = 1e-6
#: Stratonovich's double integral vs the renewal argument's quadrature.
RTOL_VELOCITY = 1e-7

D = 0.8  # not 1/2, so that a D-versus-2D slip cannot hide (reference sheet, §0)
DOUBLE_WELL = Force(
    "double_well", axis=0, center=(0.0,), barrier=4.0, half_separation=1.0
)


def flat(drift: float = 0.0):
    return analytic_force.effective_profile(None, 0, D, drift)


@pytest.mark.parametrize("drift", [0.0, 0.7, -1.3])
def test_flat_potential_is_the_interval(drift: float) -> None:
    # U = 0 recovers the interval formulas (reference sheet C1-C3; sweep.analytic).
    L, x0 = 2.0, 0.5
    u = flat(drift)
    for walls in [("absorbing", "absorbing"), ("reflecting", "absorbing"),
                  ("absorbing", "reflecting")]:  # fmt: skip
        got = analytic_force.mean_exit_time(u, 0.0, L, x0, D, walls)
        want = analytic.interval_mean_exit_time(x0, L, D, drift, walls)
        assert got.value == pytest.approx(want, rel=RTOL_NUMERIC), walls
        assert got.error <= RTOL_NUMERIC * want
    got = analytic_force.splitting(u, 0.0, L, x0).value
    assert got == pytest.approx(
        analytic.interval_splitting(x0, L, D, drift), rel=RTOL_NUMERIC
    )


def _shooting_mean_time(
    force: Force, a: float, b: float, x0: float, walls: tuple[str, str]
) -> float:
    """The backward equation D T'' - D U' T' = -1 (T = 0 at absorbing ends, T' = 0 at
    reflecting ones) by shooting from a with scipy's ODE solver: the equation is
    linear, so two shots (T(a), T'(a)) combine into the one meeting the far end's
    condition (independent of the double-integral formula)."""

    def rhs(x, y):
        return [y[1], along(force, 0, x, 1) * y[1] - y[2] / D, 0.0]

    def shot(t0, s0, source):
        sol = solve_ivp(rhs, (a, b), [t0, s0, source], rtol=1e-12, atol=1e-14,
                        dense_output=True, method="DOP853")  # fmt: skip
        return sol

    # Particular solution from a's condition, plus c times a homogeneous one.
    if walls[0] == "absorbing":
        part, hom = shot(0.0, 0.0, 1.0), shot(0.0, 1.0, 0.0)
    else:
        part, hom = shot(0.0, 0.0, 1.0), shot(1.0, 0.0, 0.0)
    k = 0 if walls[1] == "absorbing" else 1
    c = -part.y[k, -1] / hom.y[k, -1]
    return float(part.sol(x0)[0] + c * hom.sol(x0)[0])


@pytest.mark.parametrize(
    "walls", [("absorbing", "absorbing"), ("reflecting", "absorbing")]
)
def test_double_well_quadrature_vs_backward_equation(walls: tuple[str, str]) -> None:
    a, b, x0 = -2.0, 1.0, -1.0
    u = analytic_force.effective_profile(DOUBLE_WELL, 0, D)
    got = analytic_force.mean_exit_time(u, a, b, x0, D, walls)
    want = _shooting_mean_time(DOUBLE_WELL, a, b, x0, walls)
    assert got.value == pytest.approx(want, rel=RTOL_ODE)


def test_splitting_vs_backward_equation() -> None:
    # P(exit at b) solves D P'' - D U' P' = 0, P(a) = 0, P(b) = 1.
    force = Force("tilted_periodic", axis=0, amplitude=1.5, period=0.7, tilt=0.8)
    a, b, x0 = 0.0, 2.0, 0.9

    def rhs(x, y):
        return [y[1], along(force, 0, x, 1) * y[1]]

    sol = solve_ivp(rhs, (a, b), [0.0, 1.0], rtol=1e-12, atol=1e-14,
                    dense_output=True, method="DOP853")  # fmt: skip
    want = sol.sol(x0)[0] / sol.y[0, -1]  # scaled to P(b) = 1
    u = analytic_force.effective_profile(force, 0, D)
    assert analytic_force.splitting(u, a, b, x0).value == pytest.approx(
        want, rel=RTOL_ODE
    )


def test_infinite_reflecting_side_is_cut_where_confined() -> None:
    # A harmonic well on (-inf, b] equals the same on [c - 12/sqrt(k), b]: U there is
    # 72 kT above its minimum, beyond CONFINED_KT, so both quadratures agree.
    force = Force("harmonic", center=(0.0,), stiffness=(4.0,))
    u = analytic_force.effective_profile(force, 0, D)
    open_ = analytic_force.mean_exit_time(
        u, -math.inf, 0.8, 0.0, D, ("reflecting", "absorbing")
    )
    closed = analytic_force.mean_exit_time(
        u, -6.0, 0.8, 0.0, D, ("reflecting", "absorbing")
    )
    assert open_.value == pytest.approx(closed.value, rel=RTOL_NUMERIC)


def test_kramers_is_the_high_barrier_limit() -> None:
    # Kramers (1940); Hänggi, Talkner & Borkovec (1990) [memory]: the exact mean time
    # from one minimum to the other over T_K tends to 1 as the barrier grows (the
    # correction is O(1/barrier)). Reflecting far left, absorbing at the right minimum.
    ratios = []
    for h in (4.0, 8.0, 16.0):
        force = Force(
            "double_well", axis=0, center=(0.0,), barrier=h, half_separation=1.0
        )
        u = analytic_force.effective_profile(force, 0, D)
        exact = analytic_force.mean_exit_time(
            u, -math.inf, 1.0, -1.0, D, ("reflecting", "absorbing")
        )
        ratios.append(exact.value / analytic_force.kramers_escape_time(h, 1.0, D))
    gaps = [abs(r - 1.0) for r in ratios]
    assert gaps[0] > gaps[1] > gaps[2]
    assert gaps[2] < 0.1


def test_ou_moments_vs_moment_ode() -> None:
    # d mean/dt = -D k (mean - c) + mu, d var/dt = -2 D k var + 2 D (Gardiner §3.8.4
    # [memory]; Ito's formula), integrated numerically.
    k, c, mu, x0 = 3.0, 0.4, 0.5, -0.2
    sol = solve_ivp(lambda t, y: [-D * k * (y[0] - c) + mu, -2 * D * k * y[1] + 2 * D],
                    (0.0, 2.0), [x0, 0.0], rtol=1e-12, atol=1e-14, dense_output=True)  # fmt: skip
    for t in (0.05, 0.3, 2.0):
        mean, var = sol.sol(t)
        assert analytic_force.ou_mean(t, x0, c, k, D, mu) == pytest.approx(
            mean, rel=RTOL_NUMERIC
        )
        assert analytic_force.ou_variance(t, k, D) == pytest.approx(
            var, rel=RTOL_NUMERIC
        )
    assert analytic_force.ou_variance(1e3, k, D) == pytest.approx(
        1.0 / k, rel=RTOL_NUMERIC
    )


@pytest.mark.parametrize("amplitude,tilt", [(0.0, 1.3), (1.2, 0.6), (2.0, 2.5)])
def test_tilted_drift_velocity_vs_renewal(amplitude: float, tilt: float) -> None:
    # Passages over successive periods are independent and alike, so v = L / T1 with
    # T1 the mean time to advance one period from x0 (reflecting far behind, where U
    # is CONFINED_KT higher: the tilt confines): renewal argument, by the
    # mean-exit-time quadrature. Without amplitude v = D F exactly.
    L = 0.9
    force = Force("tilted_periodic", axis=0, amplitude=amplitude, period=L, tilt=tilt)
    v = analytic_force.periodic_drift_velocity(
        lambda x: amplitude * np.cos(2 * np.pi * x / L), L, tilt, D
    )
    u = analytic_force.effective_profile(force, 0, D)
    t1 = analytic_force.mean_exit_time(
        u, -math.inf, 0.3 + L, 0.3, D, ("reflecting", "absorbing")
    )
    assert v == pytest.approx(L / t1.value, rel=RTOL_VELOCITY)
    if amplitude == 0.0:
        assert v == pytest.approx(D * tilt, rel=RTOL_NUMERIC)


def test_table_spline_slope_coefficients() -> None:
    # The kernel's per-cell slope a + t (b + c t) equals the spline's derivative.
    values = tuple(np.sin(np.linspace(0, 3, 9)) * 2.0)
    force = Force("table", axis=0, lower=-1.0, upper=2.0, values=values)
    coef = slope_coefficients(force)
    h = 3.0 / 8
    x = np.linspace(-1.0, 2.0, 97)
    j = np.minimum((x + 1.0) // h, 7).astype(int)
    t = x - (-1.0 + j * h)
    got = coef[j, 0] + t * (coef[j, 1] + coef[j, 2] * t)
    np.testing.assert_allclose(got, along(force, 0, x, 1), rtol=1e-10, atol=1e-12)
    # Natural spline: zero curvature at both ends; the largest one on a knot.
    assert along(force, 0, np.array([-1.0, 2.0]), 2) == pytest.approx(
        [0.0, 0.0], abs=1e-12
    )
    fine = np.abs(along(force, 0, np.linspace(-1, 2, 10001), 2)).max()
    assert max_curvature(force, 0, -1.0, 2.0) == pytest.approx(fine, rel=1e-3)
