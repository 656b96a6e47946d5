"""The walker kernel's surfaces of issue 21: reactive walls and targets, periodic faces,
reflecting obstacles.

Exact values come from ``sweep.analytic.reactive`` (analytic reference section J; each
names its source, "[from memory]" where the sheet marks it so) or scipy. Monte-Carlo
checks are ``|estimate - exact| <= Z_STAT * SE`` or distribution tests with
``p >= P_MIN``, fixed seeds; every statistic is printed (``pytest -s``).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special, stats

from kernels import _loops
from kernels.walkers import BOX, BOX_TARGETS
from sweep.analytic import reactive as ar
from tests.kernels.runner import Domain, assert_runs_identical, run, uncompiled_loop
from tests.kernels.surfaces_reference import simulate_surfaces_reference
from tests.kernels.test_walkers import check_p, check_proportion, check_z, mean_and_se

NAN = math.nan


def half_line(kappa: float, *, x0: float, diffusivity: float, dt: float, times):  # type: ignore[no-untyped-def]
    """[0, inf) with a reactive wall at 0, start x0, survival counted at ``times``."""
    return Domain(
        start=(x0,),
        lower=(0.0,),
        upper=(math.inf,),
        absorbing_lower=(False,),
        absorbing_upper=(False,),
        diffusivity=diffusivity,
        dt=dt,
        n_steps=round(max(times) / dt),
        reactivity_lower=(kappa,),
        survival_times=tuple(times),
        fpt_bins=0,
    )


def ball3(radius: float, r0: float, d: int, **kwargs):  # type: ignore[no-untyped-def]
    return Domain(
        start=(r0,) + (0.0,) * (d - 1),
        lower=(-radius,) * d,
        upper=(radius,) * d,
        absorbing_lower=(False,) * d,
        absorbing_upper=(False,) * d,
        ball_center=(0.0,) * d,
        ball_radius=radius,
        **kwargs,
    )


def mean_time(r, context) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    assert np.isfinite(r.time).all(), f"censored walkers; {context}"
    return mean_and_se(r.time)


# ------------------------------------------------------------------- reactive walls


@pytest.mark.parametrize("kappa", [0.5, 2.0])
def test_half_line_reactive_wall_law(kappa: float) -> None:
    """J1: P(T <= t) on the half-line with a reactive wall (Carslaw & Jaeger 1959,
    §2.9 [from memory]); dt = 0.02 is coarse on purpose: the push-and-local-time
    scheme is exact in law at a flat wall for any dt."""
    d, x0, n, times = 0.5, 0.5, 20_000, (0.5, 2.0, 8.0)
    r = run(half_line(kappa, x0=x0, diffusivity=d, dt=0.02, times=times), n, 11)
    exact = ar.half_line_reactive_cdf(np.array(times), x0, d, kappa)
    for t, f in zip(times, exact):
        check_proportion(
            f"kappa={kappa} P(T<={t})", int(np.sum(r.time <= t)), n, f, kappa
        )
    assert set(np.unique(r.wall)) <= {-1, 0}
    assert np.all(r.position[r.wall == 0, 0] == 0.0)  # reactions on the wall


def test_reactive_limits_absorbing_and_reflecting() -> None:
    """kappa = inf reacts at the first touch: the absorbing law erfc(x0/sqrt(4Dt))
    (analytic reference B1); kappa = 0 never reacts and the walker is reflected
    Brownian motion: its position is foldnorm(x0/s, scale s), s = sqrt(2Dt)
    (analytic reference G1; scipy.stats.foldnorm)."""
    d, x0, n, t = 0.5, 0.5, 20_000, 2.0
    r = run(half_line(math.inf, x0=x0, diffusivity=d, dt=0.02, times=(t,)), n, 12)
    f = float(special.erfc(x0 / math.sqrt(4 * d * t)))
    check_proportion("kappa=inf P(T<=t)", int(np.sum(r.time <= t)), n, f, "absorbing")
    r = run(half_line(0.0, x0=x0, diffusivity=d, dt=0.02, times=(t,)), n, 13)
    assert np.all(r.wall == -1), "kappa = 0 must never react"
    s = math.sqrt(2 * d * t)
    p = stats.kstest(r.final[:, 0], stats.foldnorm(c=x0 / s, scale=s).cdf).pvalue
    check_p("kappa=0 position ~ reflected law", p, "reflecting")


def test_interval_reactive_reflecting_mean() -> None:
    """J2: [0, L] reactive at 0, reflecting at L: T = (L x0 - x0^2/2)/D + L/kappa
    (derived in sweep.analytic.reactive; check value 1.25)."""
    length, d, kappa, x0 = 1.0, 0.5, 2.0, 0.5
    assert ar.interval_reactive_mean(x0, length, d, kappa) == pytest.approx(1.25)
    dom = Domain(
        start=(x0,), lower=(0.0,), upper=(length,), absorbing_lower=(False,),
        absorbing_upper=(False,), diffusivity=d, dt=1e-3, n_steps=40_000,
        reactivity_lower=(kappa,),
    )  # fmt: skip
    r = run(dom, 10_000, 14)
    m, se = mean_time(r, "interval")
    check_z("interval reactive mean", m, 1.25, se, "J2")


def test_reactive_ball_wall_mean() -> None:
    """A disc with a reactive wall: T = (R^2 - r0^2)/(2dD) + R/(d kappa) (derived in
    sweep.analytic.reactive; Oksendal Example 7.4.2 for kappa = inf [from memory])."""
    radius, r0, d, kappa = 1.0, 0.3, 0.5, 2.0
    dom = ball3(radius, r0, 2, diffusivity=d, dt=1e-3, n_steps=100_000,
                ball_absorbing=False, ball_reactivity=kappa)  # fmt: skip
    r = run(dom, 8_000, 15)
    m, se = mean_time(r, "ball")
    check_z(
        "reactive disc mean",
        m,
        ar.ball_reactive_mean(r0, radius, d, kappa, 2),
        se,
        "ball",
    )
    radii = np.linalg.norm(r.position, axis=1)
    np.testing.assert_allclose(radii, radius, rtol=1e-12)


def test_reactive_target_in_reflecting_ball_mean() -> None:
    """J3: reactive target a at the centre of a reflecting 3-D ball R (derived in
    sweep.analytic.reactive). The tangent-plane treatment of curved surfaces has an
    O(dt) bias (about 1 % at this dt, far below 5 SE)."""
    big_r, a, kappa, d, r0 = 1.0, 0.25, 1.0, 1.0, 0.6
    dom = ball3(big_r, r0, 3, diffusivity=d, dt=1e-3, n_steps=400_000,
                ball_absorbing=False, target_centers=((0.0, 0.0, 0.0),),
                target_radii=(a,), target_reactivities=(kappa,))  # fmt: skip
    r = run(dom, 3_000, 16)
    m, se = mean_time(r, "J3")
    exact = ar.centre_target_reactive_mean(r0, a, big_r, d, kappa)
    check_z("reactive target in reflecting ball", m, exact, se, "J3")
    assert np.all(r.wall == 0)
    np.testing.assert_allclose(np.linalg.norm(r.position, axis=1), a, rtol=1e-12)


def test_reactive_sphere_in_free_space_law() -> None:
    """J4: capture by a reactive sphere in free 3-D space; P(T <= t) from the radial
    reduction u = r p to the half-line (derived in sweep.analytic.reactive), tending
    to Collins & Kimball's (a/r0) kappa a/(kappa a + D) [from memory]."""
    a, kappa, d, r0, n = 0.5, 1.0, 1.0, 1.0, 10_000
    times = (0.5, 2.0, 8.0)
    dom = Domain(
        start=(r0, 0.0, 0.0), lower=(-math.inf,) * 3, upper=(math.inf,) * 3,
        absorbing_lower=(False,) * 3, absorbing_upper=(False,) * 3, diffusivity=d,
        dt=1e-3, n_steps=8_000, target_centers=((0.0, 0.0, 0.0),), target_radii=(a,),
        target_reactivities=(kappa,),
    )  # fmt: skip
    r = run(dom, n, 17)
    exact = ar.sphere_reactive_cdf(np.array(times), r0, a, d, kappa)
    for t, f in zip(times, exact):
        check_proportion(f"sphere P(T<={t})", int(np.sum(r.time <= t)), n, f, "J4")
    assert ar.sphere_reactive_cdf(np.array([1e9]), r0, a, d, kappa)[0] == pytest.approx(
        ar.sphere_capture_probability(r0, a, d, kappa), rel=1e-4
    )


