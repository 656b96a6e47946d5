"""The interval's splitting probability and exit-time moments
(:mod:`sweep.analytic.interval_moments`, sheet sections C1-C3) against quadrature
and scipy.integrate.solve_bvp.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from sweep import analytic as an
from tests.analytic.sheet import (
    AA,
    AR,
    BVP_TOL,
    RA,
    X0,
    D,
    L,
    quad,
)
from tests.tolerances import RTOL_NUMERIC


@pytest.mark.parametrize(
    ("walls", "drift"),
    [(AA, 0.0), (AA, 0.9), (AA, -1.3), (AR, 0.0), (RA, 0.0)],
    ids=["AA", "AA-mu=0.9", "AA-mu=-1.3", "AR", "RA"],
)
def test_interval_moments_are_integrals_of_survival(
    walls: tuple[str, str], drift: float
) -> None:
    # E T = integral S dt and E T^2 = 2 integral t S dt (scipy.integrate.quad); Redner
    # (2001) Ch. 2 [memory]; sheet C1 [C8, C10], C2 [C25], C3 [C30, C31].
    def s(t: float) -> float:
        return float(an.interval_survival(t, X0, L, D, drift, walls))

    mean = quad(s, 0.0, 1.0) + quad(s, 1.0, math.inf)
    result = an.interval_mean_exit_time(X0, L, D, drift, walls)
    np.testing.assert_allclose(result, mean, rtol=RTOL_NUMERIC)
    if drift == 0.0:
        second = 2.0 * (
            quad(lambda t: t * s(t), 0.0, 1.0) + quad(lambda t: t * s(t), 1.0, math.inf)
        )
        result = an.interval_second_moment(X0, L, D, walls)
        np.testing.assert_allclose(result, second, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("drift", [0.0, 0.9, -1.3], ids=lambda m: f"mu={m}")
def test_interval_splitting_is_integral_of_exit_density(drift: float) -> None:
    # pi_L = integral_0^inf f_L dt (scipy.integrate.quad); sheet C1 [C12], C2 [C24];
    # Redner (2001) Ch. 2 [memory].
    def f_l(t: float) -> float:
        return float(an.interval_exit_density(t, X0, L, D, drift)[1])

    expected = quad(f_l, 0.0, 1.0) + quad(f_l, 1.0, math.inf)
    np.testing.assert_allclose(
        an.interval_splitting(X0, L, D, drift), expected, rtol=RTOL_NUMERIC
    )


def test_interval_conditional_mean_exit_times_are_quadratures() -> None:
    # E[T | exit at end] = integral t f_end / integral f_end (scipy.integrate.quad); sheet
    # C1 [C14, C15]; Redner (2001) Ch. 2, conditional exit times [memory].
    expected = []
    for end in (0, 1):

        def f(t: float, end: int = end) -> float:
            return float(an.interval_exit_density(t, X0, L, D)[end])

        mass = quad(f, 0.0, 1.0) + quad(f, 1.0, math.inf)
        moment = quad(lambda t: t * f(t), 0.0, 1.0) + quad(
            lambda t: t * f(t), 1.0, math.inf
        )
        expected.append(moment / mass)
    result = an.interval_conditional_mean_exit_time(X0, L, D)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def mean_exit_time_bvp(x0: float, drift: float, walls: tuple[str, str]) -> float:
    """Solve D T'' + mu T' = -1 on [0, L], T = 0 at absorbing and T' = 0 at reflecting
    ends (backward equation, sheet C2 [C26], C3 [C33c]) with scipy.integrate.solve_bvp."""

    def rhs(x: np.ndarray, y: np.ndarray) -> np.ndarray:
        return np.vstack([y[1], -(1.0 + drift * y[1]) / D])

    def bc(ya: np.ndarray, yb: np.ndarray) -> np.ndarray:
        low = ya[0] if walls[0] == "absorbing" else ya[1]
        high = yb[0] if walls[1] == "absorbing" else yb[1]
        return np.array([low, high])

    mesh = np.linspace(0.0, L, 201)
    sol = integrate.solve_bvp(
        rhs, bc, mesh, np.zeros((2, mesh.size)), tol=BVP_TOL, max_nodes=100_000
    )
    assert sol.success, sol.message
    return float(sol.sol(x0)[0])


@pytest.mark.parametrize(
    ("walls", "drift"),
    [
        (AA, 0.9),
        (AA, -1.3),
        (AA, 3.0),
        (AA, -8.0),
        (AA, 1e-5),
        (AR, 0.9),
        (AR, -1.3),
        (AR, 3.0),
        (AR, -8.0),
        (AR, 1e-5),
        (RA, 0.9),
        (RA, -1.3),
        (RA, -3.0),
        (RA, 1e-5),
    ],
    ids=lambda p: (
        "".join(w[0].upper() for w in p) if isinstance(p, tuple) else f"mu={p}"
    ),
)
def test_interval_mean_exit_time_with_drift_matches_solve_bvp(
    walls: tuple[str, str], drift: float
) -> None:
    # Sheet C2 [C25-C27] and C3 [C33b, C33c]: closed forms vs scipy.integrate.solve_bvp.
    # Karlin & Taylor (1981) Ch. 15 [memory]. mu = 1e-5 pins the cancellation-free form.
    result = an.interval_mean_exit_time(X0, L, D, drift, walls)
    np.testing.assert_allclose(
        result, mean_exit_time_bvp(X0, drift, walls), rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize("walls", [AA, AR, RA], ids=["AA", "AR", "RA"])
def test_interval_mean_exit_time_uses_driftless_limit_for_tiny_drift(
    walls: tuple[str, str],
) -> None:
    # |mu L / D| < 1e-8 returns the mu -> 0 limit (sheet C2 [C27], C3) exactly.
    assert an.interval_mean_exit_time(
        X0, L, D, 1e-9, walls
    ) == an.interval_mean_exit_time(X0, L, D, 0.0, walls)
