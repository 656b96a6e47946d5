"""Reading a store as the design's xarray Dataset (:func:`open_dataset`).

Which arrays become coordinates, which are masked per walker and which are summed over
finished chunks comes from the layout table (:data:`~sweep.store.layout.ARRAYS`); what is
finished comes from the checked completion markers, never from chunk files.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import NDArray

from sweep import precision
from sweep.spec import NO_UNITS, Units, key_quantity
from sweep.store.layout import ARRAYS, PARAMETER, TARGET_VARIABLES, by_name
from sweep.store.markers import verified_markers

#: Variables renamed since earlier store versions (old name -> new name); read stores
#: answer to the new names.
RENAMED = {"censoring_time": "horizon", "time_step": "dt"}


def open_dataset(path: str | Path, verify: bool = False) -> xr.Dataset:
    """Open a store lazily as the design's xarray Dataset.

    Parameters
    ----------
    path : str or Path
        A store made by ``sweep run`` (``~`` is expanded).
    verify : bool
        Also compare the checksum of every finished task's chunk files with its
        marker (reads all the data once). Without it, the files written at creation,
        the markers' counts and the chunk files' sizes are still checked.

    Returns
    -------
    xarray.Dataset
        Dask-backed variables ``first_passage_time`` (point, walker),
        ``absorbing_wall`` (point, walker), ``exit_position`` (point, walker, axis),
        ``survival`` (point, time), ``occupancy`` (point, snapshot, bins...) and the
        in-memory ``done`` (point, chunk). Every swept parameter is a coordinate along
        ``point``. Values of unfinished tasks read as NaN / -1, and aggregates count
        finished tasks only.

    Raises
    ------
    StoreDamagedError
        A file of the store does not hold what was written there; the message names
        it and says what to do.
    """
    path = Path(path).expanduser()
    attrs, markers = verified_markers(path, digests=verify)
    with warnings.catch_warnings():
        # The marker directory, lock and run log live inside the store directory;
        # zarr notes them as "not a component of a Zarr hierarchy" when listing.
        warnings.filterwarnings("ignore", message="Object at _", category=UserWarning)
        # Units are free text ("s", "seconds"): never let xarray turn a variable
        # whose unit names a time into timedeltas.
        raw = xr.open_zarr(
            path,
            consolidated=True,
            chunks={},
            mask_and_scale=True,
            decode_times=False,
            decode_timedelta=False,
        )
    # Stores of earlier versions named the time step and horizon differently.
    raw = raw.rename({old: new for old, new in RENAMED.items() if old in raw.variables})
    done = np.zeros((attrs["n_points"], attrs["n_chunks"]), dtype=bool)
    for p, c in markers:
        done[p, c] = True
    ds = _coordinates(raw, attrs)
    ds["done"] = xr.DataArray(
        done, dims=("point", "chunk"), attrs={"long_name": "task completed"}
    )
    target = precision.from_canonical(attrs["spec"]["sweep"].get("precision"))
    if target is not None:
        # A precision target: a point runs only the chunks its target needs.
        planned, final = _planned(target, attrs, markers)
        (name,) = TARGET_VARIABLES
        ds[name] = xr.DataArray(
            planned,
            dims=("point", "chunk"),
            attrs={
                "long_name": "task part of the sweep: the chunks up to the point's "
                "deciding checkpoint, or up to its next one while undecided "
                "(sweep.precision)"
            },
        )
    done_da = ds["done"]
    walkers_done = (done_da * ds["chunk_walkers"]).sum("chunk")
    ds["walkers_done"] = walkers_done.assign_attrs(
        long_name="walkers of finished tasks"
    )
    complete = bool(done.all())
    if target is not None:
        complete = bool(final.all() and (done | ~planned).all())
    for spec in ARRAYS:
        if spec.name not in raw or spec.read in ("index", "coordinate"):
            continue
        if spec.read == "masked":
            var = raw[spec.name]
            if not complete:
                var = var.copy(data=_mask_unfinished(var.data, done, spec.fill))
            ds[spec.name] = var.drop_vars(
                [c for c in var.coords if c not in ("point",)], errors="ignore"
            )
        elif spec.read == "summed":
            counts = raw[spec.name].where(done_da, 0).sum("chunk")
            for variable in spec.read_as:
                value = counts
                if variable.fraction:
                    value = counts / walkers_done.where(walkers_done > 0)
                ds[variable.name] = value.assign_attrs(long_name=variable.long_name)
        else:
            ds[spec.name] = raw[spec.name].compute()
    if "wall" in ds.dims:
        ds = ds.assign_coords(wall=list(attrs["wall_names"]))
    order = attrs.get("point_order")
    if order is not None:
        # A grown store appended the points it gained; readers see the points in the
        # definition's order, as in a store made at once from it.
        ds = ds.isel(point=np.argsort(np.asarray(order)))
        ds = ds.assign_coords(
            point=xr.Variable(
                ("point",),
                np.arange(attrs["n_points"], dtype=np.int64),
                ds["point"].attrs,
            )
        )
    ds.attrs = {
        "title": raw.attrs.get("title", ""),
        "spec_hash": attrs["spec_hash"],
        "tool_version": attrs["tool_version"],
        "created": attrs["created"],
        "wall_names": list(attrs["wall_names"]),
        "parameter_coordinates": list(attrs.get("parameter_coordinates", [])),
        "store": str(path.absolute()),
        "complete": int(complete),
    }
    named = attrs.get("units", {})
    ds.attrs["units_length"] = named.get("length") or NO_UNITS
    ds.attrs["units_time"] = named.get("time") or NO_UNITS
    if "units" not in attrs:
        # A store from before units were stored: label its quantities alike.
        units = Units()
        for name in ds.variables:
            quantity = key_quantity(str(name))
            if quantity and name not in ("point", "chunk"):
                ds[name].attrs.setdefault("units", units.of(quantity))
    return ds


def _coordinates(raw: xr.Dataset, attrs: dict[str, Any]) -> xr.Dataset:
    """An empty Dataset with the store's coordinates, loaded in memory.

    Along ``point``, every array the table reads as a coordinate, and every array it
    does not name (a swept parameter, also in stores older than the table).
    """
    along_point = [
        name
        for name in raw.variables
        if raw[name].dims == ("point",) and by_name(str(name)).read == "coordinate"
    ]
    coords: dict[str, Any] = {name: raw[name].compute() for name in along_point}
    for spec in ARRAYS:
        if spec.read == "coordinate" and spec.name != PARAMETER and spec.name in raw:
            if spec.dims != ("point",):
                coords[spec.name] = raw[spec.name].compute()
    coords["axis"] = ("axis", np.array(attrs["axis_names"], dtype=object))
    return xr.Dataset(
        coords={"point": raw["point"].values, "time": raw["time"].values, **coords}
    )


def _planned(
    target: precision.Precision,
    attrs: Mapping[str, Any],
    markers: Mapping[tuple[int, int], Mapping[str, Any]],
) -> tuple[NDArray[np.bool_], NDArray[np.bool_]]:
    """(point, chunk) tasks a precision target plans, and (point,) which points are
    decided, from the finished tasks' markers (store indices)."""
    n_p, n_c = attrs["n_points"], attrs["n_chunks"]
    by_point: dict[int, dict[int, Mapping[str, Any]]] = {}
    for (p, c), marker in markers.items():
        by_point.setdefault(p, {})[c] = marker
    wall = list(attrs["wall_names"]).index(target.wall) if target.wall else 0
    planned = np.zeros((n_p, n_c), dtype=bool)
    final = np.zeros(n_p, dtype=bool)
    for p in range(n_p):
        chunks, final[p], _ = precision.planned_chunks(
            target, wall, attrs["chunk"], n_c, by_point.get(p, {})
        )
        planned[p, :chunks] = True
    return planned, final


def _mask_unfinished(data: Any, done: NDArray[np.bool_], fill: Any) -> Any:
    """Lazily replace blocks of unfinished tasks by the fill value (dask map_blocks).

    The dask blocks are the zarr chunks, (1, chunk walkers[, d]), so block (p, c) is
    exactly the region of task (p, c).
    """

    def mask(block: Any, block_info: Any = None) -> Any:
        p, c = block_info[0]["chunk-location"][:2]
        return block if done[p, c] else np.full_like(block, fill)

    return data.map_blocks(mask, dtype=data.dtype)
