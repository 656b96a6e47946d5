"""sweep.stats.survival: the simultaneous survival band, the restricted mean and
the exponential tail fit, on synthetic Datasets with known answers and a real store."""

from __future__ import annotations

import math
import pathlib

import numpy as np
import pytest
from scipy import integrate
from scipy import stats as scipy_stats

import sweep
from sweep import stats
from sweep.errors import SweepWarning
from tests.conftest import SMALL_SPEC, build_store
from tests.stats.synthetic import (
    LEVEL,
    REPLICATIONS,
    coverage_band,
    inverse_gaussian,
    make_dataset,
)
from tests.tolerances import RTOL_F64, Z_STAT


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


def shifted_exponential(
    rng: np.random.Generator, shape: tuple[int, int], rate: float, shift: float
) -> np.ndarray:
    """shift + scipy.stats.expon(scale=1/rate): S(t) = exp(rate shift) exp(-rate t)."""
    return shift + scipy_stats.expon(scale=1 / rate).rvs(size=shape, random_state=rng)


def tail_parameters(rate: float, shift: float) -> dict[str, float]:
    """Exact rate, amplitude and mean of :func:`shifted_exponential`'s law."""
    return {"rate": rate, "amplitude": math.exp(rate * shift), "mean": shift + 1 / rate}


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
    exact = tail_parameters(rate, shift)
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
    exact = tail_parameters(rate, shift)
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


def test_stats_on_a_real_store_know_the_horizon(tmp_path: pathlib.Path) -> None:
    """The store records the censoring time, so restricted means need no argument."""
    short = SMALL_SPEC.replace("horizon = 3.0", "horizon = 1.0")
    ds = sweep.open(build_store(short, tmp_path / "short.zarr", threads=2))
    np.testing.assert_array_equal(ds.horizon.values, [1.0, 1.0])
    with pytest.warns(SweepWarning):
        restricted = stats.restricted_mean(ds)
    # min(T, H) <= H, and the restricted mean is at least the absorbed-only mean
    # weighted by the absorbed fraction.
    assert (restricted["estimate"] <= 1.0).all()
    assert np.isfinite(stats.summary(ds)["mean_fpt"].values).all()
