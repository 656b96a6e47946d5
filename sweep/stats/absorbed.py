"""Reading first-passage times out of core, in either store layout.

:class:`Absorbed` is the one view of the absorbed walkers that the passage-time and
survival statistics reduce: per-walker stores (``first_passage_time``, lazy and
chunked as the store is) or aggregate-only stores (``fpt_histogram``, small, read into
memory). Memory stays bounded by one chunk of the store:

* sums and ranges (:meth:`Absorbed.sums`, :meth:`Absorbed.range`) are lazy xarray
  reductions, computed in one pass per call, so no chunk is held while a later
  reduction waits for an earlier one;
* histograms (:meth:`Absorbed.binned`) are computed chunk by chunk through xarray
  (:func:`bin_rows`): one chunk of values (points in the chunk x walkers in the chunk
  x 8 bytes) is in memory at a time, plus a partial histogram per walker chunk.

Numerical work on per-point results runs in numpy under ``np.errstate`` in the calling
thread (a lazy reduction's worker threads do not inherit it, so nothing that can
divide by zero runs inside one).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import NDArray

#: Partial histograms of a point's walker chunks are added in consecutive groups of
#: this many, group results likewise, so the float sums are bit-identical to those
#: of earlier versions (which reduced them with dask's default tree of four).
COMBINE = 4


@dataclass(frozen=True)
class Absorbed:
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
            out = bin_block(
                np.asarray(self.values.values, dtype=np.float64),
                edges,
                np.asarray(self.weights.values, dtype=np.float64),
            )
            return out[:, 0], out[:, 1]
        return bin_rows(self.values, edges)


def absorbed_walkers(ds: xr.Dataset, wall: int | None = None) -> Absorbed:
    """The absorbed walkers of ``ds`` (all walls, or one wall index)."""
    if "first_passage_time" in ds:
        t = ds["first_passage_time"]
        if wall is not None:
            t = t.where(ds["absorbing_wall"] == wall)
        return Absorbed(t, None, "walker", None)
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
        return Absorbed(
            xr.DataArray(np.where(counts > 0, mid, np.nan), dims=dims),
            xr.DataArray(counts, dims=dims),
            "fpt_bin",
            width,
        )
    # Unreachable from a public statistic: validate.statistic checked FIRST_PASSAGE.
    raise AssertionError("the Dataset holds neither layout of first-passage data")


def bin_block(
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


def _combine(parts: list[NDArray[np.float64]]) -> NDArray[np.float64]:
    """Sum of the partial histograms ``parts`` in groups of :data:`COMBINE`."""
    while len(parts) > COMBINE:
        parts = [
            np.sum(np.stack(parts[i : i + COMBINE], axis=1), axis=1)
            for i in range(0, len(parts), COMBINE)
        ]
    return np.sum(np.stack(parts, axis=1), axis=1)


def bin_rows(
    values: xr.DataArray, edges: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """:func:`bin_block` over (point, walker) values, chunk by chunk when lazy.

    Each chunk (points, walkers) of the store is read alone (through xarray) and
    becomes a partial histogram (points, 2, bins); the partials of a point's walker
    chunks are then added, so memory holds one chunk of values at a time.
    """
    values = values.transpose("point", ...)
    chunks = values.chunks
    if chunks is None:
        out = bin_block(np.asarray(values.values, dtype=np.float64), edges)
        return out[:, 0], out[:, 1]
    rows, start = [], 0
    for points in chunks[0]:
        stop, parts, first = start + points, [], 0
        for walkers in chunks[1]:
            block = values[start:stop, first : first + walkers]
            parts.append(
                bin_block(np.asarray(block.values, np.float64), edges[start:stop])
            )
            first += walkers
        rows.append(_combine(parts))
        start = stop
    out = np.concatenate(rows, axis=0)
    return out[:, 0], out[:, 1]


def recorded_horizon(ds: xr.Dataset, horizon: Any = None) -> NDArray[np.float64] | None:
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
