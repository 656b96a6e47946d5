"""sweep.stats on synthetic Datasets in the store's layout, with known answers.

Walkers are draws from scipy.stats distributions (fixed seeds), wrapped as dask arrays
chunked (1, CHUNK) like the store's. Estimates are compared with exact values by a
z-score (|z| <= Z_STAT); intervals by their COVERAGE over many replications, which are
laid out along ``point`` (one replication per point) so that one call covers them all.
"""

from __future__ import annotations

import math
import pathlib

import dask.array as da
import numpy as np
import pytest
import xarray as xr
from scipy import integrate
from scipy import stats as scipy_stats

from sweep import stats
from sweep.errors import SweepWarning
from tests.tolerances import RTOL_F64, Z_STAT

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


# --------------------------------------------------------------------------- survival


def test_survival_band_half_width_is_massart() -> None:
    # Dvoretzky-Kiefer-Wolfowitz 1956 / Massart 1990: eps = sqrt(ln(2/alpha) / (2n)).
    rng = np.random.default_rng(1)
    grid = np.linspace(0.0, 3.0, 31)
    ds = make_dataset(rng.exponential(size=(2, 400)), 10.0, grid)
    band = stats.survival_band(ds, level=LEVEL)
    expected = math.sqrt(math.log(2 / (1 - LEVEL)) / (2 * 400))
    np.testing.assert_allclose(band["half_width"].values, expected, rtol=RTOL_F64)
    assert (band["lower"] >= 0).all() and (band["upper"] <= 1).all()


def test_survival_band_covers_whole_curve() -> None:
    # Dvoretzky-Kiefer-Wolfowitz 1956 / Massart 1990: simultaneous coverage >= level
    # (conservative); exact S = scipy.stats.expon.sf.
    rng = np.random.default_rng(2)
    grid = np.linspace(0.0, 4.0, 41)
    ds = make_dataset(rng.exponential(size=(REPLICATIONS, 50)), 10.0, grid)
    band = stats.survival_band(ds, level=LEVEL)
    exact = scipy_stats.expon.sf(grid)
    inside = ((band["lower"] <= exact) & (exact <= band["upper"])).all("time")
    assert float(inside.mean()) >= LEVEL - coverage_band()


# --------------------------------------------------------------------------- density


def test_fpt_density_matches_invgauss() -> None:
    # Bin averages of the scipy.stats.invgauss density (cdf differences / width),
    # censored at the horizon: the defective density integrates to F(horizon).
    law, horizon = inverse_gaussian(), 2.0
    rng = np.random.default_rng(3)
    ds = make_dataset(law.rvs(size=(1, 20_000), random_state=rng), horizon, [0.0])
    result = stats.fpt_density(ds, bins=np.linspace(0.0, horizon, 21))
    lo, hi = result["fpt_lower"].values[0], result["fpt_upper"].values[0]
    p = law.cdf(hi) - law.cdf(lo)
    exact = p / (hi - lo)
    se = np.sqrt(p * (1 - p) / 20_000) / (hi - lo)
    z = (result["estimate"].values[0] - exact) / se
    assert np.all(np.abs(z) <= Z_STAT), z
    absorbed = float(ds["first_passage_time"].notnull().mean())
    total = float((result["estimate"] * result["fpt_width"]).sum())
    np.testing.assert_allclose(total, absorbed, rtol=RTOL_F64)


def test_fpt_density_wilson_coverage() -> None:
    # Wilson 1927 score interval of each bin's probability (scipy.stats.expon.cdf).
    rng = np.random.default_rng(4)
    edges = np.array([0.0, 0.25, 0.5, 1.0, 2.0])
    ds = make_dataset(rng.exponential(size=(REPLICATIONS, 200)), 3.0, [0.0])
    result = stats.fpt_density(ds, bins=edges, level=LEVEL)
    exact = np.diff(scipy_stats.expon.cdf(edges)) / np.diff(edges)
    exact = xr.DataArray(exact, dims="fpt_bin")
    coverage = ((result["lower"] <= exact) & (exact <= result["upper"])).mean("point")
    assert np.all(np.abs(coverage.values - LEVEL) <= coverage_band()), coverage.values


def test_fpt_density_per_wall_integrates_to_splitting() -> None:
    # Splitting: walls drawn Bernoulli(0.3) independently of T; each wall's density
    # integrates to that wall's absorbed fraction.
    rng = np.random.default_rng(5)
    times = rng.exponential(size=(2, 2000))
    walls = (rng.random(times.shape) < 0.3).astype(np.int16)
    ds = make_dataset(times, 2.0, [0.0], walls=walls)
    high = stats.fpt_density(ds, bins=10, wall="x_upper")
    total = (high["estimate"] * high["fpt_width"]).sum("fpt_bin").values
    expected = ((ds["absorbing_wall"] == 1).sum("walker") / 2000).values
    np.testing.assert_allclose(total, expected, rtol=RTOL_F64)


