"""Synthetic Datasets in the store's layout, with known answers, for tests/stats.

Walkers are draws from scipy.stats distributions (fixed seeds), wrapped as dask arrays
chunked (1, CHUNK) like the store's. Estimates are compared with exact values by a
z-score (|z| <= Z_STAT); intervals by their COVERAGE over many replications, which are
laid out along ``point`` (one replication per point) so that one call covers them all.
"""

from __future__ import annotations

import math

import dask.array as da
import numpy as np
import xarray as xr
from scipy import stats as scipy_stats

from tests.tolerances import Z_STAT

#: Walkers per dask block, as the store's (1, chunk) blocks.
CHUNK = 500

#: Replications (points) of each coverage study.
REPLICATIONS = 300

#: Confidence level whose coverage is measured.
LEVEL = 0.95

#: Wall names of the synthetic 1-D and 2-D domains.
WALLS_1D = ["x_lower", "x_upper"]
WALLS_2D = ["x_lower", "x_upper", "y_lower", "y_upper"]


def coverage_band(level: float = LEVEL, replications: int = REPLICATIONS) -> float:
    """Half-width of the binomial Z_STAT-sigma band of an observed coverage."""
    return Z_STAT * math.sqrt(level * (1.0 - level) / replications)


def make_dataset(
    times: np.ndarray,
    horizon: float,
    grid: np.ndarray,
    walls: np.ndarray | None = None,
    positions: np.ndarray | None = None,
    wall_names: list[str] | None = None,
    fpt_bins: int | None = None,
    chunk: int = CHUNK,
) -> xr.Dataset:
    """A Dataset in sweep.open's layout from first-passage times (point, walker).

    Times beyond ``horizon`` are censored (NaN, wall -1). ``fpt_bins`` also adds the
    aggregate ``fpt_histogram`` (bins [k w, (k + 1) w), w = horizon / fpt_bins).
    Per-walker arrays are dask arrays in blocks of (1, ``chunk``).
    """
    times = np.asarray(times, dtype=np.float64)
    n_points, n_walkers = times.shape
    names = wall_names or WALLS_1D
    walls = np.zeros(times.shape, np.int16) if walls is None else walls
    censored = times > horizon
    fpt = np.where(censored, np.nan, times)
    wall = np.where(censored, -1, walls).astype(np.int16)
    survival_count = (np.where(censored, np.inf, times)[:, :, None] > grid).sum(1)
    ds = xr.Dataset(
        {
            "walkers_done": ("point", np.full(n_points, n_walkers, np.int64)),
            "first_passage_time": (
                ("point", "walker"),
                da.from_array(fpt, chunks=(1, chunk)),
            ),
            "absorbing_wall": (
                ("point", "walker"),
                da.from_array(wall, chunks=(1, chunk)),
            ),
            "survival_count": (("point", "time"), survival_count),
            "survival": (("point", "time"), survival_count / n_walkers),
        },
        coords={"point": np.arange(n_points), "time": grid},
        attrs={"wall_names": names},
    )
    if positions is not None:
        pos = np.where(censored[:, :, None], np.nan, positions)
        ds["exit_position"] = (
            ("point", "walker", "axis"),
            da.from_array(pos, chunks=(1, chunk, pos.shape[2])),
        )
        ds = ds.assign_coords(axis=["x", "y", "z"][: pos.shape[2]])
    if fpt_bins:
        width = horizon / fpt_bins
        hist = np.zeros((n_points, len(names), fpt_bins), np.int64)
        p, w = np.nonzero(~censored)
        k = np.minimum((times[p, w] / width).astype(int), fpt_bins - 1)
        np.add.at(hist, (p, wall[p, w], k), 1)
        ds["fpt_histogram"] = (("point", "wall", "fpt_bin"), hist)
        ds = ds.assign_coords(
            fpt_bin_width=("point", np.full(n_points, width)), wall=names
        )
    return ds


def aggregate_only(ds: xr.Dataset) -> xr.Dataset:
    """The same walkers as an aggregate-only store (no per-walker arrays)."""
    return ds.drop_vars(["first_passage_time", "absorbing_wall"])


def inverse_gaussian() -> scipy_stats.rv_continuous:
    """First passage of drifting Brownian motion to a level: x0 = 1, v = 1, D = 0.5."""
    x0, v, d = 1.0, 1.0, 0.5
    shape = x0**2 / (2 * d)
    return scipy_stats.invgauss(mu=(x0 / v) / shape, scale=shape)
