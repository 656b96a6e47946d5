"""Statistics of stored ensembles, each with its standard error and confidence interval.

Functions take the lazy Dataset of :func:`sweep.open` (or a selection of it) and return
xarray objects; reductions run out of core through dask. Every result is a Dataset with
``estimate``, ``stderr``, ``lower`` and ``upper`` (a two-sided interval at ``level``)
and ``n`` (the sample size behind it).

Contents: :func:`mean_first_passage_time`, :func:`censored_fraction`,
:func:`splitting_probability`, :func:`survival` (pointwise Wilson),
:func:`survival_band` (simultaneous DKW band), :func:`fpt_density`,
:func:`fpt_moments`, :func:`fpt_quantiles`, :func:`restricted_mean`,
:func:`tail_fit`, :func:`exit_position_histogram`, :func:`occupancy_density` and
:func:`summary` (headline numbers per point). Every function accepts a single point
(``ds.isel(point=p)``) as well as the whole sweep, and works on both store layouts
(per-walker arrays, or the aggregate ``fpt_histogram``) where the data allow.
"""

from __future__ import annotations

import functools
import math
import numbers
import operator
import warnings
from collections.abc import Callable, Hashable, Sequence
from dataclasses import dataclass
from typing import Any, TypeVar

import dask.array as da
import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray
from scipy import special
from scipy import stats as scipy_stats