def test_fpt_density_rebins_stored_histogram_exactly() -> None:
    # Re-binning the aggregate histogram on its own bin boundaries gives the same
    # counts as binning the per-walker times.
    rng = np.random.default_rng(6)
    ds = make_dataset(rng.exponential(size=(3, 1000)), 2.0, [0.0], fpt_bins=40)
    edges = np.linspace(0.0, 2.0, 11)
    per_walker = stats.fpt_density(ds, bins=edges)
    binned = stats.fpt_density(aggregate_only(ds), bins=edges)
    np.testing.assert_array_equal(per_walker["count"].values, binned["count"].values)
    native = stats.fpt_density(aggregate_only(ds))
    assert native.sizes["fpt_bin"] == 40


# --------------------------------------------------------------------------- moments


def test_fpt_moments_match_invgauss() -> None:
    # scipy.stats.invgauss mean and variance; standard error of s^2 from the 4th
    # central moment (Kendall & Stuart vol. 1).
    law = inverse_gaussian()
    rng = np.random.default_rng(7)
    ds = make_dataset(law.rvs(size=(1, 20_000), random_state=rng), np.inf, [0.0])
    result = stats.fpt_moments(ds).isel(point=0)
    for moment, exact in (("mean", law.mean()), ("variance", law.var())):
        row = result.sel(moment=moment)
        z = stats.zscore(float(row["estimate"]), exact, float(row["stderr"]))
        assert abs(z) <= Z_STAT, (moment, z)
    assert float(result["censored"]) == 0.0


def test_fpt_moments_coverage() -> None:
    # scipy.stats.expon: mean 1, variance 1; normal intervals, n = 2000 per replication.
    rng = np.random.default_rng(8)
    times = rng.exponential(size=(REPLICATIONS, 2000))
    ds = make_dataset(times, np.inf, [0.0], chunk=2000)
    result = stats.fpt_moments(ds, level=LEVEL)
    exact = xr.DataArray([1.0, 1.0, 1.0], dims="moment")
    inside = (result["lower"] <= exact) & (exact <= result["upper"])
    coverage = inside.mean("point").values
    assert np.all(np.abs(coverage - LEVEL) <= coverage_band()), coverage


def test_fpt_moments_warns_when_censored() -> None:
    rng = np.random.default_rng(9)
    ds = make_dataset(rng.exponential(size=(2, 1000)), 2.0, [0.0])
    with pytest.warns(SweepWarning, match="conditional"):
        result = stats.fpt_moments(ds)
    # scipy.stats.expon.sf(2): the censored fraction, within binomial errors.
    se = math.sqrt(scipy_stats.expon.sf(2.0) * scipy_stats.expon.cdf(2.0) / 1000)
    for value in result["censored"].values:
        assert abs(stats.zscore(value, scipy_stats.expon.sf(2.0), se)) <= Z_STAT


# --------------------------------------------------------------------------- quantiles


def test_fpt_quantiles_match_levy() -> None:
    # scipy.stats.levy.ppf (half-line first passage, x0 = 1, D = 0.5: scale 1); the
    # 0.9 quantile lies beyond the horizon (levy.cdf(20) = 0.82) and is NaN.
    law, horizon = scipy_stats.levy(scale=1.0), 20.0
    rng = np.random.default_rng(10)
    ds = make_dataset(law.rvs(size=(1, 20_000), random_state=rng), horizon, [0.0])
    result = stats.fpt_quantiles(ds, q=[0.25, 0.5, 0.75, 0.9]).isel(point=0)
    for q in (0.25, 0.5, 0.75):
        row = result.sel(quantile=q)
        z = stats.zscore(float(row["estimate"]), law.ppf(q), float(row["stderr"]))
        assert abs(z) <= Z_STAT, (q, z)
    beyond = result.sel(quantile=0.9)
    assert np.isnan(beyond["estimate"]) and np.isinf(beyond["upper"])
    median = stats.fpt_quantiles(ds, q=0.5)
    assert "quantile" not in median.dims


