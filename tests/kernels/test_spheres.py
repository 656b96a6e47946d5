"""Tests of the sphere-jump kernel ``kernels.spheres.simulate`` and its exit-time table.

* the table: its Kolmogorov distance from the exact centre-exit law (far below any
  statistical tolerance), and the sampled law against the series (KS);
* closed forms (source beside each check), as z-scores ``|estimate - exact| <= Z_STAT
  SE`` with fixed seeds;
* the plain-NumPy reference ``tests/kernels/spheres_reference.py``, in distribution;
* determinism and censoring.
"""

from __future__ import annotations

import math
from typing import Any, NamedTuple

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy import special, stats

from kernels.rng import initial_state
from kernels.spheres import _exit_time, simulate
from sweep import analytic
from sweep.plan import HANDOVER
from tests.kernels.spheres_reference import simulate_reference
from tests.tolerances import P_MIN, RTOL_NUMERIC, Z_STAT

#: The table's own error (Kolmogorov distance of the sampled exit-time law from the
#: exact one) must stay this far below the smallest statistical resolution of any test
#: or study (1 / sqrt(10^9 walkers) = 3e-5): 1e-9.
TABLE_ERROR_MAX = 1e-9


class Out(NamedTuple):
    time: NDArray[np.float64]
    wall: NDArray[np.int16]
    position: NDArray[np.float64]
    survival: NDArray[np.int64]
    moves: NDArray[np.int64]


def run(
    n: int,
    start: list[float],
    *,
    lower: list[float] | None = None,
    upper: list[float] | None = None,
    absorbing_low: list[bool] | None = None,
    absorbing_high: list[bool] | None = None,
    ball_radius: float = math.inf,
    ball_absorbing: bool = True,
    targets: list[tuple[list[float], float]] = (),  # type: ignore[assignment]
    diffusivity: float = 1.0,
    dt: float = 1e-4,
    horizon: float = 50.0,
    bridge: bool = True,
    survival_times: list[float] = (),  # type: ignore[assignment]
    seed: int = 1,
    uniform_start: bool = False,
    reactivity_low: list[float] | None = None,
    reactivity_high: list[float] | None = None,
    ball_reactivity: float = math.nan,
    target_reactivity: list[float | None] | None = None,
    obstacles: list[tuple[list[float], float]] = (),  # type: ignore[assignment]
) -> Out:
    """Run the compiled kernel (ball domains centred at the origin)."""
    d = len(start)
    table = analytic.centre_exit_table(d)
    if math.isfinite(ball_radius):
        lower = [-ball_radius] * d
        upper = [ball_radius] * d
    assert lower is not None and upper is not None
    tc = np.array([c for c, _ in targets], dtype=np.float64).reshape(len(targets), d)
    tr = np.array([r for _, r in targets], dtype=np.float64)
    times = np.array(survival_times, dtype=np.float64)
    out = Out(
        np.empty(n),
        np.empty(n, np.int16),
        np.empty((n, d)),
        np.zeros(times.size, np.int64),
        np.zeros(2, np.int64),
    )
    n_steps = max(1, round(horizon / dt))
    simulate(
        initial_state(np.random.SeedSequence(seed)),
        n,
        np.array(start, dtype=np.float64),
        uniform_start,
        np.array(lower, dtype=np.float64),
        np.array(upper, dtype=np.float64),
        np.array(absorbing_low or [False] * d),
        np.array(absorbing_high or [False] * d),
        np.zeros(d),
        ball_radius,
        ball_absorbing,
        tc,
        tr,
        np.array(reactivity_low or [math.nan] * d),
        np.array(reactivity_high or [math.nan] * d),
        ball_reactivity,
        np.array(
            [math.nan if k is None else k for k in target_reactivity]
            if target_reactivity
            else [math.nan] * len(targets),
            dtype=np.float64,
        ),
        np.array([c for c, _ in obstacles], dtype=np.float64).reshape(
            len(obstacles), d
        ),
        np.array([r for _, r in obstacles], dtype=np.float64),
        diffusivity,
        dt,
        n_steps,
        bridge,
        HANDOVER * math.sqrt(2 * diffusivity * dt),
        table.tau,
        table.dtau,
        table.s0,
        table.ds,
        table.slope,
        times,
        out.time,
        out.wall,
        out.position,
        out.survival,
        1.0,
        np.zeros((0, 0), np.int64),
        out.moves,
    )
    return out