# ----------------------------------------------------------------------- obstacles


@pytest.mark.parametrize("dimension", [2, 3])
def test_obstacle_in_absorbing_ball_mean(dimension: int) -> None:
    """J5: absorbing ball R around a reflecting obstacle a at its centre (derived in
    sweep.analytic.reactive)."""
    big_r, a, d, r0 = 1.0, 0.4, 1.0, 0.6
    dom = ball3(big_r, r0, dimension, diffusivity=d, dt=1e-4, n_steps=100_000,
                ball_absorbing=True, obstacle_centers=((0.0,) * dimension,),
                obstacle_radii=(a,))  # fmt: skip
    r = run(dom, 8_000, 18 + dimension)
    m, se = mean_time(r, "J5")
    exact = ar.obstacle_ball_mean(r0, a, big_r, d, dimension)
    check_z(f"obstacle in absorbing ball d={dimension}", m, exact, se, "J5")


def test_uniform_start_excludes_obstacles() -> None:
    """No walker starts inside an obstacle (rejection, like targets)."""
    dom = Domain(
        start=(0.0, 0.0), lower=(0.0, 0.0), upper=(1.0, 1.0),
        absorbing_lower=(False, False), absorbing_upper=(False, False),
        diffusivity=1.0, dt=1e-3, n_steps=1, uniform_start=True,
        obstacle_centers=((0.5, 0.5),), obstacle_radii=(0.3,), displacement=True,
    )  # fmt: skip
    r = run(dom, 5_000, 20)
    starts = r.final - r.displacement  # end minus displacement: the start
    assert np.all(np.linalg.norm(starts - 0.5, axis=1) > 0.3 - 1e-12)