def test_fpt_quantiles_order_statistic_coverage() -> None:
    # Order-statistic (binomial) intervals, Thompson 1936 / Conover 1999 sec. 3.2:
    # coverage >= level for any continuous law; scipy.stats.levy.ppf, with censoring.
    law = scipy_stats.levy(scale=1.0)
    rng = np.random.default_rng(11)
    times = law.rvs(size=(REPLICATIONS, 99), random_state=rng)
    ds = make_dataset(times, 20.0, [0.0])
    q = np.array([0.1, 0.5, 0.75])
    result = stats.fpt_quantiles(ds, q=q, level=LEVEL)
    exact = xr.DataArray(law.ppf(q), dims="quantile", coords={"quantile": q})
    coverage = ((result["lower"] <= exact) & (exact <= result["upper"])).mean("point")
    assert np.all(coverage.values >= LEVEL - coverage_band()), coverage.values


# --------------------------------------------------------------------------- means


def test_restricted_mean_matches_survival_integral() -> None:
    # integral_0^H of scipy.stats.invgauss.sf by scipy.integrate.quad.
    law, horizon = inverse_gaussian(), 1.5
    rng = np.random.default_rng(12)
    ds = make_dataset(law.rvs(size=(1, 20_000), random_state=rng), horizon, [0.0])
    with pytest.warns(SweepWarning, match="restricted"):
        result = stats.restricted_mean(ds, horizon=horizon).isel(point=0)
    exact = integrate.quad(law.sf, 0.0, horizon)[0]
    z = stats.zscore(float(result["estimate"]), exact, float(result["stderr"]))
    assert abs(z) <= Z_STAT, z
    # Without censoring it is the plain mean (scipy.stats.invgauss mean), no warning.
    free = make_dataset(law.rvs(size=(1, 20_000), random_state=rng), np.inf, [0.0])
    mean = stats.restricted_mean(free).isel(point=0)
    z = stats.zscore(float(mean["estimate"]), law.mean(), float(mean["stderr"]))
    assert abs(z) <= Z_STAT, z


def test_restricted_mean_coverage() -> None:
    # (1 - exp(-H)) = integral_0^H scipy.stats.expon.sf; normal interval, n = 200.
    rng = np.random.default_rng(13)
    horizon = 1.5
    ds = make_dataset(rng.exponential(size=(REPLICATIONS, 200)), horizon, [0.0])
    with pytest.warns(SweepWarning):
        result = stats.restricted_mean(ds, level=LEVEL, horizon=horizon)
    exact = -math.expm1(-horizon)
    coverage = float(((result["lower"] <= exact) & (exact <= result["upper"])).mean())
    assert abs(coverage - LEVEL) <= coverage_band(), coverage


def test_restricted_mean_needs_horizon_when_censored() -> None:
    rng = np.random.default_rng(14)
    ds = make_dataset(rng.exponential(size=(1, 100)), 1.0, [0.0])
    with pytest.raises(ValueError, match="horizon"):
        stats.restricted_mean(ds)
    recorded = ds.assign_coords(horizon=("point", [1.0]))
    with pytest.raises(ValueError, match="exceeds"):
        stats.restricted_mean(recorded, horizon=2.0)


# --------------------------------------------------------------------------- tail


def shifted_exponential(
    rng: np.random.Generator, shape: tuple[int, int], rate: float, shift: float
) -> np.ndarray:
    """shift + scipy.stats.expon(scale=1/rate): S(t) = exp(rate shift) exp(-rate t)."""
    return shift + scipy_stats.expon(scale=1 / rate).rvs(size=shape, random_state=rng)


def test_tail_fit_recovers_exponential_tail() -> None:
    # scipy.stats.expon shifted by t0: rate lambda, amplitude exp(lambda t0), mean
    # t0 + 1/lambda; horizon where S = 0.05, so the mean needs the extrapolation.
    rate, shift = 2.0, 0.5
    horizon = shift + math.log(20.0) / rate
    rng = np.random.default_rng(15)
    grid = np.linspace(0.0, horizon, 41)
    times = shifted_exponential(rng, (1, 20_000), rate, shift)
    ds = make_dataset(times, horizon, grid)
    result = stats.tail_fit(ds, horizon=horizon).isel(point=0)
    exact = {
        "rate": rate,
        "amplitude": math.exp(rate * shift),
        "mean": shift + 1 / rate,
    }
    for name, value in exact.items():
        row = result.sel(parameter=name)
        z = stats.zscore(float(row["estimate"]), value, float(row["stderr"]))
        assert abs(z) <= Z_STAT, (name, z)
    assert int(result["window_points"]) > 2


