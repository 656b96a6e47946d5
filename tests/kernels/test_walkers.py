"""Tests of the walker kernel ``kernels.walkers.simulate`` on box domains.

Three kinds of check:

* against the plain-NumPy reference ``tests/kernels/reference.py``, in distribution
  (two-sample KS, chi-square, z on proportions), since the two draw random numbers in
  different orders;
* determinism: same seed, same bits; the uncompiled generated step loop (its ``py_func``)
  gives exactly the compiled kernel's output (both draw through the compiled
  kernels/rng.py);
* closed forms from ``docs/analytic-reference.md`` (section named beside each
  check), as z-scores ``|estimate - exact| <= Z_STAT * SE`` with fixed seeds.

Every statistic is printed (``pytest -s``) so the margins can be read off a run.
"""

from __future__ import annotations

import math
from dataclasses import asdict, replace
from functools import cache
from typing import Any

import numpy as np
import pytest
from numba import njit
from numba.np.random._constants import wi_double, ziggurat_nor_inv_r, ziggurat_nor_r
from numpy.typing import NDArray
from scipy import special, stats

from kernels import _loops
from kernels.walkers import (
    NORMAL_BOUND,
    _band,
    _hit_fraction,
    _normal,
    _random_state,
    draw_normals,
)
from tests.kernels.reference import simulate_reference
from tests.kernels.runner import (
    Domain,
    Run,
    assert_runs_identical,
    reference_run,
    run,
    stream,
    uncompiled_loop,
)
from tests.tolerances import P_MIN, Z_STAT

#: Broadie-Glasserman-Kou constant beta = -zeta(1/2) / sqrt(2 pi) = 0.5826 (analytic.md
#: F1): a discretely monitored absorbing wall acts as if moved outward by
#: beta sqrt(2 D dt).
BETA = -float(special.zeta(0.5)) / math.sqrt(2.0 * math.pi)

#: Distribution comparisons (KS) are only made when both samples have at least this many
#: values; smaller samples carry too little information to be worth a test.
MIN_SAMPLE = 50


# --------------------------------------------------------------------------- helpers


def run_reference(box: Domain, n_walkers: int, rng: np.random.Generator) -> Run:
    """The same run with the NumPy reference."""
    time, wall, position, survival, final = simulate_reference(
        rng,
        n_walkers,
        box.start,
        box.lower,
        box.upper,
        box.absorbing_lower,
        box.absorbing_upper,
        box.diffusivity,
        box.drift or (0.0,) * box.dimension,
        box.dt,
        box.n_steps,
        box.bridge,
        box.survival_times,
    )
    return reference_run(
        time=time, wall=wall, position=position, survival=survival, final=final
    )


def check_z(
    what: str, estimate: float, expected: float, standard_error: float, context: Any
) -> float:
    """Assert ``|estimate - expected| <= Z_STAT * standard_error``; return z."""
    z = (estimate - expected) / standard_error
    print(f"{what}: estimate {estimate:.6g} expected {expected:.6g} z = {z:+.2f}")
    assert abs(z) <= Z_STAT, (
        f"{what}: estimate {estimate!r}, expected {expected!r}, "
        f"SE {standard_error!r}, z = {z:.2f} beyond {Z_STAT}; {context}"
    )
    return z


def check_p(what: str, p_value: float, context: Any) -> None:
    """Assert a distribution test's p-value is at least ``P_MIN``."""
    print(f"{what}: p = {p_value:.3g}")
    assert p_value >= P_MIN, f"{what}: p = {p_value:.3g} below {P_MIN}; {context}"


def mean_and_se(values: NDArray[np.float64]) -> tuple[float, float]:
    """Sample mean and its standard error."""
    return float(values.mean()), float(values.std(ddof=1) / math.sqrt(values.size))


def check_proportion(
    what: str, count: int, n: int, probability: float, context: Any
) -> float:
    """z-check of an observed count against a binomial(n, probability) expectation."""
    se = math.sqrt(probability * (1.0 - probability) / n)
    return check_z(what, count / n, probability, se, context)


def interval(
    start: float,
    length: float,
    low: bool,
    high: bool,
    *,
    diffusivity: float,
    dt: float,
    n_steps: int,
    bridge: bool,
    drift: float = 0.0,
    survival_times: tuple[float, ...] = (),
) -> Domain:
    """A 1-D box [0, length]; ``low`` / ``high`` say whether each end is absorbing."""
    return Domain(
        start=(start,),
        lower=(0.0,),
        upper=(length,),
        absorbing_lower=(low,),
        absorbing_upper=(high,),
        diffusivity=diffusivity,
        drift=(drift,),
        dt=dt,
        n_steps=n_steps,
        bridge=bridge,
        survival_times=survival_times,
    )


def free_space(
    start: tuple[float, ...],
    drift: tuple[float, ...],
    *,
    diffusivity: float,
    dt: float,
    n_steps: int,
) -> Domain:
    """A box with infinite sides: no wall is ever met."""
    d = len(start)
    return Domain(
        start=start,
        lower=(-math.inf,) * d,
        upper=(math.inf,) * d,
        absorbing_lower=(False,) * d,
        absorbing_upper=(False,) * d,
        diffusivity=diffusivity,
        drift=drift,
        dt=dt,
        n_steps=n_steps,
        bridge=True,
    )


