"""Passage-time statistics: the mean, the censored fraction, splitting probabilities,
the first-passage-time density, its moments and its quantiles.

Each takes the lazy Dataset of :func:`sweep.open` (or a selection of it, one point
included) and works on both store layouts where the data allow: per-walker
``first_passage_time`` / ``absorbing_wall``, read out of core as
:mod:`sweep.stats.absorbed` describes, or the aggregate ``fpt_histogram``. Arguments
are checked by :func:`sweep.stats.validate.statistic` before any data are read.
"""

from __future__ import annotations

import numbers
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray
from scipy import stats as scipy_stats

from sweep.stats.absorbed import Absorbed, absorbed_walkers, recorded_horizon
from sweep.stats.core import (
    DEFAULT_BINS,
    LEVEL,
    binned_density,
    finished_walkers,
    normal_interval,
    result_dataset,
    warn_censored,
    wilson_interval,
    z_value,
)
from sweep.stats.validate import (
    FIRST_PASSAGE,
    WALKERS,
    WALLS,
    statistic,
    wall_index,
)


@statistic(WALKERS, FIRST_PASSAGE)
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
        out = normal_interval(mean, sd / np.sqrt(n), n, level)
    else:
        counts = ds["fpt_histogram"].sum("wall").compute()
        width = ds["fpt_bin_width"]
        mid = (
            xr.DataArray(np.arange(counts.sizes["fpt_bin"]), dims="fpt_bin") + 0.5
        ) * width
        n = counts.sum("fpt_bin")
        mean = (counts * mid).sum("fpt_bin") / n
        var = (counts * (mid - mean) ** 2).sum("fpt_bin") / (n - 1) + width**2 / 12
        out = normal_interval(mean, np.sqrt(var / n), n, level)
    # One absorbed walker has no spread to estimate: its interval is every possible
    # mean, [0, inf), rather than NaN, so it still contains the estimate.
    single = out["n"] == 1
    out["lower"] = out["lower"].where(~single, 0.0)
    out["upper"] = out["upper"].where(~single, np.inf)
    out["censored"] = censored_fraction(ds)
    # A point without finished walkers (a store still running) is NaN by design;
    # the threads of a lazy reduction ignore np.errstate, so its 0/0 warning is
    # filtered here.
    with warnings.catch_warnings():
        warnings.filterwarnings(
            "ignore", "invalid value encountered in divide", RuntimeWarning
        )
        return out.compute()


@statistic(WALKERS, FIRST_PASSAGE)
def censored_fraction(ds: xr.Dataset) -> xr.DataArray:
    """Fraction of finished walkers still free at the horizon, per point."""
    done = ds["walkers_done"]
    if "first_passage_time" in ds:
        absorbed = ds["first_passage_time"].notnull().sum("walker")
    else:
        absorbed = ds["fpt_histogram"].sum(["wall", "fpt_bin"])
    return (done - absorbed) / done.where(done > 0)


@statistic(WALKERS, WALLS)
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


def _fpt_edges(ds: xr.Dataset, absorbed: Absorbed, bins: Any) -> NDArray[np.float64]:
    """Bin edges per point, (point, bins + 1), snapped to stored bins if aggregated."""
    n_points = ds.sizes["point"]
    if bins is not None and not isinstance(bins, numbers.Integral):
        edges = np.asarray(bins, dtype=np.float64)
        if edges.ndim == 1:
            edges = np.broadcast_to(edges, (n_points, edges.size)).copy()
        if edges.ndim != 2 or edges.shape[0] != n_points or edges.shape[1] < 2:
            raise ValueError(
                "sweep.stats.fpt_density: bins must be None, an int, 1-D edges or "
                f"(point, edges); got an array of shape {np.shape(bins)}."
            )
    else:
        n_bins = DEFAULT_BINS if bins is None else int(bins)
        if absorbed.width is not None and bins is None:
            native = absorbed.values.sizes["fpt_bin"]
            return np.arange(native + 1)[None, :] * absorbed.width[:, None]
        if n_bins < 1:
            raise ValueError(f"sweep.stats.fpt_density: bins must be >= 1; got {bins}.")
        top = recorded_horizon(ds)
        if top is None:
            top = absorbed.range()[1]
        top = np.where(np.isfinite(top) & (top > 0), top, 1.0)
        edges = np.linspace(0.0, 1.0, n_bins + 1)[None, :] * top[:, None]
    if absorbed.width is not None:
        # Re-binning the stored histogram: move each edge to the nearest stored bin
        # boundary, so every stored bin falls wholly in one new bin and the reported
        # edges are exactly those of the counts.
        native = absorbed.values.sizes["fpt_bin"]
        w = absorbed.width[:, None]
        edges = np.clip(np.round(edges / w), 0, native) * w
    if not np.all(np.diff(edges, axis=1) > 0):
        raise ValueError(
            "sweep.stats.fpt_density: bin edges must increase strictly (after snapping "
            "to the stored fpt bins, whose width is "
            f"{None if absorbed.width is None else absorbed.width.tolist()}); "
            "use fewer or wider bins."
        )
    return edges


