"""Core estimators shared by every statistic: normal and Wilson intervals, z-scores,
binned densities, and the layout of a result Dataset.

Every result of :mod:`sweep.stats` is an :class:`xarray.Dataset` with ``estimate``,
``stderr``, ``lower`` and ``upper`` (a two-sided interval at ``level``) and ``n`` (the
sample size behind it), along ``point`` and the statistic's own dimensions, with the
point coordinates (swept parameters) of the input. Nothing here reads a store.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Hashable
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import NDArray
from scipy import special

from sweep.errors import SweepWarning
from sweep.precision import wilson_halfwidth
from sweep.stats.validate import check_level

#: Default confidence level of every interval.
LEVEL = 0.95

#: Bins of :func:`~sweep.stats.fpt_density` and
#: :func:`~sweep.stats.exit_position_histogram` when none are given.
DEFAULT_BINS = 50


def z_value(level: float = LEVEL) -> float:
    """Two-sided standard-normal quantile for a confidence ``level`` (0.95 -> 1.96)."""
    check_level(level, "z_value")
    return float(special.ndtri(0.5 + level / 2.0))


def normal_interval(
    estimate: xr.DataArray, stderr: xr.DataArray, n: xr.DataArray, level: float
) -> xr.Dataset:
    """A normal interval ``estimate +- z stderr`` as a result Dataset."""
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


def wilson_interval(successes: Any, n: Any, level: float = LEVEL) -> tuple[Any, Any]:
    """Wilson score interval of a binomial proportion (Wilson 1927, JASA 22:209).

    ``successes`` and ``n`` may be numpy arrays or xarray objects; they broadcast as
    their type does (by dimension name for xarray).

    Returns
    -------
    (lower, upper)
        Of the broadcast shape of ``successes`` and ``n``; always
        ``0 <= lower <= successes / n <= upper <= 1`` (NaN where ``n`` is 0).

    Notes
    -----
    At p = 0 and p = 1 the formula's bound equals p exactly in real arithmetic, but in
    floating point ``centre + half`` can land an ulp below 1 (and ``centre - half`` an
    ulp above 0), so an interval would miss its own estimate; the bounds are therefore
    widened to contain p and clipped to [0, 1].
    """
    check_level(level, "wilson_interval")
    z = z_value(level)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = successes / n
        centre = (p + z * z / (2 * n)) / (1 + z * z / n)
        half = wilson_halfwidth(p, n, z)
        lower = np.clip(np.minimum(centre - half, p), 0.0, 1.0)
        upper = np.clip(np.maximum(centre + half, p), 0.0, 1.0)
    return lower, upper


def zscore(estimate: float, exact: float, stderr: float) -> float:
    """(estimate - exact) / stderr, with 0 for an exact match and inf for se = 0."""
    diff = estimate - exact
    if diff == 0:
        return 0.0
    if stderr <= 0 or not math.isfinite(stderr):
        return math.inf
    return diff / stderr


def binned_density(
    count: NDArray[np.float64], n: NDArray[np.float64], width: Any, level: float
) -> dict[str, Any]:
    """A histogram's density count / (n width), its standard error and its Wilson
    interval divided by the bin width, with the counts: the result variables
    ``estimate``, ``stderr``, ``lower``, ``upper`` and ``count``. NaN where ``n`` is
    0; ``count``, ``n`` and ``width`` broadcast together."""
    with np.errstate(divide="ignore", invalid="ignore"):
        n_ok = np.where(n > 0, n, np.nan)
        dens = count / (n_ok * width)
        se = np.sqrt(count * (1.0 - count / n_ok)) / (n_ok * width)
        lower, upper = wilson_interval(count, n_ok, level)
    return {
        "estimate": dens,
        "stderr": se,
        "lower": lower / width,
        "upper": upper / width,
        "count": count,
    }


def finished_walkers(ds: xr.Dataset) -> NDArray[np.float64]:
    """Walkers of finished tasks per point, float64 (point,)."""
    return np.asarray(ds["walkers_done"].values, dtype=np.float64).reshape(-1)


def point_coords(ds: xr.Dataset) -> dict[Hashable, xr.Variable]:
    """The coordinates along ``point`` (point index and swept parameters)."""
    return {k: v.variable for k, v in ds.coords.items() if v.dims == ("point",)}


def result_dataset(
    ds: xr.Dataset,
    dims: tuple[str, ...],
    variables: dict[str, Any],
    coords: dict[Hashable, Any] | None = None,
    attrs: dict[str, Any] | None = None,
) -> xr.Dataset:
    """A result Dataset; arrays of fewer dims than ``dims`` take its leading ones."""
    data = {}
    for name, value in variables.items():
        if isinstance(value, tuple):
            data[name] = value
        else:
            value = np.asarray(value)
            data[name] = (dims[: value.ndim], value)
    # A result variable of a coordinate's name (restricted_mean's ``horizon``)
    # replaces that coordinate.
    along = {k: v for k, v in point_coords(ds).items() if k not in data}
    out = xr.Dataset(data, coords=along)
    if coords:
        out = out.assign_coords(coords)
    out.attrs = dict(attrs or {})
    return out


def warn_censored(censored: NDArray[np.float64], what: str) -> None:
    """Warn that ``what`` when some point has censored walkers (fractions given)."""
    bad = np.isfinite(censored) & (censored > 0)
    if bad.any():
        warnings.warn(
            f"sweep.stats: {int(bad.sum())} of {censored.size} points have walkers "
            f"still free at the horizon (up to {100 * float(np.max(censored[bad])):.3g}%"
            f"); {what}",
            SweepWarning,
            stacklevel=3,
        )