from sweep.errors import SweepWarning, UsageError

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
    # One absorbed walker has no spread to estimate: its interval is every possible
    # mean, [0, inf), rather than NaN, so it still contains the estimate.
    single = out["n"] == 1
    out["lower"] = out["lower"].where(~single, 0.0)
    out["upper"] = out["upper"].where(~single, np.inf)
    out["censored"] = censored_fraction(ds)
    # A point without finished walkers (a store still running) is NaN by design;
    # dask's threads ignore np.errstate, so its 0/0 warning is filtered here.
    with warnings.catch_warnings():
        warnings.filterwarnings(
            "ignore", "invalid value encountered in divide", RuntimeWarning
        )
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
        Of the broadcast shape of ``successes`` and ``n``; always
        ``0 <= lower <= successes / n <= upper <= 1`` (NaN where ``n`` is 0).

    Notes
    -----
    At p = 0 and p = 1 the formula's bound equals p exactly in real arithmetic, but in
    floating point ``centre + half`` can land an ulp below 1 (and ``centre - half`` an
    ulp above 0), so an interval would miss its own estimate; the bounds are therefore
    widened to contain p and clipped to [0, 1].
    """
    z = z_value(level)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = successes / n
        centre = (p + z * z / (2 * n)) / (1 + z * z / n)
        half = z / (1 + z * z / n) * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
        lower = np.clip(np.minimum(centre - half, p), 0.0, 1.0)
        upper = np.clip(np.maximum(centre + half, p), 0.0, 1.0)
    return lower, upper


def _binned_density(
    count: NDArray[np.float64], n: NDArray[np.float64], width: Any, level: float
) -> tuple[Any, Any, Any, Any]:
    """Density count / (n width) of a histogram, its standard error and its Wilson
    interval divided by the bin width; NaN where ``n`` is 0. ``count``, ``n`` and
    ``width`` broadcast together."""
    with np.errstate(divide="ignore", invalid="ignore"):
        n_ok = np.where(n > 0, n, np.nan)
        dens = count / (n_ok * width)
        se = np.sqrt(count * (1.0 - count / n_ok)) / (n_ok * width)
        lower, upper = wilson_interval(count, n_ok, level)
    return dens, se, lower / width, upper / width


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


# =========================================================================== helpers
#
# Layout conventions of the helpers below. Per-walker stores are reduced lazily
# through dask, one pass per `.compute()` so that no chunk is held in memory while a
# later reduction waits for an earlier one; aggregate-only stores (``fpt_histogram``)
# are small and are reduced in memory. Numerical work on per-point results is done in
# numpy under ``np.errstate`` in the calling thread (dask worker threads do not inherit
# it, so nothing that can divide by zero runs inside the graph).

#: Bins of :func:`fpt_density` and :func:`exit_position_histogram` when none are given.
DEFAULT_BINS = 50

#: Smallest number of surviving walkers at a survival-grid time used by
#: :func:`tail_fit`: keeps the delta-method variance of log S (1 - S) / (n S) valid.
TAIL_MIN_COUNT = 30

#: Default upper end of the survival range fitted by :func:`tail_fit` (the late tail).
TAIL_S_MAX = 0.5

_F = TypeVar("_F", bound=Callable[..., xr.Dataset])


def _accepts_selection(func: _F) -> _F:
    """Let a statistic take ``ds.isel(point=p)``: add the point dimension, drop it after."""

    @functools.wraps(func)
    def wrapper(ds: xr.Dataset, *args: Any, **kwargs: Any) -> xr.Dataset:
        if "point" in ds.dims:
            return func(ds, *args, **kwargs)
        return func(ds.expand_dims("point"), *args, **kwargs).isel(point=0)

    return wrapper  # type: ignore[return-value]


def _check_level(level: float) -> float:
    """alpha = 1 - level, after checking 0 < level < 1."""
    if not 0.0 < level < 1.0:
        raise ValueError(
            f"sweep.stats: level must lie strictly between 0 and 1; got {level!r} "
            f"(e.g. 0.95 for a 95% interval)."
        )
    return 1.0 - level


def _walkers(ds: xr.Dataset) -> NDArray[np.float64]:
    """Walkers of finished tasks per point, float64 (point,)."""
    return np.asarray(ds["walkers_done"].values, dtype=np.float64).reshape(-1)


def _point_coords(ds: xr.Dataset) -> dict[Hashable, xr.Variable]:
    """The coordinates along ``point`` (point index and swept parameters)."""
    return {k: v.variable for k, v in ds.coords.items() if v.dims == ("point",)}


def _result(
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
    point_coords = {k: v for k, v in _point_coords(ds).items() if k not in data}
    out = xr.Dataset(data, coords=point_coords)
    if coords:
        out = out.assign_coords(coords)
    out.attrs = dict(attrs or {})
    return out


def _wall_index(ds: xr.Dataset, wall: int | str) -> int:
    names = list(ds.attrs.get("wall_names", ()))
    if isinstance(wall, str):
        if wall not in names:
            raise ValueError(
                f"sweep.stats: no wall or target named {wall!r}; expected one of {names}."
            )
        return names.index(wall)
    index = operator.index(wall)
    if names and not 0 <= index < len(names):
        raise ValueError(
            f"sweep.stats: wall index {wall!r} out of range; expected 0 to "
            f"{len(names) - 1} ({', '.join(names)})."
        )
    return index


@dataclass(frozen=True)
class _Absorbed:
    """First-passage times of absorbed walkers, per point, in either store layout.

    ``values`` (point, dim) is NaN where no walker was absorbed (censored walkers and
    unfinished tasks alike). Per-walker stores: one walker per element, ``weights``
    None. Aggregate-only stores: one fpt bin per element at the bin midpoint, with
    ``weights`` the walkers in the bin and ``width`` the bin width per point.
    """

    values: xr.DataArray
    weights: xr.DataArray | None
    dim: str
    width: NDArray[np.float64] | None

    def sums(
        self, **functions: Callable[[xr.DataArray], Any]
    ) -> dict[str, NDArray[np.float64]]:
        """Sum of f(T) over absorbed walkers for every f, per point, in one pass."""
        mask = self.values.notnull()
        lazy = {}
        for name, f in functions.items():
            term = xr.where(mask, f(self.values), 0.0)
            if self.weights is not None:
                term = term * self.weights
            lazy[name] = term.sum(self.dim).drop_vars(
                [c for c in term.coords if c != "point"], errors="ignore"
            )
        done = xr.Dataset(lazy).compute()
        return {k: np.asarray(done[k].values, dtype=np.float64) for k in functions}

    def range(self) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Smallest and largest value per point (+inf / -inf where none)."""
        lo = self.values.fillna(np.inf).min(self.dim)
        hi = self.values.fillna(-np.inf).max(self.dim)
        done = xr.Dataset({"lo": lo, "hi": hi}).compute()
        return (
            np.asarray(done["lo"].values, dtype=np.float64),
            np.asarray(done["hi"].values, dtype=np.float64),
        )

    def binned(
        self, edges: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Walkers and the sum of their values per bin; ``edges`` (point, bins + 1)."""
        if self.weights is not None:
            out = _bin_block(
                np.asarray(self.values.values, dtype=np.float64),
                edges,
                np.asarray(self.weights.values, dtype=np.float64),
            )
            return out[:, 0], out[:, 1]
        return _bin_rows(self.values, edges)


def _absorbed(ds: xr.Dataset, wall: int | None = None) -> _Absorbed:
    """The absorbed walkers of ``ds`` (all walls, or one wall index)."""
    if "first_passage_time" in ds:
        t = ds["first_passage_time"]
        if wall is not None:
            t = t.where(ds["absorbing_wall"] == wall)
        return _Absorbed(t, None, "walker", None)
    if "fpt_histogram" in ds:
        hist = ds["fpt_histogram"]
        hist = hist.sum("wall") if wall is None else hist.isel(wall=wall)
        counts = np.asarray(hist.transpose("point", "fpt_bin").values, np.float64)
        width = np.broadcast_to(
            np.asarray(ds["fpt_bin_width"].values, dtype=np.float64),
            (counts.shape[0],),
        ).copy()
        mid = (np.arange(counts.shape[1]) + 0.5)[None, :] * width[:, None]
        dims = ("point", "fpt_bin")
        return _Absorbed(
            xr.DataArray(np.where(counts > 0, mid, np.nan), dims=dims),
            xr.DataArray(counts, dims=dims),
            "fpt_bin",
            width,
        )
    raise ValueError(
        "sweep.stats: the Dataset holds no first-passage data; expected per-walker "
        "'first_passage_time' or the aggregate 'fpt_histogram'. Record them with "
        "[record] per_walker = true or fpt_bins = N in the sweep definition."
    )


def _bin_block(
    x: NDArray[np.float64],
    edges: NDArray[np.float64],
    weights: NDArray[np.float64] | None = None,
) -> NDArray[np.float64]:
    """Per row: (count, sum of values) in bins [e_k, e_k+1), the last bin closed.

    Returns shape (rows, 2, bins). NaN values are skipped; so are values outside the
    edges. Repeated edges make empty bins.
    """
    n_bins = edges.shape[1] - 1
    out = np.zeros((x.shape[0], 2, n_bins))
    for i in range(x.shape[0]):
        row, e = x[i], edges[i]
        ok = np.isfinite(row)
        v = row[ok]
        w = np.ones_like(v) if weights is None else weights[i][ok]
        k = np.searchsorted(e, v, side="right") - 1
        k[v == e[-1]] = n_bins - 1
        keep = (k >= 0) & (k < n_bins)
        out[i, 0] = np.bincount(k[keep], weights=w[keep], minlength=n_bins)
        out[i, 1] = np.bincount(k[keep], weights=(v * w)[keep], minlength=n_bins)
    return out


def _bin_rows(
    values: xr.DataArray, edges: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """:func:`_bin_block` over (point, walker) values, blockwise when dask-backed.

    Each dask block (points, walkers) becomes a partial histogram (points, 1, 2, bins);
    the partials are summed over the walker blocks, so memory stays one block.
    """
    data = values.transpose("point", ...).data
    if not isinstance(data, da.Array):
        out = _bin_block(np.asarray(data, dtype=np.float64), edges)
        return out[:, 0], out[:, 1]
    n_bins = edges.shape[1] - 1

    def block(x: NDArray[Any], block_info: Any = None) -> NDArray[np.float64]:
        start, stop = block_info[0]["array-location"][0]
        return _bin_block(np.asarray(x, np.float64), edges[start:stop])[:, None]

    partial = data.map_blocks(
        block,
        new_axis=[2, 3],
        chunks=(data.chunks[0], (1,) * len(data.chunks[1]), (2,), (n_bins,)),
        dtype=np.float64,
        meta=np.empty((0, 0, 0, 0)),
    )
    out = np.asarray(partial.sum(axis=1).compute())
    return out[:, 0], out[:, 1]


def _horizon(ds: xr.Dataset, horizon: Any = None) -> NDArray[np.float64] | None:
    """The censoring horizon per point, or None if the Dataset does not record it.

    In order: the ``horizon`` argument; the store's ``horizon`` coordinate (snapped
    to the step grid; a swept ``time.horizon`` as the definition wrote it);
    ``ds.attrs["horizon"]``; the span of the stored first-passage histogram (n_bins x
    bin width covers [0, horizon]).
    """
    n_points = ds.sizes["point"]
    if horizon is None and "horizon" in ds.variables:
        horizon = ds["horizon"].values
    if horizon is None and "horizon" in ds.attrs:
        horizon = ds.attrs["horizon"]
    if horizon is None and "fpt_histogram" in ds:
        horizon = np.asarray(ds["fpt_bin_width"].values) * ds.sizes["fpt_bin"]
    if horizon is None:
        return None
    return np.broadcast_to(np.asarray(horizon, dtype=np.float64), (n_points,)).copy()


# =========================================================================== survival


@_accepts_selection
def survival_band(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Simultaneous confidence band on the whole survival curve S(t).

    The Dvoretzky-Kiefer-Wolfowitz inequality with Massart's tight constant,
    P(sup_t |S_n(t) - S(t)| > eps) <= 2 exp(-2 n eps^2), gives the band
    S_n(t) +- eps with eps = sqrt(ln(2 / alpha) / (2 n)), alpha = 1 - level, clipped to
    [0, 1]. It holds for every t at once (not only at the stored grid times), for any
    distribution, so its coverage is at least ``level`` (conservative on a finite
    grid). Censoring at the horizon does not matter: the grid ends before it.

    Sources: A. Dvoretzky, J. Kiefer & J. Wolfowitz, Ann. Math. Statist. 27, 642 (1956);
    P. Massart, Ann. Probab. 18, 1269 (1990).

    Parameters
    ----------
    ds : xarray.Dataset
        A store's Dataset (or selection) with ``survival_count`` (point, time) and
        ``walkers_done`` (point,).
    level : float
        Simultaneous coverage of the band, default 0.95.

    Returns
    -------
    xarray.Dataset
        dims (point, time): ``estimate`` (fraction still free, dimensionless),
        ``stderr`` (pointwise binomial sqrt(S (1 - S) / n)), ``lower``, ``upper`` (the
        band), ``half_width`` (eps, (point,)) and ``n`` (walkers, (point,)).
    """
    alpha = _check_level(level)
    n = _walkers(ds)
    count = np.asarray(
        ds["survival_count"].transpose("point", "time").values, np.float64
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        n_ok = np.where(n > 0, n, np.nan)[:, None]
        s = count / n_ok
        eps = np.sqrt(np.log(2.0 / alpha) / (2.0 * n_ok))
        se = np.sqrt(s * (1.0 - s) / n_ok)
    return _result(
        ds,
        ("point", "time"),
        {
            "estimate": s,
            "stderr": se,
            "lower": np.clip(s - eps, 0.0, 1.0),
            "upper": np.clip(s + eps, 0.0, 1.0),
            "half_width": eps[:, 0],
            "n": n,
        },
        coords={"time": ds["time"].values},
        attrs={
            "level": level,
            "interval": "simultaneous Dvoretzky-Kiefer-Wolfowitz band (Massart 1990)",
        },
    )


# =========================================================================== FPT density


def _fpt_edges(ds: xr.Dataset, absorbed: _Absorbed, bins: Any) -> NDArray[np.float64]:
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
        top = _horizon(ds)
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


@_accepts_selection
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

    Per-walker stores are binned blockwise through dask. Aggregate-only stores re-bin
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
    _check_level(level)
    index = None if wall is None else _wall_index(ds, wall)
    absorbed = _absorbed(ds, index)
    edges = _fpt_edges(ds, absorbed, bins)
    counts, _ = absorbed.binned(edges)
    n = _walkers(ds)[:, None]
    width = np.diff(edges, axis=1)
    dens, se, lower, upper = _binned_density(counts, n, width, level)
    dims = ("point", "fpt_bin")
    return _result(
        ds,
        dims,
        {
            "estimate": dens,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "count": counts,
            "n": n[:, 0],
        },
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


# =========================================================================== moments


def _warn_censored(censored: NDArray[np.float64], what: str) -> None:
    bad = np.isfinite(censored) & (censored > 0)
    if bad.any():
        warnings.warn(
            f"sweep.stats: {int(bad.sum())} of {censored.size} points have walkers "
            f"still free at the horizon (up to {100 * float(np.max(censored[bad])):.3g}%"
            f"); {what}",
            SweepWarning,
            stacklevel=3,
        )


@_accepts_selection
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
    _check_level(level)
    absorbed = _absorbed(ds)
    first = absorbed.sums(n=lambda v: 1.0, s1=lambda v: v)
    n_abs = first["n"]
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = first["s1"] / np.where(n_abs > 0, n_abs, np.nan)
    m = xr.DataArray(np.nan_to_num(mean), dims="point")
    second = absorbed.sums(s2=lambda v: (v - m) ** 2, s4=lambda v: (v - m) ** 4)
    n = _walkers(ds)
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
    _warn_censored(
        censored,
        "fpt_moments are over absorbed walkers only (conditional on T <= horizon) and "
        "underestimate the true moments; see restricted_mean and tail_fit.",
    )
    est = np.stack([mean, var, sd], axis=1)
    se = np.stack([se_mean, se_var, se_sd], axis=1)
    z = z_value(level)
    return _result(
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


# =========================================================================== quantiles


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


@_accepts_selection
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
    alpha = _check_level(level)
    qs = np.atleast_1d(np.asarray(q, dtype=np.float64))
    if qs.ndim != 1 or not np.all((qs > 0) & (qs < 1)):
        raise ValueError(
            f"sweep.stats.fpt_quantiles: q must be probabilities in (0, 1); got {q!r}."
        )
    n_all = _walkers(ds).astype(np.int64)
    shape = (n_all.size, qs.size)
    est, lower, upper = (np.full(shape, np.nan) for _ in range(3))
    censored = np.full(n_all.size, np.nan)
    absorbed = _absorbed(ds)
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
    out = _result(
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


# =========================================================================== means


def _restricted(
    ds: xr.Dataset,
    absorbed: _Absorbed,
    horizon: Any,
    who: str,
    fallback: float = np.inf,
) -> dict[str, NDArray[np.float64]]:
    """Mean and variance of min(T, tau) over all walkers (two passes, no warnings).

    tau is ``horizon`` if given, else the recorded horizon, else ``fallback``; it
    must not exceed the sweep's horizon where walkers are censored, since min(T, tau)
    of a censored walker is only known up to there.
    """
    n_points = ds.sizes["point"]
    recorded = _horizon(ds)
    if horizon is not None:
        tau = np.asarray(horizon, dtype=np.float64)
        tau = np.broadcast_to(tau, (n_points,)).copy()
    else:
        tau = recorded if recorded is not None else np.full(n_points, fallback)
    n = _walkers(ds)
    cut = xr.DataArray(tau, dims="point")
    first = absorbed.sums(
        n=lambda v: 1.0,
        s1=lambda v: xr.where(v < cut, v, cut),
        beyond=lambda v: v >= cut,
    )
    n_cens = n - first["n"]
    unknown = (n_cens > 0) & (tau > (np.inf if recorded is None else recorded))
    if horizon is not None and recorded is not None and np.any(unknown):
        raise ValueError(
            f"sweep.stats.{who}: horizon={horizon!r} exceeds the sweep's horizon "
            f"{recorded.tolist()} at points with censored walkers; min(T, tau) is "
            "unknown for them beyond it. Use a horizon <= the sweep's."
        )
    if np.any((n_cens > 0) & ~np.isfinite(tau)):
        raise ValueError(
            f"sweep.stats.{who}: the Dataset does not record the horizon (not swept, "
            "no fpt_histogram) and some walkers are censored; pass horizon= (the "
            "[time] horizon of the sweep definition)."
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(n_cens > 0, tau * n_cens, 0.0)
        mean = (first["s1"] + tail) / np.where(n > 0, n, np.nan)
    m = xr.DataArray(np.nan_to_num(mean), dims="point")
    second = absorbed.sums(ss=lambda v: (xr.where(v < cut, v, cut) - m) ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        ss = second["ss"] + np.where(n_cens > 0, n_cens * (tau - mean) ** 2, 0.0)
        var = ss / (n - 1)
    return {
        "tau": tau,
        "mean": mean,
        "var": var,
        "n": n,
        "n_censored": n_cens,
        "n_beyond": n_cens + first["beyond"],
    }


@_accepts_selection
def restricted_mean(
    ds: xr.Dataset, level: float = LEVEL, *, horizon: ArrayLike | None = None
) -> xr.Dataset:
    """Restricted mean first-passage time E[min(T, tau)] = integral_0^tau S(t) dt.

    Exact from per-walker data: each absorbed walker contributes min(T, tau), each
    censored walker tau (tau must not exceed the sweep's horizon). Unlike the mean
    over absorbed walkers it is unbiased for its own target whatever the censoring;
    it is the "restricted mean survival time" of survival analysis (J. O. Irwin,
    J. Hyg. 47, 188 (1949); P. Royston & M. K. B. Parmar, BMC Med. Res. Methodol.
    13, 152 (2013)). Standard error: the sample standard deviation of min(T, tau)
    over all n walkers / sqrt(n) (two passes). When some walker has T > tau a
    :class:`~sweep.errors.SweepWarning` says that this is a restricted mean, not the
    mean first-passage time (see :func:`tail_fit` for an extrapolated mean).

    Aggregate-only stores use the bin midpoints (bias at most half a bin width).

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``first_passage_time`` or ``fpt_histogram`` and
        ``walkers_done``.
    level : float
        Confidence level of the interval.
    horizon : float or array of float (point,), optional
        tau in time units; default the sweep's horizon when the Dataset records it
        (a swept ``horizon`` coordinate, ``attrs["horizon"]`` or the fpt histogram's
        span). Required when walkers are censored and the horizon is not recorded.

    Returns
    -------
    xarray.Dataset
        dims (point,): ``estimate`` (time units), ``stderr``, ``lower``, ``upper``,
        ``n`` (walkers), ``censored`` (fraction free at the horizon), ``horizon``
        (tau).

    Raises
    ------
    ValueError
        If tau is unknown but needed, or exceeds the recorded horizon.
    """
    _check_level(level)
    r = _restricted(ds, _absorbed(ds), horizon, "restricted_mean")
    n, tau = r["n"], r["tau"]
    with np.errstate(divide="ignore", invalid="ignore"):
        se = np.sqrt(r["var"] / n)
        beyond = r["n_beyond"] / np.where(n > 0, n, np.nan)
        censored = r["n_censored"] / np.where(n > 0, n, np.nan)
    _warn_censored(
        beyond,
        "restricted_mean is E[min(T, horizon)], the area under S(t) up to the "
        "horizon, not the mean first-passage time; see tail_fit for an "
        "extrapolated mean.",
    )
    z = z_value(level)
    return _result(
        ds,
        ("point",),
        {
            "estimate": r["mean"],
            "stderr": se,
            "lower": r["mean"] - z * se,
            "upper": r["mean"] + z * se,
            "n": n,
            "censored": censored,
            "horizon": tau,
        },
        attrs={"level": level, "interval": "normal", "estimand": "E[min(T, horizon)]"},
    )


# =========================================================================== tail


def _gls_exponential(
    t: NDArray[np.float64], y: NDArray[np.float64], n: float
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], float]:
    """Fit log S = b0 + b1 t by GLS with the binomial covariance of log S_n.

    Cov(log S_n(t_i), log S_n(t_j)) = (1 / S(t_i) - 1) / n for t_i <= t_j (the
    empirical survival function's covariance S(t_j)(1 - S(t_i)) / n divided by
    S(t_i) S(t_j)). It has the Brownian form v_min(i,j) with v increasing, so the GLS
    fit is the weighted fit of the increments of y, which are uncorrelated with
    variances v_i - v_(i-1). v comes from the fitted model (a few iterations), so a
    stretch of the grid without absorptions does not get zero variance.

    Returns (beta, cov_beta, coefficients (2, k) with beta = coefficients @ y, chi^2).
    """
    lam = -(y[-1] - y[0]) / (t[-1] - t[0])
    b0 = y[0] + lam * t[0]
    beta = np.array([b0, -lam])
    x = np.column_stack([np.ones_like(t), t])
    dx = np.vstack([x[:1], np.diff(x, axis=0)])
    dy = np.concatenate([y[:1], np.diff(y)])
    for _ in range(6):
        s_model = np.exp(np.minimum(beta[0] + beta[1] * t, -1e-12))
        v = np.maximum.accumulate((1.0 / s_model - 1.0) / n)
        dv = np.maximum(np.diff(np.concatenate([[0.0], v])), 1e-300)
        a = dx.T / dv
        cov = np.linalg.inv(a @ dx)
        coef_dy = cov @ a
        new = coef_dy @ dy
        if np.allclose(new, beta, rtol=1e-12, atol=0.0):
            beta = new
            break
        beta = new
    r = dy - dx @ beta
    chi2 = float(np.sum(r * r / dv))
    # beta = coef_dy @ D y with D the differencing matrix: coefficients on y itself.
    coef = coef_dy - np.concatenate([coef_dy[:, 1:], np.zeros((2, 1))], axis=1)
    return beta, cov, coef, chi2


@_accepts_selection
def tail_fit(
    ds: xr.Dataset,
    t_min: float | None = None,
    level: float = LEVEL,
    *,
    s_max: float = TAIL_S_MAX,
    min_count: int = TAIL_MIN_COUNT,
    horizon: ArrayLike | None = None,
) -> xr.Dataset:
    """Exponential tail S(t) ~ A exp(-lambda t) and the tail-extrapolated mean FPT.

    In a bounded domain the survival probability decays as A exp(-lambda_1 t) once
    higher eigenmodes have died out (lambda_1 the smallest eigenvalue of -D Laplacian
    with the absorbing conditions; S. Redner, *A Guide to First-Passage Processes*
    (2001) ch. 2). The fit uses the stored survival grid on the window where
    S_n(t) <= ``s_max`` (or t >= ``t_min`` when given) and at least ``min_count``
    walkers survive: generalized least squares (A. C. Aitken, Proc. R. Soc. Edinb.
    55, 42 (1935)) of log S_n(t) on t with the binomial covariance of the empirical
    survival function, Cov(S_n(s), S_n(t)) = S(t)(1 - S(s)) / n for s <= t (G. R.
    Shorack & J. A. Wellner, *Empirical Processes with Applications to Statistics*
    (1986) ch. 3), by the delta method on the log. Grid points share walkers, so an
    ordinary diagonal-weight fit would understate the errors; GLS does not.

    The extrapolated mean is E[T] ~ E[min(T, c)] + S(c) / lambda with c the horizon
    (or the last grid time if the Dataset does not record it): the exact restricted
    mean plus the exponential tail beyond c. Its standard error propagates the
    joint covariance of the restricted mean, S_n(c) and lambda (delta method, all
    three computed from the same walkers). It is only as good as the exponential
    model: check ``fit_pvalue`` (chi-square of the GLS residuals, k - 2 degrees of
    freedom) and that the window lies in the late tail.

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``survival_count`` (point, time) and first-passage
        data (``first_passage_time`` or ``fpt_histogram``).
    t_min : float, optional
        Start of the fitted window, in time units (default: where S_n <= s_max).
    level : float
        Confidence level of the intervals.
    s_max : float
        Largest survival fraction in the default window.
    min_count : int
        Fewest surviving walkers at a fitted grid time.
    horizon : float or array of float (point,), optional
        Cut c of the extrapolated mean (<= the sweep's horizon); see above.

    Returns
    -------
    xarray.Dataset
        dims (point, parameter) with ``parameter`` = ["rate", "amplitude", "mean"]
        (lambda in 1 / time units, A dimensionless, extrapolated mean in time
        units): ``estimate``, ``stderr``, ``lower``, ``upper`` (the amplitude's
        interval is exp of the interval of log A); and (point,) ``window_start``,
        ``window_end``, ``window_points``, ``fit_pvalue``, ``cut``, ``n``. NaN where
        the window has fewer than two grid times.
    """
    _check_level(level)
    z = z_value(level)
    n_all = _walkers(ds)
    count = np.asarray(
        ds["survival_count"].transpose("point", "time").values, np.float64
    )
    times = np.asarray(ds["time"].values, dtype=np.float64)
    absorbed = _absorbed(ds)
    r = _restricted(ds, absorbed, horizon, "tail_fit", fallback=float(times[-1]))
    cut, n_cens = r["tau"], r["n_censored"]
    # Tail sums of min(T, c) over T >= t_j, for the covariances of the restricted
    # mean with the survival curve: bins [t_j, t_j+1), [t_K, c), [c, inf).
    grid = np.minimum(times[None, :], cut[:, None])
    edges = np.concatenate(
        [grid, cut[:, None], np.full((n_all.size, 1), np.inf)], axis=1
    )
    bin_count, bin_sum = absorbed.binned(edges)
    tail = np.cumsum(bin_sum[:, -2::-1], axis=1)[:, ::-1][:, : times.size]
    tail = tail + (cut * bin_count[:, -1])[:, None]

    n_points = n_all.size
    est, se = np.full((n_points, 3), np.nan), np.full((n_points, 3), np.nan)
    lower, upper = np.full((n_points, 3), np.nan), np.full((n_points, 3), np.nan)
    start, end = np.full(n_points, np.nan), np.full(n_points, np.nan)
    k_used, pvalue = np.zeros(n_points, np.int64), np.full(n_points, np.nan)
    for p in range(n_points):
        n = n_all[p]
        if n <= 0:
            continue
        s_obs = count[p] / n
        sel = (count[p] >= min_count) & (times > 0) & (times <= cut[p])
        sel &= (s_obs <= s_max) if t_min is None else (times >= t_min)
        sel &= s_obs < 1.0
        idx = np.flatnonzero(sel)
        if idx.size < 2 or not s_obs[idx[-1]] < s_obs[idx[0]]:
            continue
        t, y = times[idx], np.log(s_obs[idx])
        beta, cov, coef, chi2 = _gls_exponential(t, y, n)
        lam, se_lam = -beta[1], math.sqrt(cov[1, 1])
        if not lam > 0:
            continue
        # Delta method for E = RM + C / lambda; C = S_n(c), y = log S_n(t_i).
        rm, c_frac, s_i = r["mean"][p], r["n_beyond"][p] / n, s_obs[idx]
        q_i = (tail[p, idx] + cut[p] * n_cens[p]) / n  # E[min(T, c) 1{T >= t_i}]
        cov_rm_y = (q_i - rm * s_i) / (n * s_i)
        cov_c_y = c_frac * (1.0 - s_i) / (n * s_i)
        # dE/dy = (dE/dlam)(dlam/dy) = (-C / lam^2)(-coef[1]).
        g_y = c_frac / lam**2 * coef[1]
        var_e = (
            r["var"][p] / n
            + c_frac * (1.0 - c_frac) / n / lam**2
            + (c_frac / lam**2) ** 2 * cov[1, 1]
            + 2.0 / lam * c_frac * (cut[p] - rm) / n
            + 2.0 * float(g_y @ cov_rm_y)
            + 2.0 / lam * float(g_y @ cov_c_y)
        )
        extrap = rm + (c_frac / lam if c_frac > 0 else 0.0)
        se_e = math.sqrt(max(var_e, 0.0))
        se_b0 = math.sqrt(cov[0, 0])
        est[p] = [lam, math.exp(beta[0]), extrap]
        se[p] = [se_lam, math.exp(beta[0]) * se_b0, se_e]
        lower[p] = [lam - z * se_lam, math.exp(beta[0] - z * se_b0), extrap - z * se_e]
        upper[p] = [lam + z * se_lam, math.exp(beta[0] + z * se_b0), extrap + z * se_e]
        start[p], end[p], k_used[p] = t[0], t[-1], idx.size
        if idx.size > 2:
            pvalue[p] = float(scipy_stats.chi2.sf(chi2, idx.size - 2))
    return _result(
        ds,
        ("point", "parameter"),
        {
            "estimate": est,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "window_start": start,
            "window_end": end,
            "window_points": k_used,
            "fit_pvalue": pvalue,
            "cut": cut,
            "n": n_all,
        },
        coords={"parameter": ["rate", "amplitude", "mean"]},
        attrs={
            "level": level,
            "model": "S(t) = amplitude * exp(-rate * t) on the window",
            "interval": "normal (GLS / delta method); amplitude log-normal",
        },
    )


# =========================================================================== positions


@_accepts_selection
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
    _check_level(level)
    if "exit_position" not in ds:
        raise ValueError(
            "sweep.stats.exit_position_histogram: the Dataset has no per-walker "
            "'exit_position' (an aggregate-only store); record per_walker = true."
        )
    index = _wall_index(ds, wall)
    here = ds["absorbing_wall"] == index
    position = ds["exit_position"]
    axes = (
        list(position["axis"].values)
        if "axis" in position.coords
        else list(range(position.sizes["axis"]))
    )
    n_points = ds.sizes["point"]
    at_wall = _Absorbed(here.where(here), None, "walker", None)
    n_wall = at_wall.sums(n=lambda v: 1.0)["n"]
    counts, all_edges = [], []
    for a in range(len(axes)):
        values = _Absorbed(position.isel(axis=a).where(here), None, "walker", None)
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
    n = n_wall if conditional else _walkers(ds)
    dens, se, lower, upper = _binned_density(count, n[:, None, None], width, level)
    dims = ("point", "axis", "exit_bin")
    return _result(
        ds,
        dims,
        {
            "estimate": dens,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "count": count,
            "n": n,
        },
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


@_accepts_selection
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
    _check_level(level)
    if "start_position" not in ds:
        raise ValueError(
            "mean_square_displacement needs the start point (start_position); this "
            "Dataset does not record it."
        )
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
    out = _interval(est, se, n, level)
    if "snapshot_time" in ds:
        out = out.assign_coords(
            snapshot_time=ds["snapshot_time"].transpose("point", "snapshot")
        )
    return out


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
    alpha = _check_level(level)
    occ = ds["occupancy"]
    bin_dims = [d for d in occ.dims if d not in ("point", "snapshot")]
    occ = occ.transpose("point", "snapshot", *bin_dims)
    count = np.asarray(occ.values, dtype=np.float64)
    lo = np.asarray(ds["occupancy_lower"].transpose("point", ...).values, np.float64)
    hi = np.asarray(ds["occupancy_upper"].transpose("point", ...).values, np.float64)
    sizes = np.array([occ.sizes[d] for d in bin_dims], dtype=np.float64)
    widths = (hi - lo) / sizes[None, :]
    volume = np.prod(widths, axis=1)
    n = _walkers(ds)
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
    return _result(
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


# =========================================================================== summary


@_accepts_selection
def summary(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Headline numbers per point, in one small in-memory Dataset.

    ``mean_fpt`` is :func:`mean_first_passage_time` (over absorbed walkers: the
    conditional mean when ``censored`` > 0, no warning issued here), ``splitting``
    is :func:`splitting_probability`, ``survival_end`` the survival fraction at the
    last grid time. Variables a store cannot provide are left out.

    Parameters
    ----------
    ds : xarray.Dataset
        A store's Dataset (or selection).
    level : float
        Confidence level of the ``*_lower`` / ``*_upper`` intervals.

    Returns
    -------
    xarray.Dataset
        dims (point,) and (point, wall): ``walkers`` (int64), ``censored``,
        ``mean_fpt``, ``mean_fpt_censored`` (bool: some walkers censored, so
        ``mean_fpt`` is over absorbed walkers only, a lower bound of the full mean),
        ``mean_fpt_stderr``, ``mean_fpt_lower``, ``mean_fpt_upper``, ``splitting``
        (fraction of all finished walkers absorbed at the wall, unconditional on
        absorption: censored walkers count at no wall),
        ``splitting_stderr``, ``splitting_lower``, ``splitting_upper``,
        ``survival_end``. Select one point with ``.isel(point=p)``.

    Raises
    ------
    UsageError
        ``ds`` is not a Dataset (for example one variable of it).
    """
    if not isinstance(ds, xr.Dataset):
        name = getattr(ds, "name", None)
        got = (
            f"a DataArray ({name!r})"
            if isinstance(ds, xr.DataArray)
            else type(ds).__name__
        )
        raise UsageError(
            f"stats.summary needs a store's whole Dataset, as sweep.open(path) returns it "
            f"(or a selection such as ds.isel(point=0)): it reads walkers_done, "
            f"first_passage_time, absorbing_wall and survival together; got {got}. "
            f"Pass the Dataset, not one of its variables."
        )
    walkers = np.asarray(ds["walkers_done"].values, dtype=np.int64).reshape(-1)
    out = _result(ds, ("point",), {"walkers": walkers})
    if "first_passage_time" in ds or "fpt_histogram" in ds:
        mean = mean_first_passage_time(ds, level)
        censored = np.asarray(mean["censored"].values, np.float64)
        out["censored"] = ("point", censored)
        # The CLI's `*`: a mean over absorbed walkers only, a lower bound of the
        # unconditional mean. False where nothing is finished (the mean is NaN).
        out["mean_fpt_censored"] = ("point", censored > 0)
        out["mean_fpt_censored"].attrs["description"] = (
            "True where some walkers were censored: mean_fpt is then over absorbed "
            "walkers only, a lower bound of the full mean first-passage time"
        )
        for key, name in (
            ("estimate", "mean_fpt"),
            ("stderr", "mean_fpt_stderr"),
            ("lower", "mean_fpt_lower"),
            ("upper", "mean_fpt_upper"),
        ):
            out[name] = ("point", np.asarray(mean[key].values, np.float64))
        if "absorbing_wall" in ds or "fpt_histogram" in ds:
            split = splitting_probability(ds, level).transpose("point", "wall")
            out = out.assign_coords(wall=list(ds.attrs["wall_names"]))
            for key, name in (
                ("estimate", "splitting"),
                ("stderr", "splitting_stderr"),
                ("lower", "splitting_lower"),
                ("upper", "splitting_upper"),
            ):
                out[name] = (("point", "wall"), np.asarray(split[key].values))
    if "survival_count" in ds and ds.sizes.get("time", 0):
        count = ds["survival_count"].transpose("point", "time").values[:, -1]
        with np.errstate(divide="ignore", invalid="ignore"):
            n = _walkers(ds)
            out["survival_end"] = ("point", count / np.where(n > 0, n, np.nan))
        out.attrs["survival_end_time"] = float(ds["time"].values[-1])
    out.attrs["level"] = level
    return out
