"""The zarr v3 store: layout, creation, task writes, completion markers, lock, reading.

The only module that imports zarr. Rules it keeps (see DEVELOPERS.md, "Store"):

* every array is created once, by the driver, before any task runs; tasks never touch
  metadata or attributes;
* a task writes only its own chunks: per-walker arrays are chunked (1, chunk walkers),
  per-chunk aggregates (1, 1, ...), so no two tasks share a chunk object;
* a task's completion marker ``_tasks/p<point>-c<chunk>.json`` is written atomically
  after its chunk files are flushed to disk; completion is never inferred from chunk
  files (zarr does not write chunks that are all fill value);
* one runner at a time holds ``_lock.json``; a lock left by a dead process on this host
  is taken over with a notice;
* a store made by another definition is refused with the differences listed, and one
  made with other random streams (:data:`kernels.STREAM_VERSION`) with both versions
  named.
"""

from __future__ import annotations

import contextlib
import datetime
import errno
import json
import logging
import os
import socket
import sys
import uuid
import warnings
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr
import zarr
from numpy.typing import NDArray

from kernels import STREAM_VERSION
from sweep.errors import StoreError, StoreLockedError, StoreMismatchError
from sweep.plan import BIT_GENERATOR, Plan, Task, coordinate_columns, snapshot_steps
from sweep.spec import Sweep, axis_names, parse_spec

log = logging.getLogger(__name__)

STORE_FORMAT = 1
ATTRS_KEY = "brownian_sweep"
MARKER_DIR = "_tasks"
LOCK_FILE = "_lock.json"
#: The stream version of stores made before versions were recorded (they carry a
#: "fingerprint" of the kernel's source instead): numpy's bit generator.
UNVERSIONED_STREAM = 1


def tool_version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("brownian-sweep")
    except PackageNotFoundError:  # running from a source tree without install
        return "0+unknown"


def provenance() -> dict[str, str]:
    """The libraries a store was made with, recorded for the reader but not compared
    on resume: compatibility follows :data:`kernels.STREAM_VERSION` (the golden test
    notices a library update that changes the numbers)."""
    import numba

    return {
        "numpy": np.__version__,
        "numba": numba.__version__,
        "generator": f"{BIT_GENERATOR.__name__} (kernels/rng.py)",
    }


@dataclass(frozen=True)
class TaskOutput:
    """What one task computed, in the store's layout.

    Attributes
    ----------
    time : float64 (n_walkers,)
        First-passage times, NaN when censored.
    wall : int16 (n_walkers,)
        Absorbing wall index, -1 when censored.
    position : float64 (n_walkers, d)
        Exit positions, NaN when censored.
    survival : int64 (n_times,)
        Walkers of this task still free at each survival time.
    occupancy : int64 (n_snapshots, bins, ..., bins) or None
    fpt_histogram : int64 (n_walls, n_bins) or None
        First-passage times binned per absorbing wall.
    """

    time: NDArray[np.float64]
    wall: NDArray[np.int16]
    position: NDArray[np.float64]
    survival: NDArray[np.int64]
    occupancy: NDArray[np.int64] | None
    fpt_histogram: NDArray[np.int64] | None = None


# --------------------------------------------------------------------------- create


def prepare(path: str | Path, plan: Plan) -> Path:
    """Create the store for ``plan`` at ``path``, or check that the existing one matches.

    Returns
    -------
    Path
        The store's absolute, resolved path.

    Raises
    ------
    StoreMismatchError
        The store was made by another definition or another kernel version.
    StoreError
        The path exists but is not a store, or cannot be created.
    """
    path = Path(path).expanduser().absolute()
    if path.exists():
        check_matches(path, plan)
        return path.resolve()
    parent = path.parent
    if not parent.is_dir():
        raise StoreError(
            f"{path}: cannot create the store; the directory {parent} does not exist. "
            f"Create it first or choose another --store path."
        )
    if not os.access(parent, os.W_OK):
        raise StoreError(
            f"{path}: cannot create the store; the directory {parent} is not writable. "
            f"Choose another --store path."
        )
    # Build under a temporary name and rename: a killed creation leaves no half store.
    tmp = parent / f".{path.name}.creating-{uuid.uuid4().hex[:8]}"
    try:
        _create(tmp, plan)
        os.rename(tmp, path)
    except OSError as err:
        _remove_tree(tmp)
        if path.exists():  # another runner created it first: check it like any store
            check_matches(path, plan)
            return path.resolve()
        raise os_error(path, "create the store", err) from err
    except BaseException:
        _remove_tree(tmp)
        raise
    return path.resolve()