# ------------------------------------------------------------------------ periodic


def test_periodic_box_msd_and_primary_cell() -> None:
    """A periodic square with drift: unwrapped displacement has mean mu t and
    mean-square 2 d D t + |mu t|^2 (analytic reference A2); every position stays in
    the primary cell [lower, upper)."""
    d, t, drift, n = 0.5, 2.0, (0.3, -0.2), 10_000
    dom = Domain(
        start=(0.2, 0.9), lower=(0.0, 0.0), upper=(1.0, 1.0),
        absorbing_lower=(False, False), absorbing_upper=(False, False),
        diffusivity=d, dt=0.01, n_steps=round(t / 0.01), drift=drift,
        periodic=(True, True), displacement=True, occupancy_steps=(200,),
        occupancy_bins=4,
    )  # fmt: skip
    r = run(dom, n, 21)
    assert np.all(r.wall == -1)
    assert np.all((r.final >= 0.0) & (r.final < 1.0))
    assert int(r.occupancy.sum()) == n  # every walker binned inside the cell
    sq = np.sum(r.displacement**2, axis=1)
    exact = ar.free_msd(t, d, 2, drift)
    se = math.sqrt(ar.free_msd_variance(t, d, 2, drift) / n)
    check_z("periodic MSD", float(sq.mean()), exact, se, "A2")
    for axis in range(2):
        m, se = mean_and_se(r.displacement[:, axis])
        check_z(f"periodic mean displacement {axis}", m, drift[axis] * t, se, "A2")


def test_periodic_cube_equals_reflecting_cube() -> None:
    """J7: a target at the centre of a periodic cube and of a reflecting cube of the
    same side give the same mean search time from a uniform start (mirror symmetry;
    an identity, not a closed form): a two-sample z-test."""
    common = dict(
        start=(0.5, 0.5, 0.5), lower=(0.0,) * 3, upper=(1.0,) * 3,
        absorbing_lower=(False,) * 3, absorbing_upper=(False,) * 3, diffusivity=1.0,
        dt=2e-4, n_steps=100_000, uniform_start=True,
        target_centers=((0.5, 0.5, 0.5),), target_radii=(0.15,),
    )  # fmt: skip
    r_per = run(Domain(**common, periodic=(True,) * 3), 3_000, 22)
    r_ref = run(Domain(**common), 3_000, 23)
    m1, s1 = mean_time(r_per, "periodic")
    m2, s2 = mean_time(r_ref, "reflecting")
    check_z("periodic - reflecting mean", m1 - m2, 0.0, math.hypot(s1, s2), "J7")


