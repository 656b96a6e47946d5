"""sweep.stats.spatial: exit-position and occupancy densities, mean-square
displacement."""

from __future__ import annotations

import pathlib

import numpy as np
import pytest
import xarray as xr
from scipy import stats as scipy_stats

import sweep
from sweep import analytic, stats
from tests.conftest import build_store
from tests.stats.synthetic import (
    LEVEL,
    REPLICATIONS,
    WALLS_2D,
    coverage_band,
    make_dataset,
)
from tests.tolerances import RTOL_F64, Z_STAT


def test_exit_position_histogram_matches_beta() -> None:
    # Walkers leave through x_upper (index 1) with probability 0.4 at y ~
    # scipy.stats.beta(2, 3), else through x_lower at y ~ uniform; bin probabilities
    # 0.4 (F(b) - F(a)).
    rng = np.random.default_rng(18)
    n = 20_000
    walls = (rng.random((1, n)) < 0.4).astype(np.int16)
    y = np.where(walls == 1, rng.beta(2, 3, size=(1, n)), rng.random((1, n)))
    positions = np.stack([walls.astype(float), y], axis=2)
    ds = make_dataset(
        rng.exponential(size=(1, n)),
        np.inf,
        [0.0],
        walls=walls,
        positions=positions,
        wall_names=WALLS_2D,
    )
    edges = np.linspace(0.0, 1.0, 11)
    result = stats.exit_position_histogram(ds, "x_upper", bins=edges)
    row = result.sel(axis="y").isel(point=0)
    p = 0.4 * np.diff(scipy_stats.beta(2, 3).cdf(edges))
    exact, se = p / 0.1, np.sqrt(p * (1 - p) / n) / 0.1
    z = (row["estimate"].values - exact) / se
    assert np.all(np.abs(z) <= Z_STAT), z
    conditional = stats.exit_position_histogram(ds, 1, bins=5, conditional=True)
    total = (
        conditional["estimate"] * (conditional.exit_upper - conditional.exit_lower)
    ).sum("exit_bin")
    np.testing.assert_allclose(total.values, 1.0, rtol=RTOL_F64)
    with pytest.raises(ValueError, match="no wall or target named"):
        stats.exit_position_histogram(ds, "z_upper")


def test_occupancy_density_garwood_coverage() -> None:
    # Exact (Garwood 1936) Poisson intervals on multinomial bin counts: conservative;
    # the true density is p / (bin volume).
    rng = np.random.default_rng(19)
    n, bins = 400, 3
    p = np.array([0.01, 0.05, 0.1, 0.02, 0.2, 0.05, 0.0, 0.03, 0.04])
    counts = rng.multinomial(n, np.append(p, 1 - p.sum()), size=(REPLICATIONS, 2))
    occupancy = counts[..., :-1].reshape(REPLICATIONS, 2, bins, bins)
    ds = xr.Dataset(
        {
            "walkers_done": ("point", np.full(REPLICATIONS, n)),
            "occupancy": (("point", "snapshot", "x_bin", "y_bin"), occupancy),
            "occupancy_lower": (
                ("point", "axis"),
                np.tile([0.0, -1.0], (REPLICATIONS, 1)),
            ),
            "occupancy_upper": (
                ("point", "axis"),
                np.tile([1.5, 2.0], (REPLICATIONS, 1)),
            ),
            "snapshot_time": (
                ("point", "snapshot"),
                np.tile([0.1, 0.2], (REPLICATIONS, 1)),
            ),
        },
        coords={"point": np.arange(REPLICATIONS)},
    )
    result = stats.occupancy_density(ds, level=LEVEL)
    volume = (1.5 / bins) * (3.0 / bins)
    exact = xr.DataArray(p.reshape(bins, bins) / volume, dims=("x_bin", "y_bin"))
    inside = (result["lower"] <= exact) & (exact <= result["upper"])
    coverage = inside.mean(["point", "snapshot"]).values
    assert np.all(coverage >= LEVEL - coverage_band(replications=2 * REPLICATIONS))
    np.testing.assert_allclose(result["x_center"].values[0], [0.25, 0.75, 1.25])
    mean = result["estimate"].mean(["point", "snapshot"])
    se = np.sqrt(p * (1 - p) / n / (2 * REPLICATIONS)).reshape(bins, bins) / volume
    assert np.all(np.abs(mean.values - exact.values) <= Z_STAT * se + RTOL_F64)


#: Free motion in the plane from the origin, with occupancy wide enough to hold every
#: walker (8 = 8 standard deviations at t = 1).
FREE_PLANE = """
[sweep]
seed = 5
walkers = 20000
chunk = 5000
[motion]
dimension = 2
diffusivity = 0.5
start = [0.0, 0.0]
[time]
dt = 1e-2
horizon = 1.0
[domain]
lower = ["-inf", "-inf"]
upper = ["inf", "inf"]
[record]
occupancy = { times = [0.25, 1.0], bins = 400, lower = [-8.0, -8.0], upper = [8.0, 8.0] }
"""


def test_mean_square_displacement_of_free_motion(tmp_path: pathlib.Path) -> None:
    """Free motion in the plane: MSD = 2 d D t (Karlin & Taylor 1975, ch. 7 [from
    memory]; sweep.analytic.free_variance per axis)."""
    out = build_store(FREE_PLANE, tmp_path / "free.zarr", threads=2)
    msd = stats.mean_square_displacement(sweep.open(out))
    for s, t in enumerate((0.25, 1.0)):
        exact = 2 * float(analytic.free_variance(t, 0.5))
        est = float(msd["estimate"].isel(point=0, snapshot=s))
        se = float(msd["stderr"].isel(point=0, snapshot=s))
        assert abs(est - exact) <= Z_STAT * se, (t, est, exact, se)
