"""Checks of ``sweep.analytic`` against independent computations.

Every check names its source beside it: the published result as cited in the shared
reference sheet (``docs/analytic-reference.md``, section ids such as C2), keeping
the sheet's citation status ([seen] / [memory] / [derived]); the independent computation
(``scipy.stats``, ``scipy.integrate.quad`` / ``quad_vec`` / ``solve_bvp``, image sums
against eigen-series); or "check value from shared reference sheet" for the values the
sheet tabulates for its parameter set P (D = 0.8, L = 2, x0 = 0.5, t = 0.3, v = 0.6,
R = 1.5, r0 = 0.6).
"""

from __future__ import annotations

import inspect
import math
from collections.abc import Callable

import numpy as np
import pytest
from scipy import integrate, special, stats

from sweep import analytic as an
from tests.tolerances import RTOL_F64, RTOL_NUMERIC

# Parameter set P of the reference sheet.
D = 0.8
L = 2.0
X0 = 0.5
T = 0.3
V = 0.6
R = 1.5
R0 = 0.6

AA = ("absorbing", "absorbing")
AR = ("absorbing", "reflecting")
RA = ("reflecting", "absorbing")
RR = ("reflecting", "reflecting")

#: Relative accuracy requested from scipy.integrate.quad: two orders of magnitude below
#: RTOL_NUMERIC so that the quadrature error does not use up the comparison tolerance.
QUAD_RTOL = RTOL_NUMERIC * 1e-2

#: Relative residual tolerance handed to scipy.integrate.solve_bvp, for the same reason.
BVP_TOL = RTOL_NUMERIC * 1e-2


def quad(f: Callable[[float], float], a: float, b: float, **kwargs: object) -> float:
    """``scipy.integrate.quad`` with a purely relative tolerance."""
    kwargs.setdefault("limit", 200)
    return integrate.quad(f, a, b, epsabs=0.0, epsrel=QUAD_RTOL, **kwargs)[0]


def levy(x0: float) -> stats.rv_continuous:
    """Driftless first-passage law on the half-line: Levy(scale = x0^2 / (2D)) (B1)."""
    return stats.levy(loc=0.0, scale=x0**2 / (2.0 * D))


def inverse_gaussian(x0: float, v: float) -> stats.rv_continuous:
    """First-passage law with drift v toward the wall: IG(x0/v, x0^2/(2D)) (B2 [B10])."""
    shape = x0**2 / (2.0 * D)
    return stats.invgauss(mu=(x0 / v) / shape, scale=shape)


# ====================================================================== F1 constant


def test_beta_matches_riemann_zeta() -> None:
    # beta = -zeta(1/2)/sqrt(2 pi): Broadie, Glasserman & Kou (1997) [seen]; Chang & Peres
    # (1997) [seen]; scipy.special.zeta. Sheet value 0.5825971579390106 (F1).
    expected = -special.zeta(0.5) / math.sqrt(2.0 * math.pi)
    np.testing.assert_allclose(an.BETA, expected, rtol=RTOL_F64)
    np.testing.assert_allclose(an.BETA, 0.5825971579390106, rtol=RTOL_F64)


# ====================================================================== A free motion


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


# ====================================================================== B half-line


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


# ====================================================================== C interval


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


# --- image sums against eigen-series (both forms must agree at moderate t, sheet H)

IMAGE_KINDS = ["survival", "f0", "fL", "density"]


@pytest.mark.parametrize("kind", IMAGE_KINDS)
@pytest.mark.parametrize("drift", [0.0, 0.9, -1.3, 4.0], ids=lambda m: f"mu={m}")
@pytest.mark.parametrize("x0", [0.1, X0, 1.7], ids=lambda x: f"x0={x}")
def test_interval_aa_image_sum_agrees_with_eigen_series(
    kind: str, drift: float, x0: float
) -> None:
    # Sheet C1 [C1, C2, C6, C7] and C2: images vs eigen-series (Redner 2001 Ch. 2
    # [memory]; Carslaw & Jaeger Ch. III [memory]); drifted images [derived].
    tau = np.array([0.02, 0.05, 0.08, 0.15])
    t = tau * L**2 / D
    x = np.array([0.3, 0.9, 1.4, 1.9])
    image = an._aa_image(kind, t, x0, L, D, drift, x)
    eigen = an._aa_eigen(kind, t, x0, L, D, drift, x)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("drift", [0.0, 0.9, -1.3, -6.0], ids=lambda m: f"mu={m}")
@pytest.mark.parametrize("x0", [0.0, X0, 1.95], ids=lambda x: f"x0={x}")
def test_interval_rr_image_sum_agrees_with_eigen_series(
    drift: float, x0: float
) -> None:
    # Sheet C4 [C34] (images vs cosine series) and C5 [derived] (drifted eigen-series vs
    # its Poisson-summed image form [derived], whose m = 0 term is the Harrison kernel G2).
    tau = np.array([0.02, 0.05, 0.08, 0.15, 0.5])
    t = tau * L**2 / D
    x = np.array([0.0, 0.3, 0.9, 1.4, 2.0])
    image = an._rr_image(t, x, x0, L, D, drift)
    eigen = an._rr_eigen(t, x, x0, L, D, drift)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)


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


