"""The half-line (:mod:`sweep.analytic.halfline`, sheet section B) against
scipy.stats.levy / invgauss and quadrature.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from sweep import analytic as an
from tests.analytic.sheet import (
    X0,
    D,
    T,
    V,
    inverse_gaussian,
    levy,
    quad,
)
from tests.tolerances import RTOL_NUMERIC


@pytest.mark.parametrize("x0", [0.05, X0, 2.0], ids=["near", "P", "far"])
def test_halfline_no_drift_matches_scipy_levy(x0: float) -> None:
    # Sheet B1 [B1, B2]: T ~ scipy.stats.levy(scale = x0^2/(2D)); Redner (2001) Ch. 3
    # [memory].
    t = np.geomspace(1e-4, 1e3, 15)
    np.testing.assert_allclose(
        an.halfline_survival(t, x0, D), levy(x0).sf(t), rtol=RTOL_NUMERIC
    )
    np.testing.assert_allclose(
        an.halfline_fpt_density(t, x0, D), levy(x0).pdf(t), rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize("v", [V, 2.5], ids=["v=0.6", "v=2.5"])
def test_halfline_drift_toward_wall_matches_scipy_invgauss(v: float) -> None:
    # Sheet B2 [B10, B16]: T ~ scipy.stats.invgauss(mu = 2D/(x0 v), scale = x0^2/(2D));
    # Chhikara & Folks (1989) [memory].
    t = np.geomspace(1e-3, 5.0, 12)
    law = inverse_gaussian(X0, v)
    np.testing.assert_allclose(
        an.halfline_survival(t, X0, D, -v), law.sf(t), rtol=RTOL_NUMERIC
    )
    np.testing.assert_allclose(
        an.halfline_fpt_density(t, X0, D, -v), law.pdf(t), rtol=RTOL_NUMERIC
    )


def test_halfline_drift_away_is_defective_invgauss() -> None:
    # Sheet B2 [B20]: f_away = exp(-v x0/D) f_IG; conditioned on hitting the law is the
    # reversed-drift IG. Independent: scipy.stats.invgauss.
    t = np.geomspace(1e-3, 20.0, 12)
    law = inverse_gaussian(X0, V)
    weight = math.exp(-V * X0 / D)
    np.testing.assert_allclose(
        an.halfline_fpt_density(t, X0, D, V), weight * law.pdf(t), rtol=RTOL_NUMERIC
    )
    np.testing.assert_allclose(
        an.halfline_survival(t, X0, D, V), 1.0 - weight * law.cdf(t), rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize(
    ("drift", "t"),
    [(0.0, 1e3), (-V, 40.0), (-3.0, 3.0), (2.0, 5.0)],
    ids=["no-drift", "toward-tail", "toward-far-tail", "away"],
)
def test_halfline_survival_is_tail_integral_of_fpt_density(
    drift: float, t: float
) -> None:
    # S(t) = P(T = inf) + integral_t^inf f dt (scipy.integrate.quad), with
    # P(T = inf) = 1 - exp(-mu x0 / D) for drift away from the wall, else 0 (B2 [B18]).
    # The far-tail cases check that the erfcx branch keeps relative accuracy.
    def f(s: float) -> float:
        return float(an.halfline_fpt_density(s, X0, D, drift))

    never = -math.expm1(-drift * X0 / D) if drift > 0 else 0.0
    expected = never + quad(f, t, math.inf)
    np.testing.assert_allclose(
        an.halfline_survival(t, X0, D, drift), expected, rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize(
    "drift", [0.0, -V, V, 3.0], ids=["none", "toward", "away", "away-fast"]
)
def test_halfline_hit_probability_is_integral_of_fpt_density(drift: float) -> None:
    # Sheet B2 [B18, B19]: P(T < inf) = integral_0^inf f dt (scipy.integrate.quad); Karlin
    # & Taylor (1975) Ch. 7 [memory]. Without drift the Levy density is integrated.
    def f(s: float) -> float:
        return float(an.halfline_fpt_density(s, X0, D, drift))

    scale = X0**2 / D
    expected = quad(f, 0.0, scale) + quad(f, scale, math.inf)
    np.testing.assert_allclose(
        an.halfline_hit_probability(X0, D, drift), expected, rtol=RTOL_NUMERIC
    )


def test_halfline_mean_fpt_matches_invgauss_and_quadrature() -> None:
    # Sheet B2 [B11]: E T = x0/v = scipy.stats.invgauss mean = integral_0^inf S dt.
    law = inverse_gaussian(X0, V)
    result = an.halfline_mean_fpt(X0, D, -V)
    np.testing.assert_allclose(result, law.mean(), rtol=RTOL_NUMERIC)
    integral = quad(lambda s: float(an.halfline_survival(s, X0, D, -V)), 0.0, math.inf)
    np.testing.assert_allclose(result, integral, rtol=RTOL_NUMERIC)
    assert an.halfline_mean_fpt(X0, D, 0.0) == math.inf  # Levy law: no mean (B1)
    assert an.halfline_mean_fpt(X0, D, V) == math.inf  # may never arrive (B2)


def test_halfline_check_values() -> None:
    # check value from shared reference sheet (B1, B2; P with v = 0.6).
    cases = [
        (an.halfline_survival(T, X0, D), 0.529513577941),
        (an.halfline_fpt_density(T, X0, D), 0.739674548709),
        (an.halfline_survival(T, X0, D, -V), 0.440499275229),
        (an.halfline_fpt_density(T, X0, D, -V), 0.862607941307),
        (an.halfline_mean_fpt(X0, D, -V), 0.833333333333),
        (an.halfline_hit_probability(X0, D, V), 0.687289278791),
        (an.halfline_survival(T, X0, D, V), 0.615461150389),
    ]
    for result, expected in cases:
        np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)