def z_mean(sample: NDArray[np.float64], exact: float) -> float:
    z = (sample.mean() - exact) / (sample.std(ddof=1) / math.sqrt(sample.size))
    print(f"mean {sample.mean():.6g} exact {exact:.6g} z {z:+.2f}")
    return float(z)


def z_fraction(hits: int, n: int, exact: float) -> float:
    z = (hits / n - exact) / math.sqrt(exact * (1 - exact) / n)
    print(f"fraction {hits / n:.6g} exact {exact:.6g} z {z:+.2f}")
    return z


# --------------------------------------------------------------------------- the table


@pytest.mark.parametrize("dimension", range(1, 9))
def test_centre_exit_series_in_any_dimension(dimension: int) -> None:
    # The general-d series of analytic.centre_exit_survival (docs/analytic-reference.md
    # E2 at r0 = 0): its integral is the mean exit time 1 / (2 d) (E1), and for d <= 3
    # it equals ball_survival / interval_survival (written independently).
    from scipy import integrate

    mean, _ = integrate.quad(
        lambda x: float(analytic.centre_exit_survival(x, dimension)), 0.0, 60.0,
        points=[0.01, 0.1, 1.0], limit=200,
    )  # fmt: skip
    assert abs(mean - 1 / (2 * dimension)) < RTOL_NUMERIC
    tau = np.array([0.005, 0.02, 0.1, 0.5, 2.0])
    if dimension == 1:
        exact = analytic.interval_survival(tau, 1.0, 2.0, 1.0)
    elif dimension <= 3:
        exact = analytic.ball_survival(tau, 0.0, 1.0, 1.0, dimension)
    else:
        return
    np.testing.assert_allclose(
        analytic.centre_exit_survival(tau, dimension), exact, atol=1e-14
    )


@pytest.mark.parametrize("dimension", [1, 2, 3])
def test_exit_table_error_is_far_below_statistical_resolution(dimension: int) -> None:
    table = analytic.centre_exit_table(dimension)
    print(f"d = {dimension}: Kolmogorov distance of the table {table.error:.2e}")
    assert table.error < TABLE_ERROR_MAX
    # An independent check of the knots: the series of ball_survival
    # (docs/analytic-reference.md E2, with its short-time image form for d = 3;
    # interval: C1, analytic.interval_survival) at the knots' times returns the knots'
    # probabilities.
    s = table.s0 + table.ds * np.arange(table.tau.size)
    if dimension == 1:
        surv = analytic.interval_survival(table.tau, 1.0, 2.0, 1.0)
    else:
        surv = analytic.ball_survival(table.tau, 0.0, 1.0, 1.0, dimension)
    assert np.max(np.abs((1.0 - surv) - special.expit(s))) < TABLE_ERROR_MAX
    # Mean centre-exit time 1 / (2 d) (docs/analytic-reference.md E1), by quadrature of
    # the interpolant over u.
    u = (np.arange(400_000) + 0.5) / 400_000
    tau = analytic.hermite(
        np.log(u) - np.log1p(-u), table.s0, table.tau, table.dtau / table.ds
    )
    assert abs(tau.mean() - 1 / (2 * dimension)) < 1e-5


@pytest.mark.parametrize("dimension", [1, 2, 3])
def test_kernel_interpolates_the_table_as_its_error_was_measured(
    dimension: int,
) -> None:
    # The table's error is measured on analytic.hermite; the kernel's _exit_time must
    # be the same interpolant (and continue it beyond the knots as documented).
    table = analytic.centre_exit_table(dimension)
    u = np.concatenate([np.linspace(1e-6, 1 - 1e-6, 2001), [1e-14, 1 - 1e-14]])
    got = np.array(
        [
            _exit_time(v, table.tau, table.dtau, table.s0, table.ds, table.slope)
            for v in u
        ]
    )
    s = np.log(u / (1 - u))
    want = analytic.hermite(s[:-2], table.s0, table.tau, table.dtau / table.ds)
    np.testing.assert_allclose(got[:-2], want, rtol=RTOL_NUMERIC)
    assert got[-2] == table.tau[0]
    last = table.s0 + table.ds * (table.tau.size - 1)
    np.testing.assert_allclose(
        got[-1], table.tau[-1] + (s[-1] - last) * table.slope, rtol=RTOL_NUMERIC
    )


