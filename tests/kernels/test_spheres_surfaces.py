"""The spheres scheme with reactive walls and targets and reflecting obstacles
(``kernels/spheres.py``; docs/surfaces.md, "The spheres scheme").

* the plain-NumPy reference ``tests/kernels/spheres_reference.py`` (its rule 4), in
  distribution (KS on reaction times, chi-squared on wall indices);
* closed forms of ``/work/shared/reference/analytic.md`` section J (sources beside each
  check), as z-scores ``|estimate - exact| <= Z_STAT SE`` with fixed seeds;
* the limits kappa = inf (absorbing) and kappa = 0 (reflecting);
* jumps do happen next to the new surfaces (the radius is limited, not zero).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest

from sweep import analytic
from sweep.plan import HANDOVER
from tests.kernels.spheres_reference import simulate_reference
from tests.kernels.test_spheres import assert_same_law, run, z_fraction, z_mean
from tests.tolerances import RTOL_NUMERIC, Z_STAT

#: Cases for the reference comparison: every new surface kind, in a box and a ball.
CASES: dict[str, dict[str, Any]] = {
    # 1-D: a reactive end and an absorbing one.
    "interval, reactive end": dict(
        start=[0.4], lower=[0.0], upper=[1.0], absorbing_low=[False],
        absorbing_high=[True], reactivity_low=[1.5], horizon=2.0, dt=1e-3,
    ),
    # A square with a reactive face, a reactive target and an obstacle near a
    # reflecting face (its mirror image limits the radius).
    "square, reactive face, target, obstacle": dict(
        start=[0.3, 0.7], lower=[0.0, 0.0], upper=[1.0, 1.0],
        absorbing_low=[False, False], absorbing_high=[False, False],
        reactivity_high=[2.0, math.nan],
        targets=[([0.6, 0.4], 0.1), ([0.2, 0.3], 0.08)], target_reactivity=[1.0, None],
        obstacles=[([0.5, 0.8], 0.12)], horizon=2.0, dt=1e-3,
    ),
    # A reactive disc wall around a reactive target and an obstacle.
    "disc, reactive wall and target, obstacle": dict(
        start=[0.0, 0.5], ball_radius=1.0, ball_absorbing=False, ball_reactivity=0.8,
        targets=[([0.4, -0.2], 0.15)], target_reactivity=[3.0],
        obstacles=[([-0.4, -0.3], 0.2)], horizon=2.0, dt=1e-3,
    ),
}  # fmt: skip


def _reference(kw: dict[str, Any], n: int, seed: int) -> tuple[Any, Any]:
    d = len(kw["start"])
    radius = kw.get("ball_radius", math.inf)
    targets = kw.get("targets", [])
    obstacles = kw.get("obstacles", [])
    tr = kw.get("target_reactivity")
    time, wall, _ = simulate_reference(
        np.random.default_rng(seed),
        n,
        np.array(kw["start"], dtype=np.float64),
        np.array(kw.get("lower", [-radius] * d), dtype=np.float64),
        np.array(kw.get("upper", [radius] * d), dtype=np.float64),
        np.array(kw.get("absorbing_low", [False] * d)),
        np.array(kw.get("absorbing_high", [False] * d)),
        np.zeros(d),
        radius,
        kw.get("ball_absorbing", True),
        np.array([c for c, _ in targets], dtype=np.float64).reshape(len(targets), d),
        np.array([r for _, r in targets], dtype=np.float64),
        1.0,
        kw["dt"],
        kw["horizon"],
        HANDOVER * math.sqrt(2 * kw["dt"]),
        reactivity_low=np.array(kw.get("reactivity_low", [math.nan] * d)),
        reactivity_high=np.array(kw.get("reactivity_high", [math.nan] * d)),
        ball_reactivity=kw.get("ball_reactivity", math.nan),
        target_reactivity=np.array(
            [math.nan if k is None else k for k in tr]
            if tr
            else [math.nan] * len(targets)
        ),
        obstacle_center=np.array([c for c, _ in obstacles]).reshape(len(obstacles), d),
        obstacle_radius=np.array([r for _, r in obstacles], dtype=np.float64),
    )
    return time, wall


@pytest.mark.parametrize("case", sorted(CASES))
def test_kernel_matches_numpy_reference(case: str) -> None:
    kw = dict(CASES[case])
    n = 3000
    out = run(n, **kw)
    assert out.moves[0] > 0 and out.moves[1] > 0  # both jumps and layer steps
    ref_time, ref_wall = _reference(kw, n, seed=5)
    assert_same_law(case, out.time, out.wall, ref_time, ref_wall)


def test_reactive_interval_end_mean_time() -> None:
    # [0, L], reactive at 0, reflecting at L: T(x0) = (L x0 - x0^2/2)/D + L/kappa
    # (analytic reference J2, derived from the backward equation with the Robin
    # condition; analytic.interval_reactive_mean). L = 1, D = 0.5, kappa = 2,
    # x0 = 0.5: 1.25.
    out = run(20_000, [0.5], lower=[0.0], upper=[1.0], reactivity_low=[2.0],
              diffusivity=0.5, dt=1e-3, horizon=60.0, seed=21)  # fmt: skip
    assert (out.wall == 0).all()
    exact = analytic.interval_reactive_mean(0.5, 1.0, 0.5, 2.0)
    assert exact == pytest.approx(1.25)
    assert abs(z_mean(out.time, exact)) <= Z_STAT
    np.testing.assert_array_equal(out.position[:, 0], 0.0)


def test_reactive_end_limits() -> None:
    # kappa = inf reacts at the first touch: the absorbing end, mean
    # (L x0 - x0^2/2)/D (analytic reference J2 with kappa -> inf = C3); kappa = 0
    # never reacts: every walker is still free at the horizon.
    kw: dict[str, Any] = dict(lower=[0.0], upper=[1.0], diffusivity=0.5, dt=1e-3)
    fast = run(20_000, [0.5], reactivity_low=[math.inf], horizon=40.0, seed=22, **kw)
    assert (fast.wall == 0).all()
    exact = analytic.interval_reactive_mean(0.5, 1.0, 0.5, math.inf)
    assert exact == pytest.approx(0.75)
    assert abs(z_mean(fast.time, exact)) <= Z_STAT
    none = run(2000, [0.5], reactivity_low=[0.0], horizon=5.0, seed=23, **kw)
    assert (none.wall == -1).all() and none.moves[1] > 0


def test_reactive_target_in_reflecting_ball() -> None:
    # 3-D reflecting ball R = 1, reactive target a = 0.25 at its centre, kappa = 5,
    # start r0 = 0.6: T = (a^2 - r0^2)/(6D) + R^3 (1/a - 1/r0)/(3D)
    # + (R^3 - a^3)/(3 kappa a^2) (analytic reference J3, derived from the radial
    # backward equation; analytic.centre_target_reactive_mean). sqrt(2 D dt) = a/10
    # keeps the curved surface's O(dt) error (docs/surfaces.md) below the noise.
    big, small, r0, kappa = 1.0, 0.25, 0.6, 5.0
    dt = (small / 10) ** 2 / 2
    out = run(10_000, [r0, 0.0, 0.0], ball_radius=big, ball_absorbing=False,
              targets=[([0.0, 0.0, 0.0], small)], target_reactivity=[kappa], dt=dt,
              horizon=40.0, seed=24)  # fmt: skip
    assert (out.wall == 0).all()
    exact = analytic.centre_target_reactive_mean(r0, small, big, 1.0, kappa)
    assert abs(z_mean(out.time, exact)) <= Z_STAT
    np.testing.assert_allclose(
        np.linalg.norm(out.position, axis=1), small, rtol=RTOL_NUMERIC
    )


def test_collins_kimball_capture_in_free_space() -> None:
    # Free 3-D space, reactive sphere a = 1 at the origin, kappa = 1, D = 1, from
    # r0 = 1.5: P(T <= t) = (a/r0) kappa a/(kappa a + D) F1(t; r0 - a, kappa + D/a)
    # (analytic reference J4, derived by u = r p; eventual capture (a/r0) kappa a /
    # (kappa a + D), Collins & Kimball 1949, from memory;
    # analytic.sphere_reactive_cdf). Survival counts at each time.
    n, times = 20_000, [0.5, 2.0, 8.0]
    out = run(n, [1.5, 0.0, 0.0], lower=[-math.inf] * 3, upper=[math.inf] * 3,
              targets=[([0.0, 0.0, 0.0], 1.0)], target_reactivity=[1.0], dt=1e-3,
              horizon=8.0, survival_times=times, seed=25)  # fmt: skip
    cdf = analytic.sphere_reactive_cdf(np.array(times), 1.5, 1.0, 1.0, 1.0)
    for k in range(len(times)):
        assert abs(z_fraction(n - int(out.survival[k]), n, float(cdf[k]))) <= Z_STAT
    # Jumps carry the walkers that escape: few moves per walker.
    print(f"moves per walker: {out.moves / n}")
    assert out.moves[0] > out.moves[1] / 20


@pytest.mark.parametrize("dimension", [2, 3])
def test_reflecting_obstacle_in_absorbing_ball(dimension: int) -> None:
    # Absorbing ball R = 1 around a reflecting obstacle a = 0.3 at its centre, start
    # r0 = 0.6: d = 3: T = (R^2 - r0^2)/(6D) + a^3 (1/R - 1/r0)/(3D); d = 2:
    # (R^2 - r0^2)/(4D) + (a^2/(2D)) ln(r0/R) (analytic reference J5, derived;
    # analytic.obstacle_ball_mean).
    start = [0.6] + [0.0] * (dimension - 1)
    out = run(20_000, start, ball_radius=1.0, obstacles=[([0.0] * dimension, 0.3)],
              dt=1e-5, horizon=10.0, seed=26 + dimension)  # fmt: skip
    assert (out.wall == 0).all()
    exact = analytic.obstacle_ball_mean(0.6, 0.3, 1.0, 1.0, dimension)
    assert abs(z_mean(out.time, exact)) <= Z_STAT


def test_uniform_start_avoids_obstacles() -> None:
    # [0, 1] with absorbing ends around an obstacle covering [0.05, 0.95]: a uniform
    # start outside it lies in one of two pieces of length L = 0.05, each absorbing at
    # its outer end and reflecting at the obstacle, so E[T] is the mean over x0 of
    # (L x0 - x0^2/2)/D (analytic reference J2 with kappa -> inf), L^2 / (3 D).
    # Starts inside the obstacle would be mirrored out and change the mean.
    length, diffusivity = 0.05, 1.0
    out = run(4000, [math.nan], lower=[0.0], upper=[1.0], absorbing_low=[True],
              absorbing_high=[True], obstacles=[([0.5], 0.45)], dt=1e-7,
              horizon=0.05, uniform_start=True, seed=3)  # fmt: skip
    assert (out.wall >= 0).all()
    assert abs(z_mean(out.time, length**2 / (3 * diffusivity))) <= Z_STAT


@pytest.mark.parametrize("dimension", [2, 4])
def test_reactive_ball_wall_mean_time(dimension: int) -> None:
    # A ball of radius R whose whole wall is reactive, start r0:
    # T = (R^2 - r0^2)/(2 d D) + R/(d kappa) (backward equation with D T'(R) =
    # -kappa T(R), derived in analytic.ball_reactive_mean's docstring). d = 4 runs
    # the kernel's array code (jumps and steps on arrays).
    r0, kappa = 0.5, 2.0
    start = [r0] + [0.0] * (dimension - 1)
    out = run(10_000, start, ball_radius=1.0, ball_absorbing=False,
              ball_reactivity=kappa, dt=1e-4, horizon=20.0,
              seed=40 + dimension)  # fmt: skip
    assert (out.wall == 0).all()
    exact = analytic.ball_reactive_mean(r0, 1.0, 1.0, kappa, dimension)
    assert abs(z_mean(out.time, exact)) <= Z_STAT
    np.testing.assert_allclose(
        np.linalg.norm(out.position, axis=1), 1.0, rtol=RTOL_NUMERIC
    )
