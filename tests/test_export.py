"""HDF5 export: exact round trip, dimension scales, provenance, subsets."""

from __future__ import annotations

import json
from pathlib import Path

import h5py
import numpy as np
import pytest

import sweep
from sweep.errors import StoreError
from sweep.execute import RunOptions, run
from sweep.export import export_hdf5


@pytest.fixture
def small_store(small_spec: Path, tmp_path: Path) -> Path:
    out = tmp_path / "s.zarr"
    assert run(small_spec, out, RunOptions(threads=2, progress=False)).complete
    return out


def test_export_round_trip_is_exact(small_store: Path, tmp_path: Path) -> None:
    out = export_hdf5(small_store, tmp_path / "s.h5")
    ds = sweep.open(small_store)
    with h5py.File(out, "r") as h5:
        for name in (
            "first_passage_time",
            "absorbing_wall",
            "exit_position",
            "survival",
            "occupancy",
            "done",
        ):
            np.testing.assert_array_equal(
                h5[name][...], ds[name].values, err_msg=name, strict=True
            )
            assert [dim[0].name for dim in h5[name].dims] == [
                f"/{d}" for d in ds[name].dims
            ]
        np.testing.assert_array_equal(h5["diffusivity"][...], ds.diffusivity.values)
        np.testing.assert_array_equal(h5["time"][...], ds.time.values)
        assert h5.attrs["spec_hash"] == ds.attrs["spec_hash"]
        assert json.loads(h5.attrs["wall_names"]) == ["x_lower", "x_upper"]
        assert "diffusivity" in h5.attrs["definition"]
    assert not list(tmp_path.glob(".s.h5.partial*"))


def test_export_subset_of_points_and_variables(
    small_store: Path, tmp_path: Path
) -> None:
    out = export_hdf5(
        small_store, tmp_path / "sub.h5", points=[1], variables=["first_passage_time"]
    )
    ds = sweep.open(small_store)
    with h5py.File(out, "r") as h5:
        assert "survival" not in h5
        np.testing.assert_array_equal(
            h5["first_passage_time"][...], ds.first_passage_time.isel(point=[1]).values
        )
        np.testing.assert_array_equal(h5["diffusivity"][...], [1.0])


def test_export_rejects_unknown_variable_and_point(
    small_store: Path, tmp_path: Path
) -> None:
    with pytest.raises(StoreError, match="no variable 'fpt'"):
        export_hdf5(small_store, tmp_path / "x.h5", variables=["fpt"])
    with pytest.raises(StoreError, match="out of range"):
        export_hdf5(small_store, tmp_path / "x.h5", points=[7])
    assert not (tmp_path / "x.h5").exists()


def test_export_edge_case_stores(
    degenerate_stores: dict[str, Path], tmp_path: Path
) -> None:
    """Every edge-case store exports, and reads back as it is stored."""
    for name, path in degenerate_stores.items():
        out = export_hdf5(path, tmp_path / f"{name}.h5")
        ds = sweep.open(path)
        with h5py.File(out, "r") as h5:
            np.testing.assert_array_equal(
                h5["walkers_done"][...], ds["walkers_done"].values, err_msg=name
            )
            np.testing.assert_array_equal(
                h5["absorbing_wall"][...], ds["absorbing_wall"].values, err_msg=name
            )


def test_export_refuses_an_existing_file(small_store: Path, tmp_path: Path) -> None:
    """An existing file (here a definition) is never replaced without --replace."""
    target = tmp_path / "base.toml"
    target.write_text("[sweep]\n")
    with pytest.raises(StoreError, match="already exists.*--replace"):
        export_hdf5(small_store, target)
    assert target.read_text() == "[sweep]\n"
    export_hdf5(small_store, target, replace=True)
    with h5py.File(target, "r") as h5:
        assert "first_passage_time" in h5
