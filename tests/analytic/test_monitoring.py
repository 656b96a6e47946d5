"""Discrete monitoring and bridge crossings (:mod:`sweep.analytic.monitoring`,
sheet section F).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special, stats

from sweep import analytic as an
from tests.analytic.sheet import (
    X0,
    D,
    L,
)
from tests.tolerances import RTOL_F64, RTOL_NUMERIC


def test_beta_matches_riemann_zeta() -> None:
    # beta = -zeta(1/2)/sqrt(2 pi): Broadie, Glasserman & Kou (1997) [seen]; Chang & Peres
    # (1997) [seen]; scipy.special.zeta. Sheet value 0.5825971579390106 (F1).
    expected = -special.zeta(0.5) / math.sqrt(2.0 * math.pi)
    np.testing.assert_allclose(an.BETA, expected, rtol=RTOL_F64)
    np.testing.assert_allclose(an.BETA, 0.5825971579390106, rtol=RTOL_F64)


def test_discrete_monitoring_shift_check_value() -> None:
    # Sheet F2 (P, dt = 1e-3): shifted prediction (x0 + delta)(L - x0 + delta)/(2D) =
    # 0.498219277345, check value from shared reference sheet; Broadie, Glasserman & Kou
    # (1997) [seen].
    delta = an.discrete_monitoring_shift(D, 1e-3)
    np.testing.assert_allclose(delta, an.BETA * math.sqrt(2 * D * 1e-3), rtol=RTOL_F64)
    shifted = an.interval_mean_exit_time(X0 + delta, L + 2 * delta, D)
    np.testing.assert_allclose(shifted, 0.498219277345, rtol=RTOL_NUMERIC)


def test_bridge_crossing_probability_matches_reflection_principle() -> None:
    # Sheet F4: P = g(2a - x1 - x2) / g(x2 - x1) with g = scipy.stats.norm(scale =
    # sqrt(2 D dt)) (reflection principle; Karatzas & Shreve 1991 Sec. 2.8 [memory]).
    a = np.array([1.0, 1.0, 0.0, -0.5])
    x1 = np.array([0.8, 0.2, 0.3, 0.1])
    x2 = np.array([0.9, 0.95, 0.05, -0.2])
    dt = np.array([0.05, 0.2, 0.01, 0.1])
    g = stats.norm(scale=np.sqrt(2 * D * dt))
    expected = g.pdf(2 * a - x1 - x2) / g.pdf(x2 - x1)
    result = an.bridge_crossing_probability(a, x1, x2, D, dt)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)
    # check value from shared reference sheet (F4: e^-0.5).
    np.testing.assert_allclose(result[0], 0.606530659713, rtol=RTOL_NUMERIC)


def test_bridge_crossing_probability_matches_killed_density() -> None:
    # Sheet F4 [F10]: 1 - P(cross) = p_killed(x2, dt | x1) / g(x2 - x1); the killed density
    # is the AA propagator of a wide interval (far wall invisible), free Gaussian from
    # scipy.stats.norm.
    dt, x1, x2, width = 0.05, 0.2, 0.1, 40.0
    killed = an.interval_density(x2, dt, x1, width, D)
    free = stats.norm(loc=x1, scale=math.sqrt(2 * D * dt)).pdf(x2)
    result = an.bridge_crossing_probability(0.0, x1, x2, D, dt)
    np.testing.assert_allclose(1.0 - result, killed / free, rtol=RTOL_NUMERIC)


def test_bridge_crossing_probability_endpoint_cases() -> None:
    # F4: an endpoint on or beyond the wall means a crossing; dt = 0 means no path.
    result = an.bridge_crossing_probability(
        1.0, [1.2, 0.8, 1.0, 0.8], [0.9, 1.3, 0.5, 0.9], D, [0.05, 0.05, 0.05, 0.0]
    )
    np.testing.assert_array_equal(result, [1.0, 1.0, 1.0, 0.0])
