"""``sweep check`` for points with reactive walls or targets, periodic faces or
obstacles: which closed form of ``sweep.analytic.reactive`` applies to a point, and
the comparisons it gives (the check stage; ``sweep.check`` turns them into rows).

Geometries with a closed form (each a point start without drift unless said):

* a box whose only non-reflecting axis has one reactive face and, opposite, an
  infinite side (survival, analytic reference J1) or a reflecting face (mean
  reaction time, J2); other axes reflecting, periodic or infinite;
* a ball with a reactive wall (mean reaction time);
* a reflecting 3-D ball with one reactive target at its centre (mean, J3);
* free 3-D space (every side infinite) with one reactive target (survival, J4);
* an absorbing ball (d = 2, 3) with one reflecting obstacle at its centre (mean, J5);
* a box whose finite axes are all periodic, with nothing that absorbs: the
  mean-square unwrapped displacement at the horizon, 2 d D t + |μ t|² (drift
  allowed; analytic reference A2).

A reaction is a first passage to its surface: it has the surface's wall index and
name, so splitting, survival and first-passage statistics need nothing new.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from sweep.analytic import reactive as ar
from sweep.spec import PointSpec

_J1 = (
    "half-line with a reactive wall (Carslaw & Jaeger 1959, §2.9, radiation "
    "condition) [from memory]"
)
_J2 = "interval reactive/reflecting, backward equation with Robin condition (derived)"
_BALL = "ball with a reactive wall, backward equation with Robin condition (derived)"
_J3 = "reactive target at the centre of a reflecting ball (derived, reference J3)"
_J4 = (
    "reactive sphere in free 3-D space, radial reduction to J1 (derived); "
    "Collins & Kimball 1949 limit [from memory]"
)
_J5 = "reflecting obstacle at the centre of an absorbing ball (derived, reference J5)"
_MSD = "free motion's mean-square displacement 2dDt + |mu t|^2 (Karlin & Taylor ch. 7) [from memory]"


@dataclass(frozen=True)
class Comparison:
    """One simulated statistic against its exact value (no expected bias)."""

    statistic: str
    simulated: float
    stderr: float
    exact: float
    source: str


def applies(point: PointSpec) -> bool:
    """Whether the point has a surface kind of issue 21 (then this module decides)."""
    return point.domain.has_surface_kinds()


def _no_drift(point: PointSpec) -> bool:
    return all(v == 0.0 for v in point.motion.drift)


def _reactive_axis(point: PointSpec) -> tuple[int, str, float, str] | None:
    """(axis, "lower" | "upper", κ, kind of the opposite side) of a box whose only
    non-reflecting, non-periodic axis has one reactive face, else None."""
    dom = point.domain
    if dom.shape != "box" or dom.targets or dom.obstacles:
        return None
    d = dom.dimension
    low = dom.reactivity_low or (None,) * d
    high = dom.reactivity_high or (None,) * d
    found = [
        i
        for i in range(d)
        if low[i] is not None
        or high[i] is not None
        or dom.absorbing_low[i]
        or dom.absorbing_high[i]
    ]
    if len(found) != 1:
        return None
    i = found[0]
    if dom.absorbing_low[i] or dom.absorbing_high[i]:
        return None
    if (low[i] is None) == (high[i] is None):
        return None
    side, kappa, other = (
        ("lower", low[i], dom.upper[i])
        if low[i] is not None
        else ("upper", high[i], dom.lower[i])
    )
    assert kappa is not None
    return i, side, kappa, "infinite" if math.isinf(other) else "reflecting"


def comparisons(
    point: PointSpec,
    times: np.ndarray,
    survival: np.ndarray,
    n: float,
    mean: tuple[float, float] | None,
    msd: tuple[float, float] | None,
    survival_range: tuple[float, float],
    survival_times: int,
) -> tuple[list[Comparison], str]:
    """The comparisons of one point and, when there are none, why.

    Parameters
    ----------
    times, survival : float arrays (m,)
        The survival grid and the simulated survival fraction on it.
    n : float
        Walkers behind the survival estimate.
    mean : (estimate, stderr) of the mean first-passage time, or None when it is not
        comparable (censored walkers, no per-walker values).
    msd : (estimate, stderr) of the mean-square displacement of walkers free at the
        horizon, or None when not stored.
    """
    m, dom, tm = point.motion, point.domain, point.timing
    if m.start is None and not (any(dom.periodic) and msd is not None):
        return [], "uniform start: no closed form implemented"
    D = m.diffusivity
    axis = _reactive_axis(point)
    if axis is not None and _no_drift(point):
        i, side, kappa, other = axis
        assert m.start is not None
        x0 = m.start[i] - dom.lower[i] if side == "lower" else dom.upper[i] - m.start[i]
        if other == "infinite":
            exact = 1.0 - ar.half_line_reactive_cdf(times, x0, D, kappa)
            return _survival(
                times, survival, n, exact, survival_range, survival_times, _J1
            )
        if kappa == 0.0:
            return [], "reactivity 0: nothing reacts"
        length = dom.upper[i] - dom.lower[i]
        return _mean(mean, ar.interval_reactive_mean(x0, length, D, kappa), _J2)
    kinds = dom.surface_kinds()
    if dom.shape == "ball" and _no_drift(point) and m.start is not None:
        r0 = math.dist(m.start, dom.center)
        if kinds == ["reactive walls"] and not dom.targets:
            kappa = dom.surface_reactivity
            assert kappa is not None
            if kappa == 0.0:
                return [], "reactivity 0: nothing reacts"
            exact = ar.ball_reactive_mean(r0, dom.radius, D, kappa, m.dimension)
            return _mean(mean, exact, _BALL)
        if (
            kinds == ["reactive targets"]
            and m.dimension == 3
            and not dom.surface_absorbing
            and len(dom.targets) == 1
            and tuple(dom.targets[0].center) == tuple(dom.center)
        ):
            t = dom.targets[0]
            assert t.reactivity is not None
            if t.reactivity == 0.0:
                return [], "reactivity 0: nothing reacts"
            exact = ar.centre_target_reactive_mean(
                r0, t.radius, dom.radius, D, t.reactivity
            )
            return _mean(mean, exact, _J3)
        if (
            kinds == ["obstacles"]
            and dom.surface_absorbing
            and m.dimension in (2, 3)
            and len(dom.obstacles) == 1
            and tuple(dom.obstacles[0].center) == tuple(dom.center)
        ):
            a = dom.obstacles[0].radius
            return _mean(
                mean, ar.obstacle_ball_mean(r0, a, dom.radius, D, m.dimension), _J5
            )
    if (
        dom.shape == "box"
        and kinds == ["reactive targets"]
        and m.dimension == 3
        and _no_drift(point)
        and m.start is not None
        and len(dom.targets) == 1
        and not any(math.isfinite(v) for v in dom.lower + dom.upper)
    ):
        t = dom.targets[0]
        assert t.reactivity is not None
        r0 = math.dist(m.start, t.center)
        exact = 1.0 - ar.sphere_reactive_cdf(times, r0, t.radius, D, t.reactivity)
        return _survival(times, survival, n, exact, survival_range, survival_times, _J4)
    if (
        dom.shape == "box"
        and kinds == ["periodic faces"]
        and not any(dom.wall_absorbing())
        and all(
            p or (math.isinf(lo) and math.isinf(hi))
            for p, lo, hi in zip(dom.periodic, dom.lower, dom.upper)
        )
    ):
        if msd is None:
            return [], "periodic box: per-walker displacements not stored"
        horizon = tm.n_steps * tm.dt
        exact = ar.free_msd(horizon, D, m.dimension, m.drift)
        est, se = msd
        return [
            Comparison(
                f"mean-square displacement (t={horizon:.4g})", est, se, exact, _MSD
            )
        ], ""
    return [], (
        f"{', '.join(kinds)}: no closed form implemented for this geometry "
        "(see docs/surfaces.md for the cases sweep check knows)"
    )


def exact_mean(point: PointSpec) -> float | None:
    """The closed-form mean reaction (first-passage) time of a point with these
    surfaces, or None where :func:`comparisons` has none (``sweep plan`` sizes with
    it): the mean rows of :func:`comparisons`, asked with a placeholder estimate."""
    empty = np.empty(0)
    found, _ = comparisons(point, empty, empty, 1.0, (0.0, 1.0), None, (0.0, 1.0), 1)
    means = [c.exact for c in found if c.statistic == "mean first-passage time"]
    return means[0] if means and math.isfinite(means[0]) else None


def _mean(
    mean: tuple[float, float] | None, exact: float, source: str
) -> tuple[list[Comparison], str]:
    if mean is None:
        return [], (
            "the mean is compared only without censored walkers (lengthen time.horizon)"
        )
    est, se = mean
    if not (se > 0 and math.isfinite(se)):
        return [], "fewer than two reactions: no standard error"
    return [Comparison("mean first-passage time", est, se, exact, source)], ""


def _survival(
    times: np.ndarray,
    survival: np.ndarray,
    n: float,
    exact: np.ndarray,
    survival_range: tuple[float, float],
    survival_times: int,
    source: str,
) -> tuple[list[Comparison], str]:
    low, high = survival_range
    inside = np.flatnonzero((exact > low) & (exact < high))
    if inside.size == 0:
        return (
            [],
            f"the exact survival is outside {low:g}-{high:g} at every stored time",
        )
    picks = inside[
        np.unique(np.linspace(0, inside.size - 1, survival_times).round().astype(int))
    ]
    rows = []
    for k in picks:
        s = float(exact[k])
        se = math.sqrt(s * (1 - s) / n)
        rows.append(
            Comparison(
                f"survival S(t={times[k]:.4g})", float(survival[k]), se, s, source
            )
        )
    return rows, ""


def mean_square_displacement(ds) -> tuple[np.ndarray, np.ndarray] | None:  # type: ignore[no-untyped-def]
    """Per point: (mean, standard error) of |displacement|² over the walkers still free
    at the horizon, or None when the store keeps no displacements."""
    if "displacement" not in ds:
        return None
    free = ds["absorbing_wall"] == -1
    sq = (
        (ds["displacement"] ** 2)
        .sum("axis")
        .where(free & ds["first_passage_time"].isnull())
    )
    sq = sq.where(np.isfinite(sq))
    count = sq.count("walker")
    mean = sq.mean("walker")
    se = sq.std("walker", ddof=1) / np.sqrt(count)
    # A point with no walker free at the horizon (a target absorbed them all) has no
    # mean-square displacement: NaN, without dask's 0/0 warning (the threads of a lazy
    # reduction ignore np.errstate, so the warning is filtered here).
    with warnings.catch_warnings():
        warnings.filterwarnings(
            "ignore", "invalid value encountered in divide", RuntimeWarning
        )
        return np.asarray(mean.values, float), np.asarray(se.values, float)
