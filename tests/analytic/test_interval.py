"""The interval's time-dependent laws (:mod:`sweep.analytic.interval`, sheet section C):
check values, integral identities by quadrature, limits and edge cases.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest
from scipy import integrate

from sweep import analytic as an
from tests.analytic.sheet import (
    AA,
    AR,
    QUAD_RTOL,
    RA,
    RR,
    X0,
    D,
    L,
    T,
    inverse_gaussian,
    levy,
    quad,
)
from tests.tolerances import RTOL_NUMERIC


def test_interval_aa_check_values() -> None:
    # check value from shared reference sheet (C1, P). Redner (2001) Ch. 2 [memory].
    f0, fl = an.interval_exit_density(T, X0, L, D)
    cond0, cond_l = an.interval_conditional_mean_exit_time(X0, L, D)
    cases = [
        (an.interval_survival(T, X0, L, D), 0.499439238219),
        (an.interval_fpt_density(T, X0, L, D), 1.00881627656),
        (f0, 0.739655259099),
        (fl, 0.26916101746),
        (an.interval_density(1.1, T, X0, L, D), 0.354323234681),
        (an.interval_mean_exit_time(X0, L, D), 0.46875),
        (an.interval_second_moment(X0, L, D), 0.4638671875),
        (cond_l, 0.78125),
        (cond0, 0.364583333333),
        (an.interval_splitting(X0, L, D), X0 / L),
    ]
    for result, expected in cases:
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_interval_aa_drift_check_values() -> None:
    # check value from shared reference sheet (C2, P with mu = +0.9 and mu = -1.3).
    # Redner (2001) Ch. 2, biased diffusion [memory]; Cox & Miller (1965) Ch. 5 [memory].
    cases = [
        (an.interval_splitting(X0, L, D, 0.9), 0.480904093849),
        (an.interval_mean_exit_time(X0, L, D, 0.9), 0.513120208554),
        (an.interval_survival(T, X0, L, D, 0.9), 0.590037805764),
        (an.interval_exit_density(T, X0, L, D, 0.9)[1], 0.580054624016),
        (an.interval_splitting(X0, L, D, -1.3), 0.0505654537776),
        (an.interval_mean_exit_time(X0, L, D, -1.3), 0.306822378804),
    ]
    for result, expected in cases:
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_interval_ar_check_values() -> None:
    # check value from shared reference sheet (C3, P). Redner (2001) Ch. 2 [memory];
    # Carslaw & Jaeger (1959) Ch. III [memory].
    cases = [
        (an.interval_survival(T, X0, L, D, walls=AR), 0.529513140392),
        (an.interval_fpt_density(T, X0, L, D, walls=AR), 0.73969383832),
        (an.interval_density(1.1, T, X0, L, D, walls=AR), 0.357171095099),
        (an.interval_mean_exit_time(X0, L, D, walls=AR), 1.09375),
        (an.interval_second_moment(X0, L, D, walls=AR), 4.04459635417),
        (an.interval_mean_exit_time(X0, L, D, 0.9, walls=AR), 3.47583892466),
        (an.interval_mean_exit_time(X0, L, D, -1.3, walls=AR), 0.361607186573),
    ]
    for result, expected in cases:
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_interval_rr_check_values() -> None:
    # check value from shared reference sheet (C4; C5 with mu = -1.3, [derived] there).
    cases = [
        (an.interval_density(1.1, T, X0, L, D, walls=RR), 0.437198302207),
        (an.interval_density(1.1, T, X0, L, D, walls=RR, drift=-1.3), 0.239946917817),
        # stationary density p_inf(1.1): the propagator after 300 relaxation times
        (an.interval_density(1.1, 1e3, X0, L, D, walls=RR, drift=-1.3), 0.282960988111),
    ]
    for result, expected in cases:
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_interval_rr_occupation_time_check_value() -> None:
    # check value from shared reference sheet (C4 [C37]: time in [0.2, 0.9] during
    # [0, 1.5] = 0.69261190155). Independent: scipy.integrate.quad_vec over time of the
    # propagator at Gauss-Legendre nodes in x (split at x0, where the time integral kinks).
    u, w = np.polynomial.legendre.leggauss(10)
    nodes = np.concatenate([0.35 + 0.15 * u, 0.7 + 0.2 * u])
    weights = np.concatenate([0.15 * w, 0.2 * w])
    green = integrate.quad_vec(
        lambda t: an.interval_density(nodes, t, X0, L, D, walls=RR),
        0.0,
        1.5,
        epsabs=0.0,
        epsrel=QUAD_RTOL,
    )[0]
    np.testing.assert_allclose(weights @ green, 0.69261190155, rtol=RTOL_NUMERIC)


# --- integral identities by quadrature


@pytest.mark.parametrize(
    ("walls", "drift"),
    [
        (AA, 0.0),
        (AA, 0.9),
        (AA, -1.3),
        (AR, 0.0),
        (RA, 0.0),
        (RR, 0.0),
        (RR, -1.3),
        (RR, 25.0),
    ],
    ids=["AA", "AA-mu=0.9", "AA-mu=-1.3", "AR", "RA", "RR", "RR-mu=-1.3", "RR-mu=25"],
)
@pytest.mark.parametrize("t", [0.004, T, 2.0], ids=["t=0.004", "t=0.3", "t=2"])
def test_interval_density_integrates_to_survival(
    walls: tuple[str, str], drift: float, t: float
) -> None:
    # integral_0^L p dx = S(t) (sheet 0 conventions; C1-C5), scipy.integrate.quad.
    def p(x: float) -> float:
        return float(an.interval_density(x, t, X0, L, D, walls=walls, drift=drift))

    centre = min(max(X0 + drift * t, 0.0), L)
    expected = quad(p, 0.0, L, points=[X0, centre])
    result = an.interval_survival(t, X0, L, D, drift, walls)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize(
    ("walls", "drift"),
    [(AA, 0.0), (AA, 0.9), (AA, -1.3), (AR, 0.0), (RA, 0.0)],
    ids=["AA", "AA-mu=0.9", "AA-mu=-1.3", "AR", "RA"],
)
def test_interval_survival_is_one_minus_integrated_fpt_density(
    walls: tuple[str, str], drift: float
) -> None:
    # S(t) = 1 - integral_0^t f ds (sheet 0: f = -dS/dt), scipy.integrate.quad.
    def f(s: float) -> float:
        return float(an.interval_fpt_density(s, X0, L, D, drift, walls))

    for t in (0.01, T, 1.5):
        expected = 1.0 - quad(f, 0.0, t)
        result = an.interval_survival(t, X0, L, D, drift, walls)
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("x0", [0.02, 0.1], ids=lambda x: f"x0={x}")
def test_interval_short_time_matches_halfline_laws(x0: float) -> None:
    # At D t / L^2 << 1 near the wall at 0 the far wall is invisible (error
    # exp(-(L - x0)^2 / (4 D t)) < 1e-300): the image regime must reproduce the half-line
    # laws of sheet B, computed by scipy.stats.levy / scipy.stats.invgauss; sheet C1 [C19].
    t = np.geomspace(1e-5, 2e-3, 6)
    np.testing.assert_allclose(
        an.interval_survival(t, x0, L, D), levy(x0).sf(t), rtol=RTOL_NUMERIC
    )
    f0, _ = an.interval_exit_density(t, x0, L, D)
    np.testing.assert_allclose(f0, levy(x0).pdf(t), rtol=RTOL_NUMERIC)
    # drift toward the wall at 0: inverse Gaussian
    law = inverse_gaussian(x0, 1.3)
    np.testing.assert_allclose(
        an.interval_survival(t, x0, L, D, -1.3), law.sf(t), rtol=RTOL_NUMERIC
    )
    np.testing.assert_allclose(
        an.interval_fpt_density(t, x0, L, D, -1.3), law.pdf(t), rtol=RTOL_NUMERIC
    )


def test_interval_ar_survival_from_reflecting_end_matches_series() -> None:
    # Sheet C3 [C32]: S = (4/pi) sum_m (-1)^m/(2m+1) exp(-D kappa_m^2 t), summed here
    # directly (eigen-series written independently of the module's fold onto AA on 2L).
    t = np.array([0.05, T, 1.0, 5.0])
    m = np.arange(400)[:, None]
    kappa = (m + 0.5) * np.pi / L
    expected = (4 / np.pi) * np.sum(
        (-1.0) ** m / (2 * m + 1) * np.exp(-D * kappa**2 * t), axis=0
    )
    result = an.interval_survival(t, L, L, D, walls=AR)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize(
    ("walls", "drift"),
    [(AA, 0.0), (AA, 0.9), (AR, 0.0), (RA, 0.0), (RR, 0.0), (RR, -1.3)],
    ids=["AA", "AA-mu=0.9", "AR", "RA", "RR", "RR-mu=-1.3"],
)
def test_interval_density_satisfies_chapman_kolmogorov(
    walls: tuple[str, str], drift: float
) -> None:
    # Markov property: integral p(x, t2 | y) p(y, t1 | x0) dy = p(x, t1 + t2 | x0),
    # scipy.integrate.quad; t1 in the image regime, t2 and t1 + t2 in the eigen regime.
    t1, t2, x = 0.04, 0.3, 1.3

    def integrand(y: float) -> float:
        first = an.interval_density(y, t1, X0, L, D, walls=walls, drift=drift)
        second = an.interval_density(x, t2, y, L, D, walls=walls, drift=drift)
        return float(first * second)

    expected = quad(integrand, 0.0, L, points=[X0])
    result = an.interval_density(x, t1 + t2, X0, L, D, walls=walls, drift=drift)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_interval_rr_with_drift_relaxes_to_stationary_density() -> None:
    # Sheet C5: p -> p_inf = (mu/D) e^{mu x/D} / (e^{mu L/D} - 1), written out here.
    mu = -1.3
    x = np.linspace(0.0, L, 9)
    expected = (mu / D) * np.exp(mu * x / D) / np.expm1(mu * L / D)
    result = an.interval_density(x, 200.0, X0, L, D, walls=RR, drift=mu)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("drift", [-200.0, 200.0], ids=["toward-0", "toward-L"])
def test_interval_strong_drift_stays_finite_and_monotone(drift: float) -> None:
    # Overflow guards (warnings are errors in this suite): survival stays in [0, 1] and is
    # non-increasing. For |mu| L / D >> 1 the exit is ballistic and E T (C2 [C25]) tends
    # to distance / |mu|, the inverse-Gaussian mean of the half-line (B2 [B11]).
    t = np.concatenate([[0.0], np.geomspace(1e-6, 10.0, 30)])
    s = an.interval_survival(t, X0, L, D, drift)
    assert np.all((s >= 0.0) & (s <= 1.0))
    assert np.all(np.diff(s) <= 0.0)
    distance = X0 if drift < 0 else L - X0
    np.testing.assert_allclose(
        an.interval_mean_exit_time(X0, L, D, drift),
        distance / abs(drift),
        rtol=RTOL_NUMERIC,
    )


def test_interval_time_zero_and_start_on_wall() -> None:
    # Conventions (module docstring; sheet C1 [C17]: S(0+) = 1): S(0) = 1, densities 0;
    # a start on an absorbing wall is killed at once.
    t = np.array([0.0, 0.1])
    np.testing.assert_array_equal(an.interval_survival(t, X0, L, D)[0], 1.0)
    np.testing.assert_array_equal(an.interval_fpt_density(t, X0, L, D)[0], 0.0)
    np.testing.assert_array_equal(an.interval_density(1.0, t, X0, L, D)[0], 0.0)
    np.testing.assert_array_equal(an.interval_survival(t, 0.0, L, D), 0.0)
    np.testing.assert_array_equal(an.interval_survival(t, L, L, D, walls=RA), 0.0)
    np.testing.assert_array_equal(an.interval_survival(t, L, L, D, walls=AR)[0], 1.0)
    outside = an.interval_density([-0.1, L + 0.1], T, X0, L, D, walls=RR)
    np.testing.assert_array_equal(outside, 0.0)


def test_interval_rr_has_no_exit() -> None:
    # Both walls reflecting: nothing is absorbed (sheet D: S_i = 1 on RR axes).
    t = np.array([0.0, 0.5, 50.0])
    np.testing.assert_array_equal(an.interval_survival(t, X0, L, D, -1.3, RR), 1.0)
    np.testing.assert_array_equal(an.interval_fpt_density(t, X0, L, D, walls=RR), 0.0)
    assert an.interval_mean_exit_time(X0, L, D, walls=RR) == math.inf
    assert an.interval_second_moment(X0, L, D, walls=RR) == math.inf


@pytest.mark.parametrize(
    "call",
    [
        pytest.param(lambda: an.interval_survival(T, X0, L, D, 0.5, AR), id="survival"),
        pytest.param(lambda: an.interval_fpt_density(T, X0, L, D, 0.5, RA), id="fpt"),
        pytest.param(
            lambda: an.interval_density(1.0, T, X0, L, D, AR, 0.5), id="density"
        ),
    ],
)
def test_interval_ar_with_drift_is_not_implemented(call: Callable[[], object]) -> None:
    # Sheet C3: the AR time series with drift is not tabulated.
    with pytest.raises(NotImplementedError, match="no closed form"):
        call()
