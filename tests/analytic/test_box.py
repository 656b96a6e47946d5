"""Boxes (:mod:`sweep.analytic.box`, sheet section D): check values, the product
rule and the mean exit time against quadrature.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special

from sweep import analytic as an
from tests.analytic.sheet import (
    AA,
    AR,
    MIXED,
    RA,
    RR,
    X0,
    D,
    L,
    T,
    V,
    inverse_gaussian,
    quad,
)
from tests.tolerances import RTOL_F64, RTOL_NUMERIC


def test_box_check_values() -> None:
    # check value from shared reference sheet (D [D1-D9]); Carslaw & Jaeger Ch. VI
    # [memory]; square torsion constant: Timoshenko & Goodier [memory].
    np.testing.assert_allclose(
        an.box_survival(0.25, **MIXED), 0.0457040584663, rtol=RTOL_NUMERIC
    )
    np.testing.assert_allclose(
        an.box_mean_exit_time(**MIXED), 0.082463460803, rtol=RTOL_NUMERIC
    )
    square = an.box_mean_exit_time([0.5, 0.5], [0, 0], [1, 1], [AA, AA], 1.0)
    np.testing.assert_allclose(square, 0.0736713533, rtol=RTOL_NUMERIC)
    cube = an.box_mean_exit_time([0.5] * 3, [0] * 3, [1] * 3, [AA] * 3, 1.0)
    np.testing.assert_allclose(cube, 0.0562128298, rtol=RTOL_NUMERIC)


def test_box_survival_is_product_of_one_dimensional_survivals() -> None:
    # Sheet D: independent axes, S_box = prod_i S_i. Axes: shifted AA interval with drift,
    # half-line [1, inf) absorbing at 1, half-line (-inf, 2] absorbing at 2 (mirrored),
    # a free axis, a half-line whose finite wall reflects, and an RR interval.
    t = np.array([[0.0, 0.05], [0.3, 2.0]])
    result = an.box_survival(
        t,
        x0=[1.5, 1.4, 1.2, 0.0, 3.0, 0.5],
        lower=[1.0, 1.0, -np.inf, -np.inf, 2.0, 0.0],
        upper=[3.0, np.inf, 2.0, np.inf, np.inf, 1.0],
        walls=[AA, AR, RA, AA, RA, RR],
        diffusivity=D,
        drift=[0.4, -0.3, 0.7, 1.0, -2.0, 0.5],
    )
    expected = (
        an.interval_survival(t, 0.5, 2.0, D, 0.4)
        * an.halfline_survival(t, 0.4, D, -0.3)
        * an.halfline_survival(t, 0.8, D, -0.7)
    )
    assert result.shape == t.shape
    np.testing.assert_allclose(result, expected, rtol=RTOL_F64)


@pytest.mark.parametrize(
    ("box", "expected"),
    [
        pytest.param(
            {"x0": [X0], "lower": [0.0], "upper": [L], "walls": [AA]},
            X0 * (L - X0) / (2 * D),
            id="interval",
        ),
        pytest.param(
            {
                "x0": [X0, 0.2],
                "lower": [0.0, 0.0],
                "upper": [L, 1.0],
                "walls": [AA, RR],
            },
            X0 * (L - X0) / (2 * D),
            id="interval-times-RR",
        ),
        pytest.param(
            {
                "x0": [X0],
                "lower": [0.0],
                "upper": [np.inf],
                "walls": [AR],
                "drift": [-V],
            },
            X0 / V,
            id="halfline-toward",
        ),
    ],
)
def test_box_mean_exit_time_one_absorbing_axis_uses_closed_form(
    box: dict[str, object], expected: float
) -> None:
    # Sheet C1 [C8] and B2 [B11]; Redner (2001) Ch. 2-3 [memory].
    np.testing.assert_allclose(
        an.box_mean_exit_time(diffusivity=D, **box), expected, rtol=RTOL_F64
    )


def test_box_mean_exit_time_two_drifted_halflines_matches_invgauss_quadrature() -> None:
    # E T = integral_0^inf S_1 S_2 dt (sheet D [D5]) with S_i = scipy.stats.invgauss.sf
    # (sheet B2 [B10]), integrated by scipy.integrate.quad.
    laws = [inverse_gaussian(0.5, 1.0), inverse_gaussian(0.8, 2.0)]

    def s(t: float) -> float:
        return float(laws[0].sf(t) * laws[1].sf(t))

    expected = quad(s, 0.0, 1.0) + quad(s, 1.0, math.inf)
    result = an.box_mean_exit_time(
        [0.5, 0.8], [0.0, 0.0], [np.inf, np.inf], [AR, AR], D, drift=[-1.0, -2.0]
    )
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


def test_box_mean_exit_time_octant_matches_erf_quadrature() -> None:
    # Three driftless half-lines: S = prod erf(x_i / sqrt(4 D t)) ~ t^(-3/2), integrable
    # (sheet B1). Independent: scipy.special.erf and quad after t = 1/u^2 (finite range).
    x0 = np.array([0.5, 0.7, 1.1])

    def integrand(u: float) -> float:
        if u == 0.0:
            return 2.0 * float(np.prod(x0 / math.sqrt(math.pi * D)))
        t = 1.0 / u**2
        return float(np.prod(special.erf(x0 / math.sqrt(4 * D * t)))) * 2.0 / u**3

    expected = quad(integrand, 0.0, 1.0) + quad(integrand, 1.0, math.inf)
    result = an.box_mean_exit_time(x0, [0, 0, 0], [np.inf] * 3, [AR] * 3, D)
    np.testing.assert_allclose(result, expected, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize(
    "box",
    [
        pytest.param(
            {"x0": [0.5, 0.5], "lower": [0, 0], "upper": [1, 1], "walls": [RR, RR]},
            id="all-reflecting",
        ),
        pytest.param(
            {
                "x0": [0.5, 0.5],
                "lower": [0, 0],
                "upper": [np.inf] * 2,
                "walls": [AR, AR],
            },
            id="two-halflines",
        ),
        pytest.param(
            {
                "x0": [0.5],
                "lower": [0],
                "upper": [np.inf],
                "walls": [AR],
                "drift": [0.3],
            },
            id="drift-away",
        ),
        pytest.param(
            {
                "x0": [0.0, 0.0],
                "lower": [-np.inf] * 2,
                "upper": [np.inf] * 2,
                "walls": [AA, AA],
            },
            id="free",
        ),
    ],
)
def test_box_mean_exit_time_is_infinite_when_not_integrable(
    box: dict[str, object],
) -> None:
    # S ~ t^(-1/2) per driftless half-line (B1) and S -> 1 - exp(-v x0/D) with drift away
    # (B2): integral_0^inf prod S_i dt diverges (sheet D).
    assert an.box_mean_exit_time(diffusivity=D, **box) == math.inf


def test_box_rejects_inconsistent_axes() -> None:
    with pytest.raises(ValueError, match="same length"):
        an.box_survival(T, [0.5, 0.5], [0.0], [1.0, 1.0], [AA, AA], D)
    with pytest.raises(ValueError, match="outside"):
        an.box_survival(T, [1.5], [0.0], [1.0], [AA], D)