@statistic(WALKERS, FIRST_PASSAGE)
def fpt_density(
    ds: xr.Dataset,
    bins: int | ArrayLike | None = None,
    level: float = LEVEL,
    *,
    wall: int | str | None = None,
) -> xr.Dataset:
    """Histogram estimate of the first-passage-time density, with binomial intervals.

    The density of the *defective* distribution: count_k / (n w_k) with n all finished
    walkers (censored ones included), so it integrates to the absorbed fraction (to
    the splitting probability of ``wall`` if one is given). The count of a bin is
    Binomial(n, p_k); ``stderr`` is sqrt(c (1 - c / n)) / (n w_k) and the interval is
    the Wilson score interval of p_k divided by w_k (Wilson 1927, JASA 22:209).
    The interval covers the bin average of the density, p_k / w_k.

    Per-walker stores are binned chunk by chunk (memory: one chunk of the store; see
    :mod:`sweep.stats.absorbed`). Aggregate-only stores re-bin
    the stored ``fpt_histogram``: requested edges are moved to the nearest stored bin
    boundary (the returned edges are the moved ones, so the counts are exact for
    them).

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``first_passage_time`` (point, walker) [and
        ``absorbing_wall``] or ``fpt_histogram`` (point, wall, fpt_bin).
    bins : None, int or array of float
        None: the stored bins of an aggregate store, else ``DEFAULT_BINS`` bins. An
        int: that many equal bins on [0, horizon] (or [0, largest time] when the
        Dataset does not record the horizon). Edges, in time units: shape (edges,)
        for every point, or (point, edges).
    level : float
        Confidence level of the intervals.
    wall : int or str, optional
        Only walkers absorbed by this wall or target (index or name).

    Returns
    -------
    xarray.Dataset
        dims (point, fpt_bin): ``estimate`` (1 / time units), ``stderr``, ``lower``,
        ``upper``, ``count`` (walkers in the bin), ``n`` (point,); coordinates
        ``fpt_lower``, ``fpt_upper``, ``fpt_center``, ``fpt_width`` (point, fpt_bin).
    """
    index = None if wall is None else wall_index(ds, wall, "fpt_density")
    absorbed = absorbed_walkers(ds, index)
    edges = _fpt_edges(ds, absorbed, bins)
    counts, _ = absorbed.binned(edges)
    n = finished_walkers(ds)[:, None]
    width = np.diff(edges, axis=1)
    dims = ("point", "fpt_bin")
    return result_dataset(
        ds,
        dims,
        {**binned_density(counts, n, width, level), "n": n[:, 0]},
        coords={
            "fpt_lower": (dims, edges[:, :-1]),
            "fpt_upper": (dims, edges[:, 1:]),
            "fpt_center": (dims, 0.5 * (edges[:, :-1] + edges[:, 1:])),
            "fpt_width": (dims, width),
        },
        attrs={
            "level": level,
            "interval": "Wilson score (binomial bin count)",
            "normalisation": "integrates to the absorbed fraction"
            + ("" if wall is None else f" at wall {wall!r}"),
        },
    )


