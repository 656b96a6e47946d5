"""``sweep check``'s comparisons: every stored point against the closed forms that
exist for it.

For each point whose geometry has a closed form (intervals, half-lines, boxes as products
of intervals, absorbing balls, concentric spheres), the simulated statistic with its
standard error is compared with the exact value (survival, mean first-passage time,
splitting probability, and for balls the mean cosine of the exit angle), one
:class:`~sweep.check.verdict.CheckRow` each. Points without an analytic counterpart are
listed with the reason.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import xarray as xr

from sweep import analytic, stats, store
from sweep.check import surfaces, twin
from sweep.check.exact import (
    _absorbing_axis,
    _allowance,
    _exact_splitting,
    _exit_geometry,
    concentric,
    exact_mean,
    exact_survival,
    unsupported,
)
from sweep.check.verdict import Z_PASS, CheckReport, CheckRow
from sweep.spec import PointSpec, Sweep

#: Survival is compared at up to this many grid times where the exact value is
#: between SURVIVAL_RANGE[0] and SURVIVAL_RANGE[1] (where the binomial error is useful).
SURVIVAL_TIMES = 3
SURVIVAL_RANGE = (0.05, 0.95)


def check_store(path: str | Path) -> CheckReport:
    """Compare every point of the store at ``path`` with its analytic results."""
    ds = store.open_dataset(path, verify=True)
    sweep = store.load_sweep(path)
    return check_dataset(ds, sweep, str(path))


def check_dataset(ds: xr.Dataset, sweep: Sweep, name: str = "") -> CheckReport:
    """Like :func:`check_store` for an opened Dataset and its sweep."""
    rows: list[CheckRow] = []
    unchecked: list[tuple[int, str]] = []
    per_walker = "first_passage_time" in ds or "fpt_histogram" in ds
    surv = stats.survival(ds)
    mean = stats.mean_first_passage_time(ds) if per_walker else None
    split = stats.splitting_probability(ds) if per_walker else None
    cosines = exit_cosines(ds, sweep)
    msd = surfaces.mean_square_displacement(ds)
    # Each point's J7 mirror twin (None: the identity does not apply); the points
    # with companion runs share one walker-step budget.
    twins = [twin.mirror_twin(point) for point in sweep.points]
    sharing = sum(
        t is not None and int(ds["walkers_done"][p]) > 0 for p, t in enumerate(twins)
    )
    for p, point in enumerate(sweep.points):
        if int(ds["walkers_done"][p]) == 0:
            unchecked.append((p, "no finished tasks yet"))
            continue
        censored = float(mean["censored"][p]) if mean is not None else math.nan
        if point.force is not None and surfaces.applies(point):
            unchecked.append(
                (
                    p,
                    "no closed form for a force together with reactive or periodic "
                    "surfaces or obstacles",
                )
            )
            continue
        if twins[p] is not None:
            # A centred target in a periodic or reflecting box: no closed form, but
            # identity J7 against a companion run of its mirror twin.
            found, why = twin.consistency_rows(
                p, point, twins[p], sweep, ds, SURVIVAL_RANGE, SURVIVAL_TIMES, sharing
            )
            rows += found
            if not found:
                unchecked.append((p, why))
            continue
        if surfaces.applies(point):
            # Reactive, periodic and obstacle surfaces: their own closed forms.
            found, why = _surface_rows(
                p, point, surv.isel(point=p), mean, msd, censored
            )
            rows += found
            if not found:
                unchecked.append((p, why))
            continue
        if point.force is not None:  # the potential's references: sweep/check/force.py
            from sweep.check.force import force_rows

            one = {"point": p}
            found, reason = force_rows(
                p,
                point,
                None if mean is None else mean.isel(one),
                None if split is None else split.isel(one),
                censored,
                ds.isel(one),
            )
            rows += found
            if reason:
                unchecked.append((p, reason))
            continue
        reason = unsupported(point)
        if reason:
            if concentric(point) and split is not None and censored == 0.0:
                rows += _concentric_rows(p, point, split.isel(point=p))
                unchecked.append((p, "survival and mean: " + reason))
            else:
                unchecked.append((p, reason))
            continue
        found = _survival_rows(p, point, surv.isel(point=p))
        if mean is not None and split is not None and censored == 0.0:
            found += _mean_rows(p, point, mean.isel(point=p))
            found += _splitting_rows(p, point, split.isel(point=p))
            if cosines is not None:
                found += _exit_rows(p, point, cosines.isel(point=p))
        if not found:
            unchecked.append((p, _nothing_comparable(point, censored)))
        rows += found
    return CheckReport(
        store=name,
        rows=tuple(rows),
        unchecked=tuple(unchecked),
        # With a precision target only the planned tasks count (sweep.precision).
        tasks_done=int((ds["done"] & ds.get("planned", True)).sum()),
        tasks_total=int(ds["planned"].sum() if "planned" in ds else ds["done"].size),
    )


def _surface_rows(
    p: int,
    point: PointSpec,
    surv: xr.Dataset,
    mean: xr.Dataset | None,
    msd: tuple[np.ndarray, np.ndarray] | None,
    censored: float,
) -> tuple[list[CheckRow], str]:
    """Rows of a point with reactive, periodic or obstacle surfaces
    (:mod:`sweep.check.surfaces`)."""
    m = None
    if mean is not None and censored == 0.0:
        m = (float(mean["estimate"][p]), float(mean["stderr"][p]))
    found, why = surfaces.comparisons(
        point,
        surv["time"].values,
        surv["estimate"].values,
        float(surv["n"]),
        m,
        (float(msd[0][p]), float(msd[1][p])) if msd is not None else None,
        SURVIVAL_RANGE,
        SURVIVAL_TIMES,
    )
    rows = [
        _row(p, c.statistic, c.simulated, c.stderr, c.exact, c.source, 0.0)
        for c in found
    ]
    return rows, why


def _nothing_comparable(point: PointSpec, censored: float) -> str:
    """Why a point with closed forms still gave no comparison."""
    low, high = SURVIVAL_RANGE
    why = f"the exact survival is outside {low:g}-{high:g} at every stored time"
    if censored > 0:
        why += (
            f"; the mean and splitting are compared only without censored walkers "
            f"({censored:.1%} censored: lengthen time.horizon)"
        )
    return why


def _survival_rows(p: int, point: PointSpec, surv: xr.Dataset) -> list[CheckRow]:
    times = surv["time"].values
    try:
        exact = exact_survival(point, times)
    except NotImplementedError:
        return []
    inside = np.flatnonzero((exact > SURVIVAL_RANGE[0]) & (exact < SURVIVAL_RANGE[1]))
    if inside.size == 0:
        return []
    picks = inside[
        np.unique(np.linspace(0, inside.size - 1, SURVIVAL_TIMES).round().astype(int))
    ]
    n = float(surv["n"])
    source = (
        "ball survival series (Carslaw & Jaeger ch. IX; Redner 2001 ch. 6) [from memory]"
        if point.domain.shape == "ball"
        else "product of 1-D survivals: images / eigenfunction series (Redner 2001 ch. 2-3; "
        "Carslaw & Jaeger ch. III) [from memory]"
    )
    rows = []
    for k in picks:
        s_exact = float(exact[k])
        # The binomial standard error at the exact value: stable even when few walkers
        # survive, and what the z-score's null hypothesis implies.
        se = math.sqrt(s_exact * (1 - s_exact) / n)
        s_sim = float(surv["estimate"][k])
        t_k = times[k : k + 1]
        bias = _allowance(
            point, lambda q, t_k=t_k: float(exact_survival(q, t_k)[0]), s_exact
        )
        rows.append(
            _row(p, f"survival S(t={times[k]:.4g})", s_sim, se, s_exact, source, bias)
        )
    return rows


def _row(
    p: int, name: str, sim: float, se: float, exact: float, source: str, bias: float
) -> CheckRow:
    z = stats.zscore(sim, exact, se)
    return CheckRow(p, name, sim, se, exact, z, abs(z) <= Z_PASS, source, bias)


def _mean_rows(p: int, point: PointSpec, mean: xr.Dataset) -> list[CheckRow]:
    try:
        exact = exact_mean(point)
    except NotImplementedError:
        return []
    if not math.isfinite(exact):
        return []
    est, se = float(mean["estimate"]), float(mean["stderr"])
    if not (se > 0 and math.isfinite(se)):
        return []  # fewer than two absorbed walkers: no standard error to judge by
    bias = _allowance(point, exact_mean, exact)
    if point.domain.shape == "ball":
        source = "(R^2 - r0^2) / (2 d D) (Oksendal, Example 7.4.2) [from memory]"
    elif point.motion.dimension == 1:
        source = "interval mean exit time (Redner 2001 ch. 2; Karlin & Taylor 1981 ch. 15) [from memory]"
    else:
        source = "integral of the product of 1-D survivals (quadrature)"
    return [_row(p, "mean first-passage time", est, se, exact, source, bias)]


def _splitting_rows(p: int, point: PointSpec, split: xr.Dataset) -> list[CheckRow]:
    axis = _absorbing_axis(point)
    if axis is None:
        return []
    exact = _exact_splitting(point)
    wall = point.domain.wall_names()[2 * axis + 1]
    est = float(split["estimate"].sel(wall=wall))
    n = float(split["n"])
    se = math.sqrt(exact * (1 - exact) / n)
    bias = _allowance(point, _exact_splitting, exact)
    source = "splitting probability (Redner 2001 ch. 2) [from memory]"
    if point.motion.dimension > 1:
        source += "; axes independent in a box (product rule, analytic reference D)"
    return [_row(p, f"P(absorbed at {wall})", est, se, exact, source, bias)]


def _concentric_rows(p: int, point: PointSpec, split: xr.Dataset) -> list[CheckRow]:
    m, dom = point.motion, point.domain
    assert m.start is not None
    target = dom.targets[0]
    r0 = math.dist(m.start, dom.center)

    def exact_of(q: PointSpec) -> float:
        return analytic.concentric_splitting(
            r0, target.radius, q.domain.radius, m.dimension
        )

    exact = exact_of(point)
    n = float(split["n"])
    est = float(split["estimate"].sel(wall="target_0"))
    se = math.sqrt(exact * (1 - exact) / n)
    # Endpoint monitoring: both spheres move outward (the target inward) by the
    # shift; only the outer one is moved here, like the other closed forms' columns.
    bias = _allowance(point, exact_of, exact)
    source = (
        "concentric absorbing spheres, harmonic in r (analytic reference J6; "
        "Redner 2001 ch. 6) [from memory]"
    )
    return [_row(p, "P(absorbed at target_0)", est, se, exact, source, bias)]


def exit_cosines(ds: xr.Dataset, sweep: Sweep) -> xr.Dataset | None:
    """Per point: count, mean and standard deviation of cos(theta), the exit point's
    angle from the start direction, over absorbed walkers (NaN where
    :func:`_exit_geometry` has none); None when no point qualifies or the store keeps
    no per-walker exit positions. One pass over the stored positions."""
    if "exit_position" not in ds:
        return None
    geometry = [_exit_geometry(point) for point in sweep.points]
    if all(g is None for g in geometry):
        return None
    d = ds.sizes["axis"]
    center = np.full((len(geometry), d), np.nan)
    direction = np.full((len(geometry), d), np.nan)
    radius = np.full(len(geometry), np.nan)
    for p, g in enumerate(geometry):
        if g is not None:
            center[p], direction[p], _, radius[p] = g
    dims = ("point", "axis")
    # cos(theta) = (X_exit - c) . u / R per walker; censored walkers' rows are NaN.
    cosine = (
        (ds["exit_position"] - xr.DataArray(center, dims=dims))
        * xr.DataArray(direction, dims=dims)
    ).sum("axis", skipna=False) / xr.DataArray(radius, dims="point")
    summary = xr.Dataset(
        {
            "n": cosine.count("walker"),
            "mean": cosine.mean("walker"),
            "std": cosine.std("walker", ddof=1),
        }
    )
    return summary.compute()


def _exit_rows(p: int, point: PointSpec, cosines: xr.Dataset) -> list[CheckRow]:
    """Where walkers leave an absorbing ball: the mean cosine of the exit angle
    against the harmonic measure's r0 / R."""
    geometry = _exit_geometry(point)
    n = int(cosines["n"])
    if geometry is None or n < 2:
        return []
    _, _, r0, radius = geometry
    est = float(cosines["mean"])
    se = float(cosines["std"]) / math.sqrt(n)
    exact = analytic.ball_exit_cos_mean(r0, radius)
    bias = _allowance(
        point, lambda q: analytic.ball_exit_cos_mean(r0, q.domain.radius), exact
    )
    source = (
        "harmonic measure of the ball, E[cos theta] = r0/R (Morters & Peres 2010 "
        "ch. 3) [from memory]"
    )
    return [_row(p, "E[cos exit angle]", est, se, exact, source, bias)]