@pytest.mark.parametrize(
    ("call", "match"),
    [
        pytest.param(
            lambda: an.interval_survival(T, X0, L, D, walls=("absorbing", "sticky")),
            "wall kind",
            id="kind",
        ),
        pytest.param(
            lambda: an.interval_survival(T, X0, L, D, walls="absorbing"),
            "pair",
            id="str",
        ),
        pytest.param(
            lambda: an.interval_survival(T, 2.5, L, D), "must lie in", id="x0"
        ),
        pytest.param(
            lambda: an.interval_survival(-1.0, X0, L, D), "t must be", id="t<0"
        ),
        pytest.param(
            lambda: an.interval_survival(T, X0, L, -D), "diffusivity", id="D<0"
        ),
        pytest.param(
            lambda: an.halfline_survival(T, -0.1, D), "x0 must be", id="half-x0"
        ),
    ],
)
def test_analytic_rejects_bad_input(call: Callable[[], object], match: str) -> None:
    with pytest.raises(ValueError, match=match):
        call()


# ====================================================================== D box

MIXED = {
    "x0": [0.35, 0.3],
    "lower": [0.0, 0.0],
    "upper": [1.0, 0.7],
    "walls": [AA, AR],
    "diffusivity": D,
}


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


# ====================================================================== E ball


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
    image = an._ball3_image(t, r0, R, D)
    eigen = an._ball3_eigen(t, r0, R, D)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("dimension", [2, 3])
def test_ball_survival_short_time_cutoff_is_exact(dimension: int) -> None:
    # Where the union bound 2 d erfc((R - r0)/(sqrt(2d) sigma)) < 1e-17 the module returns
    # exactly 1; the full eigen-series there (E2) must agree.
    r0 = 1.2
    sigma = (R - r0) / (math.sqrt(2.0 * dimension) * 6.5)
    t = np.array([sigma**2 / (2 * D)])
    series = an._ball2_eigen if dimension == 2 else an._ball3_eigen
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


# ====================================================================== F monitoring


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


# ====================================================================== API contract

TIME_FUNCTIONS = {
    "halfline_survival": lambda t: an.halfline_survival(t, X0, D, -V),
    "halfline_fpt_density": lambda t: an.halfline_fpt_density(t, X0, D, V),
    "interval_survival": lambda t: an.interval_survival(t, X0, L, D, 0.9),
    "interval_fpt_density": lambda t: an.interval_fpt_density(t, X0, L, D, walls=AR),
    "interval_exit_density": lambda t: an.interval_exit_density(t, X0, L, D, -1.3)[0],
    "interval_density": lambda t: an.interval_density(
        1.1, t, X0, L, D, walls=RR, drift=0.4
    ),
    "box_survival": lambda t: an.box_survival(t, **MIXED),
    "ball_survival-2": lambda t: an.ball_survival(t, R0, R, D, 2),
    "ball_survival-3": lambda t: an.ball_survival(t, R0, R, D, 3),
    "free_density": lambda t: an.free_density(0.4, t, 0.0, D, V),
}


@pytest.mark.parametrize("name", sorted(TIME_FUNCTIONS))
def test_time_functions_broadcast_and_return_float64(name: str) -> None:
    # Conventions of the module docstring: arrays in, float64 arrays of the same shape out,
    # t = 0 allowed (survival 1, densities 0) without warnings (warnings are errors here).
    t = np.array([[0.0, 1e-3, 0.05], [T, 1.0, 10.0]])
    result = TIME_FUNCTIONS[name](t)
    assert isinstance(result, np.ndarray)
    assert result.dtype == np.float64
    assert result.shape == t.shape
    assert np.all(np.isfinite(result))
    expected_at_zero = 1.0 if "survival" in name else 0.0
    np.testing.assert_array_equal(result[0, 0], expected_at_zero)


@pytest.mark.parametrize("name", an.__all__)
def test_public_names_document_their_source(name: str) -> None:
    # design.md: analytic checks name their published source; the sheet's citation status
    # markers are kept.
    obj = getattr(an, name)
    if not inspect.isfunction(obj):
        return
    doc = inspect.getdoc(obj) or ""
    assert "Source" in doc
    assert any(mark in doc for mark in ("[memory", "[seen", "[derived"))


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


#: Finite-difference solution (second order, h = 4e-4) vs closed form.
FD_TOL = 1e-6


def test_concentric_splitting_is_the_harmonic_function_of_r() -> None:
    """J6 against a finite-difference solution of the radial Laplace equation
    u'' + (d - 1) u' / r = 0 with u(a) = 1, u(R) = 0 (an independent computation)."""
    from scipy.linalg import solve_banded

    from sweep.analytic import concentric_splitting

    a, big, n = 0.2, 1.0, 2001
    r = np.linspace(a, big, n)
    h = r[1] - r[0]
    inner = r[1:-1]
    for d in (1, 2, 3):
        below = 1.0 / h**2 - (d - 1) / (2 * h * inner)
        above = 1.0 / h**2 + (d - 1) / (2 * h * inner)
        bands = np.zeros((3, inner.size))
        bands[0, 1:] = above[:-1]
        bands[1, :] = -2.0 / h**2
        bands[2, :-1] = below[1:]
        rhs = np.zeros(inner.size)
        rhs[0] = -below[0]  # u(a) = 1 moved to the right-hand side
        u = solve_banded((1, 1), bands, rhs)
        for r0 in (0.3, 0.5, 0.9):
            fd = float(np.interp(r0, inner, u))
            assert abs(concentric_splitting(r0, a, big, d) - fd) < FD_TOL, (d, r0)