def _create(path: Path, plan: Plan) -> None:
    sweep = plan.sweep
    n_p, n_c, d = sweep.n_points, sweep.n_chunks, sweep.dimension
    first = sweep.points[0]
    rec = first.record
    domain = first.domain
    root = zarr.open_group(
        str(path),
        mode="w-",
        zarr_format=3,
        attributes={
            ATTRS_KEY: {
                "format": STORE_FORMAT,
                "spec": sweep.canonical,
                "spec_hash": sweep.spec_hash,
                "stream_version": STREAM_VERSION,
                "provenance": provenance(),
                "tool_version": tool_version(),
                "created": datetime.datetime.now(datetime.UTC).isoformat(
                    timespec="seconds"
                ),
                "source": sweep.source,
                "definition": sweep.text,
                "walkers": sweep.walkers,
                "chunk": sweep.chunk,
                "n_points": n_p,
                "n_chunks": n_c,
                "axis_names": list(axis_names(d)),
                "wall_names": list(domain.wall_names()),
                "swept": list(sweep.swept),
                "parameter_coordinates": list(coordinate_columns(sweep)),
                "per_walker": rec.per_walker,
                "occupancy": bool(rec.occupancy_times),
                "fpt_bins": rec.fpt_bins,
            },
            "title": f"brownian-sweep results: {sweep.name}",
            "Conventions": "CF-1.10",
        },
    )
    columns = coordinate_columns(sweep)
    coords = " ".join(columns)

    def small(name: str, dims: tuple[str, ...], values: Any, **attrs: Any) -> None:
        values = np.asarray(values)
        if values.dtype.kind == "U":
            values = values.astype(object)
        a = root.create_array(
            name,
            shape=values.shape,
            dtype=values.dtype if values.dtype != object else str,
            chunks=values.shape or None,
            dimension_names=dims,
            attributes=attrs,
        )
        a[...] = values

    small(
        "point",
        ("point",),
        np.arange(n_p, dtype=np.int64),
        long_name="sweep point index",
    )
    for name, values in columns.items():
        small(name, ("point",), values, long_name=f"swept parameter {name}")
    small(
        "chunk",
        ("chunk",),
        np.arange(n_c, dtype=np.int64),
        long_name="task chunk index",
    )
    small(
        "chunk_walkers",
        ("chunk",),
        np.array([sweep.chunk_walkers(c) for c in range(n_c)], dtype=np.int64),
        long_name="walkers per chunk",
    )
    small(
        "censoring_time",
        ("point",),
        np.array(
            [p.timing.n_steps * p.timing.dt for p in sweep.points], dtype=np.float64
        ),
        long_name="horizon: walkers still free then are censored (snapped to the step grid)",
    )
    small(
        "start_position",
        ("point", "axis"),
        np.array(
            [
                p.motion.start if p.motion.start is not None else [np.nan] * d
                for p in sweep.points
            ],
            dtype=np.float64,
        ),
        long_name="start point of every walker (NaN: uniform over the domain)",
    )
    small(
        "time_step",
        ("point",),
        np.array([p.timing.dt for p in sweep.points], dtype=np.float64),
        long_name="time step dt",
    )
    small(
        "time",
        ("time",),
        np.array(rec.survival_times, dtype=np.float64),
        long_name="time of the survival grid",
        standard_name="time",
    )
    walker_attrs = {"coordinates": coords} if coords else {}
    wall_names = domain.wall_names()
    if rec.per_walker:
        root.create_array(
            "first_passage_time",
            shape=(n_p, sweep.walkers),
            chunks=(1, sweep.chunk),
            dtype="f8",
            fill_value=np.nan,
            dimension_names=("point", "walker"),
            attributes={
                **walker_attrs,
                "long_name": "first-passage time (NaN: still free at the horizon)",
            },
        )
        root.create_array(
            "absorbing_wall",
            shape=(n_p, sweep.walkers),
            chunks=(1, sweep.chunk),
            dtype="i2",
            fill_value=-1,
            dimension_names=("point", "walker"),
            attributes={
                **walker_attrs,
                "long_name": "index of the wall or target that absorbed the walker",
                "flag_values": list(range(-1, len(wall_names))),
                "flag_meanings": " ".join(("censored", *wall_names)),
            },
        )
        root.create_array(
            "exit_position",
            shape=(n_p, sweep.walkers, d),
            chunks=(1, sweep.chunk, d),
            dtype="f8",
            fill_value=np.nan,
            dimension_names=("point", "walker", "axis"),
            attributes={**walker_attrs, "long_name": "position at absorption"},
        )
    root.create_array(
        "survival_count",
        shape=(n_p, n_c, len(rec.survival_times)),
        chunks=(1, 1, len(rec.survival_times)),
        dtype="i8",
        fill_value=0,
        dimension_names=("point", "chunk", "time"),
        attributes={**walker_attrs, "long_name": "walkers of the chunk still free"},
    )
    if rec.fpt_bins:
        root.create_array(
            "first_passage_count",
            shape=(n_p, n_c, len(wall_names), rec.fpt_bins),
            chunks=(1, 1, len(wall_names), rec.fpt_bins),
            dtype="i8",
            fill_value=0,
            dimension_names=("point", "chunk", "wall", "fpt_bin"),
            attributes={
                **walker_attrs,
                "long_name": "walkers of the chunk absorbed per wall and time bin",
            },
        )
        small(
            "fpt_bin_width",
            ("point",),
            np.array(
                [p.timing.n_steps * p.timing.dt / rec.fpt_bins for p in sweep.points],
                dtype=np.float64,
            ),
            long_name="width of the first-passage-time bins",
        )
    if rec.occupancy_times:
        n_s, bins = len(rec.occupancy_times), rec.occupancy_bins
        bin_dims = tuple(f"{a}_bin" for a in axis_names(d))
        root.create_array(
            "occupancy_count",
            shape=(n_p, n_c, n_s, *(bins,) * d),
            chunks=(1, 1, n_s, *(bins,) * d),
            dtype="i8",
            fill_value=0,
            dimension_names=("point", "chunk", "snapshot", *bin_dims),
            attributes={
                **walker_attrs,
                "long_name": "free walkers of the chunk per bin",
            },
        )
        small(
            "snapshot_time",
            ("point", "snapshot"),
            np.array(
                [snapshot_steps(p) * p.timing.dt for p in sweep.points],
                dtype=np.float64,
            ).reshape(n_p, n_s),
            long_name="occupancy snapshot time, snapped to the step grid",
        )
        for side in ("lower", "upper"):
            small(
                f"occupancy_{side}",
                ("point", "axis"),
                np.array(
                    [
                        getattr(p.record, f"occupancy_{side}")
                        or getattr(p.domain, side)
                        for p in sweep.points
                    ],
                    dtype=np.float64,
                ),
                long_name=f"{side} edge of the occupancy histogram per axis",
            )
    (path / MARKER_DIR).mkdir()


