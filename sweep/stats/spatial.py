"""Spatial statistics: where walkers leave (exit-position densities on a wall) and
where the free ones are (occupancy densities, mean-square displacement).

Each takes the lazy Dataset of :func:`sweep.open` (or a selection of it, one point
included); arguments are checked by :func:`sweep.stats.validate.statistic` before
any data are read. Exit positions are binned chunk by chunk (memory: one chunk of the
store, see :mod:`sweep.stats.absorbed`); occupancy histograms are small and are read
whole.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Hashable
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike
from scipy import stats as scipy_stats

from sweep.stats.absorbed import Absorbed
from sweep.stats.core import (
    DEFAULT_BINS,
    LEVEL,
    binned_density,
    finished_walkers,
    normal_interval,
    result_dataset,
)
from sweep.stats.validate import (
    EXIT_POSITIONS,
    OCCUPANCY,
    START,
    WALKER_WALLS,
    WALKERS,
    statistic,
    wall_index,
)


@statistic(WALKERS, EXIT_POSITIONS, WALKER_WALLS)
def exit_position_histogram(
    ds: xr.Dataset,
    wall: int | str,
    bins: int | ArrayLike | None = None,
    level: float = LEVEL,
    *,
    conditional: bool = False,
) -> xr.Dataset:
    """Density of exit positions on one wall or target, per axis, with binomial errors.

    For each axis, the marginal histogram of the exit coordinate of walkers absorbed
    by ``wall``: count_k / (n w_k). With ``conditional=False`` n is all finished
    walkers, so the density integrates to the splitting probability of the wall (the
    harmonic-measure density of first-passage theory; Redner 2001 ch. 1); with
    ``conditional=True`` n is the walkers absorbed there, so it integrates to 1. A
    coordinate that is constant on the wall (x on x_upper) gives one bin around it.
    Errors: binomial counts, Wilson score intervals (Wilson 1927, JASA 22:209).

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with per-walker ``exit_position`` (point, walker, axis)
        and ``absorbing_wall`` (point, walker).
    wall : int or str
        Wall or target index, or its name from ``ds.attrs["wall_names"]``.
    bins : None, int or array of float
        Number of equal bins between the smallest and largest exit coordinate per
        point and axis (default ``DEFAULT_BINS``), or edges in length units common to
        every point and axis.
    level : float
        Confidence level.
    conditional : bool
        Normalise by the walkers absorbed at ``wall`` instead of all walkers.

    Returns
    -------
    xarray.Dataset
        dims (point, axis, exit_bin): ``estimate`` (1 / length units), ``stderr``,
        ``lower``, ``upper``, ``count``; ``n`` (point,); coordinates ``exit_lower``,
        ``exit_upper``, ``exit_center`` (point, axis, exit_bin).
    """
    index = wall_index(ds, wall, "exit_position_histogram")
    here = ds["absorbing_wall"] == index
    position = ds["exit_position"]
    axes = (
        list(position["axis"].values)
        if "axis" in position.coords
        else list(range(position.sizes["axis"]))
    )
    n_points = ds.sizes["point"]
    at_wall = Absorbed(here.where(here), None, "walker", None)
    n_wall = at_wall.sums(n=lambda v: 1.0)["n"]
    counts, all_edges = [], []
    for a in range(len(axes)):
        values = Absorbed(position.isel(axis=a).where(here), None, "walker", None)
        if bins is None or isinstance(bins, numbers.Integral):
            n_bins = DEFAULT_BINS if bins is None else int(bins)
            lo, hi = values.range()
            empty = ~np.isfinite(lo)
            lo, hi = np.where(empty, 0.0, lo), np.where(empty, 1.0, hi)
            flat = hi <= lo
            lo, hi = np.where(flat, lo - 0.5, lo), np.where(flat, hi + 0.5, hi)
            edges = lo[:, None] + (hi - lo)[:, None] * np.linspace(0, 1, n_bins + 1)
        else:
            edges = np.broadcast_to(
                np.asarray(bins, dtype=np.float64), (n_points, np.size(bins))
            ).copy()
        counts.append(values.binned(edges)[0])
        all_edges.append(edges)
    count = np.stack(counts, axis=1)
    edges = np.stack(all_edges, axis=1)
    width = np.diff(edges, axis=2)
    n = n_wall if conditional else finished_walkers(ds)
    dims = ("point", "axis", "exit_bin")
    return result_dataset(
        ds,
        dims,
        {**binned_density(count, n[:, None, None], width, level), "n": n},
        coords={
            "axis": axes,
            "exit_lower": (dims, edges[..., :-1]),
            "exit_upper": (dims, edges[..., 1:]),
            "exit_center": (dims, 0.5 * (edges[..., :-1] + edges[..., 1:])),
        },
        attrs={
            "level": level,
            "wall": list(ds.attrs.get("wall_names", []))[index]
            if ds.attrs.get("wall_names")
            else index,
            "normalisation": "integrates to 1"
            if conditional
            else "integrates to the splitting probability of the wall",
            "interval": "Wilson score (binomial bin count)",
        },
    )


@statistic(OCCUPANCY, START)
def mean_square_displacement(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Mean-square displacement of the walkers still free at each snapshot time.

    From the occupancy histograms: sum over bins of count x |center - x0|^2 divided by
    the free walkers counted, plus the within-bin variance sum_i w_i^2 / 12 (uniform
    within a bin; W. F. Sheppard, Proc. London Math. Soc. 29, 353 (1898)). Needs a
    point start (``start_position``); walkers outside the histogram's range are not
    counted, so choose the range to cover the free walkers (for free motion the exact
    value is 2 d D t: see :func:`sweep.analytic.free_variance`).

    Returns
    -------
    xarray.Dataset
        dims (point, snapshot): ``estimate`` (length units^2), ``stderr`` (standard
        deviation of the squared displacement / sqrt(n)), ``lower``, ``upper``, ``n``
        (free walkers counted).
    """
    occ = ds["occupancy"]
    bin_dims = [d for d in occ.dims if d not in ("point", "snapshot")]
    occ = occ.transpose("point", "snapshot", *bin_dims).compute()
    count = np.asarray(occ.values, dtype=np.float64)
    lo = np.asarray(ds["occupancy_lower"].transpose("point", ...).values, np.float64)
    hi = np.asarray(ds["occupancy_upper"].transpose("point", ...).values, np.float64)
    start = np.asarray(ds["start_position"].transpose("point", ...).values, np.float64)
    n_points, n_snap = count.shape[:2]
    sizes = [occ.sizes[d] for d in bin_dims]
    estimate = np.full((n_points, n_snap), np.nan)
    stderr = np.full((n_points, n_snap), np.nan)
    n_free = count.reshape(n_points, n_snap, -1).sum(axis=2)
    for p in range(n_points):
        widths = (hi[p] - lo[p]) / np.asarray(sizes)
        grids = np.meshgrid(
            *[
                lo[p, i] + widths[i] * (np.arange(sizes[i]) + 0.5) - start[p, i]
                for i in range(len(sizes))
            ],
            indexing="ij",
        )
        r2 = sum(g**2 for g in grids) + float(np.sum(widths**2)) / 12.0
        for s in range(n_snap):
            c = count[p, s]
            total = c.sum()
            if total < 2:
                continue
            mean = float((c * r2).sum() / total)
            var = float((c * (r2 - mean) ** 2).sum() / (total - 1))
            estimate[p, s] = mean
            stderr[p, s] = math.sqrt(var / total)
    est = xr.DataArray(estimate, dims=("point", "snapshot"))
    se = xr.DataArray(stderr, dims=("point", "snapshot"))
    n = xr.DataArray(n_free, dims=("point", "snapshot"))
    out = normal_interval(est, se, n, level)
    if "snapshot_time" in ds:
        out = out.assign_coords(
            snapshot_time=ds["snapshot_time"].transpose("point", "snapshot")
        )
    return out


