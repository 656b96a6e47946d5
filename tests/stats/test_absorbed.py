"""sweep.stats.absorbed: both store layouts, read chunk by chunk."""

from __future__ import annotations

import numpy as np
import pytest

from sweep import stats
from sweep.errors import SweepWarning
from tests.stats.synthetic import (
    aggregate_only,
    inverse_gaussian,
    make_dataset,
)


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
