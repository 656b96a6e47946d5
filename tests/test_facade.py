"""The ``sweep`` package itself: a typed :func:`sweep.run`, :func:`sweep.open`, and an
``import sweep`` that loads neither numba nor dask."""

from __future__ import annotations

import subprocess
import sys
import typing
from pathlib import Path

import numpy as np
import pytest

import sweep
from sweep.execute import RunSummary
from tests.conftest import SMALL_SPEC, assert_stores_identical, build_store


def test_run_is_typed_without_any() -> None:
    import xarray as xr

    names = {"RunOptions": sweep.RunOptions, "RunSummary": RunSummary, "xr": xr}
    hints = typing.get_type_hints(sweep.run, localns=names)
    assert hints["return"] is RunSummary
    assert all(h is not typing.Any for h in hints.values()), hints
    assert "Any" not in str(hints), hints


def test_run_takes_option_keywords_or_run_options(tmp_path: Path) -> None:
    spec = tmp_path / "small.toml"
    spec.write_text(SMALL_SPEC)
    summary = sweep.run(spec, tmp_path / "a.zarr", threads=1, progress=False)
    assert isinstance(summary, RunSummary) and summary.complete
    options = sweep.RunOptions(threads=2, progress=False)
    assert sweep.run(spec, tmp_path / "b.zarr", options).complete
    assert_stores_identical(tmp_path / "a.zarr", tmp_path / "b.zarr")


def test_run_refuses_options_and_option_keywords_together(tmp_path: Path) -> None:
    with pytest.raises(sweep.OptionError, match="give either options or threads"):
        sweep.run(tmp_path / "x.toml", None, sweep.RunOptions(), threads=2)
    assert not (tmp_path / "x.zarr").exists()


def test_import_sweep_loads_neither_numba_nor_dask() -> None:
    heavy = ("numba", "dask", "distributed", "zarr")
    probe = f"import sys, sweep; sys.exit(any(m in sys.modules for m in {heavy!r}))"
    assert subprocess.run([sys.executable, "-c", probe]).returncode == 0, heavy


def test_open_selects_points_by_parameter(small_store: Path) -> None:
    ds = sweep.open(small_store)
    assert ds.first_passage_time.dims == ("point", "walker")
    assert ds.exit_position.dims == ("point", "walker", "axis")
    assert ds.survival.dims == ("point", "time")
    assert ds.occupancy.dims == ("point", "snapshot", "x_bin")
    assert ds.done.dims == ("point", "chunk") and bool(ds.done.all())
    # Lazy: per-walker variables are dask arrays until computed.
    assert ds.first_passage_time.chunks is not None
    picked = ds.set_xindex("diffusivity").sel(diffusivity=1.0)
    assert picked.first_passage_time.dims == ("walker",)
    where = ds.where(ds.diffusivity == 0.5, drop=True)
    assert where.sizes["point"] == 1
    # Snapshot times keep the user's order (0.2, then 0.05) and are snapped to dt.
    np.testing.assert_array_equal(ds.snapshot_time.isel(point=0).values, [0.2, 0.05])
    # Free walkers at t = 0.05 outnumber those at t = 0.2 (absorption only removes).
    occ = ds.occupancy.sum("x_bin").compute()
    assert (occ.isel(snapshot=1) >= occ.isel(snapshot=0)).all()
    # Survival at t = 0 is one; counts match per-walker data exactly.
    np.testing.assert_array_equal(ds.survival.isel(time=0).values, [1.0, 1.0])
    t = ds.time.values[5]
    free = (ds.first_passage_time > t) | ds.first_passage_time.isnull()
    np.testing.assert_array_equal(
        free.sum("walker").values, ds.survival_count.isel(time=5).values
    )


def test_open_masks_unfinished_tasks(small_spec: Path, tmp_path: Path) -> None:
    out = tmp_path / "s.zarr"
    build_store(small_spec, out, threads=2)
    (out / "_tasks" / "p1-c2.json").unlink()
    ds = sweep.open(out)
    assert not bool(ds.done.sel(point=1, chunk=2))
    assert int(ds.walkers_done.sel(point=1)) == 2500
    fpt = ds.first_passage_time.sel(point=1).values
    assert np.isnan(fpt[1000:1500]).all() and not np.isnan(fpt[:1000]).all()
    assert (ds.absorbing_wall.sel(point=1).values[1000:1500] == -1).all()
    np.testing.assert_array_equal(ds.survival.isel(time=0).values, [1.0, 1.0])
