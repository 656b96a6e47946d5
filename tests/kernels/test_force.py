"""The kernel in a force field (kernels.inputs.Force) against the exact references
of sweep.analytic.force and against the slow numpy reference (tests/kernels/reference.py,
rules 1'). Small walker counts; the dt-ladder order study is benchmarks/force_order.py."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from sweep.analytic import force as analytic_force
from sweep.potentials import Force, along, kernel_force
from tests.kernels.reference import simulate_reference
from tests.kernels.runner import Domain, run
from tests.tolerances import P_MIN, Z_STAT

INF = math.inf
D = 0.8  # not 1/2 (reference sheet §0)


def _domain(
    force: Force, start, lower, upper, absorbing, dt, n_steps, drift=None, **kw
):
    d = len(start)
    drift = tuple(drift or [0.0] * d)
    return Domain(
        start=tuple(start), lower=tuple(lower), upper=tuple(upper),
        absorbing_lower=tuple(a for a, _ in absorbing),
        absorbing_upper=tuple(b for _, b in absorbing), diffusivity=D, dt=dt,
        n_steps=n_steps, drift=drift,
        force=kernel_force(force, d, D, dt, drift), **kw,
    )  # fmt: skip


def _z(values: np.ndarray, exact: float) -> float:
    return (values.mean() - exact) / (values.std(ddof=1) / math.sqrt(values.size))


def _z_variance(values: np.ndarray, exact: float) -> float:
    # SE of the sample variance: sqrt((m4 - s^4) / n) (common practice, delta method).
    dev = values - values.mean()
    s2 = dev.var(ddof=1)
    return (s2 - exact) / math.sqrt((np.mean(dev**4) - s2**2) / values.size)


# ------------------------------------------------------------------ Ornstein-Uhlenbeck

HARMONIC = Force("harmonic", center=(0.3, -0.5), stiffness=(4.0, 0.0))
OU_START, OU_DRIFT = (1.2, 0.1), (0.6, -0.4)


@pytest.mark.parametrize("dt,n_steps", [(0.25, 2), (0.01, 50)])
def test_ou_exact_update_moments(dt: float, n_steps: int) -> None:
    # Uhlenbeck & Ornstein (1930); Gardiner §3.8.4 [memory] (sweep.analytic.force):
    # the exact update has the exact law at any dt, here D k dt up to 0.8. The y axis
    # (k = 0) is free motion with drift (reference sheet A2).
    dom = _domain(HARMONIC, OU_START, (-INF, -INF), (INF, INF), [(False, False)] * 2,
                  dt, n_steps, OU_DRIFT)  # fmt: skip
    out = run(dom, 20_000, 11)
    t = dt * n_steps
    x, y = out.final[:, 0], out.final[:, 1]
    mean = analytic_force.ou_mean(t, 1.2, 0.3, 4.0, D, 0.6)
    assert abs(_z(x, mean)) <= Z_STAT
    assert abs(_z_variance(x, analytic_force.ou_variance(t, 4.0, D))) <= Z_STAT
    assert abs(_z(y, 0.1 - 0.4 * t)) <= Z_STAT
    assert abs(_z_variance(y, 2 * D * t)) <= Z_STAT
    # Gaussian in law: scipy.stats.kstest against the exact normal.
    sd = math.sqrt(analytic_force.ou_variance(t, 4.0, D))
    assert stats.kstest(x, stats.norm(mean, sd).cdf).pvalue > P_MIN


def test_ou_stationary_occupancy() -> None:
    # Stationary occupancy: Gaussian with variance kT / k = 1/k (analytic sheet J9),
    # binned by the kernel's occupancy snapshot; chi-square over the bins
    # (scipy.stats.chisquare).
    force = Force("harmonic", center=(0.0,), stiffness=(2.0,))
    bins, lo, hi = 24, -2.5, 2.5
    dom = _domain(force, (1.0,), (-INF,), (INF,), [(False, False)], 0.05, 100,
                  occupancy_steps=(100,), occupancy_lower=(lo,), occupancy_upper=(hi,),
                  occupancy_bins=bins)  # fmt: skip
    n = 20_000
    counts = run(dom, n, 5).occupancy[0]
    edges = np.linspace(lo, hi, bins + 1)
    # At t = 5, e^{-D k t} = e^{-8}: stationary to 3e-4 in the mean's offset.
    law = stats.norm(analytic_force.ou_mean(5.0, 1.0, 0.0, 2.0, D), math.sqrt(0.5))
    p = np.diff(law.cdf(edges))
    expected = n * np.append(p, 1 - p.sum())
    observed = np.append(counts, n - counts.sum())
    assert stats.chisquare(observed, expected).pvalue > P_MIN


def test_ou_euler_is_first_order_biased() -> None:
    # Euler-Maruyama in the same well (a table of the harmonic U makes the kernel use
    # Euler): its stationary variance is (1/k) / (1 - q/2), q = D k dt (derived:
    # stationarity of x' = (1 - q) x + sqrt(2 D dt) xi). At q = 0.4 that is 25 % high,
    # seen at many z; the exact update at the same dt is not biased.
    k, dt = 2.0, 0.25
    grid = np.linspace(-6, 6, 241)
    table = Force(
        "table", axis=0, lower=-6.0, upper=6.0, values=tuple(0.5 * k * grid**2)
    )
    dom = _domain(table, (0.0,), (-6.0,), (6.0,), [(False, False)], dt, 60)
    x = run(dom, 20_000, 3).final[:, 0]
    q = D * k * dt
    assert abs(_z_variance(x, (1 / k) / (1 - q / 2))) <= Z_STAT
    assert _z_variance(x, 1 / k) > 3 * Z_STAT


# -------------------------------------------------------------- first passage (1-D)


def _escape(barrier: float, dt: float = 2e-4) -> tuple[Domain, float]:
    """Escape from the left well of a double well (minima at -+1) to the right
    minimum: reflecting at -2.5, absorbing at +1, start at -1."""
    force = Force(
        "double_well", axis=0, center=(0.0,), barrier=barrier, half_separation=1.0
    )
    u = analytic_force.effective_profile(force, 0, D)
    exact = analytic_force.mean_exit_time(
        u, -2.5, 1.0, -1.0, D, ("reflecting", "absorbing")
    )
    dt = 2e-4
    dom = _domain(force, (-1.0,), (-2.5,), (1.0,), [(False, True)], dt,
                  int(40 * exact.value / dt))  # fmt: skip
    return dom, exact.value


@pytest.mark.parametrize(
    "barrier,walkers,dt", [(2.0, 800, 2e-4), (4.0, 300, 2e-4), (6.0, 100, 5e-4)]
)
def test_double_well_mean_escape_time(barrier: float, walkers: int, dt: float) -> None:
    # Mean first-passage time by the double-integral formula (Gardiner §5.2.7
    # [memory]); the O(dt) Euler/bridge bias at these dt is below 1 % (the dt ladder
    # of benchmarks/force_order.py), far below 5 SE of these few walkers.
    dom, exact = _escape(barrier, dt)
    out = run(dom, walkers, int(barrier))
    assert np.all(out.wall == 1)
    assert abs(_z(out.time, exact)) <= Z_STAT


def test_double_well_reference_agrees() -> None:
    # The slow numpy reference (rule 1', Euler) against the same quadrature.
    dom, exact = _escape(2.0)
    dom = Domain(**{**dom.__dict__, "dt": 2e-3, "n_steps": int(40 * exact / 2e-3),
                    "force": None})  # fmt: skip
    force = Force(
        "double_well", axis=0, center=(0.0,), barrier=2.0, half_separation=1.0
    )
    time, wall, *_ = simulate_reference(
        np.random.default_rng(4), 400, dom.start, dom.lower, dom.upper,
        dom.absorbing_lower, dom.absorbing_upper, D, (0.0,), dom.dt, dom.n_steps, True,
        (), slope=lambda x: along(force, 0, x, 1),
    )  # fmt: skip
    assert np.all(wall == 1)
    assert abs(_z(time, exact)) <= Z_STAT


def test_splitting_over_tilted_landscape() -> None:
    # P(exit at the upper wall) = int_a^x0 e^U / int_a^b e^U (Gardiner §5.2.8
    # [memory]), U tilted periodic plus the constant drift folded in.
    force = Force("tilted_periodic", axis=0, amplitude=1.5, period=0.7, tilt=0.8)
    dom = _domain(force, (0.9,), (0.0,), (2.0,), [(True, True)], 1e-3, 200_000, (-0.3,))
    out = run(dom, 4000, 21)
    u = analytic_force.effective_profile(force, 0, D, -0.3)
    p = analytic_force.splitting(u, 0.0, 2.0, 0.9).value
    sim = np.mean(out.wall == 1)
    assert np.all(out.wall >= 0)
    assert abs(sim - p) <= Z_STAT * math.sqrt(p * (1 - p) / out.wall.size)


def test_tilted_periodic_drift_velocity() -> None:
    # On the real line the mean time to advance n periods is n L / v, v by
    # Stratonovich's formula (Reimann 2002 [memory]; renewal argument).
    L, n = 0.5, 4
    force = Force("tilted_periodic", axis=0, amplitude=1.0, period=L, tilt=2.0)
    dom = _domain(
        force, (0.1,), (-INF,), (0.1 + n * L,), [(False, True)], 1e-3, 100_000
    )
    out = run(dom, 1000, 8)
    v = analytic_force.periodic_drift_velocity(
        lambda x: np.cos(2 * np.pi * x / L), L, 2.0, D
    )
    assert np.all(out.wall == 1)
    assert abs(_z(out.time, n * L / v)) <= Z_STAT


def test_table_matches_its_spline_quadrature() -> None:
    # A tabulated double well (21 knots, natural cubic spline): the kernel and the
    # quadrature integrate the same interpolant, so they agree within the noise.
    grid = np.linspace(-2.5, 1.5, 21)
    force = Force("table", axis=0, lower=-2.5, upper=1.5,
                  values=tuple(3.0 * (grid**2 - 1.0) ** 2))  # fmt: skip
    u = analytic_force.effective_profile(force, 0, D)
    exact = analytic_force.mean_exit_time(
        u, -2.5, 1.0, -1.0, D, ("reflecting", "absorbing")
    )
    dom = _domain(force, (-1.0,), (-2.5,), (1.0,), [(False, True)], 2e-4,
                  int(40 * exact.value / 2e-4))  # fmt: skip
    out = run(dom, 400, 9)
    assert abs(_z(out.time, exact.value)) <= Z_STAT


@pytest.mark.parametrize("kind", ["ball", "box_targets"])
def test_every_kind_of_domain_takes_a_force(kind: str) -> None:
    # The force's loop variants of a ball and of a box with a target compile and run:
    # a harmonic well centred on the target draws walkers in, so they are absorbed.
    force = Force("harmonic", center=(0.5, 0.5), stiffness=(6.0, 6.0))
    extra: dict = {"target_centers": ((0.5, 0.5),), "target_radii": (0.1,)}
    if kind == "ball":
        extra |= {
            "ball_center": (0.5, 0.5),
            "ball_radius": 1.0,
            "ball_absorbing": False,
        }
    dom = _domain(force, (1.0, 0.9), (-0.5, -0.5), (1.5, 1.5), [(False, False)] * 2,
                  1e-3, 200_000, **extra)  # fmt: skip
    out = run(dom, 200, 2)
    assert np.all(out.wall == (0 if kind == "ball" else 4))
    r = np.hypot(out.position[:, 0] - 0.5, out.position[:, 1] - 0.5)
    np.testing.assert_allclose(r, 0.1, rtol=1e-12)


def test_uncompiled_force_loop_equals_compiled() -> None:
    # The generated force loop run as plain Python (its py_func, calling the compiled
    # helpers) gives the compiled loop's numbers bit for bit.
    from kernels import _loops
    from kernels.walkers import BOX

    force = Force("tilted_periodic", axis=0, amplitude=1.0, period=0.5, tilt=1.0)
    dom = _domain(force, (0.2,), (-1.0,), (1.0,), [(True, True)], 1e-2, 300)
    a = run(dom, 20, 4)
    b = run(dom, 20, 4, kernel=_loops.FORCE_LOOPS[BOX, 1].py_func)
    for name, x, y in zip(a._fields, a, b):
        np.testing.assert_array_equal(x, y, err_msg=name)
