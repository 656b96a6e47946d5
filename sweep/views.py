"""Notebook helpers on an opened sweep: tolerant selection and the product-grid view.

Pure xarray; nothing here reads or writes the store.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr

#: Relative tolerance of :func:`select`: values written in a definition file and read
#: back as float64 match to far better than this; typing 0.1 for 0.1000000001 too.
RTOL = 1e-9


def parameter_names(ds: xr.Dataset) -> list[str]:
    """The swept parameter coordinates along ``point`` (vectors split per axis)."""
    return [str(n) for n in ds.attrs.get("parameter_coordinates", []) if n in ds.coords]


def select(
    ds: xr.Dataset, rtol: float = RTOL, atol: float = 0.0, **values: Any
) -> xr.Dataset:
    """Points whose parameters match ``values`` within a float tolerance.

    Exact ``.sel`` on floats is brittle (0.1 + 0.2 != 0.3); this compares with
    ``numpy.isclose``.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`sweep.open`.
    rtol, atol : float
        Tolerances of ``numpy.isclose`` for numeric parameters (strings match exactly).
    **values
        Parameter coordinate name = wanted value, e.g. ``diffusivity=0.5``.

    Returns
    -------
    xarray.Dataset
        The matching point without the ``point`` dimension when exactly one matches,
        else the matching points along ``point``.

    Raises
    ------
    KeyError
        Unknown parameter name, or no point matches (the message lists the values).
    """
    mask = np.ones(ds.sizes["point"], dtype=bool)
    for name, wanted in values.items():
        if name not in ds.coords or ds[name].dims != ("point",):
            raise KeyError(
                f"{name!r} is not a swept parameter; the sweep has "
                f"{', '.join(parameter_names(ds)) or 'none'}."
            )
        have = np.asarray(ds[name].values)
        if have.dtype.kind in "fiu":
            mask &= np.isclose(have.astype(float), float(wanted), rtol=rtol, atol=atol)
        else:
            mask &= have == wanted
        if not mask.any():
            raise KeyError(
                f"no point has {name} = {wanted!r} (with the other values asked for); "
                f"the sweep has {name} in {sorted(set(have.tolist()))}."
            )
    (index,) = np.nonzero(mask)
    if index.size == 1:
        return ds.isel(point=int(index[0]))
    return ds.isel(point=index)


def grid_view(ds: xr.Dataset) -> xr.Dataset:
    """The sweep as one dimension per swept parameter (product grids only).

    Returns
    -------
    xarray.Dataset
        Still lazy. With several parameters their dimensions come last; with one it
        takes the place of ``point``. Variables without ``point`` are unchanged.

    Raises
    ------
    ValueError
        If the points do not form a full Cartesian product of the parameter values
        (e.g. ``[[zip]]`` sweeps), with the way to select instead.
    """
    names = [n for n in parameter_names(ds) if np.unique(ds[n].values).size > 1]
    if not names:
        raise ValueError("the sweep has no swept parameter: nothing to unstack.")
    sizes = [np.unique(ds[n].values).size for n in names]
    if int(np.prod(sizes)) != ds.sizes["point"]:
        raise ValueError(
            f"the points are not a full product of {', '.join(names)} "
            f"({' x '.join(map(str, sizes))} != {ds.sizes['point']} points), e.g. a "
            f"[[zip]] sweep; use sweep.select(ds, ...) or ds.where(...) instead."
        )
    if len(names) == 1:
        return ds.swap_dims(point=names[0])
    return ds.set_index(point=names).unstack("point")
