"""The one validation of every public statistic: its level and its selection.

Every public function of :mod:`sweep.stats` that takes a store's Dataset is wrapped by
:func:`statistic`, which checks, before any data are read and with the same error type
and wording whichever function was called:

* the Dataset: a :class:`xarray.Dataset` (not one of its variables:
  :class:`~sweep.errors.UsageError`, a ``TypeError``), holding at least one point and
  the variables the statistic reads (``ValueError`` naming what to record);
* ``level``: a real number strictly between 0 and 1 (``ValueError``);
* ``wall``: a wall or target name of ``ds.attrs["wall_names"]`` or an index into it
  (``ValueError`` listing the names).

It also lets every statistic take one point (``ds.isel(point=p)``): the point
dimension is added for the computation and dropped from the result, so the result is
that point's row of the whole sweep's. Functions that take no Dataset but a level
(:func:`sweep.stats.z_value`, :func:`sweep.stats.wilson_interval`) call
:func:`check_level` directly. Every message starts ``sweep.stats.<function>:``.
"""

from __future__ import annotations

import functools
import inspect
import numbers
import operator
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, TypeVar

import xarray as xr

from sweep.errors import UsageError

_F = TypeVar("_F", bound=Callable[..., Any])


@dataclass(frozen=True)
class Needs:
    """Variables a statistic reads: any one of ``names``, recorded as ``record`` says.

    ``what`` names them in messages ("first-passage data"); ``record`` is the
    definition setting that stores them.
    """

    what: str
    names: tuple[str, ...]
    record: str


WALKERS = Needs(
    "walker counts",
    ("walkers_done",),
    "open the store with sweep.open(path), which adds walkers_done",
)
FIRST_PASSAGE = Needs(
    "first-passage data",
    ("first_passage_time", "fpt_histogram"),
    "[record] per_walker = true or fpt_bins = N",
)
WALLS = Needs(
    "absorbing walls",
    ("absorbing_wall", "fpt_histogram"),
    "[record] per_walker = true or fpt_bins = N",
)
EXIT_POSITIONS = Needs(
    "per-walker exit positions",
    ("exit_position",),
    "[record] per_walker = true (an aggregate-only store has none)",
)
WALKER_WALLS = Needs(
    "per-walker absorbing walls", ("absorbing_wall",), "[record] per_walker = true"
)
SURVIVAL = Needs(
    "survival counts",
    ("survival_count",),
    "[record] survival = { stop = ..., points = ... }",
)
OCCUPANCY = Needs(
    "occupancy histograms",
    ("occupancy",),
    "[record] occupancy = { times = [...], bins = N }",
)
START = Needs(
    "start point (start_position)",
    ("start_position",),
    "a point start: [motion] start = [x, ...] (not uniform)",
)


def where(function: str) -> str:
    """The prefix of every message about ``function``."""
    return f"sweep.stats.{function}"


def check_level(level: Any, function: str) -> float:
    """``level`` as a float after checking 0 < level < 1 (the one level check)."""
    ok = isinstance(level, numbers.Real) and not isinstance(level, bool)
    if not (ok and 0.0 < float(level) < 1.0):
        raise ValueError(
            f"{where(function)}: level must lie strictly between 0 and 1; got "
            f"{level!r} (e.g. 0.95 for a 95% interval)."
        )
    return float(level)


def check_dataset(ds: Any, function: str, needs: tuple[Needs, ...]) -> None:
    """``ds`` is a Dataset with a point and the variables of ``needs``."""
    if not isinstance(ds, xr.Dataset):
        name = getattr(ds, "name", None)
        got = (
            f"a DataArray ({name!r})"
            if isinstance(ds, xr.DataArray)
            else type(ds).__name__
        )
        raise UsageError(
            f"{where(function)} needs a store's whole Dataset, as sweep.open(path) "
            f"returns it (or a selection such as ds.isel(point=0)); got {got}. Pass "
            f"the Dataset, not one of its variables."
        )
    if ds.sizes.get("point", 1) == 0:
        raise ValueError(
            f"{where(function)}: the selection holds no point; got a Dataset with "
            f"point of length 0. Select at least one point (e.g. ds.isel(point=0) or "
            f"sweep.select(ds, diffusivity=0.5))."
        )
    for need in needs:
        if not any(n in ds.variables for n in need.names):
            raise ValueError(
                f"{where(function)}: the Dataset holds no {need.what} (expected "
                f"{' or '.join(map(repr, need.names))}; got variables "
                f"{sorted(map(str, ds.data_vars))}). Record them with "
                f"{need.record} in the sweep definition."
            )


def wall_index(ds: xr.Dataset, wall: Any, function: str) -> int:
    """Index of ``wall`` (a name of ``ds.attrs["wall_names"]`` or an index)."""
    names = [str(n) for n in ds.attrs.get("wall_names", ())]
    if isinstance(wall, str):
        if wall not in names:
            raise ValueError(
                f"{where(function)}: no wall or target named {wall!r}; expected one "
                f"of {names}."
            )
        return names.index(wall)
    try:
        index = operator.index(wall)
    except TypeError:
        index = -1 if names else None
    if index is None or (names and not 0 <= index < len(names)):
        raise ValueError(
            f"{where(function)}: no wall or target {wall!r}; expected a name of "
            f"{names} or an index from 0 to {len(names) - 1}."
        )
    return index


def statistic(*needs: Needs) -> Callable[[_F], _F]:
    """Wrap a public statistic ``f(ds, ..., level=..., wall=...)`` in the one check.

    ``needs`` lists what the Dataset must hold. The check runs before the function;
    a Dataset without a ``point`` dimension (one point) gets one for the call, and
    the result drops it again and keeps the point's scalar coordinates.
    """

    def decorate(func: _F) -> _F:
        signature = inspect.signature(func)
        name = func.__name__

        @functools.wraps(func)
        def wrapper(ds: Any, *args: Any, **kwargs: Any) -> Any:
            given = signature.bind(ds, *args, **kwargs)
            given.apply_defaults()
            check_dataset(ds, name, needs)
            if "level" in given.arguments:
                check_level(given.arguments["level"], name)
            if given.arguments.get("wall") is not None:
                wall_index(ds, given.arguments["wall"], name)
            if "point" in ds.dims:
                return func(ds, *args, **kwargs)
            out = func(ds.expand_dims("point"), *args, **kwargs).isel(point=0)
            # The point's parameters stay scalar coordinates through expand_dims, so
            # the statistic did not see them along point: give them back to the
            # result, as the whole sweep's row has them.
            taken = {*out.coords, *out.dims, *getattr(out, "data_vars", ())}
            scalars = {
                k: v.variable
                for k, v in ds.coords.items()
                if v.ndim == 0 and k not in taken
            }
            return out.assign_coords(scalars)

        return wrapper  # type: ignore[return-value]

    return decorate