@statistic(WALKERS, FIRST_PASSAGE)
def fpt_moments(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Mean, variance and standard deviation of the first-passage time, with errors.

    Over absorbed walkers only; when walkers are censored these are moments of T
    conditional on T <= horizon (they underestimate the true ones) and a
    :class:`~sweep.errors.SweepWarning` is issued; see :func:`restricted_mean` and
    :func:`tail_fit` for estimates that account for the censored walkers.

    Standard errors: s / sqrt(n) for the mean; for the sample variance s^2 the
    standard formula Var(s^2) = (mu_4 - sigma^4 (n - 3) / (n - 1)) / n with the
    sample fourth central moment (e.g. Kendall & Stuart, *The Advanced Theory of
    Statistics* vol. 1, sampling moments of the variance); for s the delta method,
    se(s) = se(s^2) / (2 s). Intervals are normal (estimate +- z se), asymptotic: the
    variance's interval undercovers for small samples of heavy-tailed times.

    Central moments use two passes over the data (mean first), avoiding the
    cancellation of raw power sums. Aggregate-only stores use bin midpoints with
    Sheppard's corrections (W. F. Sheppard, Proc. London Math. Soc. 29, 353 (1898)):
    mu_2 -= w^2/12, mu_4 -= w^2 mu_2 / 2 - 7 w^4 / 240.

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with per-walker ``first_passage_time`` or
        ``fpt_histogram``.
    level : float
        Confidence level of the intervals.

    Returns
    -------
    xarray.Dataset
        dims (point, moment) with ``moment`` = ["mean", "variance", "std"] (time units,
        time units^2, time units): ``estimate``, ``stderr``, ``lower``, ``upper``;
        and (point,) ``n`` (absorbed walkers) and ``censored`` (fraction of all
        finished walkers).
    """
    absorbed = absorbed_walkers(ds)
    first = absorbed.sums(n=lambda v: 1.0, s1=lambda v: v)
    n_abs = first["n"]
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = first["s1"] / np.where(n_abs > 0, n_abs, np.nan)
    m = xr.DataArray(np.nan_to_num(mean), dims="point")
    second = absorbed.sums(s2=lambda v: (v - m) ** 2, s4=lambda v: (v - m) ** 4)
    n = finished_walkers(ds)
    with np.errstate(divide="ignore", invalid="ignore"):
        m2 = second["s2"] / n_abs
        m4 = second["s4"] / n_abs
        if absorbed.width is not None:
            w2 = absorbed.width**2
            m4 = m4 - 0.5 * w2 * m2 + 7.0 / 240.0 * w2**2
            m2 = m2 - w2 / 12.0
            grouped_var = second["s2"] / (n_abs - 1)
        var = m2 * n_abs / (n_abs - 1)
        if absorbed.width is None:
            grouped_var = var
        se_mean = np.sqrt(grouped_var / n_abs)
        se_var = np.sqrt(np.maximum(m4 - var**2 * (n_abs - 3) / (n_abs - 1), 0) / n_abs)
        sd = np.sqrt(var)
        se_sd = se_var / (2.0 * sd)
        censored = (n - n_abs) / np.where(n > 0, n, np.nan)
    warn_censored(
        censored,
        "fpt_moments are over absorbed walkers only (conditional on T <= horizon) and "
        "underestimate the true moments; see restricted_mean and tail_fit.",
    )
    est = np.stack([mean, var, sd], axis=1)
    se = np.stack([se_mean, se_var, se_sd], axis=1)
    z = z_value(level)
    return result_dataset(
        ds,
        ("point", "moment"),
        {
            "estimate": est,
            "stderr": se,
            "lower": est - z * se,
            "upper": est + z * se,
            "n": n_abs,
            "censored": censored,
        },
        coords={"moment": ["mean", "variance", "std"]},
        attrs={"level": level, "interval": "normal (asymptotic)"},
    )


def _order_statistic(
    sorted_times: NDArray[np.float64], k: NDArray[np.int64], beyond: float = np.inf
) -> NDArray[np.float64]:
    """The k-th smallest of the walkers (1-based): 0 below 1, ``beyond`` if censored."""
    out = np.full(k.shape, beyond)
    inside = (k >= 1) & (k <= sorted_times.size)
    out[inside] = sorted_times[k[inside] - 1]
    out[k < 1] = 0.0
    return out


def _histogram_order_statistic(
    counts: NDArray[np.float64], width: float, k: NDArray[np.int64]
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Bin of the k-th smallest walker: (lower edge, interpolated value, upper edge)."""
    cum = np.cumsum(counts)
    b = np.searchsorted(cum, k, side="left")
    inside = (k >= 1) & (b < counts.size)
    lo, mid, hi = (np.full(k.shape, np.inf) for _ in range(3))
    lo[k > cum[-1]] = counts.size * width  # censored: beyond the histogram's span
    bb = b[inside]
    before = cum[bb] - counts[bb]
    lo[inside] = bb * width
    hi[inside] = (bb + 1) * width
    mid[inside] = (bb + (k[inside] - before - 0.5) / counts[bb]) * width
    for arr in (lo, mid, hi):
        arr[k < 1] = 0.0
    return lo, mid, hi


@statistic(WALKERS, FIRST_PASSAGE)
def fpt_quantiles(
    ds: xr.Dataset,
    q: float | Sequence[float] = (0.25, 0.5, 0.75),
    level: float = LEVEL,
) -> xr.Dataset:
    """Quantiles (median by default) of the first-passage time over *all* walkers.

    Censored walkers count as T = +inf, so the q-quantile is a property of the whole
    (defective) distribution: it is NaN when q > 1 - censored fraction (the quantile
    lies beyond the horizon).

    Estimate: the order statistic X_(ceil(n q)), the inverse of the empirical
    distribution function (R. J. Hyndman & Y. Fan, Am. Stat. 50, 361 (1996), type 1).
    Interval: the distribution-free order-statistic interval [X_(l), X_(u)] with
    l = B^-1(alpha/2) and u = B^-1(1 - alpha/2) + 1 for B ~ Binomial(n, q), whose
    coverage is at least ``level`` for any continuous distribution (W. R. Thompson,
    Ann. Math. Statist. 7, 122 (1936); W. J. Conover, *Practical Nonparametric
    Statistics* (1999) sec. 3.2). ``lower`` is 0 when l < 1 (T >= 0) and ``upper``
    is +inf when X_(u) is censored or u > n. ``stderr`` is (upper - lower) / (2 z),
    the order-statistic standard error of J. W. McKean & R. M. Schrader, Commun.
    Stat. Simul. Comput. 13, 751 (1984).

    Memory: quantiles need exactly sorted data, so per-walker stores are read **one
    point at a time**, holding that point's times (walkers x 8 bytes) in memory.
    Aggregate-only stores use the histogram: the estimate interpolates linearly in
    the bin of X_(ceil(n q)), the interval runs from the lower edge of the bin of
    X_(l) to the upper edge of the bin of X_(u) (exact bounds for binned data).

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``first_passage_time`` or ``fpt_histogram``.
    q : float or sequence of float
        Probabilities in (0, 1).
    level : float
        Confidence level of the intervals.

    Returns
    -------
    xarray.Dataset
        dims (point, quantile) in time units (the ``quantile`` dimension is dropped
        for a scalar ``q``): ``estimate``, ``stderr``, ``lower``, ``upper``; (point,)
        ``n`` (walkers) and ``censored`` (fraction).
    """
    alpha = 1.0 - level
    qs = np.atleast_1d(np.asarray(q, dtype=np.float64))
    if qs.ndim != 1 or not np.all((qs > 0) & (qs < 1)):
        raise ValueError(
            f"sweep.stats.fpt_quantiles: q must be probabilities in (0, 1); got {q!r}."
        )
    n_all = finished_walkers(ds).astype(np.int64)
    shape = (n_all.size, qs.size)
    est, lower, upper = (np.full(shape, np.nan) for _ in range(3))
    censored = np.full(n_all.size, np.nan)
    absorbed = absorbed_walkers(ds)
    for p, n in enumerate(n_all):
        if n == 0:
            continue
        k = np.maximum(np.ceil(np.round(n * qs, 9)).astype(np.int64), 1)
        lo_rank = scipy_stats.binom.ppf(alpha / 2, n, qs).astype(np.int64)
        hi_rank = scipy_stats.binom.ppf(1 - alpha / 2, n, qs).astype(np.int64) + 1
        if absorbed.weights is None:
            row = np.asarray(absorbed.values.isel(point=p).values, dtype=np.float64)
            times = np.sort(row[np.isfinite(row)])
            censored[p] = (n - times.size) / n
            est[p] = _order_statistic(times, k)
            # A censored X_(l) exceeds every absorbed time: that is a valid bound.
            last = float(times[-1]) if times.size else 0.0
            lower[p] = _order_statistic(times, lo_rank, beyond=last)
            upper[p] = _order_statistic(times, hi_rank)
        else:
            counts = np.asarray(absorbed.weights.values[p], dtype=np.float64)
            censored[p] = (n - counts.sum()) / n
            assert absorbed.width is not None
            w = float(absorbed.width[p])
            est[p] = _histogram_order_statistic(counts, w, k)[1]
            lower[p] = _histogram_order_statistic(counts, w, lo_rank)[0]
            upper[p] = _histogram_order_statistic(counts, w, hi_rank)[2]
    est[~np.isfinite(est)] = np.nan
    with np.errstate(invalid="ignore"):
        se = (upper - lower) / (2.0 * z_value(level))
    out = result_dataset(
        ds,
        ("point", "quantile"),
        {
            "estimate": est,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "n": n_all,
            "censored": censored,
        },
        coords={"quantile": qs},
        attrs={"level": level, "interval": "order statistics (binomial), conservative"},
    )
    return out.isel(quantile=0) if np.ndim(q) == 0 else out