# ----------------------------------------------------------------- kernel vs reference

#: Shared configurations; the survival times include off-grid ones on purpose.
INTERVAL_AA = interval(
    0.3, 1.0, True, True, diffusivity=0.8, dt=0.005, n_steps=60, bridge=True,
    survival_times=(0.0123, 0.05, 0.1017, 0.2, 0.3),
)  # fmt: skip
INTERVAL_AA_DRIFT = replace(INTERVAL_AA, drift=(1.5,))
INTERVAL_AR_DRIFT = interval(
    0.6, 1.0, True, False, diffusivity=0.5, dt=0.01, n_steps=100, bridge=True,
    drift=-0.5, survival_times=(0.1, 0.333, 0.5, 0.777, 1.0),
)  # fmt: skip
RECTANGLE_MIXED_DRIFT = Domain(
    start=(0.3, 0.9),
    lower=(0.0, 0.0),
    upper=(1.0, 1.5),
    absorbing_lower=(True, False),
    absorbing_upper=(False, True),
    diffusivity=0.5,
    drift=(0.4, -0.3),
    dt=0.01,
    n_steps=100,
    bridge=True,
    survival_times=(0.1, 0.333, 0.5, 0.777, 1.0),
)
#: Small and coarse: a step often crosses two faces, so "earliest crossing wins"
#: matters.
RECTANGLE_ABSORBING_COARSE = Domain(
    start=(0.2, 0.15),
    lower=(0.0, 0.0),
    upper=(0.5, 0.4),
    absorbing_lower=(True, True),
    absorbing_upper=(True, True),
    diffusivity=1.0,
    drift=(0.0, 0.0),
    dt=0.01,
    n_steps=8,
    bridge=True,
    survival_times=(0.005, 0.0123, 0.03, 0.0555, 0.08),
)
REFERENCE_CASES = {
    "interval-AA": INTERVAL_AA,
    "interval-AA-drift": INTERVAL_AA_DRIFT,
    "interval-AR-drift": INTERVAL_AR_DRIFT,
    "rectangle-mixed-drift": RECTANGLE_MIXED_DRIFT,
    "rectangle-absorbing-coarse": RECTANGLE_ABSORBING_COARSE,
}
N_REFERENCE = 50_000


@pytest.mark.parametrize("bridge", [True, False], ids=["bridge", "no-bridge"])
@pytest.mark.parametrize("case", list(REFERENCE_CASES), ids=list(REFERENCE_CASES))
def test_simulate_matches_reference_in_distribution(case: str, bridge: bool) -> None:
    box = replace(REFERENCE_CASES[case], bridge=bridge)
    seed = 20240 + list(REFERENCE_CASES).index(case) + 100 * bridge
    context = f"seed {seed}, {asdict(box)}"
    kernel = run(box, N_REFERENCE, stream(seed))
    reference = run_reference(box, N_REFERENCE, np.random.default_rng(seed + 1))
    n = N_REFERENCE
    d = len(box.start)

    # Structural: absorbed walkers have a time in (0, horizon] and sit on their wall;
    # censored ones have NaN time and position and a final position in the box.
    absorbed = kernel.wall >= 0
    assert np.all(kernel.time[absorbed] > 0.0)
    assert np.all(kernel.time[absorbed] <= box.horizon)
    assert np.all(np.isnan(kernel.time[~absorbed]))
    assert np.all(np.isnan(kernel.position[~absorbed]))
    assert np.all(np.isnan(kernel.final[absorbed]))
    for w in np.unique(kernel.wall[absorbed]):
        axis, side = divmod(int(w), 2)
        level = (box.upper if side else box.lower)[axis]
        assert np.all(kernel.position[kernel.wall == w, axis] == level)
    assert np.all(kernel.final[~absorbed] >= box.lower)
    assert np.all(kernel.final[~absorbed] <= box.upper)

    # First-passage times: two-sample KS, scipy.stats.ks_2samp (conservative for the
    # grid-valued times of the no-bridge mode).
    check_p(
        "first-passage time KS",
        stats.ks_2samp(
            kernel.time[absorbed], reference.time[reference.wall >= 0]
        ).pvalue,
        context,
    )

    # With the bridge, where inside its last step a walker was absorbed (the in-step
    # hitting time, analytic.md F6) is too fine for the KS above: compare the phase
    # time / dt mod 1 on its own.
    if box.bridge:
        check_p(
            "in-step phase KS",
            stats.ks_2samp(
                np.mod(kernel.time[absorbed] / box.dt, 1.0),
                np.mod(reference.time[reference.wall >= 0] / box.dt, 1.0),
            ).pvalue,
            context,
        )

    # Wall frequencies, censored (-1) included: scipy.stats.chi2_contingency.
    walls = np.arange(-1, 2 * d)
    table = np.array(
        [[np.count_nonzero(r.wall == w) for w in walls] for r in (kernel, reference)]
    )
    table = table[:, table.sum(axis=0) > 0]
    if table.shape[1] > 1:
        check_p("wall frequencies chi2", stats.chi2_contingency(table).pvalue, context)

    # Survival counts: two-sample z on proportions, pooled standard error.
    for t, a, b in zip(box.survival_times, kernel.survival, reference.survival):
        pooled = (a + b) / (2 * n)
        se = math.sqrt(pooled * (1.0 - pooled) * 2.0 / n)
        if se > 0.0:
            check_z(f"survival at t={t}", a / n, b / n, se, context)
        else:
            assert a == b

    # Exit positions along the other axes of each wall: KS.
    for w in walls[walls >= 0]:
        on_k = kernel.wall == w
        on_r = reference.wall == w
        if min(np.count_nonzero(on_k), np.count_nonzero(on_r)) < MIN_SAMPLE:
            continue
        for axis in range(d):
            if axis != w // 2:
                check_p(
                    f"exit position wall {w} axis {axis} KS",
                    stats.ks_2samp(
                        kernel.position[on_k, axis], reference.position[on_r, axis]
                    ).pvalue,
                    context,
                )

    # Positions of censored walkers at the horizon: KS per axis.
    free_k = kernel.wall < 0
    free_r = reference.wall < 0
    if min(np.count_nonzero(free_k), np.count_nonzero(free_r)) >= MIN_SAMPLE:
        for axis in range(d):
            check_p(
                f"final position axis {axis} KS",
                stats.ks_2samp(
                    kernel.final[free_k, axis], reference.final[free_r, axis]
                ).pvalue,
                context,
            )


