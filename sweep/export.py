"""``sweep export``: a store (or part of it) to one HDF5 file, chunk by chunk.

Variables keep the names of :func:`sweep.open`'s Dataset and sit at the file's root;
every dimension is an HDF5 dimension scale (so netCDF-aware readers recover dims), and
the definition and provenance are file attributes (JSON text where they are nested).
Memory stays bounded: data moves one store chunk at a time.
"""

from __future__ import annotations

import contextlib
import json
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np
import xarray as xr

from sweep import store
from sweep.errors import StoreError

#: Largest HDF5 chunk extent per axis: 2^17 float64 values are 1 MiB, the size HDF5's
#: default chunk cache holds.
HDF5_CHUNK_ELEMENTS = 1 << 17

#: Variables exported by default: those the store's layout table marks as exported,
#: then the markers' ``done`` and ``walkers_done`` (see docs/store-format.md).
DEFAULT_VARIABLES = store.exported_variables()


def export_hdf5(
    path: str | Path,
    out: str | Path,
    *,
    points: Sequence[int] | None = None,
    variables: Sequence[str] | None = None,
    compression: str | None = "gzip",
    replace: bool = False,
) -> Path:
    """Copy a store to an HDF5 file.

    Parameters
    ----------
    path : str or Path
        The zarr store.
    out : str or Path
        The HDF5 file to write; written under a temporary name and renamed when
        complete, so a killed export never leaves a truncated file under ``out``.
    points : sequence of int, optional
        Point indices to export (default: all), in the given order.
    variables : sequence of str, optional
        Variables to export (default: every data variable present).
    compression : str or None
        HDF5 filter for the datasets ("gzip", "lzf" or None).
    replace : bool
        Replace ``out`` if it exists. Without it an existing file (of any kind: a
        definition, another export) is refused and left as it is.

    Returns
    -------
    Path
        ``out``.
    """
    out = Path(out)
    if not replace:
        _refuse_existing(out)
    ds = store.open_dataset(path, verify=True)
    attrs = store.read_attrs(path)
    n_points = ds.sizes["point"]
    if points is not None:
        bad = [p for p in points if not 0 <= p < n_points]
        if bad:
            raise StoreError(
                f"{path}: --points {bad} out of range; the store has points 0 to {n_points - 1}."
            )
        ds = ds.isel(point=list(points))
    names = [v for v in DEFAULT_VARIABLES if v in ds.data_vars]
    if variables is not None:
        unknown = [v for v in variables if v not in ds.data_vars]
        if unknown:
            raise StoreError(
                f"{path}: no variable {', '.join(map(repr, unknown))}; the store has "
                f"{', '.join(names)}."
            )
        names = list(variables)
    parent = out.absolute().parent
    if not parent.is_dir():
        raise StoreError(
            f"{out}: cannot write the HDF5 export: the directory {parent} does not exist."
        )
    if not os.access(parent, os.W_OK):
        raise StoreError(
            f"{out}: cannot write the HDF5 export: the directory {parent} is not writable "
            f"(read-only file system or permissions). Choose another output path."
        )
    tmp = out.with_name(f".{out.name}.partial-{os.getpid()}")
    try:
        with h5py.File(tmp, "w") as h5:
            _write_attrs(h5, attrs, ds)
            for name in names:
                _write_variable(h5, name, ds[name], compression)
            _write_scales(h5, ds, names)
        if replace:
            os.replace(tmp, out)
        else:
            # A hard link fails if ``out`` appeared meanwhile: never overwritten.
            try:
                os.link(tmp, out)
            except FileExistsError:
                _refuse_existing(out)
                raise
            except OSError:  # no hard links on this file system
                _refuse_existing(out)
                os.replace(tmp, out)
            else:
                tmp.unlink()
    except OSError as err:
        with contextlib.suppress(OSError):
            tmp.unlink(missing_ok=True)
        raise StoreError(
            f"{out}: cannot write the HDF5 export: {err.strerror or err}. Choose a "
            f"writable output path; the store is unchanged."
        ) from err
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink(missing_ok=True)
        raise
    return out


def _refuse_existing(out: Path) -> None:
    if out.exists() or out.is_symlink():
        raise StoreError(
            f"{out}: already exists; the export leaves it as it is. Choose another "
            f"output path, or pass --replace to overwrite it."
        )


def _write_attrs(h5: h5py.File, attrs: dict[str, Any], ds: xr.Dataset) -> None:
    for key, value in attrs.items():
        h5.attrs[key] = json.dumps(value) if isinstance(value, dict | list) else value
    h5.attrs["exported_from"] = str(Path(ds.attrs["store"]))


def _write_variable(
    h5: h5py.File, name: str, var: xr.DataArray, compression: str | None
) -> None:
    data = var.data
    chunks = None
    if hasattr(data, "chunks") and data.chunks is not None and var.ndim:
        chunks = tuple(max(1, min(c[0], HDF5_CHUNK_ELEMENTS)) for c in data.chunks)
    # Floats read NaN where nothing was written; a masked integer array (the wall
    # index) its store fill value.
    fill = np.nan if var.dtype.kind == "f" else store.read_fill(name)
    dset = h5.create_dataset(
        name,
        shape=var.shape,
        dtype=var.dtype,
        chunks=chunks if var.ndim else None,
        compression=compression if var.ndim else None,
        fillvalue=fill,
    )
    if hasattr(data, "blocks"):
        # One dask block (a store chunk) at a time: bounded memory.
        for index in np.ndindex(*data.numblocks):
            block = data.blocks[index]
            starts = [sum(data.chunks[a][:i]) for a, i in enumerate(index)]
            region = tuple(slice(s, s + n) for s, n in zip(starts, block.shape))
            dset[region] = np.asarray(block.compute())
    else:
        dset[...] = np.asarray(var.values)
    dset.attrs["dimensions"] = json.dumps(list(var.dims))
    for key, value in var.attrs.items():
        dset.attrs[key] = json.dumps(value) if isinstance(value, dict | list) else value


def _write_scales(h5: h5py.File, ds: xr.Dataset, names: Sequence[str]) -> None:
    """Dimension coordinates as HDF5 dimension scales; point coordinates beside them."""
    dims = {d for n in names for d in ds[n].dims}
    for dim in sorted(dims):
        if dim in ds.coords:
            values = np.asarray(ds[dim].values)
        else:
            values = np.arange(ds.sizes[dim])
        if values.dtype == object:
            values = values.astype("S")
        if dim not in h5:
            h5.create_dataset(dim, data=values)
        h5[dim].make_scale(dim)
    for name in names:
        for axis, dim in enumerate(ds[name].dims):
            h5[name].dims[axis].attach_scale(h5[dim])
    for coord in ds.coords:
        if coord in h5 or ds[coord].dims != ("point",):
            continue
        values = np.asarray(ds[coord].values)
        h5.create_dataset(
            coord, data=values.astype("S") if values.dtype == object else values
        )
        h5[coord].dims[0].attach_scale(h5["point"])