def test_tail_fit_coverage() -> None:
    # As above with n = 400 walkers per replication: normal (GLS / delta-method)
    # intervals of the rate and the extrapolated mean, log-normal for the amplitude.
    rate, shift = 2.0, 0.5
    horizon = shift + math.log(20.0) / rate
    rng = np.random.default_rng(16)
    grid = np.linspace(0.0, horizon, 41)
    times = shifted_exponential(rng, (REPLICATIONS, 400), rate, shift)
    result = stats.tail_fit(make_dataset(times, horizon, grid), level=LEVEL)
    assert result["window_points"].min() >= 2
    exact = {
        "rate": rate,
        "amplitude": math.exp(rate * shift),
        "mean": shift + 1 / rate,
    }
    for name, value in exact.items():
        row = result.sel(parameter=name)
        coverage = float(((row["lower"] <= value) & (value <= row["upper"])).mean())
        assert abs(coverage - LEVEL) <= coverage_band(), (name, coverage)


def test_tail_fit_without_recorded_horizon_cuts_at_last_grid_time() -> None:
    rate, shift = 2.0, 0.5
    rng = np.random.default_rng(17)
    grid = np.linspace(0.0, 1.5, 31)
    times = shifted_exponential(rng, (1, 20_000), rate, shift)
    result = stats.tail_fit(make_dataset(times, 3.0, grid)).isel(point=0)
    assert float(result["cut"]) == grid[-1]
    row = result.sel(parameter="mean")
    z = stats.zscore(float(row["estimate"]), shift + 1 / rate, float(row["stderr"]))
    assert abs(z) <= Z_STAT, z


# --------------------------------------------------------------------------- positions


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


# --------------------------------------------------------------------------- layouts


def test_aggregate_layout_agrees_within_a_bin_width() -> None:
    # Same walkers, binned: midpoint estimates lie within one stored bin width of the
    # per-walker ones (mean, restricted mean, quantiles).
    law, horizon = inverse_gaussian(), 3.0
    rng = np.random.default_rng(20)
    ds = make_dataset(
        law.rvs(size=(2, 5000), random_state=rng), horizon, [0.0], fpt_bins=300
    )
    width = horizon / 300
    aggregate = aggregate_only(ds)
    for data in (ds, aggregate):
        with pytest.warns(SweepWarning, match="conditional"):
            stats.fpt_moments(data)
        with pytest.warns(SweepWarning, match="restricted"):
            stats.restricted_mean(data)
    with pytest.warns(SweepWarning):
        per_walker = [
            stats.fpt_moments(ds).sel(moment="mean"),
            stats.restricted_mean(ds),
            stats.fpt_quantiles(ds, q=[0.1, 0.5, 0.9]),
        ]
        binned = [
            stats.fpt_moments(aggregate).sel(moment="mean"),
            stats.restricted_mean(aggregate),
            stats.fpt_quantiles(aggregate, q=[0.1, 0.5, 0.9]),
        ]
    for expected, result in zip(per_walker, binned):
        assert np.all(np.abs(result["estimate"] - expected["estimate"]) <= width)
    summary = stats.summary(aggregate)
    assert np.all(np.abs(summary["mean_fpt"] - stats.summary(ds)["mean_fpt"]) <= width)


def test_summary_headline_numbers() -> None:
    rng = np.random.default_rng(21)
    times = rng.exponential(size=(3, 1000))
    walls = (rng.random(times.shape) < 0.3).astype(np.int16)
    ds = make_dataset(times, 4.0, np.linspace(0, 2, 5), walls=walls)
    summary = stats.summary(ds)
    mean = stats.mean_first_passage_time(ds)
    split = stats.splitting_probability(ds)
    np.testing.assert_array_equal(summary["mean_fpt"].values, mean["estimate"].values)
    np.testing.assert_array_equal(summary["splitting"].values, split["estimate"].values)
    assert list(summary["wall"].values) == WALLS_1D
    one = stats.summary(ds.isel(point=1))
    assert "point" not in one.dims
    np.testing.assert_array_equal(one["censored"], summary["censored"][1])


def test_statistics_accept_one_point() -> None:
    # A selection without the point dimension gives that point's row of the sweep.
    rng = np.random.default_rng(22)
    ds = make_dataset(rng.exponential(size=(3, 1000)), 10.0, np.linspace(0, 2, 21))
    for func in (stats.fpt_moments, stats.survival_band, stats.fpt_quantiles):
        whole = func(ds).isel(point=2)
        single = func(ds.isel(point=2))
        xr.testing.assert_allclose(whole, single, rtol=RTOL_F64)