@pytest.mark.parametrize("dimension", [1, 2, 3])
def test_sampled_exit_time_law_matches_the_series(dimension: int) -> None:
    # From the centre of an absorbing ball (d = 1: the interval [-1, 1]) the first jump
    # reaches the surface: the first-passage time is one draw of the table. KS against
    # S(t) from the eigenfunction series (docs/analytic-reference.md E2 with r0 = 0 and
    # J11; Redner 2001, Ch. 1-2 and 6, and Carslaw & Jaeger 1959, Ch. VII and IX, from
    # memory; analytic.ball_survival / interval_survival).
    n = 20_000
    if dimension == 1:
        out = run(n, [0.0], lower=[-1.0], upper=[1.0], absorbing_low=[True],
                  absorbing_high=[True], diffusivity=0.5)  # fmt: skip

        def cdf(t: Any) -> Any:
            return 1.0 - analytic.interval_survival(t, 1.0, 2.0, 0.5)
    else:
        out = run(n, [0.0] * dimension, ball_radius=1.0, diffusivity=0.5)

        def cdf(t: Any) -> Any:
            return 1.0 - analytic.ball_survival(t, 0.0, 1.0, 0.5, dimension)

    assert (out.wall >= 0).all()
    assert out.moves[0] == n  # one jump each, then the surface
    p = stats.kstest(out.time, cdf).pvalue
    print(f"d = {dimension}: KS p = {p:.3g}")
    assert p > P_MIN


def test_a_jump_onto_a_surface_is_a_hit_with_either_monitoring() -> None:
    # In 1-D both points of the first jump's "sphere" from the interval's centre lie on
    # the absorbing ends: every walker is absorbed at that jump's time, exactly, with
    # bridge and with endpoint monitoring alike (same draws, same bits).
    kw: dict[str, Any] = dict(
        lower=[-1.0], upper=[1.0], absorbing_low=[True], absorbing_high=[True]
    )
    bridge = run(2000, [0.0], **kw, bridge=True, seed=4)
    endpoint = run(2000, [0.0], **kw, bridge=False, seed=4)
    assert (bridge.wall >= 0).all() and bridge.moves.tolist() == [2000, 2000]
    for x, y in zip(bridge, endpoint):
        np.testing.assert_array_equal(x, y, strict=True)
    np.testing.assert_array_equal(np.abs(bridge.position[:, 0]), 1.0)


# --------------------------------------------------------------------------- closed forms


