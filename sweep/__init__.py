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

Public API: :func:`load_spec`, :func:`run`, :func:`open`, and the modules
:mod:`sweep.stats` and :mod:`sweep.analytic`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from sweep.errors import SpecError, StoreError, SweepError, SweepWarning, TaskError
from sweep.spec import Sweep, load_spec, parse_spec

if TYPE_CHECKING:
    import xarray as xr

__all__ = [
    "SpecError",
    "StoreError",
    "Sweep",
    "SweepError",
    "SweepWarning",
    "TaskError",
    "analytic",
    "load_spec",
    "open",
    "parse_spec",
    "run",
    "select",
    "grid_view",
    "stats",
]


def run(spec: Any, store: Any = None, **options: Any) -> Any:
    """Run or resume a sweep; see :func:`sweep.execute.run` (options: threads, processes,
    scheduler, scheduler_file, progress)."""
    from sweep.execute import RunOptions
    from sweep.execute import run as _run

    return _run(spec, store, RunOptions(**options))


def open(path: Any, verify: bool = False) -> xr.Dataset:  # noqa: A001 - the design's name
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
    if name in ("stats", "analytic", "check", "store", "plan", "execute", "views"):
        import importlib

        return importlib.import_module(f"sweep.{name}")
    raise AttributeError(f"module 'sweep' has no attribute {name!r}")
