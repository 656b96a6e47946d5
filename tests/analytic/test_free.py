"""Free motion (:mod:`sweep.analytic.free`, sheet section A) against scipy.stats.norm."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from sweep import analytic as an
from tests.analytic.sheet import (
    D,
    T,
    V,
)
from tests.tolerances import RTOL_F64, RTOL_NUMERIC


@pytest.mark.parametrize(
    ("x", "t", "x0", "drift"),
    [
        pytest.param(0.9, T, 0.0, V, id="check-point"),
        pytest.param(np.linspace(-2.0, 3.0, 11), T, 0.4, -1.1, id="x-array"),
        pytest.param(0.7, np.array([0.01, 0.5, 4.0]), 0.2, 0.0, id="t-array"),
    ],
)
def test_free_density_matches_scipy_norm(
    x: float | np.ndarray, t: float | np.ndarray, x0: float, drift: float
) -> None:
    # Sheet A1; scipy.stats.norm(loc = x0 + mu t, scale = sqrt(2 D t)).
    result = an.free_density(x, t, x0, D, drift)
    expected = stats.norm(loc=x0 + drift * np.asarray(t), scale=np.sqrt(2 * D * t)).pdf(
        x
    )
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_free_density_check_value() -> None:
    # check value from shared reference sheet (A, P: x = 0.9, x0 = 0, mu = 0.6, t = 0.3).
    np.testing.assert_allclose(
        an.free_density(0.9, T, 0.0, D, V), 0.335560186350, rtol=RTOL_NUMERIC
    )


def test_free_moments_match_scipy_norm() -> None:
    # Sheet A2; Karlin & Taylor (1975) Ch. 7 [memory]. Independent: moments of
    # scipy.stats.norm; Cov[X(s), X(t)] = Var[X(min(s, t))] by independent increments.
    t1 = np.array([0.1, 0.7, 2.0])
    t2 = np.array([0.5, 0.3, 2.0])
    law = stats.norm(loc=0.2 + V * t1, scale=np.sqrt(2 * D * t1))
    np.testing.assert_allclose(an.free_mean(t1, 0.2, V), law.mean(), rtol=RTOL_F64)
    np.testing.assert_allclose(an.free_variance(t1, D), law.var(), rtol=RTOL_F64)
    expected_cov = stats.norm(scale=np.sqrt(2 * D * np.minimum(t1, t2))).var()
    np.testing.assert_allclose(
        an.free_covariance(t1, t2, D), expected_cov, rtol=RTOL_F64
    )


def test_free_msd_in_three_dimensions_check_value() -> None:
    # check value from shared reference sheet (A2, P: 3-D driftless MSD 2 d D t = 1.44).
    result = 3 * an.free_variance(T, D) + 3 * (an.free_mean(T, 0.0, 0.0)) ** 2
    np.testing.assert_allclose(result, 1.44, rtol=RTOL_F64)
