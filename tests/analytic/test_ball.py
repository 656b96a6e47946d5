"""The absorbing ball (:mod:`sweep.analytic.ball`, sheet section E): check values,
integral identities, image form against eigen-series, harmonic measure.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from sweep import analytic as an
from sweep.analytic.ball import _ball2_eigen, _ball3_eigen, _ball3_image
from tests.analytic.sheet import (
    R0,
    D,
    R,
    T,
    quad,
)
from tests.tolerances import RTOL_F64, RTOL_NUMERIC


@pytest.mark.parametrize(
    ("dimension", "r0", "expected"),
    [
        (2, R0, 0.671288699299),
        (2, 0.0, 0.82348534044),
        (3, R0, 0.521264661046),
        (3, 0.0, 0.668439329911),
    ],
    ids=["d2", "d2-centre", "d3", "d3-centre"],
)
def test_ball_survival_check_values(dimension: int, r0: float, expected: float) -> None:
    # check value from shared reference sheet (E2, P); Carslaw & Jaeger Ch. VII / IX
    # [memory]; Redner (2001) Ch. 6 [memory].
    np.testing.assert_allclose(
        an.ball_survival(T, r0, R, D, dimension), expected, rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize("dimension", [2, 3])
@pytest.mark.parametrize("r0", [0.0, R0, 1.2], ids=lambda r: f"r0={r}")
def test_ball_mean_exit_time_is_integral_of_survival(dimension: int, r0: float) -> None:
    # E1: (R^2 - r0^2)/(2 d D) (Oksendal Example 7.4.2 [memory]) vs integral_0^inf S dt
    # by scipy.integrate.quad of the E2 series.
    def s(t: float) -> float:
        return float(an.ball_survival(t, r0, R, D, dimension))

    expected = quad(s, 0.0, 1.0, points=[(R - r0) ** 2 / D]) + quad(s, 1.0, math.inf)
    np.testing.assert_allclose(
        an.ball_mean_exit_time(r0, R, D, dimension), expected, rtol=RTOL_NUMERIC
    )


def test_ball_mean_exit_time_check_values() -> None:
    # check value from shared reference sheet (E1, P: d = 2: 0.590625; d = 3: 0.39375).
    np.testing.assert_allclose(
        an.ball_mean_exit_time(R0, R, D, 2), 0.590625, rtol=RTOL_F64
    )
    np.testing.assert_allclose(
        an.ball_mean_exit_time(R0, R, D, 3), 0.39375, rtol=RTOL_F64
    )


@pytest.mark.parametrize("r0", [0.0, 0.3, R0, 1.4], ids=lambda r: f"r0={r}")
def test_ball3_image_form_agrees_with_eigen_series(r0: float) -> None:
    # E2 sine series vs the short-time image form [derived] (E3 relation q = (r/r0) p_AA
    # with the C1 images; Jacobi imaginary transformation from the centre).
    t = np.array([0.01, 0.03, 0.05, 0.1]) * R**2 / D
    image = _ball3_image(t, r0, R, D)
    eigen = _ball3_eigen(t, r0, R, D)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("dimension", [2, 3])
def test_ball_survival_short_time_cutoff_is_exact(dimension: int) -> None:
    # Where the union bound 2 d erfc((R - r0)/(sqrt(2d) sigma)) < 1e-17 the module returns
    # exactly 1; the full eigen-series there (E2) must agree.
    r0 = 1.2
    sigma = (R - r0) / (math.sqrt(2.0 * dimension) * 6.5)
    t = np.array([sigma**2 / (2 * D)])
    series = _ball2_eigen if dimension == 2 else _ball3_eigen
    np.testing.assert_array_equal(an.ball_survival(t, r0, R, D, dimension), 1.0)
    np.testing.assert_allclose(series(t, r0, R, D), 1.0, rtol=RTOL_NUMERIC)


def test_ball_survival_in_one_dimension_is_interval() -> None:
    # Sheet E2 [E6]: d = 1 is the AA interval [-R, R].
    t = np.array([0.0, 0.1, T, 2.0])
    np.testing.assert_allclose(
        an.ball_survival(t, R0, R, D, 1),
        an.interval_survival(t, R0 + R, 2 * R, D),
        rtol=RTOL_F64,
    )


def test_ball_exit_cos_mean_matches_poisson_kernel() -> None:
    # Sheet E4 [E14, E16, E19]: d = 2 exit angle ~ scipy.stats.wrapcauchy(c = r0/R); d = 3
    # u = cos(theta) density R (R^2 - r0^2) / (2 (R^2 + r0^2 - 2 R r0 u)^(3/2)),
    # integrated by scipy.integrate.quad. Morters & Peres (2010) Thm 3.44 [memory].
    r0 = 0.9
    result = an.ball_exit_cos_mean(r0, R)
    disk = stats.wrapcauchy(c=r0 / R).expect(np.cos)
    np.testing.assert_allclose(result, disk, rtol=RTOL_NUMERIC)

    def density(u: float) -> float:
        return R * (R**2 - r0**2) / (2.0 * (R**2 + r0**2 - 2.0 * R * r0 * u) ** 1.5)

    np.testing.assert_allclose(quad(density, -1.0, 1.0), 1.0, rtol=RTOL_NUMERIC)
    sphere = quad(lambda u: u * density(u), -1.0, 1.0)
    np.testing.assert_allclose(result, sphere, rtol=RTOL_NUMERIC)
    # check value from shared reference sheet (E4: 3-D u-density at u = 1 is 5).
    np.testing.assert_allclose(density(1.0), 5.0, rtol=RTOL_F64)


def test_ball_harmonic_measure_matches_wrapcauchy_and_normalises() -> None:
    """Poisson kernel of the ball (Morters & Peres 2010, Thm 3.44 [memory]); in the
    disk, the exit angle is scipy.stats.wrapcauchy(c = r0/R) (shared sheet E4)."""
    radius, r0 = 1.5, 0.9
    theta = np.linspace(0.0, 2 * np.pi, 7)
    on_circle = np.stack([radius * np.cos(theta), radius * np.sin(theta)], axis=-1)
    density = an.ball_harmonic_measure(on_circle, [r0, 0.0], [0.0, 0.0], radius)
    # Density per unit arc length times R is the density per unit angle.
    expected = stats.wrapcauchy(r0 / radius).pdf(theta % (2 * np.pi))
    np.testing.assert_allclose(density * radius, expected, rtol=RTOL_NUMERIC)

    def ring(u: float) -> float:  # d = 3: integrate over u = cos(theta), azimuth 2 pi
        x = [radius * u, radius * np.sqrt(1 - u * u), 0.0]
        return float(an.ball_harmonic_measure(x, [r0, 0.0, 0.0], [0.0] * 3, radius))

    total, _ = integrate.quad(ring, -1.0, 1.0, epsabs=0, epsrel=1e-12)
    assert total * 2 * np.pi * radius**2 == pytest.approx(1.0, rel=RTOL_NUMERIC)
