"""HDF5 export: exact round trip, dimension scales, provenance, subsets; bad options
and destinations get one clear message and leave the store as it was."""

from __future__ import annotations

import json
from pathlib import Path

import h5py
import numpy as np
import pytest

import sweep
from sweep.errors import StoreError
from sweep.export import export_hdf5
from tests.cli_cases import (
    Case,
    case_test,
    copy_store,
    read_only_dir,
)

#: The message argparse prints for bad options of `sweep export`.
ARGPARSE_EXPORT_ERROR = "sweep export: error:"

CASES: list[Case] = [
    Case(
        id="export-points-not-indices",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "0,x"),
        expect=("--points", "0,3,5-9", "'0,x'"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
        prefix=ARGPARSE_EXPORT_ERROR,
    ),
    Case(
        id="export-points-out-of-range",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "0,9"),
        expect=("{ws}/s.zarr", "--points [9] out of range", "points 0 to 1"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-points-range-backwards",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "1-0"),
        expect=("--points", "'1-0'"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
        prefix=ARGPARSE_EXPORT_ERROR,
    ),
    Case(
        id="export-unknown-variable",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--variables", "survival,fpt"),
        expect=("{ws}/s.zarr", "no variable 'fpt'", "the store has first_passage_time"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-into-missing-directory",
        argv=("export", "{ws}/s.zarr", "{ws}/no/out.h5"),
        expect=("{ws}/no/out.h5", "cannot write the HDF5 export", "does not exist"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="no",
    ),
    Case(
        id="export-onto-the-store-itself",
        argv=("export", "{ws}/s.zarr", "{ws}/s.zarr"),
        expect=("{ws}/s.zarr", "already exists", "--replace"),
        setup=(copy_store(),),
        store="s.zarr",
    ),
    Case(
        id="export-replacing-the-store-itself",
        argv=("export", "{ws}/s.zarr", "{ws}/s.zarr", "--replace"),
        expect=("{ws}/s.zarr", "cannot write the HDF5 export"),
        setup=(copy_store(),),
        store="s.zarr",
    ),
    Case(
        id="export-into-read-only-directory",
        argv=("export", "{ws}/s.zarr", "{ws}/ro/out.h5"),
        expect=("{ws}/ro/out.h5", "read-only file system"),
        setup=(copy_store(), read_only_dir("ro")),
        store="s.zarr",
    ),
]


test_bad_export_options_and_destinations = case_test(
    CASES, "Bad export options and destinations leave the store as it was."
)


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
