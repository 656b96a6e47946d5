"""sweep.stats.summary: headline numbers per point."""

from __future__ import annotations

import pathlib
import warnings

import numpy as np

import sweep
from sweep import stats
from tests.stats.synthetic import WALLS_1D, make_dataset


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


def test_summary_on_edge_case_stores(
    degenerate_stores: dict[str, pathlib.Path],
) -> None:
    """All absorbed by one surface, nothing absorbing, all censored, one walker, one
    task done: whole numbers of walkers, flags on means over censored walkers,
    intervals around their estimates, and no RuntimeWarning."""
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
