"""sweep.stats.validate: one check of level and selection for every statistic."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from sweep import stats
from tests.stats.synthetic import (
    aggregate_only,
    make_dataset,
)
from tests.tolerances import RTOL_F64


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
