"""Statistics of stored ensembles, each with its standard error and confidence interval.

Functions take the lazy Dataset of :func:`sweep.open` (or a selection of it) and return
xarray objects; reductions run out of core through dask. Every result is a Dataset with
``estimate``, ``stderr``, ``lower`` and ``upper`` (a two-sided interval at ``level``)
and ``n`` (the sample size behind it).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import xarray as xr
from scipy import special

#: Default confidence level of every interval.
LEVEL = 0.95


def z_value(level: float = LEVEL) -> float:
    """Two-sided standard-normal quantile for a confidence ``level`` (0.95 -> 1.96)."""
    return float(special.ndtri(0.5 + level / 2.0))


def _interval(
    estimate: xr.DataArray, stderr: xr.DataArray, n: xr.DataArray, level: float
) -> xr.Dataset:
    z = z_value(level)
    return xr.Dataset(
        {
            "estimate": estimate,
            "stderr": stderr,
            "lower": estimate - z * stderr,
            "upper": estimate + z * stderr,
            "n": n,
        },
        attrs={"level": level},
    )


def mean_first_passage_time(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Mean first-passage time per point over walkers absorbed before the horizon.

    When walkers are censored this is the mean *conditional on absorption by the
    horizon*, which underestimates the true mean; ``censored`` reports their fraction
    so callers can tell. Stores without per-walker values use the first-passage-time
    histogram: bin midpoints, with the within-bin variance w^2/12 added.

    Returns
    -------
    xarray.Dataset
        ``estimate``, ``stderr`` (sample standard deviation / sqrt(n)), ``lower``,
        ``upper``, ``n`` (absorbed walkers) and ``censored`` (fraction), dims (point,).
    """
    if "first_passage_time" in ds:
        t = ds["first_passage_time"]
        n = t.notnull().sum("walker")
        mean = t.mean("walker", skipna=True)
        sd = t.std("walker", skipna=True, ddof=1)
        out = _interval(mean, sd / np.sqrt(n), n, level)
    else:
        counts = ds["fpt_histogram"].sum("wall").compute()
        width = ds["fpt_bin_width"]
        mid = (
            xr.DataArray(np.arange(counts.sizes["fpt_bin"]), dims="fpt_bin") + 0.5
        ) * width
        n = counts.sum("fpt_bin")
        mean = (counts * mid).sum("fpt_bin") / n
        var = (counts * (mid - mean) ** 2).sum("fpt_bin") / (n - 1) + width**2 / 12
        out = _interval(mean, np.sqrt(var / n), n, level)
    out["censored"] = censored_fraction(ds)
    return out.compute()


def censored_fraction(ds: xr.Dataset) -> xr.DataArray:
    """Fraction of finished walkers still free at the horizon, per point."""
    done = ds["walkers_done"]
    if "first_passage_time" in ds:
        absorbed = ds["first_passage_time"].notnull().sum("walker")
    else:
        absorbed = ds["fpt_histogram"].sum(["wall", "fpt_bin"])
    return (done - absorbed) / done.where(done > 0)


def wilson_interval(successes: Any, n: Any, level: float = LEVEL) -> tuple[Any, Any]:
    """Wilson score interval of a binomial proportion (Wilson 1927, JASA 22:209).

    ``successes`` and ``n`` may be numpy arrays or xarray objects; they broadcast as
    their type does (by dimension name for xarray).

    Returns
    -------
    (lower, upper)
        Of the broadcast shape of ``successes`` and ``n``.
    """
    z = z_value(level)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = successes / n
        centre = (p + z * z / (2 * n)) / (1 + z * z / n)
        half = z / (1 + z * z / n) * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
    return centre - half, centre + half


def splitting_probability(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Fraction of walkers absorbed by each wall or target, with Wilson intervals.

    Returns
    -------
    xarray.Dataset
        dims (point, wall); ``wall`` is labelled by the store's wall names. Censored
        walkers count in ``n`` but at no wall.
    """
    names = list(ds.attrs["wall_names"])
    if "absorbing_wall" in ds:
        wall = ds["absorbing_wall"]
        counts = xr.concat(
            [(wall == i).sum("walker") for i in range(len(names))], dim="wall"
        )
    else:
        counts = ds["fpt_histogram"].sum("fpt_bin")
    counts = counts.assign_coords(wall=names).transpose("point", "wall").compute()
    n = ds["walkers_done"]
    p = counts / n
    lower, upper = wilson_interval(counts, n, level)
    se = np.sqrt(p * (1 - p) / n)
    return xr.Dataset(
        {
            "estimate": p,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "n": n,
            "count": counts,
        },
        attrs={"level": level, "interval": "Wilson score"},
    )


def survival(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Survival S(t) on the stored time grid with pointwise binomial (Wilson) intervals.

    Returns
    -------
    xarray.Dataset
        dims (point, time).
    """
    n = ds["walkers_done"]
    count = ds["survival_count"].compute()
    s = count / n
    se = np.sqrt(s * (1 - s) / n)
    lower, upper = wilson_interval(count, n, level)
    return xr.Dataset(
        {"estimate": s, "stderr": se, "lower": lower, "upper": upper, "n": n},
        attrs={"level": level, "interval": "Wilson score"},
    )


def zscore(estimate: float, exact: float, stderr: float) -> float:
    """(estimate - exact) / stderr, with 0 for an exact match and inf for se = 0."""
    diff = estimate - exact
    if diff == 0:
        return 0.0
    if stderr <= 0 or not math.isfinite(stderr):
        return math.inf
    return diff / stderr