# ------------------------------------------------------------------------- determinism


@njit(nogil=True)
def fill_normals(rng: Any, out: NDArray[np.float64]) -> None:
    bits = rng.bit_generator
    for i in range(out.shape[0]):
        out[i] = _normal(bits)


@pytest.mark.parametrize("bit_generator", [np.random.PCG64, np.random.SFC64])
def test_normal_sampler_reproduces_numpy_stream(bit_generator: Any) -> None:
    # The kernel's own ziggurat must be numpy's Generator.standard_normal draw for draw
    # (the reference: numpy itself), including the rare tail and wedge branches, which
    # 10^6 draws visit thousands of times; and leave the bit generator in the same state.
    n = 1_000_000
    ours, theirs = np.empty(n), np.empty(n)
    rng_ours = np.random.Generator(bit_generator(2024))
    rng_theirs = np.random.Generator(bit_generator(2024))
    fill_normals(rng_ours, ours)
    rng_theirs.standard_normal(out=theirs)
    np.testing.assert_array_equal(ours, theirs)
    np.testing.assert_array_equal(rng_ours.random(4), rng_theirs.random(4))
    assert np.sum(np.abs(ours) > 3.6541528853610088) > 100  # the ziggurat's tail, r
    # The ceiling of `sweep bench` draws the same numbers (their sum, in order).
    total = draw_normals(np.random.Generator(bit_generator(2024)), n // 2, 2)
    assert total == np.cumsum(theirs)[-1]


def test_simulate_same_seed_bit_identical() -> None:
    first = run(RECTANGLE_MIXED_DRIFT, 2000, stream(11))
    again = run(RECTANGLE_MIXED_DRIFT, 2000, stream(11))
    assert_runs_identical(first, again)


def test_simulate_different_seeds_differ() -> None:
    first = run(RECTANGLE_MIXED_DRIFT, 2000, stream(11))
    other = run(RECTANGLE_MIXED_DRIFT, 2000, stream(12))
    assert not np.array_equal(first.time, other.time, equal_nan=True)
    assert not np.array_equal(first.final, other.final, equal_nan=True)


def test_simulate_first_walker_independent_of_walker_count() -> None:
    # Walkers consume one shared stream in order, so walker 0 of a run does not
    # depend on how many walkers follow it.
    box = replace(RECTANGLE_MIXED_DRIFT, survival_times=())
    many = run(box, 50, stream(5))
    one = run(box, 1, stream(5))
    for name in ("time", "wall", "position", "final"):
        np.testing.assert_array_equal(
            getattr(one, name), getattr(many, name)[:1], err_msg=name
        )


#: A 3-D box with every kind of face, and a 4-D box.
CUBE_MIXED = Domain(
    start=(0.3, 0.9, 0.2),
    lower=(0.0, 0.0, -0.5),
    upper=(1.0, 1.5, 0.5),
    absorbing_lower=(True, False, False),
    absorbing_upper=(False, True, False),
    diffusivity=0.5,
    drift=(0.4, -0.3, 0.2),
    dt=0.01,
    n_steps=40,
    bridge=True,
    survival_times=(0.1, 0.2),
)
HYPERCUBE = replace(
    CUBE_MIXED,
    start=(0.3, 0.9, 0.2, 0.5),
    lower=(0.0, 0.0, -0.5, 0.0),
    upper=(1.0, 1.5, 0.5, 1.0),
    absorbing_lower=(True, False, False, True),
    absorbing_upper=(False, True, False, True),
    drift=(0.4, -0.3, 0.2, 0.0),
)


@pytest.mark.parametrize(
    "box",
    [
        replace(RECTANGLE_MIXED_DRIFT, n_steps=40),
        replace(RECTANGLE_MIXED_DRIFT, n_steps=40, bridge=False),
        replace(RECTANGLE_ABSORBING_COARSE, dt=0.02),
        replace(INTERVAL_AR_DRIFT, n_steps=40),
        CUBE_MIXED,
        HYPERCUBE,
    ],
    ids=["rectangle-bridge", "rectangle-no-bridge", "rectangle-coarse", "interval-AR",
         "cube-mixed", "hypercube"],
)  # fmt: skip
def test_simulate_py_func_identical_to_compiled(box: Domain) -> None:
    # The uncompiled generated loop draws through the same compiled samplers
    # (kernels/rng.py) from the same stream, so it must agree to the last bit and
    # leave the stream in the same state.
    compiled_state = stream(99)
    python_state = stream(99)
    compiled = run(box, 30, compiled_state)
    python = run(box, 30, python_state, kernel=uncompiled_loop(box))
    assert_runs_identical(compiled, python)
    np.testing.assert_array_equal(compiled_state, python_state)


# --------------------------------------------------------------------------- analytic

# Interval [0, L], both ends absorbing, reference parameter set P of analytic.md.
D_P, L_P, X0_P = 0.8, 2.0, 0.5
#: Horizon for "run to absorption": S(t) ~ 1.3 exp(-D pi^2 t / L^2) is below 1e-9 by
#: then.
HORIZON_AA = 12.0


@cache
def interval_aa_run(dt: float, bridge: bool, n_walkers: int, seed: int) -> Run:
    box = interval(
        X0_P, L_P, True, True, diffusivity=D_P, dt=dt,
        n_steps=round(HORIZON_AA / dt), bridge=bridge,
    )  # fmt: skip
    result = run(box, n_walkers, stream(seed))
    assert np.all(result.wall >= 0), "walkers censored: lengthen HORIZON_AA"
    return result


BRIDGE_DTS = pytest.mark.parametrize("dt", [0.01, 0.05], ids=["dt=0.01", "dt=0.05"])
#: One seed per time step, so the parametrized checks are independent.
SEED_FOR_DT = {0.01: 1, 0.05: 13, 1e-3: 3}


@BRIDGE_DTS
def test_interval_mean_exit_time_with_bridge(dt: float) -> None:
    result = interval_aa_run(dt, True, 200_000, SEED_FOR_DT[dt])
    mean, se = mean_and_se(result.time)
    # E T = x0 (L - x0) / (2D): Redner (2001) Ch. 2 "first passage in an interval"
    # [from memory]; analytic.md C1.
    check_z("interval mean exit time", mean, X0_P * (L_P - X0_P) / (2 * D_P), se, dt)


@BRIDGE_DTS
def test_interval_splitting_probability(dt: float) -> None:
    result = interval_aa_run(dt, True, 200_000, SEED_FOR_DT[dt])
    n_high = int(np.count_nonzero(result.wall == 1))
    # pi_L = x0 / L: Redner (2001) Ch. 2, splitting probabilities [from memory];
    # analytic.md C1.
    check_proportion("P(exit at L)", n_high, result.wall.size, X0_P / L_P, dt)


@BRIDGE_DTS
def test_interval_conditional_exit_times(dt: float) -> None:
    result = interval_aa_run(dt, True, 200_000, SEED_FOR_DT[dt])
    # E[T | exit at L] = (L^2 - x0^2) / (6D), E[T | exit at 0] = x0 (2L - x0) / (6D):
    # Redner (2001) Ch. 2, conditional exit times [from memory]; analytic.md C1.
    expected = {
        0: X0_P * (2 * L_P - X0_P) / (6 * D_P),
        1: (L_P**2 - X0_P**2) / (6 * D_P),
    }
    for wall, exact in expected.items():
        mean, se = mean_and_se(result.time[result.wall == wall])
        check_z(f"E[T | wall {wall}]", mean, exact, se, dt)


def test_interval_absorbing_reflecting_mean_exit_time() -> None:
    # Absorbing at 0, reflecting at L; S(t) ~ exp(-D pi^2 t / (4 L^2)) < 1e-8 at 40.
    dt = 0.01
    box = interval(
        X0_P, L_P, True, False, diffusivity=D_P, dt=dt, n_steps=round(40.0 / dt),
        bridge=True,
    )  # fmt: skip
    result = run(box, 50_000, stream(2))
    assert np.all(result.wall == 0)
    mean, se = mean_and_se(result.time)
    # E T = x0 (2L - x0) / (2D): Redner (2001) Ch. 2, reflecting/absorbing interval
    # [from memory]; analytic.md C3.
    check_z("AR mean exit time", mean, X0_P * (2 * L_P - X0_P) / (2 * D_P), se, box)


def test_interval_uncorrected_mean_exit_time_biased_as_shifted_walls() -> None:
    dt = 1e-3
    result = interval_aa_run(dt, False, 100_000, SEED_FOR_DT[dt])
    mean, se = mean_and_se(result.time)
    # Discrete monitoring acts as walls moved outward by delta = beta sqrt(2 D dt):
    # Broadie, Glasserman & Kou (1997), Math. Finance 7(4) 325-348; analytic.md F1, F2.
    delta = BETA * math.sqrt(2 * D_P * dt)
    shifted = (X0_P + delta) * (L_P - X0_P + delta) / (2 * D_P)
    check_z("uncorrected mean exit time vs shifted walls", mean, shifted, se, dt)
    # The continuous value (Redner 2001 Ch. 2 [from memory]; C1) must be rejected.
    exact = X0_P * (L_P - X0_P) / (2 * D_P)
    z_exact = (mean - exact) / se
    print(f"uncorrected vs continuous: z = {z_exact:+.2f}")
    assert z_exact > Z_STAT, f"bias not detected: z = {z_exact:.2f}, dt {dt}"


# Half-line [0, inf), absorbing at 0.


def half_line_survival(
    t: float | NDArray[np.float64], x0: float, diffusivity: float, mu: float
) -> Any:
    """S(t) on [0, inf) absorbing at 0, drift mu (analytic.md B2; B1 when mu = 0).

    S = Phi((x0 + mu t) / s) - exp(-mu x0 / D) Phi((mu t - x0) / s), s = sqrt(2 D t):
    Redner (2001) Ch. 3, biased diffusion [from memory]; Borodin & Salminen (2002)
    Part II Ch. 2 [from memory]. Phi is scipy.special.ndtr.
    """
    s = np.sqrt(2 * diffusivity * t)
    return special.ndtr((x0 + mu * t) / s) - math.exp(-mu * x0 / diffusivity) * (
        special.ndtr((mu * t - x0) / s)
    )


HALF_LINE_TIMES = (0.137, 0.3, 0.5, 1.234, 2.9)


@cache
def half_line_run() -> tuple[Domain, Run]:
    box = Domain(
        start=(X0_P,),
        lower=(0.0,),
        upper=(math.inf,),
        absorbing_lower=(True,),
        absorbing_upper=(False,),
        diffusivity=D_P,
        drift=(0.0,),
        dt=0.02,
        n_steps=150,
        bridge=True,
        survival_times=HALF_LINE_TIMES,
    )
    return box, run(box, 100_000, stream(4))


def test_half_line_survival() -> None:
    box, result = half_line_run()
    n = result.wall.size
    for t, count in zip(box.survival_times, result.survival):
        # S(t) = erf(x0 / sqrt(4 D t)): Redner (2001) Ch. 3, semi-infinite system, image
        # method [from memory]; analytic.md B1.
        exact = float(special.erf(X0_P / math.sqrt(4 * D_P * t)))
        check_proportion(f"half-line S({t})", int(count), n, exact, box)


def test_half_line_first_passage_law() -> None:
    box, result = half_line_run()
    times = result.time[result.wall == 0]
    # T ~ Levy(scale x0^2 / (2D)) (scipy.stats.levy), here conditioned on T <= horizon;
    # analytic.md B1 (Levy-Smirnov density).
    levy = stats.levy(scale=X0_P**2 / (2 * D_P))
    p = stats.kstest(times, lambda t: levy.cdf(t) / levy.cdf(box.horizon)).pvalue
    check_p("half-line first-passage time vs Levy KS", p, box)


def test_half_line_drift_toward_wall_inverse_gaussian() -> None:
    # A coarse step: with the bridge test and the in-step hitting time the law is exact.
    v, dt = 0.6, 0.1
    box = Domain(
        start=(X0_P,), lower=(0.0,), upper=(math.inf,), absorbing_lower=(True,),
        absorbing_upper=(False,), diffusivity=D_P, drift=(-v,), dt=dt,
        n_steps=round(300.0 / dt), bridge=True,
    )  # fmt: skip
    result = run(box, 20_000, stream(6))
    assert np.all(result.wall == 0)
    # T ~ IG(mean x0/v, shape x0^2/(2D)),
    # i.e. scipy.stats.invgauss(2D/(x0 v), scale=x0^2/(2D)):
    # Redner (2001) Ch. 3, biased diffusion [from memory]; Chhikara & Folks (1989)
    # [from memory]; analytic.md B2.
    shape = X0_P**2 / (2 * D_P)
    law = stats.invgauss(2 * D_P / (X0_P * v), scale=shape)
    check_p(
        "drifted half-line vs inverse Gaussian KS",
        stats.kstest(result.time, law.cdf).pvalue,
        box,
    )
    mean, se = mean_and_se(result.time)
    check_z("drifted half-line mean first-passage time", mean, X0_P / v, se, box)


@pytest.mark.parametrize("drift", [(0.0, 0.0), (0.7, -0.4)], ids=["no-drift", "drift"])
def test_free_motion_mean_and_variance(drift: tuple[float, float]) -> None:
    start = (0.3, -1.2)
    box = free_space(start, drift, diffusivity=D_P, dt=0.01, n_steps=50)
    n = 100_000
    result = run(box, n, stream(70 + int(drift != (0.0, 0.0))))
    assert np.all(result.wall == -1)
    t = box.horizon
    for axis in range(2):
        x = result.final[:, axis]
        # E X(t) = x0 + mu t, Var X(t) = 2 D t: Karlin & Taylor (1975) Ch. 7 [from
        # memory]; analytic.md A2. Variance SE for Gaussian data: var * sqrt(2/(n-1)).
        mean, se = mean_and_se(x)
        check_z(f"axis {axis} mean", mean, start[axis] + drift[axis] * t, se, box)
        variance = 2 * D_P * t
        check_z(
            f"axis {axis} variance", float(x.var(ddof=1)), variance,
            variance * math.sqrt(2.0 / (n - 1)), box,
        )  # fmt: skip
        # Gaussian law: scipy.stats.norm; analytic.md A1.
        law = stats.norm(start[axis] + drift[axis] * t, math.sqrt(variance))
        check_p(f"axis {axis} normal KS", stats.kstest(x, law.cdf).pvalue, box)


def test_free_motion_covariance_at_two_times() -> None:
    start, drift = (0.3, -1.2), (0.5, -0.2)
    dt, n = 0.01, 5000
    first = free_space(start, drift, diffusivity=D_P, dt=dt, n_steps=30)
    state = stream(8)  # each call continues the stream where the last one stopped
    at_t1 = run(first, n, state).final
    # Continue each walker from its own X(t1): the kernel takes one start point.
    at_t2 = np.empty_like(at_t1)
    for i in range(n):
        more = replace(first, start=tuple(at_t1[i]), n_steps=50)
        at_t2[i] = run(more, 1, state).final[0]
    t1, t2 = first.horizon, first.horizon + 50 * dt
    context = f"t1 {t1}, t2 {t2}, {asdict(first)}"
    # Cov[X_i(s), X_j(t)] = 2 D min(s, t) delta_ij, whatever the drift: Karlin & Taylor
    # (1975) Ch. 7 [from memory]; analytic.md A2. Centred on the exact means; the SE
    # of a mean of products is the sample std of the products over sqrt(n).
    centred_1 = at_t1 - (np.array(start) + np.array(drift) * t1)
    centred_2 = at_t2 - (np.array(start) + np.array(drift) * t2)
    for i in range(2):
        for j in range(2):
            product = centred_1[:, i] * centred_2[:, j]
            mean, se = mean_and_se(product)
            exact = 2 * D_P * min(t1, t2) if i == j else 0.0
            check_z(f"Cov[X_{i}(t1), X_{j}(t2)]", mean, exact, se, context)


# --------------------------------------------------------------------------- reflection


@pytest.mark.parametrize(
    "box",
    [
        interval(0.2, 1.0, False, False, diffusivity=0.8, dt=0.05, n_steps=100,
                 bridge=True, drift=1.3, survival_times=(0.5, 2.5, 5.0)),
        replace(
            RECTANGLE_MIXED_DRIFT, absorbing_lower=(False, False),
            absorbing_upper=(False, False), dt=0.2,
        ),
    ],
    ids=["interval-RR-drift", "rectangle-reflecting-drift"],
)  # fmt: skip
def test_reflecting_box_conserves_walkers(box: Domain) -> None:
    n = 5000
    result = run(box, n, stream(9))
    np.testing.assert_array_equal(result.wall, np.full(n, -1))
    assert np.all(np.isnan(result.time))
    assert np.all(np.isnan(result.position))
    np.testing.assert_array_equal(result.survival, np.full(len(box.survival_times), n))
    assert np.all((result.final >= box.lower) & (result.final <= box.upper))
    assert result.steps == n * box.n_steps


# --------------------------------------------------------------------------- edge cases


@pytest.mark.parametrize("seed", range(5))
@pytest.mark.parametrize(
    "box", [INTERVAL_AA, RECTANGLE_MIXED_DRIFT], ids=["interval", "rectangle"]
)
def test_simulate_one_walker(box: Domain, seed: int) -> None:
    result = run(box, 1, stream(seed))
    t = result.time[0]
    if result.wall[0] >= 0:
        assert 0.0 < t <= box.horizon
        # Absorbed during its last step: t = (step - 1 + fraction) dt.
        assert (result.steps - 1) * box.dt <= t <= result.steps * box.dt
        assert np.all(np.isnan(result.final))
        expected = [int(t > s) for s in box.survival_times]
    else:
        assert math.isnan(t)
        assert result.steps == box.n_steps
        assert np.all((result.final >= box.lower) & (result.final <= box.upper))
        expected = [1] * len(box.survival_times)
    np.testing.assert_array_equal(result.survival, expected)


@pytest.mark.parametrize(
    "mu", [0.0, -3.0, 2.0], ids=["no-drift", "drift-toward", "drift-away"]
)
@pytest.mark.parametrize("bridge", [True, False], ids=["bridge", "no-bridge"])
def test_simulate_single_step(bridge: bool, mu: float) -> None:
    x0, diffusivity, dt, n = 0.1, 0.5, 0.02, 100_000
    box = Domain(
        start=(x0,), lower=(0.0,), upper=(math.inf,), absorbing_lower=(True,),
        absorbing_upper=(False,), diffusivity=diffusivity, drift=(mu,), dt=dt,
        n_steps=1, bridge=bridge, survival_times=(dt / 2, dt),
    )  # fmt: skip
    result = run(box, n, stream(10 + int(mu)))
    assert result.steps == n
    absorbed = result.wall == 0
    assert np.all(result.time[absorbed] <= dt)
    sigma = math.sqrt(2 * diffusivity * dt)
    if bridge:
        # The bridge test plus the in-step hitting time make one step exact: the
        # probability of touching 0 within dt is 1 - S(dt), and the hitting time has
        # the law of T given T <= dt (reflection principle for mu = 0, Karatzas &
        # Shreve (1991) Sec. 2.8 [from memory]; analytic.md B1, B2, F4, F6).
        probability = float(1.0 - half_line_survival(dt, x0, diffusivity, mu))

        def cdf(t: NDArray[np.float64]) -> Any:
            return (1.0 - half_line_survival(t, x0, diffusivity, mu)) / probability

        p = stats.kstest(result.time[absorbed], cdf).pvalue
        check_p("in-step hitting time KS", p, box)
        # The survival count at dt/2 is the same law at an off-grid time.
        check_proportion(
            "survival at dt/2", int(result.survival[0]), n,
            float(half_line_survival(dt / 2, x0, diffusivity, mu)), box,
        )  # fmt: skip
    else:
        # Only the step end is tested: P(x0 + mu dt + sigma xi <= 0), scipy.stats.norm.
        probability = float(stats.norm.cdf((-x0 - mu * dt) / sigma))
        assert np.all(result.time[absorbed] == dt)
    check_proportion("absorbed in one step", int(absorbed.sum()), n, probability, box)


@njit(nogil=True)
def hit_fractions(
    state: NDArray[np.uint64],
    n: int,
    alpha: float,
    gamma: float,
    diffusivity: float,
    h: float,
) -> NDArray[np.float64]:
    """``n`` draws of the kernel's ``_hit_fraction`` (bridge on) from ``state``."""
    rs = _random_state(state)  # the kernel's form of the stream
    out = np.empty(n)
    for i in range(n):
        out[i], rs = _hit_fraction(rs, alpha, gamma, diffusivity, h, True)
    return out


@pytest.mark.parametrize(
    ("x2", "case"),
    [(0.9, "end-inside"), (1.05, "end-beyond"), (1.0, "end-on-wall")],
    ids=["end-inside", "end-beyond", "end-on-wall"],
)
def test_hit_fraction_law(x2: float, case: str) -> None:
    # Wall at a = 1, step from x1 = 0.8 over h = 0.05 with D = 0.8 (analytic.md F6
    # check configuration). Given a crossing, P(tau <= s) = F_IG(h s / (h - s)) with
    # IG(mean h alpha / gamma, shape alpha^2 / (2D)), scipy.stats.invgauss; Levy
    # (scipy.stats.levy) when gamma = 0. analytic.md F6 [derived]; time change of the
    # bridge: Karatzas & Shreve (1991) Sec. 5.6.B [from memory].
    a, x1, diffusivity, h, n = 1.0, 0.8, 0.8, 0.05, 20_000
    alpha, gamma = a - x1, abs(a - x2)
    shape = alpha**2 / (2 * diffusivity)
    fractions = hit_fractions(stream(14), n, alpha, gamma, diffusivity, h)
    assert np.all((fractions > 0.0) & (fractions < 1.0))
    if gamma > 0.0:
        law = stats.invgauss((h * alpha / gamma) / shape, scale=shape)
    else:
        law = stats.levy(scale=shape)
    p = stats.kstest(fractions * h, lambda s: law.cdf(h * s / (h - s))).pvalue
    check_p(f"hit fraction law, {case}", p, x2)
    if case == "end-inside":
        # analytic.md F6 check value: P(tau <= h/2 | cross) = 0.599948730275.
        below_half = int(np.count_nonzero(fractions <= 0.5))
        check_proportion("P(tau <= h/2)", below_half, n, 0.599948730275, x2)


@pytest.mark.parametrize("bridge", [True, False], ids=["bridge", "no-bridge"])
def test_simulate_start_next_to_absorbing_wall(bridge: bool) -> None:
    diffusivity, dt, x0, n = 1.0, 1e-4, 1e-5, 20_000
    box = interval(
        x0, 1.0, True, True, diffusivity=diffusivity, dt=dt, n_steps=5, bridge=bridge,
        survival_times=(dt,),
    )  # fmt: skip
    result = run(box, n, stream(11))
    first_step = int(n - result.survival[0])
    sigma = math.sqrt(2 * diffusivity * dt)
    if bridge:
        # Reflection principle, as in test_simulate_single_step; analytic.md B1.
        probability = float(special.erfc(x0 / math.sqrt(4 * diffusivity * dt)))
    else:
        probability = float(stats.norm.cdf(-x0 / sigma))  # scipy.stats.norm
    check_proportion("absorbed on the first step", first_step, n, probability, box)
    assert np.all(result.wall[result.wall >= 0] == 0)
    assert np.all(result.position[result.wall == 0, 0] == 0.0)


@pytest.mark.parametrize(
    "box",
    [
        interval(5e-4, 1e-3, False, False, diffusivity=1.0, dt=1.0, n_steps=3,
                 bridge=True, drift=0.3, survival_times=(1.0, 3.0)),
        Domain(
            start=(2e-4, 1e-3), lower=(0.0, 0.0), upper=(1e-3, 2e-3),
            absorbing_lower=(False, False), absorbing_upper=(False, False),
            diffusivity=1.0, drift=(0.0, -0.5), dt=1.0, n_steps=3, bridge=False,
            survival_times=(1.0, 3.0),
        ),
    ],
    ids=["interval", "rectangle"],
)  # fmt: skip
def test_narrow_reflecting_box_huge_steps_keeps_walkers_inside(box: Domain) -> None:
    # sqrt(2 D dt) is ~1400 box widths: each step folds many times.
    n = 2000
    result = run(box, n, stream(12))
    np.testing.assert_array_equal(result.wall, np.full(n, -1))
    np.testing.assert_array_equal(result.survival, np.full(2, n))
    assert np.all((result.final >= box.lower) & (result.final <= box.upper))
    for axis in range(len(box.start)):
        # After exp(-pi^2 D t / L^2) ~ 0 the folded density is uniform (scipy.stats
        # .uniform): analytic.md C4 (relaxation time L^2 / (pi^2 D)) and G1.
        width = box.upper[axis] - box.lower[axis]
        law = stats.uniform(box.lower[axis], width)
        check_p(
            f"axis {axis} uniform KS",
            stats.kstest(result.final[:, axis], law.cdf).pvalue,
            box,
        )


def test_band_is_where_every_face_test_fails() -> None:
    # The step loop skips its box-face tests for steps that start and end inside
    # _band's [lo, hi]; that is exact only if each test, computed as the loop computes
    # it, fails for every such step: no fold (rl <= y <= rh) and every absorbing
    # face's product above the cut. Checked at the band's ends (the worst case) and
    # inside, for faces near 0, far from 0 (coarse doubles) and absent.
    rng = np.random.default_rng(3)
    inf = math.inf
    checked = 0
    for _ in range(400):
        a = rng.choice([0.0, -1.7, 1e9 * rng.uniform(), 3e-300]) + rng.uniform(-1, 1)
        width = rng.choice([1e-3, 1.0, 50.0]) * rng.uniform(0.5, 2.0)
        cut = rng.choice([0.0, 20.0 * rng.uniform(1e-8, 1e-2)])
        lower_absorbing, upper_absorbing = rng.integers(0, 3, size=2)
        al, rl = (a, -inf) if lower_absorbing == 1 else (-inf, a)
        if lower_absorbing == 2:  # no face
            al, rl = -inf, -inf
        ah, rh = (a + width, inf) if upper_absorbing == 1 else (inf, a + width)
        if upper_absorbing == 2:
            ah, rh = inf, inf
        lo, hi = _band(rl, rh, al, ah, cut)
        if not lo <= hi or not (math.isfinite(lo) and math.isfinite(hi)):
            continue
        points = [lo, np.nextafter(lo, inf), hi, np.nextafter(hi, -inf)]
        points += list(rng.uniform(lo, hi, size=6))
        for x in points:
            for y in points:
                if not (lo <= x <= hi and lo <= y <= hi):
                    continue
                assert rl <= y <= rh, (rl, rh, y)
                assert (x - al) * (y - al) > cut, (al, cut, x, y)
                assert (x - ah) * (y - ah) > cut, (ah, cut, x, y)
                checked += 1
    assert checked > 10_000, checked


def test_normal_bound_exceeds_every_normal_drawn() -> None:
    # NORMAL_BOUND must exceed every |z| the ziggurat (kernels/rng.py) can return: the
    # candidates of its layers are below wi_double[0] 2^52 (layer 0, the widest), and
    # its tail returns r + xx, xx = -log1p(-u) / r, largest for the largest uniform
    # u = 1 - 2^-53 (numpy's 53-bit doubles).
    tail = ziggurat_nor_r - ziggurat_nor_inv_r * math.log1p(-(1.0 - 2.0**-53))
    assert tail < NORMAL_BOUND, tail
    assert float(np.max(wi_double)) * 2.0**52 < NORMAL_BOUND


@pytest.mark.parametrize("dim", [1, 2, 3])
def test_mirror_only_steps_identical_to_band_and_fold(
    dim: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    # In a box whose faces all reflect and whose steps are all shorter than half its
    # width, the loop takes the mirror image on every step without the band's tests
    # (short_mirror in kernels/step.py), exact only because no step can overshoot the
    # opposite face. The compiled loop takes that path; its uncompiled copy, with
    # NORMAL_BOUND so high that no box qualifies, the band and _fold: they must agree
    # to the last bit, stream included. Starts next to faces, so walkers fold often.
    box = Domain(
        start=(0.03, 1.17, 0.5)[:dim], lower=(0.0,) * dim,
        upper=(1.0, 1.2, 1.5)[:dim], absorbing_lower=(False,) * dim,
        absorbing_upper=(False,) * dim, diffusivity=0.5, drift=(0.3, -0.2, 0.1)[:dim],
        dt=1e-3, n_steps=200, bridge=True, survival_times=(0.05, 0.2),
        target_centers=((0.5,) * dim,), target_radii=(0.2,),
    )  # fmt: skip
    sigma = math.sqrt(2.0 * box.diffusivity * box.dt)
    for axis in range(dim):
        bound = abs(box.drift[axis]) * box.dt + sigma * NORMAL_BOUND
        assert 2.0 * bound < box.upper[axis] - box.lower[axis], "not a short-step box"
    compiled_state = stream(41)
    python_state = stream(41)
    compiled = run(box, 20, compiled_state)
    monkeypatch.setattr(_loops, "NORMAL_BOUND", math.inf)
    python = run(box, 20, python_state, kernel=uncompiled_loop(box))
    assert_runs_identical(compiled, python)
    np.testing.assert_array_equal(compiled_state, python_state)
    assert np.any(compiled.wall >= 0)
