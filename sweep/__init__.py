"""brownian-sweep: resumable parameter sweeps of first-passage problems of Brownian walkers.

Glossary (used in code, stores and messages):

walker
    One simulated Brownian particle; each axis' variance grows as 2 D t.
point
    One combination of swept parameters; the stored ensemble is stacked along ``point``.
chunk / task
    A block of a point's walkers simulated by one task with its own random stream.
first-passage time
    Time of absorption by an absorbing wall or target; NaN when censored at the horizon.
survival
    Fraction of walkers still free at a time.
splitting probability
    Fraction absorbed by a given wall or target.
occupancy
    Histogram of free walkers' positions at a snapshot time.

Public API: :func:`load_spec`, :func:`run` (with :class:`RunOptions`, returning a
:class:`RunSummary`), :func:`open`, :func:`select`, :func:`grid_view`, the error
classes of :mod:`sweep.errors` (each also a ``ValueError``, ``OSError``, ``TypeError``
or ``RuntimeError``), and the modules :mod:`sweep.stats` and :mod:`sweep.analytic`.
"""

from __future__ import annotations

import os
from typing import TYPE_CHECKING, Any

from sweep.errors import (
    CompareError,
    OptionError,
    PlanError,
    SpecError,
    StaleStoreError,
    StoreDamagedError,
    StoreError,
    StoreLockedError,
    StoreMismatchError,
    SweepError,
    SweepWarning,
    TaskError,
    UsageError,
)
from sweep.spec import Sweep, load_spec, parse_spec

if TYPE_CHECKING:
    import xarray as xr

    from sweep.execute import RunOptions, RunSummary

__all__ = [
    "CompareError",
    "OptionError",
    "PlanError",
    "RunOptions",
    "RunSummary",
    "SpecError",
    "StaleStoreError",
    "StoreDamagedError",
    "StoreError",
    "StoreLockedError",
    "StoreMismatchError",
    "Sweep",
    "SweepError",
    "SweepWarning",
    "TaskError",
    "UsageError",
    "analytic",
    "grid_view",
    "load_spec",
    "open",
    "parse_spec",
    "run",
    "select",
    "stats",
]


def run(
    definition: Sweep | str | os.PathLike[str],
    store: str | os.PathLike[str] | None = None,
    options: RunOptions | None = None,
    *,
    threads: int | None = None,
    processes: int | None = None,
    scheduler: str | None = None,
    scheduler_file: str | None = None,
    progress: bool = True,
) -> RunSummary:
    """Run (or resume) a sweep into a zarr store.

    Parameters
    ----------
    definition : Sweep, str or path-like
        A validated sweep (:func:`load_spec`) or the path of its definition file.
    store : str or path-like, optional
        The zarr store; default ``<definition name>.zarr`` in the current directory.
        An existing store of the same definition is resumed.
    options : RunOptions, optional
        Where and how to run; or give its fields as keywords (not both).
    threads, processes, scheduler, scheduler_file, progress
        The fields of :class:`RunOptions`: local threads (default one per core),
        worker processes of a local Dask cluster, the address or scheduler file of
        an existing Dask cluster (at most one of these four), and a progress line on
        stderr.

    Returns
    -------
    RunSummary
        What the run did (tasks done before and now, failures, walker-steps, s).

    Raises
    ------
    OptionError
        Impossible options, or ``options`` together with option keywords.
    SpecError, PlanError, StoreError, TaskError
        See :mod:`sweep.errors`.
    """
    from sweep.execute import RunOptions
    from sweep.execute import run as _run

    given = {
        name: value
        for name, value in (
            ("threads", threads),
            ("processes", processes),
            ("scheduler", scheduler),
            ("scheduler_file", scheduler_file),
        )
        if value is not None
    }
    if options is not None and (given or not progress):
        named = [*given, *([] if progress else ["progress"])]
        raise OptionError(
            "give either options or "
            + ", ".join(f"{{{n}}}" for n in named)
            + ", not both.",
            options=named,
        )
    if options is None:
        options = RunOptions(progress=progress, **given)
    return _run(definition, store, options)


def open(path: str | os.PathLike[str], verify: bool = False) -> xr.Dataset:  # noqa: A001 - the design's name
    """Open a store lazily as an xarray Dataset; see :func:`sweep.store.open_dataset`.

    ``verify=True`` also compares every finished task's chunk checksums with its
    marker (reads the data once); sizes and counts are always checked.
    """
    from sweep.store import open_dataset

    return open_dataset(path, verify=verify)


def select(ds: xr.Dataset, **values: Any) -> xr.Dataset:
    """Points matching parameter values within a float tolerance; see
    :func:`sweep.views.select`."""
    from sweep.views import select as _select

    return _select(ds, **values)


def grid_view(ds: xr.Dataset) -> xr.Dataset:
    """One dimension per swept parameter; see :func:`sweep.views.grid_view`."""
    from sweep.views import grid_view as _grid_view

    return _grid_view(ds)


def __getattr__(name: str) -> Any:
    # Heavy stages load on first use, so `import sweep` stays fast for the CLI.
    if name in ("RunOptions", "RunSummary"):
        from sweep import execute

        return getattr(execute, name)
    if name in ("stats", "analytic", "check", "store", "plan", "execute", "views"):
        import importlib

        return importlib.import_module(f"sweep.{name}")
    raise AttributeError(f"module 'sweep' has no attribute {name!r}")