# --------------------------------------------------------------------------- checks


def read_attrs(path: str | Path) -> dict[str, Any]:
    """The store's provenance attributes; StoreError if ``path`` is not a store."""
    path = Path(path)
    meta = path / "zarr.json"
    if path.exists() and not path.is_dir():
        raise StoreError(
            f"{path}: exists and is not a directory (a store is a directory made by "
            f"`sweep run`); nothing was changed. Choose another --store path."
        )
    if not path.is_dir():
        raise StoreError(
            f"{path}: no such store (expected a directory made by `sweep run`)."
        )
    try:
        attrs = json.loads(meta.read_text())["attributes"][ATTRS_KEY]
    except (OSError, ValueError, KeyError, TypeError):
        raise StoreError(
            f"{path}: exists but is not a brownian-sweep store (no readable zarr.json with "
            f"'{ATTRS_KEY}' attributes). Choose another --store path; nothing was changed."
        ) from None
    if attrs.get("format") != STORE_FORMAT:
        raise StoreError(
            f"{path}: store format {attrs.get('format')!r}; this version of the tool reads "
            f"format {STORE_FORMAT}."
        )
    return dict(attrs)


def load_sweep(path: str | Path) -> Sweep:
    """The validated sweep that made the store at ``path`` (from its stored text)."""
    attrs = read_attrs(path)
    return parse_spec(
        attrs["definition"], source=f"{attrs.get('source', '?')} (stored in {path})"
    )


def stream_version(attrs: Mapping[str, Any]) -> int:
    """The random-stream version of the store with attributes ``attrs``."""
    return int(attrs.get("stream_version", UNVERSIONED_STREAM))