# --------------------------------------------------------------- numpy reference


def test_kernel_matches_numpy_reference() -> None:
    """Reactive faces of two reactivities, a periodic axis with drift and an obstacle:
    the kernel and the slow numpy reference agree in law (reaction splitting,
    reaction times, unwrapped displacement of the survivors)."""
    n, dt, steps, d = 20_000, 2e-3, 500, 0.5
    start, lower, upper = (0.25, 0.3), (0.0, 0.0), (1.0, 1.0)
    obstacle = ((0.6, 0.5), 0.15)
    dom = Domain(
        start=start, lower=lower, upper=upper, absorbing_lower=(False, False),
        absorbing_upper=(False, False), diffusivity=d, dt=dt, n_steps=steps,
        drift=(0.0, 0.4), reactivity_lower=(1.5, NAN), reactivity_upper=(0.5, NAN),
        periodic=(False, True), obstacle_centers=(obstacle[0],),
        obstacle_radii=(obstacle[1],), displacement=True,
    )  # fmt: skip
    r = run(dom, n, 24)
    t_ref, w_ref, disp_ref = simulate_surfaces_reference(
        np.random.default_rng(25), n, start, lower, upper,
        ((1.5, 0.5), ("periodic", "periodic")), d, dt, steps, drift=(0.0, 0.4),
        obstacles=(obstacle,),
    )  # fmt: skip
    for wall in (-1, 0, 1):
        p1, p2 = np.mean(r.wall == wall), np.mean(w_ref == wall)
        pooled = (p1 + p2) / 2
        se = math.sqrt(2 * pooled * (1 - pooled) / n)
        check_z(f"P(wall={wall}) kernel - reference", p1 - p2, 0.0, se, "reference")
    ok, ok_ref = np.isfinite(r.time), np.isfinite(t_ref)
    check_p("reaction times", stats.ks_2samp(r.time[ok], t_ref[ok_ref]).pvalue, "ref")
    for axis in range(2):
        a = r.displacement[r.wall == -1, axis]
        b = disp_ref[w_ref == -1, axis]
        check_p(f"displacement {axis}", stats.ks_2samp(a, b).pvalue, "reference")
    # Reactions are on their faces; survivors inside the primary cell.
    assert np.all(r.position[r.wall == 0, 0] == 0.0)
    assert np.all(r.position[r.wall == 1, 0] == 1.0)
    alive = r.wall == -1
    assert np.all((r.final[alive] >= 0.0) & (r.final[alive] <= 1.0))
    outside = np.linalg.norm(r.final[alive] - np.array(obstacle[0]), axis=1)
    assert np.all(outside >= obstacle[1])


@pytest.mark.parametrize(
    ("kind", "domain"),
    [
        (
            BOX,
            Domain(
                start=(0.3, 0.5), lower=(0.0, 0.0), upper=(1.0, 1.0),
                absorbing_lower=(False, False), absorbing_upper=(False, False),
                diffusivity=0.5, dt=1e-3, n_steps=300, reactivity_lower=(2.0, NAN),
                reactivity_upper=(math.inf, NAN), periodic=(False, True),
                obstacle_centers=((0.6, 0.5),), obstacle_radii=(0.1,),
                displacement=True, survival_times=(0.1, 0.2),
            ),
        ),
        (
            BOX_TARGETS,
            Domain(
                start=(0.3, 0.5), lower=(0.0, 0.0), upper=(1.0, 1.0),
                absorbing_lower=(True, False), absorbing_upper=(False, False),
                diffusivity=0.5, dt=1e-3, n_steps=300, periodic=(False, True),
                target_centers=((0.5, 0.5), (0.8, 0.5)), target_radii=(0.1, 0.1),
                target_reactivities=(3.0, NAN), displacement=True,
            ),
        ),
    ],
)  # fmt: skip
def test_python_loop_identical_to_compiled(kind: int, domain: Domain) -> None:
    """The generated loop run as Python (calling the compiled helpers) gives the
    compiled loop's numbers bit for bit, for the new surfaces too."""
    loop = uncompiled_loop(domain)
    assert loop is _loops.SURFACE_LOOPS[kind, 2].py_func
    compiled = run(domain, 40, 26)
    python = run(domain, 40, 26, kernel=loop)
    assert_runs_identical(compiled, python)
