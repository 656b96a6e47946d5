"""sweep.stats.absorbed: both store layouts, read chunk by chunk."""

from __future__ import annotations

import subprocess
import sys

import dask.array as da
import numpy as np
import pytest

from sweep import stats
from sweep.errors import SweepWarning
from sweep.stats.absorbed import bin_block, bin_rows
from tests.stats.synthetic import CHUNK, aggregate_only, inverse_gaussian, make_dataset
from tests.tolerances import RTOL_F64


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


def test_binning_reads_chunk_by_chunk_with_the_former_sums() -> None:
    """Lazy (chunked) and in-memory first-passage times bin to the same counts; the
    per-bin sums of times equal, bit for bit, the dask tree reduction (groups of
    four) that summed the per-chunk partial histograms before stats stopped
    importing dask (13 chunks per point: two levels of grouping)."""
    rng = np.random.default_rng(24)
    ds = make_dataset(rng.exponential(size=(3, 6500)), 4.0, [0.0])
    times = ds["first_passage_time"]
    edges = np.tile(np.linspace(0.0, 4.0, 9), (3, 1))
    count, total = bin_rows(times, edges)
    in_memory = bin_block(np.asarray(times.values), edges)
    np.testing.assert_array_equal(count, in_memory[:, 0], strict=True)
    np.testing.assert_allclose(total, in_memory[:, 1], rtol=RTOL_F64)
    blocks = [
        bin_block(np.asarray(times[:, i : i + CHUNK].values), edges)
        for i in range(0, times.sizes["walker"], CHUNK)
    ]
    partials = da.from_array(np.stack(blocks, axis=1), chunks=(1, 1, 2, 8))
    former = np.asarray(partials.sum(axis=1).compute())
    np.testing.assert_array_equal(total, former[:, 1], strict=True)


def test_stats_does_not_import_dask() -> None:
    """Only the executor imports dask (the layering rule); a lazy store is reduced
    through xarray."""
    code = (
        "import sys, sweep.stats; "
        "print(sorted(m for m in sys.modules if m.split('.')[0] == 'dask'))"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert done.stdout.strip() == "[]", done.stdout