def check_matches(path: Path, plan: Plan) -> None:
    """Refuse a store made with other random streams or by another definition."""
    attrs = read_attrs(path)
    version = stream_version(attrs)
    if version != STREAM_VERSION:
        raise StoreMismatchError(
            f"{path}: this store's walkers were drawn with random stream version "
            f"{version}, and this version of brownian-sweep draws stream version "
            f"{STREAM_VERSION} (CHANGELOG.md says what changed): the same seeds now "
            "give other numbers, so resuming would mix two streams in one sample. "
            f"Finish it with a brownian-sweep that draws stream version {version}, or "
            "start the sweep again under another --store path; nothing was changed."
        )
    stored = {"spec": attrs["spec"]}
    wanted = {"spec": plan.sweep.canonical}
    if stored == wanted:
        return
    lines = [
        f"  {key}: stored {_short(a)}, now {_short(b)}"
        for key, a, b in _differences(stored, wanted)
    ]
    shown = "\n".join(lines[:20]) + (
        f"\n  ... and {len(lines) - 20} more" if len(lines) > 20 else ""
    )
    raise StoreMismatchError(
        f"{path}: this store was made by a different sweep definition "
        f"({attrs.get('source', '?')}), so resuming it with {plan.sweep.source} would mix "
        f"results. Differences:\n{shown}\n"
        f"Use another --store path for the new definition, or restore the old one."
    )


def _differences(a: Any, b: Any, prefix: str = "") -> Iterator[tuple[str, Any, Any]]:
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        for key in sorted(set(a) | set(b)):
            yield from _differences(
                a.get(key, "<absent>"), b.get(key, "<absent>"), f"{prefix}{key}."
            )
    elif a != b:
        yield prefix.rstrip("."), a, b


def _short(value: Any) -> str:
    text = json.dumps(value)
    return text if len(text) <= 80 else text[:77] + "..."


# --------------------------------------------------------------------------- lock


@contextlib.contextmanager
def runner_lock(path: Path) -> Iterator[None]:
    """Hold the store's runner lock; take over a stale one left by a dead process.

    Raises
    ------
    StoreLockedError
        Another live process (or a process on another host) holds the lock.
    """
    lock = path / LOCK_FILE
    token = uuid.uuid4().hex
    mine = {
        "pid": os.getpid(),
        "host": socket.gethostname(),
        "started": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "token": token,
        "command": " ".join(sys.argv),
    }
    for _ in range(3):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            holder = _read_json(lock)
            if holder is None:
                continue  # vanished or half-written: try again
            if not _is_stale(holder):
                raise StoreLockedError(
                    f"{path}: another `sweep run` is using this store (pid "
                    f"{holder.get('pid')} on {holder.get('host')}, since "
                    f"{holder.get('started')}). Wait for it to finish, or stop it; "
                    f"if you are sure it is gone, delete {lock}."
                ) from None
            log.warning(
                "%s: taking over a stale lock left by pid %s on %s (started %s); "
                "the process no longer exists.",
                path,
                holder.get("pid"),
                holder.get("host"),
                holder.get("started"),
            )
            stale = lock.with_name(f"{LOCK_FILE}.stale-{token}")
            with contextlib.suppress(FileNotFoundError):
                os.rename(lock, stale)
                os.unlink(stale)
            continue
        except OSError as err:
            raise os_error(path, "take the runner lock", err) from err
        with os.fdopen(fd, "w") as f:
            json.dump(mine, f)
        break
    else:
        raise StoreLockedError(
            f"{path}: could not take the runner lock {lock}; try again."
        )
    try:
        yield
    finally:
        holder = _read_json(lock)
        if holder is not None and holder.get("token") == token:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(lock)


def lock_holder(path: Path) -> dict[str, Any] | None:
    """The live lock holder of a store, or None."""
    holder = _read_json(path / LOCK_FILE)
    if holder is None or _is_stale(holder):
        return None
    return holder


def _is_stale(holder: Mapping[str, Any]) -> bool:
    if holder.get("host") != socket.gethostname():
        return False  # cannot see processes on other hosts: assume alive
    pid = holder.get("pid")
    if not isinstance(pid, int):
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except PermissionError:
        return False
    return False


def _read_json(path: Path) -> dict[str, Any] | None:
    try:
        value = json.loads(path.read_text())
    except (OSError, ValueError):
        return None
    return value if isinstance(value, dict) else None


# --------------------------------------------------------------------------- tasks