@statistic(WALKERS, OCCUPANCY)
def occupancy_density(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Density of free walkers at each snapshot time: counts / (n x bin volume).

    n is all finished walkers, so the density integrates (over the histogram's box)
    to the fraction still free and inside it, i.e. it estimates the propagator
    p(x, t) of the absorbing problem. Bin volume: prod over axes of
    (occupancy_upper - occupancy_lower) / bins. Errors are Poisson: stderr
    sqrt(c) / (n V) and the exact (Garwood) interval chi2_{alpha/2}(2c) / 2 to
    chi2_{1-alpha/2}(2c + 2) / 2 on the count (F. Garwood, Biometrika 28, 437
    (1936)); conservative, and close to binomial when the bin holds a small fraction.

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``occupancy`` (point, snapshot, x_bin, ...),
        ``occupancy_lower`` / ``occupancy_upper`` (point, axis), ``walkers_done``.
    level : float
        Confidence level.

    Returns
    -------
    xarray.Dataset
        dims (point, snapshot, x_bin, ...): ``estimate`` (1 / length units^d),
        ``stderr``, ``lower``, ``upper``, ``count``; ``n`` (point,); coordinates
        ``<axis>_center`` (point, <axis>_bin) and ``snapshot_time`` (point, snapshot)
        when present.
    """
    alpha = 1.0 - level
    occ = ds["occupancy"]
    bin_dims = [d for d in occ.dims if d not in ("point", "snapshot")]
    occ = occ.transpose("point", "snapshot", *bin_dims)
    count = np.asarray(occ.values, dtype=np.float64)
    lo = np.asarray(ds["occupancy_lower"].transpose("point", ...).values, np.float64)
    hi = np.asarray(ds["occupancy_upper"].transpose("point", ...).values, np.float64)
    sizes = np.array([occ.sizes[d] for d in bin_dims], dtype=np.float64)
    widths = (hi - lo) / sizes[None, :]
    volume = np.prod(widths, axis=1)
    n = finished_walkers(ds)
    scale = (n * volume).reshape((-1,) + (1,) * (count.ndim - 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(scale > 0, scale, np.nan)
        dens = count / scale
        se = np.sqrt(count) / scale
        lower = np.where(count > 0, scipy_stats.chi2.ppf(alpha / 2, 2 * count) / 2, 0.0)
        upper = scipy_stats.chi2.ppf(1 - alpha / 2, 2 * count + 2) / 2
    dims = ("point", "snapshot", *bin_dims)
    coords: dict[Hashable, Any] = {}
    for i, d in enumerate(bin_dims):
        centers = lo[:, i : i + 1] + widths[:, i : i + 1] * (
            np.arange(occ.sizes[d]) + 0.5
        )
        coords[f"{str(d).removesuffix('_bin')}_center"] = (("point", d), centers)
    if "snapshot_time" in ds:
        coords["snapshot_time"] = (
            ("point", "snapshot"),
            np.asarray(ds["snapshot_time"].transpose("point", "snapshot").values),
        )
    return result_dataset(
        ds,
        dims,
        {
            "estimate": dens,
            "stderr": se,
            "lower": lower / scale,
            "upper": upper / scale,
            "count": count,
            "n": n,
        },
        coords=coords,
        attrs={"level": level, "interval": "exact Poisson (Garwood 1936)"},
    )
