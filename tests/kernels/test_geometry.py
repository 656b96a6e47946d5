"""Tests of the walker kernel ``kernels.walkers.simulate`` beyond plain boxes.

Balls (absorbing and reflecting surfaces), absorbing targets, uniform starts, the
occupancy snapshots, the first-passage-time histogram and the time-step convergence of
the absorption bias. Exact values come from ``sweep.analytic`` (vetted closed forms of
``docs/analytic-reference.md``) or scipy; each check names its published source
beside it, "[from memory]" where the sheet marks the citation so. Monte-Carlo checks are
``|estimate - exact| <= Z_STAT * SE`` or distribution tests with ``p >= P_MIN``, with fixed
seeds; every statistic is printed (``pytest -s``) so the margins can be read off a run.
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import cache
from typing import Any

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy import integrate, stats

from sweep import analytic
from tests.kernels.runner import (
    Domain,
    Run,
    assert_runs_identical,
    run,
    uncompiled_loop,
)
from tests.kernels.test_walkers import check_p, check_proportion, check_z, mean_and_se
from tests.tolerances import ORDER_TOL, RTOL_F64, RTOL_NUMERIC, Z_STAT

# --------------------------------------------------------------------------- helpers


def ball(
    dimension: int,
    radius: float,
    r0: float,
    *,
    diffusivity: float,
    dt: float,
    n_steps: int,
    absorbing: bool = True,
    center: tuple[float, ...] | None = None,
    **kwargs: Any,
) -> Domain:
    """A ball of ``radius`` around ``center`` (default the origin), start ``center +
    (r0, 0, ...)``; ``lower`` / ``upper`` is its bounding box."""
    c = center or (0.0,) * dimension
    return Domain(
        start=(c[0] + r0,) + c[1:],
        lower=tuple(ci - radius for ci in c),
        upper=tuple(ci + radius for ci in c),
        absorbing_lower=(False,) * dimension,
        absorbing_upper=(False,) * dimension,
        diffusivity=diffusivity,
        dt=dt,
        n_steps=n_steps,
        ball_center=c,
        ball_radius=radius,
        ball_absorbing=absorbing,
        **kwargs,
    )


def box(
    lower: tuple[float, ...],
    upper: tuple[float, ...],
    walls: tuple[tuple[str, str], ...],
    start: tuple[float, ...],
    *,
    diffusivity: float,
    dt: float,
    n_steps: int,
    **kwargs: Any,
) -> Domain:
    """A box; ``walls`` holds ``(kind at lower, kind at upper)`` per axis, as in
    ``sweep.analytic.box_survival``."""
    return Domain(
        start=start,
        lower=lower,
        upper=upper,
        absorbing_lower=tuple(w[0] == "absorbing" for w in walls),
        absorbing_upper=tuple(w[1] == "absorbing" for w in walls),
        diffusivity=diffusivity,
        dt=dt,
        n_steps=n_steps,
        **kwargs,
    )


#: Cochran's rule: chi-square cells with a smaller expected count are pooled into one.
MIN_EXPECTED = 5.0


def chi_square_p(observed: NDArray[np.int64], expected: NDArray[np.float64]) -> float:
    """``scipy.stats.chisquare`` p-value, cells expecting fewer than MIN_EXPECTED pooled."""
    small = expected < MIN_EXPECTED
    if np.any(small):
        observed = np.append(observed[~small], observed[small].sum())
        expected = np.append(expected[~small], expected[small].sum())
    return float(stats.chisquare(observed, expected).pvalue)


def bin_index(
    x: NDArray[np.float64],
    lower: tuple[float, ...],
    upper: tuple[float, ...],
    bins: int,
) -> NDArray[np.int64]:
    """Flat (C-order) occupancy-bin index of each row of ``x``, -1 outside the range.

    The same float operations as the kernel's binning: floor((x - lo) / (hi - lo) * bins),
    with x == hi put in the last bin.
    """
    lo = np.asarray(lower)
    hi = np.asarray(upper)
    b = np.floor((x - lo) / (hi - lo) * bins).astype(np.int64)
    b = np.where(x == hi, bins - 1, b)
    outside = np.any((b < 0) | (b >= bins), axis=1)
    flat = np.zeros(x.shape[0], np.int64)
    for axis in range(x.shape[1]):
        flat = flat * bins + b[:, axis]
    return np.where(outside, -1, flat)


def radii(points: NDArray[np.float64], center: tuple[float, ...]) -> Any:
    return np.sqrt(np.sum((points - np.asarray(center)) ** 2, axis=1))


# ------------------------------------------------------------------- absorbing ball

# Reference parameter set P of analytic.md: D = 0.8, R = 1.5, r0 = 0.6.
D_P, R_P, R0_P = 0.8, 1.5, 0.6
#: Small enough that the tangent-plane bridge bias of the curved surface is far below
#: the standard errors here (measured: under 0.05 dt in units R = D = 1).
BALL_DT = 0.005
#: S(t) < 1e-10 by then in d = 2 (slowest rate D j_1^2 / R^2 ~ 2.1 per time unit).
BALL_HORIZON = 12.0
#: Early enough that few walkers have left (>= 300 expected at 0.1), late enough for a
#: normal z-score on the counts.
BALL_TIMES = (0.1, 0.2, 0.3, 0.6, 1.2)
N_BALL = 200_000
#: Off the origin, so that every use of the centre is exercised.
BALL_CENTER = (0.3, -0.2, 0.1)
BALL_CASES = {
    "d2-centre": (2, 0.0),
    "d2-off-centre": (2, R0_P),
    "d3-centre": (3, 0.0),
    "d3-off-centre": (3, R0_P),
}
BALL_IDS = list(BALL_CASES)


@cache
def absorbing_ball_run(case: str) -> tuple[Domain, Run]:
    dimension, r0 = BALL_CASES[case]
    domain = ball(
        dimension, R_P, r0, diffusivity=D_P, dt=BALL_DT,
        n_steps=round(BALL_HORIZON / BALL_DT), survival_times=BALL_TIMES,
        center=BALL_CENTER[:dimension],
    )  # fmt: skip
    result = run(domain, N_BALL, 100 + BALL_IDS.index(case))
    # The ball surface is wall 0: no box faces, no targets before it.
    assert np.all(result.wall == 0), "walkers censored: lengthen BALL_HORIZON"
    return domain, result


@pytest.mark.parametrize("case", BALL_IDS)
def test_ball_mean_exit_time(case: str) -> None:
    domain, result = absorbing_ball_run(case)
    dimension, r0 = BALL_CASES[case]
    mean, se = mean_and_se(result.time)
    # E T = (R^2 - r0^2) / (2 d D): Oksendal, Stochastic Differential Equations,
    # Example 7.4.2 [from memory]; analytic.md E1 (sweep.analytic.ball_mean_exit_time).
    exact = analytic.ball_mean_exit_time(r0, R_P, D_P, dimension)
    check_z(f"{case} mean exit time", mean, exact, se, domain)


@pytest.mark.parametrize("case", BALL_IDS)
def test_ball_survival(case: str) -> None:
    domain, result = absorbing_ball_run(case)
    dimension, r0 = BALL_CASES[case]
    # Bessel / sine series: Carslaw & Jaeger (1959) Ch. VII and IX [from memory];
    # Redner (2001) Ch. 6 [from memory]; analytic.md E2 (sweep.analytic.ball_survival).
    exact = analytic.ball_survival(BALL_TIMES, r0, R_P, D_P, dimension)
    for t, count, s in zip(BALL_TIMES, result.survival, exact):
        check_proportion(f"{case} S({t})", int(count), N_BALL, float(s), domain)


@pytest.mark.parametrize("case", BALL_IDS)
def test_ball_exit_points_on_sphere_with_harmonic_mean_cosine(case: str) -> None:
    domain, result = absorbing_ball_run(case)
    dimension, r0 = BALL_CASES[case]
    center = BALL_CENTER[:dimension]
    np.testing.assert_allclose(radii(result.position, center), R_P, rtol=RTOL_F64)
    # The start lies on the +x axis from the centre, so cos(theta) = (x_exit - c_x) / R.
    cosine = (result.position[:, 0] - center[0]) / R_P
    mean, se = mean_and_se(cosine)
    # E[cos theta] = r0 / R (harmonic measure, every d): Morters & Peres (2010) Ch. 3,
    # Theorem 3.44 [from memory]; analytic.md E4 (sweep.analytic.ball_exit_cos_mean).
    exact = analytic.ball_exit_cos_mean(r0, R_P)
    check_z(f"{case} E[cos theta]", mean, exact, se, domain)


def ball3_exit_cosine_cdf(u: NDArray[np.float64], r0: float, radius: float) -> Any:
    """CDF of u = cos(theta) of the exit point from the 3-ball, start at radius r0 > 0.

    F(u) = (R^2 - r0^2) / (2 r0) [(R^2 + r0^2 - 2 R r0 u)^(-1/2) - 1 / (R + r0)]:
    Poisson kernel of the ball, Morters & Peres (2010) Ch. 3 [from memory]; Port & Stone
    (1978) [from memory]; analytic.md E4 [E18, E21].
    """
    big, small = radius, r0
    return (
        (big**2 - small**2)
        / (2 * small)
        * (1.0 / np.sqrt(big**2 + small**2 - 2 * big * small * u) - 1.0 / (big + small))
    )


@pytest.mark.parametrize("case", BALL_IDS)
def test_ball_exit_direction_law(case: str) -> None:
    domain, result = absorbing_ball_run(case)
    dimension, r0 = BALL_CASES[case]
    relative = result.position - np.asarray(BALL_CENTER[:dimension])
    x, y = relative[:, 0], relative[:, 1]
    if dimension == 2:
        theta = np.mod(np.arctan2(y, x), 2 * math.pi)
        # Exit angle: wrapped Cauchy with c = r0 / R (scipy.stats.wrapcauchy), uniform
        # from the centre (scipy.stats.uniform): Poisson kernel of the disk, Morters &
        # Peres (2010) Ch. 3 [from memory]; analytic.md E4 [E14].
        law: Any = (
            stats.wrapcauchy(r0 / R_P).cdf
            if r0 > 0
            else stats.uniform(0, 2 * math.pi).cdf
        )
        p = stats.kstest(theta, law).pvalue
    else:
        u = x / R_P
        # u = cos(theta): sheet CDF above (E4); uniform on [-1, 1] from the centre
        # (Archimedes; scipy.stats.uniform).
        law = (
            (lambda v: ball3_exit_cosine_cdf(v, r0, R_P))
            if r0 > 0
            else stats.uniform(-1, 2).cdf
        )
        p = stats.kstest(u, law).pvalue
    check_p(f"{case} exit direction KS", float(p), domain)


# ------------------------------------------------------- reflecting ball, targets


@pytest.mark.parametrize(
    ("dimension", "dt"),
    [(2, 0.02), (3, 0.02), (2, 3.0), (3, 3.0)],
    ids=["d2-fine", "d3-fine", "d2-step-beyond-diameter", "d3-step-beyond-diameter"],
)
def test_reflecting_ball_conserves_walkers(dimension: int, dt: float) -> None:
    # dt = 3: sqrt(2 D dt) ~ 2.2 R, so a step often leaves by more than a diameter and
    # needs several radial mirror images.
    radius, n, n_steps = 1.0, 5000, 50
    center = BALL_CENTER[:dimension]
    domain = ball(
        dimension, radius, 0.9 * radius, diffusivity=D_P, dt=dt, n_steps=n_steps,
        absorbing=False, survival_times=(dt, 10 * dt, n_steps * dt), center=center,
    )  # fmt: skip
    result = run(domain, n, 200 + dimension + int(dt))
    np.testing.assert_array_equal(result.wall, np.full(n, -1))
    assert np.all(np.isnan(result.time))
    assert np.all(np.isnan(result.position))
    np.testing.assert_array_equal(result.survival, np.full(3, n))
    assert result.steps == n * n_steps
    # Inside at the horizon (the kernel's test is sum (x - c)^2 <= R^2).
    r2 = np.sum((result.final - np.asarray(center)) ** 2, axis=1)
    assert np.all(r2 <= radius**2 * (1.0 + RTOL_F64)), r2.max()


#: Absorbing targets inside reflecting domains (D = 1): every walker must end on one.
TARGET_CASES = {
    "square-two-targets": box(
        (0.0, 0.0), (1.0, 1.0), (("reflecting", "reflecting"),) * 2, (0.9, 0.1),
        diffusivity=1.0, dt=0.01, n_steps=5000,
        target_centers=((0.3, 0.3), (0.7, 0.6)), target_radii=(0.1, 0.15),
    ),
    "cube-one-target": box(
        (0.0, 0.0, 0.0), (1.0, 1.0, 1.0), (("reflecting", "reflecting"),) * 3,
        (0.1, 0.1, 0.9), diffusivity=1.0, dt=0.01, n_steps=5000,
        target_centers=((0.5, 0.5, 0.5),), target_radii=(0.15,),
    ),
    "square-uniform-start": box(
        (0.0, 0.0), (2.0, 1.0), (("reflecting", "reflecting"),) * 2, (0.0, 0.0),
        diffusivity=1.0, dt=0.01, n_steps=5000, uniform_start=True,
        target_centers=((0.5, 0.5), (1.6, 0.4)), target_radii=(0.2, 0.1),
    ),
    "ball-one-target": ball(
        3, 1.0, -0.7, diffusivity=1.0, dt=0.01, n_steps=5000, absorbing=False,
        center=BALL_CENTER, target_centers=((0.7, -0.2, 0.1),), target_radii=(0.2,),
    ),
}  # fmt: skip


@pytest.mark.parametrize("case", list(TARGET_CASES))
def test_targets_absorb_every_walker_on_their_spheres(case: str) -> None:
    # Mean capture times are below 2 time units; the horizon is 50.
    domain = TARGET_CASES[case]
    n = 4000
    result = run(domain, n, 300 + list(TARGET_CASES).index(case))
    k = result.wall.astype(np.int64) - domain.first_target
    assert np.all(k >= 0), np.unique(result.wall)
    assert np.all(k < len(domain.target_radii))
    assert np.all(np.isin(np.arange(len(domain.target_radii)), k)), "a target unhit"
    assert np.all((result.time > 0.0) & (result.time <= domain.horizon))
    assert np.all(np.isnan(result.final))
    centers = np.asarray(domain.target_centers)[k]
    r = np.sqrt(np.sum((result.position - centers) ** 2, axis=1))
    np.testing.assert_allclose(r, np.asarray(domain.target_radii)[k], rtol=RTOL_F64)


def test_target_in_free_space_survival() -> None:
    # A sphere of radius a at distance r0 in unbounded 3-D space (a box with infinite
    # sides): the tangent-plane bridge of the kernel, here with sqrt(2 D dt) ~ 0.7 a.
    a, r0, diffusivity, dt = 0.2, 0.5, 1.0, 0.01
    times = (0.02, 0.1, 0.3, 1.0)
    inf = math.inf
    domain = box(
        (-inf,) * 3, (inf,) * 3, (("reflecting", "reflecting"),) * 3,
        (r0 + 0.1, -0.2, 0.3), diffusivity=diffusivity, dt=dt,
        n_steps=round(times[-1] / dt), target_centers=((0.1, -0.2, 0.3),),
        target_radii=(a,), survival_times=times,
    )  # fmt: skip
    n = 100_000
    result = run(domain, n, 350)
    assert np.all(result.wall[result.wall >= 0] == domain.first_target)
    # Smoluchowski: S(t) = 1 - (a / r0) erfc((r0 - a) / sqrt(4 D t)). Derived here from
    # the half-line survival (analytic.md B1) by the d = 3 radial reduction u = r p
    # (analytic.md E3: q = (r / r0) p_1D); classical, Redner (2001) Ch. 6 [from memory].
    for t, count in zip(times, result.survival):
        exact = 1.0 - a / r0 * math.erfc((r0 - a) / math.sqrt(4 * diffusivity * t))
        check_proportion(f"target S({t})", int(count), n, exact, domain)


# ----------------------------------------------------------------- uniform start

N_UNIFORM = 100_000


def starts(domain: Domain, n: int, seed: int) -> tuple[Run, NDArray[np.float64]]:
    """Run with no step at all: the free positions at the horizon are the starts."""
    result = run(replace(domain, n_steps=0, occupancy_steps=(0,)), n, seed)
    assert result.steps == 0
    np.testing.assert_array_equal(result.wall, np.full(n, -1))
    return result, result.final


def test_uniform_start_box_is_uniform() -> None:
    domain = box(
        (-1.0, 0.0), (2.0, 0.5), (("reflecting", "reflecting"),) * 2, (0.0, 0.0),
        diffusivity=1.0, dt=0.01, n_steps=0, uniform_start=True, occupancy_bins=6,
    )  # fmt: skip
    result, x = starts(domain, N_UNIFORM, seed=400)
    for axis in range(2):
        # Uniform on [lower, upper] per axis: scipy.stats.uniform, KS.
        law = stats.uniform(domain.lower[axis], domain.upper[axis] - domain.lower[axis])
        check_p(
            f"start axis {axis} KS", stats.kstest(x[:, axis], law.cdf).pvalue, domain
        )
    # Snapshot 0 is the histogram of the starts (same binning arithmetic), and its 36
    # equal cells expect equal counts: scipy.stats.chisquare.
    row = result.occupancy[0]
    expected_row = np.bincount(
        bin_index(x, domain.lower, domain.upper, domain.occupancy_bins),
        minlength=row.size,
    )
    np.testing.assert_array_equal(row, expected_row)
    check_p(
        "start occupancy chi2",
        chi_square_p(row, np.full(row.size, N_UNIFORM / row.size)),
        domain,
    )


def test_uniform_start_box_excludes_targets_and_is_uniform_outside() -> None:
    centers, target_radii = ((0.5, 0.5), (1.5, 0.5)), (0.2, 0.3)
    domain = box(
        (0.0, 0.0), (2.0, 1.0), (("reflecting", "reflecting"),) * 2, (0.0, 0.0),
        diffusivity=1.0, dt=0.01, n_steps=0, uniform_start=True,
        target_centers=centers, target_radii=target_radii,
    )  # fmt: skip
    _, x = starts(domain, N_UNIFORM, seed=401)
    for c, a in zip(centers, target_radii):
        assert np.all(radii(x, c) > a)
    # The annulus a < |x - c| < rho around target 0 lies inside the box and clear of
    # target 1. Uniform over the free area, so P(annulus) = pi (rho^2 - a^2) / free
    # area, and inside it |x - c|^2 is uniform on (a^2, rho^2) (scipy.stats.uniform).
    rho, a = 0.45, target_radii[0]
    box_area = math.prod(hi - lo for lo, hi in zip(domain.lower, domain.upper))
    free_area = box_area - math.pi * sum(r**2 for r in target_radii)
    in_annulus = radii(x, centers[0]) < rho
    check_proportion(
        "P(start in annulus)", int(np.count_nonzero(in_annulus)), N_UNIFORM,
        math.pi * (rho**2 - a**2) / free_area, domain,
    )  # fmt: skip
    r2 = radii(x[in_annulus], centers[0]) ** 2
    check_p(
        "annulus |x - c|^2 KS",
        stats.kstest(r2, stats.uniform(a**2, rho**2 - a**2).cdf).pvalue,
        domain,
    )


@pytest.mark.parametrize("dimension", [2, 3], ids=["d2", "d3"])
def test_uniform_start_ball_is_uniform_and_excludes_target(dimension: int) -> None:
    center, radius = BALL_CENTER[:dimension], 1.5
    domain = ball(
        dimension, radius, 0.0, diffusivity=1.0, dt=0.01, n_steps=0, absorbing=False,
        center=center, uniform_start=True,
    )  # fmt: skip
    _, x = starts(domain, N_UNIFORM, seed=402 + dimension)
    r = radii(x, center)
    assert np.all(r < radius)
    # Uniform in the d-ball: (|x - c| / R)^d ~ U(0, 1), and the direction is uniform:
    # polar angle U(0, 2 pi) in d = 2, a direction cosine U(-1, 1) in d = 3
    # (Archimedes): scipy.stats.uniform, KS.
    check_p(
        "ball start radius KS",
        stats.kstest((r / radius) ** dimension, stats.uniform(0, 1).cdf).pvalue,
        domain,
    )
    u = x - np.asarray(center)
    if dimension == 2:
        angle = np.mod(np.arctan2(u[:, 1], u[:, 0]), 2 * math.pi)
        p = stats.kstest(angle, stats.uniform(0, 2 * math.pi).cdf).pvalue
    else:
        p = stats.kstest(u[:, 2] / r, stats.uniform(-1, 2).cdf).pvalue
    check_p("ball start direction KS", float(p), domain)
    # With a target inside, no start falls in it.
    target_center, target_radius = tuple(c + 0.5 for c in center), 0.4
    with_target = replace(
        domain, target_centers=(target_center,), target_radii=(target_radius,)
    )
    _, y = starts(with_target, N_UNIFORM, seed=404 + dimension)
    assert np.all(radii(y, center) < radius)
    assert np.all(radii(y, target_center) > target_radius)


# --------------------------------------------------------- interval occupancy

# Interval [0, L] of parameter set P: D = 0.8, L = 2, x0 = 0.5.
L_P, X0_P = 2.0, 0.5
OCCUPANCY_TIMES = (0.1, 0.3, 1.0)
OCCUPANCY_BINS = 20
N_OCCUPANCY = 100_000
WALL_PAIRS = {
    "RR": ("reflecting", "reflecting"),
    "AA": ("absorbing", "absorbing"),
    "AR": ("absorbing", "reflecting"),
}


def interval_bin_probabilities(
    t: float, walls: tuple[str, str], edges: NDArray[np.float64]
) -> NDArray[np.float64]:
    """integral of sweep.analytic.interval_density over each bin (scipy.integrate.quad)."""

    def density(x: float) -> float:
        return float(analytic.interval_density(x, t, X0_P, L_P, D_P, walls=walls))

    return np.array(
        [
            integrate.quad(density, a, b, epsabs=0.0, epsrel=1e-11)[0]
            for a, b in zip(edges[:-1], edges[1:])
        ]
    )


@pytest.mark.parametrize("dt", [0.01, 0.05], ids=["dt=0.01", "dt=0.05"])
@pytest.mark.parametrize("walls", list(WALL_PAIRS), ids=list(WALL_PAIRS))
def test_interval_occupancy_matches_propagator(walls: str, dt: float) -> None:
    kinds = WALL_PAIRS[walls]
    domain = box(
        (0.0,), (L_P,), (kinds,), (X0_P,), diffusivity=D_P, dt=dt,
        n_steps=round(OCCUPANCY_TIMES[-1] / dt),
        occupancy_steps=tuple(round(t / dt) for t in OCCUPANCY_TIMES),
        occupancy_bins=OCCUPANCY_BINS,
    )  # fmt: skip
    seed = 500 + 10 * list(WALL_PAIRS).index(walls) + int(dt == 0.05)
    result = run(domain, N_OCCUPANCY, seed)
    edges = np.linspace(0.0, L_P, OCCUPANCY_BINS + 1)
    for t, row in zip(OCCUPANCY_TIMES, result.occupancy):
        probs = interval_bin_probabilities(t, kinds, edges)
        # Sources of the propagators (sweep.analytic.interval_density): RR cosine series /
        # images, Carslaw & Jaeger (1959) Ch. III [from memory], analytic.md C4; AA sine
        # series / images, Redner (2001) Ch. 2 and Carslaw & Jaeger Ch. III [from
        # memory], analytic.md C1; AR by the fold identity, analytic.md C3.
        # Quadrature of the density against the closed-form survival (C1, C3; 1 for RR):
        survival = float(
            analytic.interval_survival(t, X0_P, L_P, D_P, walls=kinds)
            if "absorbing" in kinds
            else 1.0
        )
        assert abs(probs.sum() - survival) <= RTOL_NUMERIC, (probs.sum(), survival)
        # Free walkers per bin, plus the absorbed ones as one more cell: the bridge
        # test is exact at a flat wall (analytic.md F4-F6), and the product of the two
        # walls' factors is accurate to ~1e-13 at D dt / L^2 <= 0.01 (F5). Then
        # scipy.stats.chisquare.
        observed = np.append(row, N_OCCUPANCY - row.sum())
        expected = N_OCCUPANCY * np.append(probs, 1.0 - probs.sum())
        if "absorbing" not in kinds:
            assert row.sum() == N_OCCUPANCY
            observed, expected = observed[:-1], expected[:-1] * (1.0 / probs.sum())
        check_p(
            f"{walls} occupancy at t={t} chi2", chi_square_p(observed, expected), domain
        )


# ---------------------------------------------------------------- box survival

#: Boxes whose axes are independent 1-D problems; infinite sides give half-lines.
BOX_SURVIVAL_CASES = {
    # analytic.md D check box: x AA from 0.35, y absorbing at 0 / reflecting at 0.7.
    "square-AA-AR": box(
        (0.0, 0.0), (1.0, 0.7), (("absorbing", "absorbing"), ("absorbing", "reflecting")),
        (0.35, 0.3), diffusivity=D_P, dt=0.01, n_steps=50,
        survival_times=(0.02, 0.05, 0.1, 0.25, 0.5),
    ),
    # x reflecting at 0 / absorbing at 1, y the half-line [0, inf), z RR.
    "cube-RA-halfline-RR": box(
        (0.0, 0.0, -0.5), (1.0, math.inf, 0.5),
        (("reflecting", "absorbing"), ("absorbing", "reflecting"),
         ("reflecting", "reflecting")),
        (0.6, 0.4, 0.2), diffusivity=0.5, dt=0.01, n_steps=200,
        survival_times=(0.05, 0.2, 0.5, 1.0, 2.0),
    ),
    # Drift on the absorbing-only axes: x AA, y the half-line (-inf, 1] drifting away.
    "square-AA-halfline-drift": box(
        (0.0, -math.inf), (1.0, 1.0), (("absorbing", "absorbing"),
                                       ("reflecting", "absorbing")),
        (0.4, 0.2), diffusivity=0.6, dt=0.01, n_steps=100, drift=(0.7, -0.5),
        survival_times=(0.03, 0.1, 0.3, 0.7, 1.0),
    ),
}  # fmt: skip
N_BOX = 100_000


@pytest.mark.parametrize("case", list(BOX_SURVIVAL_CASES))
def test_box_survival_is_product_of_axes(case: str) -> None:
    domain = BOX_SURVIVAL_CASES[case]
    result = run(domain, N_BOX, 600 + list(BOX_SURVIVAL_CASES).index(case))
    walls = tuple(
        ("absorbing" if lo else "reflecting", "absorbing" if hi else "reflecting")
        for lo, hi in zip(domain.absorbing_lower, domain.absorbing_upper)
    )
    # S_box(t) = prod_i S_i(t), the coordinates being independent: analytic.md D;
    # Carslaw & Jaeger (1959) Ch. VI, product solutions [from memory]. Factors:
    # interval (C1-C3; Redner 2001 Ch. 2 [from memory]) and half-line (B1, B2; Redner
    # 2001 Ch. 3 [from memory]), via sweep.analytic.box_survival.
    exact = analytic.box_survival(
        domain.survival_times, domain.start, domain.lower, domain.upper, walls,
        domain.diffusivity, domain.drift,
    )  # fmt: skip
    for t, count, s in zip(domain.survival_times, result.survival, exact):
        check_proportion(f"{case} S({t})", int(count), N_BOX, float(s), domain)


# ------------------------------------------------------ time-step convergence

# Interval [0, 1] from the centre, both ends absorbing: E T = x0 (L - x0) / (2D) = 0.25,
# sd(T) = sqrt(L^4 / (96 D^2)) ~ 0.2 (analytic.md C1).
L_C, D_C, X0_C = 1.0, 0.5, 0.5
#: S(t) ~ 1.3 exp(-D pi^2 t / L^2) < 1e-20 by then.
HORIZON_C = 10.0


def observed_order(dts: tuple[float, ...], biases: list[float]) -> float:
    """Slope of log(bias) against log(dt) between the coarsest and the finest step."""
    return math.log(biases[0] / biases[-1]) / math.log(dts[0] / dts[-1])


def interval_c_run(dt: float, bridge: bool, n: int, seed: int) -> Run:
    domain = box(
        (0.0,), (L_C,), (("absorbing", "absorbing"),), (X0_C,), diffusivity=D_C,
        dt=dt, n_steps=round(HORIZON_C / dt), bridge=bridge,
    )  # fmt: skip
    result = run(domain, n, seed)
    assert np.all(result.wall >= 0), "walkers censored: lengthen HORIZON_C"
    return result


#: dt ladder for the bridge: the step-end bias dt/2 at the finest step is ~25 SE.
STEP_END_DTS = (0.04, 0.02, 0.01)
N_STEP_END = 1_000_000


def test_step_end_exit_time_bias_is_first_order() -> None:
    # E T: Redner (2001) Ch. 2, first passage in an interval [from memory]; analytic.md
    # C1 (sweep.analytic.interval_mean_exit_time).
    exact = analytic.interval_mean_exit_time(X0_C, L_C, D_C)
    biases = []
    for i, dt in enumerate(STEP_END_DTS):
        result = interval_c_run(dt, True, N_STEP_END, seed=700 + i)
        # The kernel's in-step bridge times are unbiased at flat walls: crossing test
        # analytic.md F4 (Karatzas & Shreve (1991) Section 2.8 [from memory]), in-step
        # hitting-time law F6 ([derived] in the sheet).
        mean, se = mean_and_se(result.time)
        check_z(f"in-step exit time dt={dt}", mean, exact, se, dt)
        # Recording the step end instead (emulated: ceil(t / dt) dt) adds a positive
        # bias of up to dt per walker (analytic.md H); its mean is dt / 2 because the
        # phase t / dt mod 1 of a smooth first-passage law spread over many steps is
        # uniform [derived here; no published source].
        step_end = np.ceil(result.time / dt) * dt
        mean, se = mean_and_se(step_end)
        check_z(f"step-end exit time dt={dt}", mean, exact + dt / 2, se, dt)
        biases.append(mean - exact)
        print(f"dt={dt}: step-end bias {mean - exact:.6g} (SE {se:.2g})")
    order = observed_order(STEP_END_DTS, biases)
    print(f"step-end bias: observed order {order:.3f}")
    assert abs(order - 1.0) <= ORDER_TOL, (order, STEP_END_DTS, biases)


#: The kernel issue's accuracy target: at dt = 1e-3 the mean exit time of the interval
#: [0, 1] (D = 0.5, x0 = 0.5) is within 0.1 % of 0.25 (the unbridged walk is ~7.5 % long).
TARGET_DT = 1e-3
TARGET_REL = 1e-3
#: Walkers, in chunks, for Z_STAT standard errors to fit inside TARGET_REL:
#: 5 sd(T) / sqrt(N) = 5 * 0.204 / sqrt(2e7) = 2.3e-4 < 2.5e-4 (about 5e9 walker-steps,
#: some 30 s on one core).
N_TARGET_CHUNKS, N_TARGET_CHUNK = 10, 2_000_000


def test_mean_exit_time_within_target_at_fine_step() -> None:
    # E T = x0 (L - x0) / (2D) = 0.25: Redner (2001) Ch. 2, first passage in an
    # interval [from memory]; analytic.md C1 (sweep.analytic.interval_mean_exit_time).
    exact = analytic.interval_mean_exit_time(X0_C, L_C, D_C)
    means, variances = [], []
    for chunk in range(N_TARGET_CHUNKS):
        result = interval_c_run(TARGET_DT, True, N_TARGET_CHUNK, seed=720 + chunk)
        means.append(float(result.time.mean()))
        variances.append(float(result.time.var(ddof=1)))
    # Equal chunks: the grand mean is the mean of the chunk means; the variance of the
    # whole sample is the mean within-chunk variance plus the spread of the chunk means.
    n = N_TARGET_CHUNKS * N_TARGET_CHUNK
    mean = float(np.mean(means))
    within = (N_TARGET_CHUNK - 1) * float(np.sum(variances))
    between = N_TARGET_CHUNK * float(np.sum((np.asarray(means) - mean) ** 2))
    se = math.sqrt((within + between) / (n - 1) / n)
    assert Z_STAT * se < TARGET_REL * exact, "too few walkers to resolve the target"
    check_z(f"exit time dt={TARGET_DT}", mean, exact, se, TARGET_DT)
    rel = (mean - exact) / exact
    print(f"dt={TARGET_DT}: relative error {rel:+.3e} (SE {se / exact:.1e})")
    assert abs(rel) <= TARGET_REL, (mean, exact, se)


#: dt ladder for the unbridged walk: at least 3.5 step-sd from each wall at the coarsest.
NO_BRIDGE_DTS = (0.02, 0.01, 0.005)
N_NO_BRIDGE = 400_000


def test_uncorrected_exit_time_bias_is_half_order_shifted_walls() -> None:
    exact = analytic.interval_mean_exit_time(X0_C, L_C, D_C)
    biases = []
    for i, dt in enumerate(NO_BRIDGE_DTS):
        result = interval_c_run(dt, False, N_NO_BRIDGE, seed=710 + i)
        mean, se = mean_and_se(result.time)
        biases.append(mean - exact)
        # Discrete monitoring acts as walls moved outward by delta = beta sqrt(2 D dt),
        # beta = 0.5826: Broadie, Glasserman & Kou (1997), Math. Finance 7(4) 325-348;
        # analytic.md F1, F2 (sweep.analytic.discrete_monitoring_shift). Its O(dt)
        # remainder is dt / 4 (analytic.md F2 refinement: derived numerically there, no
        # published source); without it the prediction is off by 3-12 SE here.
        delta = analytic.discrete_monitoring_shift(D_C, dt)
        shifted = (X0_C + delta) * (L_C - X0_C + delta) / (2 * D_C) + dt / 4
        check_z(f"unbridged exit time dt={dt} vs shifted walls", mean, shifted, se, dt)
        print(f"dt={dt}: unbridged bias {mean - exact:.6g} (SE {se:.2g})")
    order = observed_order(NO_BRIDGE_DTS, biases)
    print(f"unbridged bias: observed order {order:.3f}")
    assert abs(order - 0.5) <= ORDER_TOL, (order, NO_BRIDGE_DTS, biases)


# ------------------------------------------------- first-passage-time histogram

FPT_CASES = {
    # The targetless box takes the kernel's specialised loop.
    "rectangle-absorbing": box(
        (0.0, 0.0), (1.0, 0.6), (("absorbing", "absorbing"), ("reflecting", "absorbing")),
        (0.3, 0.2), diffusivity=0.5, dt=0.01, n_steps=30,
    ),
    "rectangle-with-targets": box(
        (0.0, 0.0), (1.0, 0.6), (("absorbing", "absorbing"), ("reflecting", "absorbing")),
        (0.3, 0.2), diffusivity=0.5, dt=0.01, n_steps=30,
        target_centers=((0.5, 0.3), (0.8, 0.15)), target_radii=(0.1, 0.08),
    ),
    "ball-with-targets": ball(
        3, 1.0, 0.2, diffusivity=0.5, dt=0.01, n_steps=30, center=BALL_CENTER,
        target_centers=((-0.1, -0.2, 0.1), (0.6, 0.2, 0.1)), target_radii=(0.2, 0.15),
    ),
}  # fmt: skip


@pytest.mark.parametrize("bridge", [True, False], ids=["bridge", "no-bridge"])
@pytest.mark.parametrize(
    "width_steps", [6, 5.5], ids=["bins-cover-horizon", "overflow-into-last-bin"]
)
@pytest.mark.parametrize("case", list(FPT_CASES))
def test_fpt_histogram_equals_binned_times(
    case: str, width_steps: float, bridge: bool
) -> None:
    # Five bins of width_steps steps: the plan's width horizon / bins (6 steps), or
    # narrower so that late times overflow into the last bin. Without the bridge every
    # time is a multiple of dt, often on a bin edge.
    bins = 5
    domain = replace(
        FPT_CASES[case], bridge=bridge, fpt_bins=bins,
        fpt_bin_width=FPT_CASES[case].dt * width_steps,
    )  # fmt: skip
    n = 20_000
    result = run(domain, n, 800 + list(FPT_CASES).index(case))
    absorbed = result.wall >= 0
    walls = result.wall[absorbed].astype(np.int64)
    assert walls.max() < domain.n_walls
    index = np.floor(result.time[absorbed] / domain.fpt_bin_width).astype(np.int64)
    if width_steps * bins < domain.n_steps:
        assert np.any(index >= bins), "no time beyond the last bin"
    expected = np.zeros((domain.n_walls, bins), np.int64)
    np.add.at(expected, (walls, np.minimum(index, bins - 1)), 1)
    np.testing.assert_array_equal(result.fpt_hist, expected)
    # Every absorbing wall of the case is hit (so its row is exercised), the
    # reflecting face never, and some walkers are censored (not counted).
    per_wall = result.fpt_hist.sum(axis=1)
    absorbing = np.ones(domain.n_walls, np.bool_)
    if not domain.is_ball:
        absorbing[: 2 * domain.dimension] = np.ravel(
            np.column_stack([domain.absorbing_lower, domain.absorbing_upper])
        )
    assert np.all(per_wall[absorbing] > 0) and np.all(per_wall[~absorbing] == 0), (
        per_wall
    )
    assert result.fpt_hist.sum() == np.count_nonzero(absorbed) < n


# --------------------------------------------------------- occupancy snapshots


@pytest.mark.parametrize(
    "domain",
    [
        box(
            (0.0, 0.0), (1.0, 1.0), (("absorbing", "reflecting"),) * 2, (0.4, 0.5),
            diffusivity=0.5, dt=0.01, n_steps=30, occupancy_bins=5,
        ),
        ball(
            2, 1.0, 0.3, diffusivity=0.5, dt=0.01, n_steps=30, occupancy_bins=5,
            center=BALL_CENTER[:2], target_centers=((0.0, 0.0),), target_radii=(0.15,),
        ),
    ],
    ids=["box", "ball-with-target"],
)  # fmt: skip
@pytest.mark.parametrize("bridge", [True, False], ids=["bridge", "no-bridge"])
def test_occupancy_repeated_snapshot_rows_identical(
    domain: Domain, bridge: bool
) -> None:
    # Snapshot times 0, 0, 0.05, 0.052, 0.3 snap (round(t / dt), as sweep.plan does) to
    # steps 0, 0, 5, 5, 30: repeated steps must fill identical rows.
    times = (0.0, 0.0, 0.05, 0.052, 0.3)
    steps = tuple(round(t / domain.dt) for t in times)
    assert steps == (0, 0, 5, 5, 30)
    snapped = (steps[2] * domain.dt, steps[4] * domain.dt)
    domain = replace(
        domain, bridge=bridge, occupancy_steps=steps, survival_times=snapped
    )
    n = 20_000
    result = run(domain, n, 900 + int(bridge) + 2 * domain.is_ball)
    occupancy = result.occupancy
    np.testing.assert_array_equal(occupancy[0], occupancy[1])
    np.testing.assert_array_equal(occupancy[2], occupancy[3])
    # The histogram range covers the domain: each row counts every free walker, as
    # many as survive at that time.
    assert occupancy[0].sum() == n
    assert occupancy[2].sum() == result.survival[0] < n
    assert occupancy[4].sum() == result.survival[1]
    # The last snapshot is the horizon: the row is the histogram of the final positions.
    free = result.wall < 0
    assert np.count_nonzero(free) == occupancy[4].sum()
    np.testing.assert_array_equal(
        occupancy[4],
        np.bincount(
            bin_index(
                result.final[free], domain.lower, domain.upper, domain.occupancy_bins
            ),
            minlength=occupancy.shape[1],
        ),
    )


# ------------------------------------------------------------------ determinism

#: More targets than the register loop's 63-bit "start was far" mask covers.
MANY_TARGETS = box(
    (0.0, 0.0), (1.0, 1.0), (("reflecting", "reflecting"),) * 2, (0.51, 0.9),
    diffusivity=1.0, dt=0.002, n_steps=40,
    target_centers=tuple((0.05 + 0.9 * (k % 10) / 9, 0.05 + 0.9 * (k // 10) / 6)
                         for k in range(70)),
    target_radii=(0.02,) * 70,
)  # fmt: skip

#: A reflecting disc with drift and a coarse step (radial mirror images repeat).
REFLECTING_DISC = ball(
    2, 0.5, 0.3, diffusivity=1.0, dt=0.02, n_steps=40, absorbing=False,
    center=BALL_CENTER[:2], drift=(0.5, -0.5), survival_times=(0.1,),
)  # fmt: skip


@pytest.mark.parametrize(
    "domain",
    [
        replace(
            FPT_CASES["ball-with-targets"], fpt_bins=5, fpt_bin_width=0.06,
            survival_times=(0.1, 0.2), occupancy_steps=(0, 3, 3, 10), occupancy_bins=4,
        ),
        replace(
            FPT_CASES["rectangle-with-targets"], bridge=False, fpt_bins=5,
            fpt_bin_width=0.06, occupancy_steps=(0, 3, 10), occupancy_bins=4,
        ),
        replace(TARGET_CASES["ball-one-target"], n_steps=40),
        replace(TARGET_CASES["square-uniform-start"], n_steps=40),
        replace(REFLECTING_DISC, n_steps=40),
        MANY_TARGETS,
    ],
    ids=["absorbing-ball-targets", "box-targets-no-bridge", "reflecting-ball-target",
         "uniform-start-targets", "reflecting-disc", "70-targets"],
)  # fmt: skip
def test_general_loop_python_identical_to_compiled(domain: Domain) -> None:
    # The uncompiled generated loop draws through the same compiled samplers
    # (kernels/rng.py) from the same stream, so it (ball and target code in) must give
    # the compiled kernel's outputs to the last bit.
    compiled = run(domain, 30, 1000)
    python = run(domain, 30, 1000, kernel=uncompiled_loop(domain))
    assert_runs_identical(compiled, python)