def clean_partials(path: Path) -> int:
    """Delete leftover temporary files of killed writers inside the store.

    Only regular files strictly inside ``path`` are touched; symbolic links are
    neither followed nor deleted, so nothing outside the store can be reached.

    Returns
    -------
    int
        Number of files removed.
    """
    root = path.resolve()
    removed = 0
    for folder, dirs, files in os.walk(root, followlinks=False):
        dirs[:] = [d for d in dirs if not os.path.islink(os.path.join(folder, d))]
        for name in files:
            if not (name.endswith(".partial") or ".tmp-" in name):
                continue
            full = os.path.join(folder, name)
            if os.path.islink(full) or not os.path.realpath(full).startswith(
                str(root) + os.sep
            ):
                continue
            with contextlib.suppress(FileNotFoundError):
                os.unlink(full)
                removed += 1
    return removed


def done_tasks(path: Path) -> set[tuple[int, int]]:
    """(point, chunk) of every task whose completion marker exists."""
    done: set[tuple[int, int]] = set()
    try:
        entries = os.scandir(path / MARKER_DIR)
    except FileNotFoundError:
        return done
    with entries:
        for entry in entries:
            name = entry.name
            if name.startswith("p") and name.endswith(".json") and "-c" in name:
                p, _, c = name[1:-5].partition("-c")
                if p.isdigit() and c.isdigit():
                    done.add((int(p), int(c)))
    return done


def done_array(path: Path, n_points: int, n_chunks: int) -> NDArray[np.bool_]:
    """Boolean (point, chunk) array of completed tasks, from the markers."""
    done = np.zeros((n_points, n_chunks), dtype=bool)
    for p, c in done_tasks(path):
        if p < n_points and c < n_chunks:
            done[p, c] = True
    return done


def read_markers(path: Path) -> list[dict[str, Any]]:
    """The summaries written in every completion marker."""
    out = []
    for p, c in sorted(done_tasks(path)):
        summary = _read_json(path / MARKER_DIR / f"p{p}-c{c}.json")
        if summary is not None:
            out.append(summary)
    return out


def write_task(
    path: str, task: Task, output: TaskOutput, summary: dict[str, Any]
) -> None:
    """Write one task's chunks, flush them, then its completion marker.

    Called inside tasks (threads or worker processes); opens the store read-write
    without touching metadata.
    """
    root = zarr.open_group(path, mode="r+")
    p, c = task.point, task.chunk
    a, b = task.first_walker, task.first_walker + task.n_walkers
    written = []
    if "first_passage_time" in root:
        root["first_passage_time"][p, a:b] = output.time
        root["absorbing_wall"][p, a:b] = output.wall
        root["exit_position"][p, a:b, :] = output.position
        written += [
            f"first_passage_time/c/{p}/{c}",
            f"absorbing_wall/c/{p}/{c}",
            f"exit_position/c/{p}/{c}/0",
        ]
    root["survival_count"][p, c, :] = output.survival
    written.append(f"survival_count/c/{p}/{c}/0")
    if output.fpt_histogram is not None:
        root["first_passage_count"][p, c] = output.fpt_histogram
        written.append(f"first_passage_count/c/{p}/{c}/0/0")
    if output.occupancy is not None:
        root["occupancy_count"][p, c] = output.occupancy
        written.append(
            f"occupancy_count/c/{p}/{c}/" + "/".join(["0"] * (output.occupancy.ndim))
        )
    base = Path(path)
    for key in written:
        _fsync(base / key)
    marker = base / MARKER_DIR / f"p{p}-c{c}.json"
    tmp = marker.with_name(f"{marker.name}.tmp-{os.getpid()}-{uuid.uuid4().hex[:6]}")
    with open(tmp, "w") as f:
        json.dump(summary, f)
        f.flush()
        os.fsync(f.fileno())
    os.replace(tmp, marker)
    _fsync_dir(marker.parent)


def _fsync(file: Path) -> None:
    try:
        fd = os.open(file, os.O_RDONLY)
    except FileNotFoundError:  # all-fill chunks are not written by zarr
        return
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


# --------------------------------------------------------------------------- read


