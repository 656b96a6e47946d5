"""sweep.stats.passage on synthetic Datasets with known answers: the
first-passage-time density, its moments and its quantiles (see tests.stats.synthetic)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import xarray as xr
from scipy import stats as scipy_stats

from sweep import stats
from sweep.errors import SweepWarning
from tests.stats.synthetic import (
    LEVEL,
    REPLICATIONS,
    aggregate_only,
    coverage_band,
    inverse_gaussian,
    make_dataset,
)
from tests.tolerances import RTOL_F64, Z_STAT


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
