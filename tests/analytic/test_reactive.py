"""The closed forms of ``sweep.analytic.reactive`` against independent computations:
Laplace transforms (numerical quadrature), boundary-value solves (scipy solve_bvp),
scipy.stats moments, and the limits kappa -> 0 and kappa -> inf."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from sweep.analytic import reactive as ar
from tests.tolerances import RTOL_NUMERIC

#: Quadrature of a Laplace transform and boundary-value solves on a mesh of 2001
#: points: agreement to this relative error (measured: below 1e-6).
RTOL_QUADRATURE = 1e-5


def laplace_of_cdf(cdf, s: float) -> float:  # type: ignore[no-untyped-def]
    """E[exp(-s T)] = s * integral of exp(-s t) P(T <= t) dt (integration by parts)."""
    value, _ = integrate.quad(lambda t: math.exp(-s * t) * cdf(t), 0, np.inf, limit=400)
    return s * value


@pytest.mark.parametrize("kappa", [0.3, 1.0, 7.0])
@pytest.mark.parametrize("s", [0.2, 2.0])
def test_half_line_law_matches_its_laplace_transform(kappa: float, s: float) -> None:
    """E[exp(-sT)] = kappa / (kappa + sqrt(s D)) exp(-x0 sqrt(s/D)): the solution of
    D f'' = s f, f(inf) = 0, D f'(0) = kappa (f(0) - 1) (derived here; the Robin
    condition of Collins & Kimball 1949 [from memory])."""
    d, x0 = 0.5, 0.5
    exact = kappa / (kappa + math.sqrt(s * d)) * math.exp(-x0 * math.sqrt(s / d))
    got = laplace_of_cdf(lambda t: float(ar.half_line_reactive_cdf(t, x0, d, kappa)), s)
    assert got == pytest.approx(exact, rel=RTOL_QUADRATURE)


def test_half_line_check_values_and_limits() -> None:
    """Analytic reference J1's values (checked there against a finite-volume solve):
    D = 0.5, kappa = 1, x0 = 0.5; kappa = inf gives erfc(u), kappa = 0 gives 0; no
    overflow at large kappa^2 t / D."""
    got = ar.half_line_reactive_cdf(np.array([1.0, 4.0, 16.0]), 0.5, 0.5, 1.0)
    np.testing.assert_allclose(got, [0.36763, 0.62937, 0.80450], atol=1e-5)
    t = np.array([0.1, 1.0, 10.0])
    u = 0.5 / np.sqrt(4 * 0.5 * t)
    np.testing.assert_allclose(
        ar.half_line_reactive_cdf(t, 0.5, 0.5, math.inf), special.erfc(u), rtol=1e-15
    )
    np.testing.assert_allclose(
        ar.half_line_reactive_cdf(t, 0.5, 0.5, 1e9), special.erfc(u), rtol=1e-6
    )
    assert np.all(ar.half_line_reactive_cdf(t, 0.5, 0.5, 0.0) == 0.0)
    big = ar.half_line_reactive_cdf(np.array([1e4]), 0.5, 0.5, 50.0)
    # Long after contact the reactive law approaches the absorbing one.
    absorbing = special.erfc(0.5 / math.sqrt(4 * 0.5 * 1e4))
    assert np.isfinite(big).all() and big[0] == pytest.approx(absorbing, rel=1e-3)


@pytest.mark.parametrize("kappa", [0.5, 4.0])
@pytest.mark.parametrize("s", [0.3, 3.0])
def test_sphere_law_matches_its_laplace_transform(kappa: float, s: float) -> None:
    """E[exp(-sT)] = (a/r0) kappa a / (kappa a + D (1 + a q)) exp(-(r0 - a) q),
    q = sqrt(s/D): u = r f solves D u'' = s u with D f'(a) = kappa (f(a) - 1)
    (derived here)."""
    a, d, r0 = 0.5, 1.0, 1.2
    q = math.sqrt(s / d)
    exact = (
        (a / r0) * kappa * a / (kappa * a + d * (1 + a * q)) * math.exp(-(r0 - a) * q)
    )
    got = laplace_of_cdf(lambda t: float(ar.sphere_reactive_cdf(t, r0, a, d, kappa)), s)
    assert got == pytest.approx(exact, rel=RTOL_QUADRATURE)
    late = float(ar.sphere_reactive_cdf(1e12, r0, a, d, kappa))
    assert late == pytest.approx(
        ar.sphere_capture_probability(r0, a, d, kappa), rel=1e-5
    )


def _radial_mean(dimension: int, inner: float, outer: float, bc_inner, bc_outer):  # type: ignore[no-untyped-def]
    """Solve D (T'' + (d - 1) T' / r) = -1 on [inner, outer] numerically (D = 1)."""
    r = np.linspace(inner, outer, 2001)

    def ode(x, y):  # type: ignore[no-untyped-def]
        if dimension == 1:
            return np.vstack([y[1], -np.ones_like(x)])
        return np.vstack([y[1], -1.0 - (dimension - 1) * y[1] / x])

    def bc(ya, yb):  # type: ignore[no-untyped-def]
        return np.array([bc_inner(ya), bc_outer(yb)])

    sol = integrate.solve_bvp(
        ode, bc, r, np.zeros((2, r.size)), tol=1e-10, max_nodes=10**6
    )
    assert sol.success, sol.message
    return sol.sol


def test_interval_mean_matches_boundary_value_solve() -> None:
    """J2 against solve_bvp of T'' = -1/D, D T'(0) = kappa T(0), T'(L) = 0; the
    reference's check value 1.25; kappa = inf is the absorbing/reflecting interval."""
    assert ar.interval_reactive_mean(0.5, 1.0, 0.5, 2.0) == pytest.approx(1.25)
    kappa = 3.0
    sol = _radial_mean(1, 0.0, 2.0, lambda y: y[1] - kappa * y[0], lambda y: y[1])
    assert ar.interval_reactive_mean(0.7, 2.0, 1.0, kappa) == pytest.approx(
        sol(0.7)[0], rel=RTOL_QUADRATURE
    )
    assert ar.interval_reactive_mean(0.7, 2.0, 1.0, math.inf) == pytest.approx(
        2.0 * 0.7 - 0.7**2 / 2
    )


@pytest.mark.parametrize("dimension", [2, 3])
def test_ball_reactive_mean_matches_boundary_value_solve(dimension: int) -> None:
    """D T'(R) = -kappa T(R), regular at the centre: solved on [0.01, R] with the
    regular solution's slope T'(r) = -r / (d D) at the inner end."""
    kappa, radius, inner = 2.0, 1.5, 0.01
    sol = _radial_mean(
        dimension, inner, radius, lambda y: y[1] + inner / dimension,
        lambda y: y[1] + kappa * y[0],
    )  # fmt: skip
    got = ar.ball_reactive_mean(0.6, radius, 1.0, kappa, dimension)
    assert got == pytest.approx(sol(0.6)[0], rel=RTOL_QUADRATURE)


def test_centre_target_mean_matches_boundary_value_solve() -> None:
    """J3: D T'(a) = kappa T(a) at the target, T'(R) = 0 at the reflecting wall."""
    a, radius, kappa = 0.3, 1.2, 0.8
    sol = _radial_mean(3, a, radius, lambda y: y[1] - kappa * y[0], lambda y: y[1])
    got = ar.centre_target_reactive_mean(0.7, a, radius, 1.0, kappa)
    assert got == pytest.approx(sol(0.7)[0], rel=RTOL_QUADRATURE)
    # kappa -> inf: the absorbing target (T(a) = 0).
    sol = _radial_mean(3, a, radius, lambda y: y[0], lambda y: y[1])
    got = ar.centre_target_reactive_mean(0.7, a, radius, 1.0, math.inf)
    assert got == pytest.approx(sol(0.7)[0], rel=RTOL_QUADRATURE)


@pytest.mark.parametrize("dimension", [2, 3])
def test_obstacle_mean_matches_boundary_value_solve(dimension: int) -> None:
    """J5: T'(a) = 0 at the obstacle, T(R) = 0 at the absorbing wall."""
    a, radius = 0.4, 1.3
    sol = _radial_mean(dimension, a, radius, lambda y: y[1], lambda y: y[0])
    got = ar.obstacle_ball_mean(0.9, a, radius, 1.0, dimension)
    assert got == pytest.approx(sol(0.9)[0], rel=RTOL_QUADRATURE)


def test_free_msd_and_its_variance() -> None:
    """Per axis (X - x0)^2 / s^2 ~ noncentral chi^2(1, (mu t / s)^2), s^2 = 2 D t
    (scipy.stats.ncx2): mean and variance summed over axes."""
    d, t, drift = 0.7, 1.3, (0.4, -0.1, 0.0)
    s2 = 2 * d * t
    dists = [stats.ncx2(df=1, nc=(v * t) ** 2 / s2) for v in drift]
    assert ar.free_msd(t, d, 3, drift) == pytest.approx(
        sum(x.mean() for x in dists) * s2, rel=RTOL_NUMERIC
    )
    assert ar.free_msd_variance(t, d, 3, drift) == pytest.approx(
        sum(x.var() for x in dists) * s2 * s2, rel=RTOL_NUMERIC
    )