@pytest.mark.parametrize("dimension", [2, 3, 4])
def test_mean_exit_time_from_a_ball_off_centre(dimension: int) -> None:
    # E[T] = (R^2 - r0^2) / (2 d D) (docs/analytic-reference.md E1: Dynkin's formula;
    # Oksendal, Example 7.4.2, from memory; analytic.ball_mean_exit_time). d = 4 runs the kernel's array code.
    r0, diffusivity = 0.6, 0.5
    start = [r0] + [0.0] * (dimension - 1)
    out = run(40_000, start, ball_radius=1.0, diffusivity=diffusivity, dt=1e-5)
    assert (out.wall == 0).all()
    exact = analytic.ball_mean_exit_time(r0, 1.0, diffusivity, dimension)
    assert abs(z_mean(out.time, exact)) <= Z_STAT
    radius = np.linalg.norm(out.position, axis=1)
    np.testing.assert_allclose(radius, 1.0, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("dimension", [2, 3])
def test_splitting_between_concentric_spheres(dimension: int) -> None:
    # Absorbing ball wall R and absorbing target a at its centre; P(target | r0):
    # d = 2: ln(R/r0) / ln(R/a); d = 3: (1/r0 - 1/R) / (1/a - 1/R)
    # (docs/analytic-reference.md J6; Redner 2001, Ch. 6, from memory).
    big, small, r0 = 1.0, 0.2, 0.5
    start = [r0] + [0.0] * (dimension - 1)
    n = 40_000
    out = run(n, start, ball_radius=big, targets=[([0.0] * dimension, small)], dt=1e-5)
    assert (out.wall >= 0).all()
    if dimension == 2:
        exact = math.log(big / r0) / math.log(big / small)
    else:
        exact = (1 / r0 - 1 / big) / (1 / small - 1 / big)
    assert abs(z_fraction(int((out.wall == 0).sum()), n, exact)) <= Z_STAT
    on_target = out.position[out.wall == 0]
    np.testing.assert_allclose(
        np.linalg.norm(on_target, axis=1), small, rtol=RTOL_NUMERIC
    )


def test_mean_search_time_target_at_centre_of_reflecting_ball() -> None:
    # Reflecting ball R, absorbing target a at the centre, d = 3:
    # E[T] = (a^2 - r0^2) / (6 D) + R^3 (1/a - 1/r0) / (3 D) (docs/analytic-reference.md
    # J3 with kappa -> inf: the radial backward equation, derived there).
    big, small, r0, diffusivity = 1.0, 0.2, 0.6, 1.0
    # A reflecting ball wall keeps walkers stepping in a shell of 3 sqrt(2 D dt) along
    # it, so this case takes the most steps of all: dt = 5e-5 keeps it short.
    out = run(20_000, [r0, 0.0, 0.0], ball_radius=big, ball_absorbing=False,
              targets=[([0.0, 0.0, 0.0], small)], dt=5e-5, horizon=40.0)  # fmt: skip
    assert (out.wall == 0).all()
    exact = (small**2 - r0**2) / (6 * diffusivity) + big**3 * (1 / small - 1 / r0) / (
        3 * diffusivity
    )
    assert abs(z_mean(out.time, exact)) <= Z_STAT


def test_half_line_survival() -> None:
    # S(t) = erf(x0 / sqrt(4 D t)) (docs/analytic-reference.md B1; Redner 2001, Ch. 2,
    # from memory; analytic.halfline_survival). Survival counts at every grid time.
    x0, diffusivity, n = 1.0, 0.5, 40_000
    times = [0.0, 0.25, 0.5, 1.0, 2.0, 4.0, 8.0]
    out = run(n, [x0], lower=[0.0], upper=[math.inf], absorbing_low=[True],
              absorbing_high=[False], diffusivity=diffusivity, dt=1e-5, horizon=8.0,
              survival_times=times)  # fmt: skip
    exact = analytic.halfline_survival(np.array(times), x0, diffusivity, 0.0)
    for k, t in enumerate(times):
        # The counts are the walkers whose first-passage time exceeds t.
        alive = np.isnan(out.time) | (out.time > t)
        assert out.survival[k] == alive.sum()
        if 0 < exact[k] < 1:
            assert abs(z_fraction(int(out.survival[k]), n, float(exact[k]))) <= Z_STAT


def test_interval_survival_and_censoring_at_the_horizon() -> None:
    # Interval [0, 1], both ends absorbing: S(t) from the eigen-series
    # (docs/analytic-reference.md C1; Carslaw & Jaeger 1959, Sec. 3.3, from memory;
    # analytic.interval_survival).
    x0, diffusivity, n = 0.3, 1.0, 40_000
    times = [0.01, 0.05, 0.1, 0.2, 0.4]
    out = run(n, [x0], lower=[0.0], upper=[1.0], absorbing_low=[True],
              absorbing_high=[True], diffusivity=diffusivity, dt=1e-5, horizon=0.4,
              survival_times=times)  # fmt: skip
    exact = analytic.interval_survival(np.array(times), x0, 1.0, diffusivity)
    for k in range(len(times)):
        assert abs(z_fraction(int(out.survival[k]), n, float(exact[k]))) <= Z_STAT
    absorbed = out.wall >= 0
    # Censored exactly at the horizon: every walker still free was counted alive.
    assert np.isnan(out.time[~absorbed]).all() and (out.time[absorbed] <= 0.4).all()


# --------------------------------------------------------------------------- reference


CASES = {
    # A reflecting square with a target: folding and target images.
    "reflecting square, target": dict(
        start=[0.3, 0.7], lower=[0.0, 0.0], upper=[1.0, 1.0],
        absorbing_low=[False, False], absorbing_high=[False, False],
        targets=[([0.6, 0.4], 0.1)], horizon=3.0, dt=1e-3,
    ),
    # Mixed faces and two targets in a cube.
    "cube, mixed faces, two targets": dict(
        start=[0.5, 0.5, 0.5], lower=[0.0, 0.0, 0.0], upper=[1.0, 2.0, 1.0],
        absorbing_low=[True, False, False], absorbing_high=[False, False, True],
        targets=[([0.2, 1.5, 0.5], 0.15), ([0.8, 0.3, 0.3], 0.1)], horizon=2.0, dt=1e-3,
    ),
    # A reflecting disk with an off-centre target.
    "reflecting disk, target": dict(
        start=[0.0, 0.5], ball_radius=1.0, ball_absorbing=False,
        targets=[([0.4, -0.2], 0.15)], horizon=2.0, dt=1e-3,
    ),
}  # fmt: skip


@pytest.mark.parametrize("case", sorted(CASES))
def test_kernel_matches_numpy_reference(case: str) -> None:
    kw: dict[str, Any] = dict(CASES[case])
    n = 4000
    out = run(n, **kw)
    d = len(kw["start"])
    radius = kw.get("ball_radius", math.inf)
    lower = kw.get("lower", [-radius] * d)
    upper = kw.get("upper", [radius] * d)
    targets = kw["targets"]
    ref_time, ref_wall, _ = simulate_reference(
        np.random.default_rng(5),
        n,
        np.array(kw["start"], dtype=np.float64),
        np.array(lower, dtype=np.float64),
        np.array(upper, dtype=np.float64),
        np.array(kw.get("absorbing_low", [False] * d)),
        np.array(kw.get("absorbing_high", [False] * d)),
        np.zeros(d),
        radius,
        kw.get("ball_absorbing", True),
        np.array([c for c, _ in targets], dtype=np.float64),
        np.array([r for _, r in targets], dtype=np.float64),
        1.0,
        kw["dt"],
        kw["horizon"],
        HANDOVER * math.sqrt(2 * kw["dt"]),
    )
    assert_same_law(case, out.time, out.wall, ref_time, ref_wall)


def assert_same_law(
    case: str,
    time: NDArray[np.float64],
    wall: NDArray[np.int16],
    ref_time: NDArray[np.float64],
    ref_wall: NDArray[np.int16],
) -> None:
    """The kernel's and the reference's walkers follow one law: the first-passage
    times of absorbed walkers by the two-sample KS test and the absorbing walls
    (-1: censored) by a chi-squared contingency test (scipy.stats), both p > P_MIN."""
    a = time[~np.isnan(time)]
    b = ref_time[~np.isnan(ref_time)]
    p_ks = stats.ks_2samp(a, b).pvalue
    walls = np.arange(-1, int(max(wall.max(), ref_wall.max())) + 1)
    table = np.array([[np.sum(wall == w), np.sum(ref_wall == w)] for w in walls])
    table = table[table.sum(axis=1) > 0]
    p_chi = stats.chi2_contingency(table).pvalue if table.shape[0] > 1 else 1.0
    print(f"{case}: KS p = {p_ks:.3g}, walls chi2 p = {p_chi:.3g}, walls {table.T}")
    assert p_ks > P_MIN and p_chi > P_MIN


# --------------------------------------------------------------------------- determinism


def test_same_seed_same_bits_and_censoring() -> None:
    kw: dict[str, Any] = dict(CASES["reflecting square, target"])
    kw["horizon"] = 0.5
    kw["survival_times"] = [0.0, 0.1, 0.2, 0.5]
    first = run(3000, **kw, seed=11)
    again = run(3000, **kw, seed=11)
    for x, y in zip(first, again):
        np.testing.assert_array_equal(x, y, strict=True)
    other = run(3000, **kw, seed=12)
    assert not np.array_equal(first.time, other.time, equal_nan=True)
    censored = first.wall < 0
    assert censored.any() and (~censored).any()
    assert np.isnan(first.time[censored]).all()
    assert np.isnan(first.position[censored]).all()
    assert (first.time[~censored] < 0.5).all()
    assert first.survival[0] == 3000 and first.survival[-1] == censored.sum()


def test_free_space_without_absorbing_surfaces_is_censored_in_one_jump() -> None:
    # A reflecting box without targets: nothing can absorb; the protective radius is
    # infinite and the first jump passes the horizon.
    out = run(100, [0.5, 0.5], lower=[0.0, 0.0], upper=[1.0, 1.0], horizon=5.0)
    assert (out.wall == -1).all() and out.moves[0] == 100 and out.moves[1] == 0


def test_uniform_start_avoids_targets() -> None:
    out = run(2000, [math.nan] * 2, lower=[0.0, 0.0], upper=[1.0, 1.0],
              targets=[([0.5, 0.5], 0.3)], horizon=1e-3, dt=1e-4,
              uniform_start=True, seed=3)  # fmt: skip
    # With a horizon of 1e-3 almost nobody moves far; walkers absorbed at once would
    # mean a start inside the target.
    assert (out.time[out.wall >= 0] > 0).all()