def open_dataset(path: str | Path) -> xr.Dataset:
    """Open a store lazily as the design's xarray Dataset.

    Parameters
    ----------
    path : str or Path
        A store made by ``sweep run``.

    Returns
    -------
    xarray.Dataset
        Dask-backed variables ``first_passage_time`` (point, walker),
        ``absorbing_wall`` (point, walker), ``exit_position`` (point, walker, axis),
        ``survival`` (point, time), ``occupancy`` (point, snapshot, bins...) and the
        in-memory ``done`` (point, chunk). Every swept parameter is a coordinate along
        ``point``. Values of unfinished tasks read as NaN / -1, and aggregates count
        finished tasks only.
    """
    path = Path(path)
    attrs = read_attrs(path)
    with warnings.catch_warnings():
        # The marker directory, lock and run log live inside the store directory;
        # zarr notes them as "not a component of a Zarr hierarchy" when listing.
        warnings.filterwarnings("ignore", message="Object at _", category=UserWarning)
        raw = xr.open_zarr(path, consolidated=False, chunks={}, mask_and_scale=True)
    n_p, n_c = attrs["n_points"], attrs["n_chunks"]
    done = done_array(path, n_p, n_c)
    swept_coords = [
        name
        for name in raw.variables
        if raw[name].dims == ("point",) and name not in ("point", "fpt_bin_width")
    ]
    coords: dict[str, Any] = {name: raw[name].compute() for name in swept_coords}
    coords["chunk_walkers"] = raw["chunk_walkers"].compute()
    coords["axis"] = ("axis", np.array(attrs["axis_names"], dtype=object))
    ds = xr.Dataset(
        coords={"point": raw["point"].values, "time": raw["time"].values, **coords}
    )
    ds["done"] = xr.DataArray(
        done, dims=("point", "chunk"), attrs={"long_name": "task completed"}
    )
    done_da = ds["done"]
    walkers_done = (done_da * ds["chunk_walkers"]).sum("chunk")
    ds["walkers_done"] = walkers_done.assign_attrs(
        long_name="walkers of finished tasks"
    )
    complete = bool(done.all())
    if attrs["per_walker"]:
        for name, fill in (
            ("first_passage_time", np.nan),
            ("absorbing_wall", -1),
            ("exit_position", np.nan),
        ):
            var = raw[name]
            if not complete:
                var = var.copy(data=_mask_unfinished(var.data, done, fill))
            ds[name] = var.drop_vars(
                [c for c in var.coords if c not in ("point",)], errors="ignore"
            )
        ds["first_passage_time"].attrs["units"] = "time units of the definition"
    counts = raw["survival_count"].where(done_da, 0).sum("chunk")
    ds["survival"] = (counts / walkers_done.where(walkers_done > 0)).assign_attrs(
        long_name="fraction of walkers still free"
    )
    ds["survival_count"] = counts.assign_attrs(long_name="walkers still free")
    if attrs.get("fpt_bins"):
        hist = raw["first_passage_count"].where(done_da, 0).sum("chunk")
        ds["fpt_histogram"] = hist.assign_attrs(
            long_name="walkers absorbed per wall and time bin "
            "[fpt_bin * fpt_bin_width, (fpt_bin + 1) * fpt_bin_width)"
        )
        ds["fpt_bin_width"] = raw["fpt_bin_width"].compute()
        ds = ds.assign_coords(wall=list(attrs["wall_names"]))
    if "start_position" in raw:
        ds["start_position"] = raw["start_position"].compute()
    if attrs["occupancy"]:
        occ = raw["occupancy_count"].where(done_da, 0).sum("chunk")
        ds["occupancy"] = occ.assign_attrs(long_name="free walkers per bin")
        for name in ("snapshot_time", "occupancy_lower", "occupancy_upper"):
            ds[name] = raw[name].compute()
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
    return ds


def _mask_unfinished(data: Any, done: NDArray[np.bool_], fill: Any) -> Any:
    """Lazily replace blocks of unfinished tasks by the fill value (dask map_blocks).

    The dask blocks are the zarr chunks, (1, chunk walkers[, d]), so block (p, c) is
    exactly the region of task (p, c).
    """

    def mask(block: Any, block_info: Any = None) -> Any:
        p, c = block_info[0]["chunk-location"][:2]
        return block if done[p, c] else np.full_like(block, fill)

    return data.map_blocks(mask, dtype=data.dtype)


# --------------------------------------------------------------------------- errors


def os_error(path: Path, action: str, err: OSError) -> StoreError:
    """A clear StoreError for an OSError met while using a store."""
    if err.errno == errno.ENOSPC:
        return StoreError(
            f"{path}: cannot {action}: the disk is full. Free space or choose another "
            f"--store path; results already stored are intact and a rerun resumes."
        )
    if err.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        return StoreError(
            f"{path}: cannot {action}: permission denied or read-only file system "
            f"({err.strerror}). Choose a writable --store path."
        )
    return StoreError(f"{path}: cannot {action}: {err.strerror or err}.")


def _remove_tree(path: Path) -> None:
    import shutil

    shutil.rmtree(path, ignore_errors=True)