def test_statistics_reject_bad_arguments() -> None:
    rng = np.random.default_rng(23)
    ds = make_dataset(rng.exponential(size=(1, 100)), 2.0, [0.0], fpt_bins=10)
    with pytest.raises(ValueError, match="level must lie strictly between 0 and 1"):
        stats.survival_band(ds, level=95)
    with pytest.raises(ValueError, match="snapping to the stored fpt bins"):
        stats.fpt_density(aggregate_only(ds), bins=40)
    with pytest.raises(ValueError, match="probabilities in"):
        stats.fpt_quantiles(ds, q=1.5)
    with pytest.raises(ValueError, match="no first-passage data"):
        stats.fpt_moments(aggregate_only(ds).drop_vars("fpt_histogram"))


def test_stats_on_a_real_store_know_the_horizon(tmp_path: pathlib.Path) -> None:
    """The store records the censoring time, so restricted means need no argument."""
    import sweep
    from sweep.execute import RunOptions, run
    from tests.conftest import SMALL_SPEC

    spec = tmp_path / "short.toml"
    spec.write_text(SMALL_SPEC.replace("horizon = 3.0", "horizon = 1.0"))
    out = tmp_path / "short.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    ds = sweep.open(out)
    np.testing.assert_array_equal(ds.horizon.values, [1.0, 1.0])
    with pytest.warns(SweepWarning):
        restricted = stats.restricted_mean(ds)
    # min(T, H) <= H, and the restricted mean is at least the absorbed-only mean
    # weighted by the absorbed fraction.
    assert (restricted["estimate"] <= 1.0).all()
    assert np.isfinite(stats.summary(ds)["mean_fpt"].values).all()


def test_mean_square_displacement_of_free_motion(tmp_path: pathlib.Path) -> None:
    """Free motion in the plane: MSD = 2 d D t (Karlin & Taylor 1975, ch. 7 [from
    memory]; sweep.analytic.free_variance per axis)."""
    import sweep
    from sweep import analytic
    from sweep.execute import RunOptions, run

    spec = tmp_path / "free.toml"
    spec.write_text(
        """
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
    )
    out = tmp_path / "free.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    msd = stats.mean_square_displacement(sweep.open(out))
    for s, t in enumerate((0.25, 1.0)):
        exact = 2 * float(analytic.free_variance(t, 0.5))
        est = float(msd["estimate"].isel(point=0, snapshot=s))
        se = float(msd["stderr"].isel(point=0, snapshot=s))
        assert abs(est - exact) <= Z_STAT * se, (t, est, exact, se)


# ------------------------------------------------------------ edge cases


def test_wilson_interval_contains_its_estimate_at_zero_and_one() -> None:
    """At p-hat = 1 the formula's upper bound is 1 in exact arithmetic; in floating
    point it landed an ulp below for some n (the report's errorbar then failed)."""
    n = np.arange(1, 5001, dtype=np.float64)
    for successes in (np.zeros_like(n), n):
        lower, upper = stats.wilson_interval(successes, n)
        p = successes / n
        assert (lower <= p).all() and (p <= upper).all()
        assert (lower >= 0.0).all() and (upper <= 1.0).all()
    assert (stats.wilson_interval(n, n)[1] == 1.0).all()
    assert (stats.wilson_interval(np.zeros_like(n), n)[0] == 0.0).all()


def test_summary_on_edge_case_stores(
    degenerate_stores: dict[str, pathlib.Path],
) -> None:
    """All absorbed by one surface, nothing absorbing, all censored, one walker, one
    task done: whole numbers of walkers, flags on means over censored walkers,
    intervals around their estimates, and no RuntimeWarning."""
    import warnings

    import sweep

    for name, path in degenerate_stores.items():
        ds = sweep.open(path)
        with warnings.catch_warnings():
            warnings.simplefilter("error", RuntimeWarning)
            s = stats.summary(ds)
            intervals = [stats.splitting_probability(ds), stats.survival(ds)]
            if "first_passage_time" in ds:
                intervals.append(stats.mean_first_passage_time(ds))
        assert s["walkers"].dtype.kind == "i", name
        np.testing.assert_array_equal(
            s["mean_fpt_censored"].values, s["censored"].values > 0, err_msg=name
        )
        for result in intervals:
            est, lo, hi = (
                np.asarray(result[k].values) for k in ("estimate", "lower", "upper")
            )
            ok = np.isnan(est) | ((lo <= est) & (est <= hi))
            assert ok.all(), (name, est, lo, hi)
    on_target = stats.summary(sweep.open(degenerate_stores["all_on_target"]))
    assert (on_target["splitting"].sel(wall="target_0") == 1.0).all()
    assert (on_target["splitting_upper"].sel(wall="target_0") == 1.0).all()
    censored = stats.summary(sweep.open(degenerate_stores["all_censored"]))
    assert (censored["censored"] == 1.0).all() and censored["mean_fpt_censored"].all()
