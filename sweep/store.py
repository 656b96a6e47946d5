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
  named;
* nothing is read as numbers without proof: ``_seal.json`` (written at creation) holds
  the store's random id and the checksum of every file the driver wrote, each marker
  the store's id and the size and checksum of every chunk file its task wrote (or
  "absent": zarr writes no all-fill chunk); a task checks the id on disk before it
  writes and again right before its marker is committed, so a writer left over from
  a deleted store cannot mark its data done in a new one.
"""

from __future__ import annotations

import contextlib
import datetime
import errno
import hashlib
import json
import logging
import os
import re
import socket
import sys
import time
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
from sweep import precision
from sweep.errors import (
    StaleStoreError,
    StoreDamagedError,
    StoreError,
    StoreLockedError,
    StoreMismatchError,
    SweepError,
)
from sweep.growth import Growth, Refused, in_store_order, plan_growth
from sweep.plan import BIT_GENERATOR, Plan, Task, coordinate_columns, snapshot_steps
from sweep.spec import NO_UNITS, Sweep, Units, axis_names, key_quantity, parse_spec

log = logging.getLogger(__name__)

#: 2: the store id and ``_seal.json``; markers list their chunk files' checksums.
#: 3: a grown store whose points are not in its definition's order (``point_order``).
STORE_FORMAT = 2
GROWN_FORMAT = 3
#: Formats this version reads (and resumes, and grows).
READ_FORMATS = (2, 3)
ATTRS_KEY = "brownian_sweep"
MARKER_DIR = "_tasks"
#: Variables renamed since earlier store versions (old name -> new name); read stores
#: answer to the new names.
RENAMED = {"censoring_time": "horizon", "time_step": "dt"}
LOCK_FILE = "_lock.json"
SEAL_FILE = "_seal.json"
#: Every temporary file the tool writes inside a store starts so (markers being
#: written, a lock being taken); cleaning deletes nothing else of the user's.
OWN_TMP = ".sweep-tmp-"
#: zarr's LocalStore writes ``<key minus suffix>.<uuid4 hex>.partial`` then renames it.
ZARR_PARTIAL = re.compile(r".+\.[0-9a-f]{32}\.partial")
MARKER_NAME = re.compile(r"p(\d+)-c(\d+)\.json")
#: The state of a chunk file its task did not write (all fill value).
ABSENT = "absent"
#: A store is built as ``.<name>.creating-<pid>-<random>`` beside it, then renamed.
CREATING = ".creating-"
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
    clean_creating(path)
    if path.exists():
        if not (path / GROWTH_JOURNAL).exists():
            # Under the runner lock, the run finishes the growth and checks again.
            check_matches(path, plan.sweep)
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
    tmp = parent / f".{path.name}{CREATING}{os.getpid()}-{uuid.uuid4().hex[:8]}"
    try:
        _create(tmp, plan)
        os.rename(tmp, path)
    except OSError as err:
        _remove_tree(tmp)
        if path.exists():  # another runner created it first: check it like any store
            check_matches(path, plan.sweep)
            return path.resolve()
        raise os_error(path, "create the store", err) from err
    except BaseException:
        _remove_tree(tmp)
        raise
    return path.resolve()


def _create(
    path: Path,
    plan: Plan,
    store_id: str | None = None,
    extra: Mapping[str, Any] | None = None,
) -> None:
    """Build the store of ``plan`` (its sweep's points in store order) at ``path``.

    ``store_id`` and ``extra`` (attributes that override the defaults) are given when
    a grown store's files are rebuilt: the id stays, ``created`` stays, and the
    growth record and ``point_order`` are added.
    """
    sweep = plan.sweep
    n_p, n_c, d = sweep.n_points, sweep.n_chunks, sweep.dimension
    first = sweep.points[0]
    rec = first.record
    domain = first.domain
    store_id = store_id or uuid.uuid4().hex
    root = zarr.open_group(
        str(path),
        mode="w-",
        zarr_format=3,
        attributes={
            ATTRS_KEY: {
                "format": STORE_FORMAT,
                "store_id": store_id,
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
                "units": {"length": sweep.units.length, "time": sweep.units.time},
            }
            | dict(extra or {}),
            "title": f"brownian-sweep results: {sweep.name}",
            "Conventions": "CF-1.10",
        },
    )
    columns = coordinate_columns(sweep)
    coords = " ".join(columns)
    units = sweep.units

    def small(name: str, dims: tuple[str, ...], values: Any, **attrs: Any) -> None:
        quantity = attrs.pop("quantity", key_quantity(name))
        if quantity:
            # CF style: the unit as free text (see sweep.spec.Units).
            attrs["units"] = units.of(quantity)
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
    # The definition's own names (time.dt, time.horizon) for the per-point time step
    # and horizon; a swept one is already a coordinate of that name.
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
    if "horizon" not in columns:
        small(
            "horizon",
            ("point",),
            np.array(
                [p.timing.n_steps * p.timing.dt for p in sweep.points],
                dtype=np.float64,
            ),
            long_name="horizon: walkers still free then are censored (snapped to the "
            "step grid)",
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
        quantity="length",
    )
    if "dt" not in columns:
        small(
            "dt",
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
        quantity="time",
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
                "units": units.of("time"),
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
            attributes={
                **walker_attrs,
                "long_name": "position at absorption",
                "units": units.of("length"),
            },
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
            quantity="time",
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
            quantity="time",
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
                quantity="length",
            )
    with warnings.catch_warnings():
        # "Consolidated metadata is currently not part in the Zarr format 3
        # specification": zarr-python reads it, and readers that do not simply list.
        warnings.filterwarnings("ignore", message="Consolidated metadata")
        # Metadata never changes after creation, so one consolidated copy is exact;
        # readers then never list the folder, whose other entries (markers, lock, a
        # user's notes) zarr would otherwise try to read as arrays.
        zarr.consolidate_metadata(str(path))
    (path / MARKER_DIR).mkdir()
    _write_seal(path, store_id)


def _write_seal(path: Path, store_id: str) -> None:
    """Record the store id and the size and checksum of every file made so far."""
    files: dict[str, Any] = {}
    for folder, _, names in os.walk(path):
        for name in names:
            full = Path(folder) / name
            files[full.relative_to(path).as_posix()] = _file_state(full, digest=True)
    _atomic_json(path / SEAL_FILE, {"store_id": store_id, "files": files})


def _digest(data: bytes) -> str:
    # blake2b: in the standard library, about as fast as reading from the page cache,
    # and unlike a CRC it also tells apart a chunk copied from another task on purpose.
    return hashlib.blake2b(data, digest_size=16).hexdigest()


def _file_state(file: Path, digest: bool) -> Any:
    """``"absent"``, or ``[size in bytes, blake2b hex digest]`` (digest None if not asked)."""
    try:
        if not digest:
            return [os.stat(file).st_size, None]
        data = file.read_bytes()
    except (FileNotFoundError, NotADirectoryError):
        return ABSENT
    return [len(data), _digest(data)]


def _atomic_json(target: Path, value: Any) -> None:
    """Write JSON under a temporary name of ours, flush it to disk, rename it."""
    tmp = target.with_name(
        f"{OWN_TMP}{target.name}-{os.getpid()}-{uuid.uuid4().hex[:8]}"
    )
    try:
        with open(tmp, "w") as f:
            json.dump(value, f)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    _fsync_dir(target.parent)


# --------------------------------------------------------------------------- checks


#: What to do about a damaged file the driver wrote once, at creation.
STORE_HINT = (
    "Files made when the store is created are never rewritten, and no result can be "
    "read without them: restore the store from a copy, or move it away and run its definition "
    "again into a new store."
)


@dataclass(frozen=True)
class Damage:
    """One file of a store that does not hold what was written there."""

    file: Path
    what: str
    #: (point, chunk) of the task whose results it spoils, if any.
    task: tuple[int, int] | None = None

    def __str__(self) -> str:
        return f"{self.file}: {self.what}"


def damaged(found: list[Damage], hint: str) -> StoreDamagedError:
    """One message for every damaged file found: the first, then up to nine more."""
    lines = [f"store damaged: {found[0]}."]
    lines += [f"  also damaged: {d}." for d in found[1:10]]
    if len(found) > 10:
        lines.append(f"  ... and {len(found) - 10} more damaged files.")
    lines.append(hint)
    return StoreDamagedError("\n".join(lines))


def _task_hint(path: Path, attrs: Mapping[str, Any]) -> str:
    return (
        f"Rerun `sweep run {attrs.get('source', 'SPEC')} --store {path}`: it checks "
        f"every finished task and recomputes the damaged ones; the other results are "
        f"intact."
    )


def read_attrs(path: str | Path, writing: bool = False) -> dict[str, Any]:
    """The store's provenance attributes, after checking the files made at creation.

    ``writing``: the caller means to write there (``sweep run --store``), so the
    message suggests another --store path; readers get a hint that fits them.

    Raises
    ------
    StoreError
        ``path`` is not a store, or of another store format.
    StoreDamagedError
        A file written at creation (``zarr.json`` files, coordinates, ``_seal.json``)
        changed or went missing, or ``_tasks`` is not a folder.
    """
    path = Path(path).expanduser()
    meta = path / "zarr.json"
    fix = " Choose another --store path." if writing else ""
    if path.exists() and not path.is_dir():
        if not writing and path.suffix == ".toml":
            fix = (
                f" It looks like a sweep definition: run it with `sweep run {path}`, "
                f"then pass the store directory that run names (by default "
                f"{path.stem}.zarr)."
            )
        raise StoreError(
            f"{path}: exists and is not a directory (a store is a directory made by "
            f"`sweep run`); nothing was changed.{fix}"
        )
    if not path.is_dir():
        raise StoreError(
            f"{path}: no such store (expected a directory made by `sweep run`)."
        )
    if (path / GROWTH_JOURNAL).exists():
        raise StoreError(
            f"{path}: this store is being grown to a larger definition, or its growth "
            f"was stopped midway ({GROWTH_JOURNAL} exists): wait for the run that grows "
            f"it, or rerun `sweep run` with the new definition and --store {path} to "
            f"finish the growth; the stored results are intact."
        )
    ours = (path / SEAL_FILE).exists()
    try:
        attrs = json.loads(meta.read_text())["attributes"][ATTRS_KEY]
        if not isinstance(attrs, dict):
            raise TypeError
    except (OSError, ValueError, KeyError, TypeError) as err:
        if ours:
            what = (
                "missing"
                if isinstance(err, FileNotFoundError)
                else "not readable as the store's metadata (not JSON, or no "
                f"'{ATTRS_KEY}' attributes)"
            )
            raise damaged([Damage(meta, what)], STORE_HINT) from None
        raise StoreError(
            f"{path}: exists but is not a brownian-sweep store (no readable zarr.json with "
            f"'{ATTRS_KEY}' attributes); nothing was changed.{fix}"
        ) from None
    if attrs.get("format") not in READ_FORMATS:
        older = isinstance(attrs.get("format"), int) and attrs["format"] < STORE_FORMAT
        raise StoreError(
            f"{path}: store format {attrs.get('format')!r}; this version of the tool reads "
            f"format {' and '.join(map(str, READ_FORMATS))}."
            + (
                " Earlier formats kept no checksums of their results: run the "
                "definition again into a new store."
                if older
                else ""
            )
        )
    seal_file = path / SEAL_FILE
    seal = _read_json(seal_file)
    if seal is None or not isinstance(seal.get("files"), dict):
        what = "missing" if not ours else "not readable (expected JSON with 'files')"
        raise damaged([Damage(seal_file, what)], STORE_HINT)
    found = []
    for rel, state in seal["files"].items():
        now = _file_state(path / rel, digest=True)
        if now != state:
            found.append(
                Damage(path / rel, _difference(state, now, "the store was created"))
            )
    if not found and seal.get("store_id") != attrs.get("store_id"):
        found.append(
            Damage(seal_file, "belongs to another store (its store id differs)")
        )
    tasks = path / MARKER_DIR
    if not tasks.is_dir() or tasks.is_symlink():
        found.append(
            Damage(
                tasks,
                "missing, so no completion marker can be read"
                if not tasks.exists()
                else "not a folder (it holds the completion markers)",
            )
        )
    if found:
        raise damaged(found, STORE_HINT)
    return dict(attrs)


def _difference(was: Any, now: Any, since: str) -> str:
    if now == ABSENT:
        return f"missing (written when {since}, {was[0]} bytes)"
    if was == ABSENT:
        return f"exists, but nothing was written there when {since} (all fill value)"
    if now[0] != was[0]:
        return (
            f"{now[0]} bytes where {was[0]} were written when {since} (truncated or "
            "replaced)"
        )
    return f"its content changed since {since} (checksum differs)"


def load_sweep(path: str | Path) -> Sweep:
    """The validated sweep that made the store at ``path`` (from its stored text).

    Its points are in the definition's order, as :func:`open_dataset` presents them
    (a grown store keeps them in another order on disk: see :func:`point_order`).
    """
    attrs = read_attrs(path)
    return parse_spec(
        attrs["definition"], source=f"{attrs.get('source', '?')} (stored in {path})"
    )


def point_order(attrs: Mapping[str, Any]) -> list[int]:
    """Store index → index of the point in the definition (identity unless grown)."""
    order = attrs.get("point_order")
    return list(range(attrs["n_points"])) if order is None else list(order)


def ordered_sweep(path: str | Path, sweep: Sweep) -> Sweep:
    """``sweep``, the definition the store at ``path`` holds, with its points in the
    store's order."""
    attrs = read_attrs(path, writing=True)
    if attrs["spec"] != sweep.canonical:
        raise StoreMismatchError(f"{path}: not the store of {sweep.source}.")
    return in_store_order(sweep, attrs.get("point_order"))


def stream_version(attrs: Mapping[str, Any]) -> int:
    """The random-stream version of the store with attributes ``attrs``."""
    return int(attrs.get("stream_version", UNVERSIONED_STREAM))


def check_matches(path: Path, sweep: Sweep) -> Growth | None:
    """Refuse a store made with other random streams or by a definition that does not
    only add work to it.

    Returns
    -------
    Growth or None
        None when the store was made by this very definition; a :class:`Growth` when
        the definition adds walkers or points (or lists the same points in another
        order), which :func:`grow` applies.

    Raises
    ------
    StoreMismatchError
        Other random streams, or any other difference (listed).
    """
    attrs = read_attrs(path, writing=True)
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
    if attrs["spec"] == sweep.canonical:
        return None
    try:
        stored = parse_spec(attrs["definition"], source=f"{path}")
        if stored.canonical != attrs["spec"]:
            # Stored by a version that resolved the definition otherwise: only an
            # identical definition resumes it.
            raise Refused(list(_differences(attrs["spec"], sweep.canonical)))
        return plan_growth(stored, attrs.get("point_order"), sweep)
    except Refused as refused:
        differences = refused.differences
    except SweepError:
        differences = list(_differences(attrs["spec"], sweep.canonical))
    lines = [
        f"  {key}: stored {_short(a)}, now {_short(b)}" for key, a, b in differences
    ]
    shown = "\n".join(lines[:20]) + (
        f"\n  ... and {len(lines) - 20} more" if len(lines) > 20 else ""
    )
    raise StoreMismatchError(
        f"{path}: this store was made by a different sweep definition "
        f"({attrs.get('source', '?')}), so resuming it with {sweep.source} would mix "
        f"results. A rerun may only add work to a store (more walkers with the same "
        f"chunk, more grid values or zip rows). Differences:\n{shown}\n"
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


# --------------------------------------------------------------------------- growth

#: The growth journal: present from the moment a growth is committed until its files
#: are all in place. Its presence means "finish me" (:func:`finish_growth`).
GROWTH_JOURNAL = "_growth.json"
#: A grown store's new metadata is built as ``.<name>.growing-<pid>-<random>`` beside it.
GROWING = ".growing-"
#: Set to a step name (``built``, ``committed``, ``installing``, ``sealed``) to make a
#: growth stop there and wait (for tests that kill it); never set in normal use.
PAUSE_ENV = "SWEEP_GROWTH_PAUSE"


def _pause(step: str) -> None:
    if os.environ.get(PAUSE_ENV) == step:
        sys.stderr.write(f"growth paused at step {step}\n")
        sys.stderr.flush()
        time.sleep(3600)


def grow(path: Path, sweep: Sweep, growth: Growth) -> None:
    """Extend the store at ``path`` (whose runner lock the caller holds) to ``sweep``.

    Crash-safe in three phases (docs/store-format.md, "Growing a store"):

    1. *build*: the new metadata (every ``zarr.json``, the coordinate arrays, the
       consolidated metadata and ``_seal.json``, with the store's own id) is made as
       a store of its own in ``.<name>.growing-<pid>-<random>`` beside the store and
       flushed to disk. A kill here leaves the old store untouched (the folder is
       removed by the next run);
    2. *commit*: ``_growth.json`` names that folder and the files of the old
       metadata the new one no longer has; it is written atomically;
    3. *install*: each file is renamed into the store (each rename atomic), stale
       files removed, ``_seal.json`` renamed last, then the folder and the journal
       are removed. While the journal exists readers refuse the store and the next
       ``sweep run`` finishes the installation (:func:`finish_growth`) before
       anything else.

    Chunk files and completion markers are never touched: old points keep their
    indices and chunk keys, new points and chunks get new ones.
    """
    attrs = read_attrs(path, writing=True)
    ordered = in_store_order(sweep, growth.order)
    identity = list(growth.order) == list(range(len(growth.order)))
    record = {
        "when": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "changes": list(growth.changes),
        "points": [growth.old_points, growth.new_points],
        "walkers": [growth.old_walkers, growth.new_walkers],
        "from_spec_hash": attrs["spec_hash"],
        "to_spec_hash": sweep.spec_hash,
        "source": sweep.source,
        "tool_version": tool_version(),
    }
    extra: dict[str, Any] = {
        "created": attrs["created"],
        "growth": [*attrs.get("growth", []), record],
    }
    if not identity:
        extra["point_order"] = list(growth.order)
        extra["format"] = GROWN_FORMAT
    elif attrs.get("format") == GROWN_FORMAT:
        extra["format"] = GROWN_FORMAT
    skeleton = path.parent / (
        f".{path.name}{GROWING}{os.getpid()}-{uuid.uuid4().hex[:8]}"
    )
    try:
        _create(skeleton, Plan(sweep=ordered, tasks=()), attrs["store_id"], extra)
        for folder, _, names in os.walk(skeleton):
            for name in names:
                _fsync(Path(folder) / name)
            _fsync_dir(Path(folder))
    except OSError as err:
        _remove_tree(skeleton)
        raise os_error(path, "grow the store", err) from err
    except BaseException:
        _remove_tree(skeleton)
        raise
    _pause("built")
    old_seal = _read_json(path / SEAL_FILE) or {}
    new_seal = _read_json(skeleton / SEAL_FILE) or {}
    stale = sorted(set(old_seal.get("files", {})) - set(new_seal.get("files", {})))
    _atomic_json(
        path / GROWTH_JOURNAL,
        {"skeleton": skeleton.name, "stale": stale, "growth": record},
    )
    _pause("committed")
    finish_growth(path)
    log.warning(
        "%s: grown (%s); only the new tasks run.", path, "; ".join(growth.changes)
    )


def finish_growth(path: Path) -> bool:
    """Finish a committed growth (its journal exists); remove uncommitted ones.

    Idempotent: a kill at any point of it leaves a state the next call finishes.
    Call it holding the runner lock.

    Returns
    -------
    bool
        Whether a growth was finished.
    """
    journal = _read_json(path / GROWTH_JOURNAL)
    named = None if journal is None else str(journal.get("skeleton", ""))
    # Folders of growths never committed (killed while building): the old store is
    # intact, so they only go.
    prefix = f".{path.name}{GROWING}"
    with contextlib.suppress(OSError), os.scandir(path.parent) as entries:
        for entry in list(entries):
            if (
                entry.name.startswith(prefix)
                and entry.name != named
                and entry.is_dir(follow_symlinks=False)
            ):
                pid = entry.name[len(prefix) :].partition("-")[0]
                if pid.isdigit() and not _pid_alive(int(pid)):
                    _remove_tree(Path(entry.path))
    if journal is None:
        if (path / GROWTH_JOURNAL).exists():
            raise damaged(
                [Damage(path / GROWTH_JOURNAL, "not readable as a growth journal")],
                STORE_HINT,
            )
        return False
    skeleton = path.parent / str(named)
    if named and skeleton.is_dir():
        moved = 0
        for folder, _, names in sorted(os.walk(skeleton)):
            for name in sorted(names):
                source = Path(folder) / name
                rel = source.relative_to(skeleton)
                if rel.as_posix() == SEAL_FILE:
                    continue
                target = path / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                os.replace(source, target)
                moved += 1
                if moved == 2:
                    _pause("installing")
        for rel in journal.get("stale", []):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(path / rel)
        for folder, _, _ in os.walk(path):
            if MARKER_DIR not in Path(folder).relative_to(path).parts:
                _fsync_dir(Path(folder))
        if (skeleton / SEAL_FILE).exists():
            os.replace(skeleton / SEAL_FILE, path / SEAL_FILE)
            _fsync_dir(path)
        _pause("sealed")
        _remove_tree(skeleton)
    os.unlink(path / GROWTH_JOURNAL)
    _fsync_dir(path)
    return True


# --------------------------------------------------------------------------- lock


@contextlib.contextmanager
def runner_lock(path: Path) -> Iterator[None]:
    """Hold the store's runner lock; take over a stale one left by a dead process.

    The lock appears complete or not at all: it is written under a temporary name
    and hard-linked to ``_lock.json`` (which fails if a lock exists). So a full disk
    leaves no empty lock behind, and an empty or unreadable lock (left by an older
    version, or by a file system without hard links, stopped while writing it) is
    taken over, with a notice, once it is two seconds old.

    Raises
    ------
    StoreLockedError
        Another live process (or a process on another host) holds the lock.
    StoreError
        The lock cannot be written (full disk, read-only store).
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
    for _ in range(20):
        try:
            _create_lock(lock, mine, token)
            break
        except FileExistsError:
            pass
        except OSError as err:
            raise os_error(path, "take the runner lock", err) from err
        try:
            seen = os.stat(lock)
        except FileNotFoundError:
            continue  # released meanwhile
        holder = _read_json(lock)
        if holder is None:
            age = datetime.datetime.now().timestamp() - seen.st_mtime
            if age < UNREADABLE_LOCK_AGE:
                time.sleep(0.2)  # may be a lock being written right now
                continue
            log.warning(
                "%s: the runner lock %s is empty or unreadable (%d bytes), as a run "
                "stopped while writing it leaves it (a full disk, a killed process); "
                "no runner can be identified by it, so it is taken over.",
                path,
                lock,
                seen.st_size,
            )
        elif not _is_stale(holder):
            raise StoreLockedError(
                f"{path}: another `sweep run` is using this store (pid "
                f"{holder.get('pid')} on {holder.get('host')}, since "
                f"{holder.get('started')}). Wait for it to finish, or stop it; "
                f"if you are sure it is gone, delete {lock}."
            ) from None
        else:
            log.warning(
                "%s: taking over a stale lock left by pid %s on %s (started %s); "
                "the process no longer exists.",
                path,
                holder.get("pid"),
                holder.get("host"),
                holder.get("started"),
            )
        _remove_lock(lock, seen, token)
    else:
        raise StoreLockedError(
            f"{path}: could not take the runner lock {lock}: other runners kept "
            f"taking and releasing it; try again."
        )
    try:
        yield
    finally:
        holder = _read_json(lock)
        if holder is not None and holder.get("token") == token:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(lock)


#: Seconds after which an unreadable lock is no longer a lock being written.
UNREADABLE_LOCK_AGE = 2.0


def _create_lock(lock: Path, content: Mapping[str, Any], token: str) -> None:
    """Make ``lock`` appear with its full content; FileExistsError if it exists."""
    tmp = lock.with_name(f"{OWN_TMP}lock-{token}")
    try:
        with open(tmp, "x") as f:
            json.dump(content, f)
            f.flush()
        try:
            os.link(tmp, lock)
        except FileExistsError:
            raise
        except OSError as err:
            if err.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP):
                raise
            # No hard links here: create exclusively and write (not atomic; an
            # unreadable lock younger than UNREADABLE_LOCK_AGE is waited for).
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            try:
                with os.fdopen(fd, "w") as f:
                    json.dump(content, f)
            except BaseException:
                with contextlib.suppress(OSError):
                    os.unlink(lock)
                raise
    finally:
        with contextlib.suppress(OSError):
            os.unlink(tmp)


def _remove_lock(lock: Path, seen: os.stat_result, token: str) -> None:
    """Remove the lock judged stale, unless another runner replaced it meanwhile."""
    away = lock.with_name(f"{OWN_TMP}lock-stale-{token}")
    try:
        os.rename(lock, away)
    except FileNotFoundError:
        return
    now = os.stat(away)
    if (now.st_ino, now.st_dev) != (seen.st_ino, seen.st_dev):
        # A fresh lock of another runner: put it back (unless a third took the name).
        with contextlib.suppress(FileExistsError):
            os.link(away, lock)
    os.unlink(away)


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
    except (OSError, ValueError, RecursionError):
        return None
    return value if isinstance(value, dict) else None


# --------------------------------------------------------------------------- tasks


def clean_partials(path: Path) -> int:
    """Delete the temporary files killed writers left inside the store.

    Only files the tool or zarr names are touched: ``.sweep-tmp-*`` files in the
    store folder and in ``_tasks``, and zarr's ``*.<32 hex>.partial`` files inside the
    store's own array folders (those listed in ``_seal.json``). A user's files, even
    ones named ``*.partial`` or ``*.tmp-*``, are never deleted; symbolic links are
    neither followed nor deleted. Call it while holding the runner lock.

    Returns
    -------
    int
        Number of files removed.
    """
    removed = 0

    def remove(entry: os.DirEntry[str]) -> None:
        nonlocal removed
        if entry.is_file(follow_symlinks=False):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(entry.path)
                removed += 1

    for folder in (path, path / MARKER_DIR):
        with contextlib.suppress(OSError), os.scandir(folder) as entries:
            for entry in entries:
                if entry.name.startswith(OWN_TMP):
                    remove(entry)
    seal = _read_json(path / SEAL_FILE) or {}
    arrays = {rel.split("/")[0] for rel in seal.get("files", {}) if rel.count("/") == 1}
    for name in sorted(arrays):
        for folder, dirs, _ in os.walk(path / name, followlinks=False):
            dirs[:] = [d for d in dirs if not os.path.islink(os.path.join(folder, d))]
            with os.scandir(folder) as entries:
                for entry in entries:
                    if ZARR_PARTIAL.fullmatch(entry.name):
                        remove(entry)
    return removed


def clean_creating(path: Path) -> int:
    """Delete ``.<name>.creating-<pid>-*`` folders beside ``path`` left by dead creators.

    A store is built under such a name and renamed when complete; a creation killed
    midway leaves the folder. Only folders of this store's name whose creating
    process no longer exists on this host are deleted.
    """
    prefix = f".{path.name}{CREATING}"
    removed = 0
    try:
        entries = list(os.scandir(path.parent))
    except OSError:
        return 0
    for entry in entries:
        if not entry.name.startswith(prefix) or not entry.is_dir(follow_symlinks=False):
            continue
        pid, _, _ = entry.name[len(prefix) :].partition("-")
        if not pid.isdigit() or _pid_alive(int(pid)):
            continue
        _remove_tree(Path(entry.path))
        removed += 1
    if removed:
        log.warning(
            "%s: removed %d unfinished store folder(s) %s* left by a creation that was "
            "stopped.",
            path,
            removed,
            prefix,
        )
    return removed


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError):
        return True
    return True


def task_chunk_keys(attrs: Mapping[str, Any], point: int, chunk: int) -> list[str]:
    """The zarr chunk keys task (point, chunk) writes, as its marker lists them."""
    p, c = point, chunk
    keys = []
    if attrs["per_walker"]:
        keys += [
            f"first_passage_time/c/{p}/{c}",
            f"absorbing_wall/c/{p}/{c}",
            f"exit_position/c/{p}/{c}/0",
        ]
    keys.append(f"survival_count/c/{p}/{c}/0")
    if attrs.get("fpt_bins"):
        keys.append(f"first_passage_count/c/{p}/{c}/0/0")
    if attrs["occupancy"]:
        zeros = ["0"] * (1 + len(attrs["axis_names"]))
        keys.append(f"occupancy_count/c/{p}/{c}/" + "/".join(zeros))
    return keys


def scan_markers(
    path: Path, attrs: Mapping[str, Any], digests: bool = False
) -> tuple[dict[tuple[int, int], dict[str, Any]], list[Damage]]:
    """Read every completion marker and check it against the store.

    Always (cheap: one small read per marker and one ``stat`` per chunk file): the
    marker is a JSON object of this store (its store id), of the task its name says,
    with walker counts that match the task and add up, and every chunk file it lists
    has the size its task wrote (or is absent, if the task wrote none). With
    ``digests``, every chunk file is also read and its checksum compared.

    Returns
    -------
    done : dict
        (point, chunk) → marker, for every task whose marker and data check out.
    damage : list of Damage
        Everything that did not.
    """
    n_p, n_c = attrs["n_points"], attrs["n_chunks"]
    folder = path / MARKER_DIR
    root = str(path) + os.sep  # plain strings: pathlib costs more than the stat
    done: dict[tuple[int, int], dict[str, Any]] = {}
    found: list[Damage] = []
    try:
        with os.scandir(folder) as entries:
            names = sorted(e.name for e in entries)
    except OSError:
        names = []
    for name in names:
        match = MARKER_NAME.fullmatch(name)
        if match is None:
            continue  # ours being written (.sweep-tmp-*), or not ours
        p, c = int(match.group(1)), int(match.group(2))
        file = folder / name
        if p >= n_p or c >= n_c:
            found.append(
                Damage(
                    file,
                    f"a marker of point {p}, chunk {c}, but the store has {n_p} "
                    f"points of {n_c} chunks",
                    (p, c),
                )
            )
            continue
        marker, problem = _check_marker(root, file, attrs, p, c)
        if problem is not None:
            found.append(problem)
            continue
        done[(p, c)] = marker
    if digests and done:
        from concurrent.futures import ThreadPoolExecutor

        def digest_problem(task: tuple[int, int]) -> Damage | None:
            for key, state in done[task]["chunks"].items():
                if state == ABSENT:
                    continue
                now = _file_state(path / key, digest=True)
                if now != state:
                    return Damage(
                        path / key,
                        _difference(state, now, "its task finished")
                        + f" (point {task[0]}, chunk {task[1]})",
                        task,
                    )
            return None

        # hashlib releases the GIL on large buffers: chunk files hash in parallel.
        with ThreadPoolExecutor(min(8, os.cpu_count() or 1)) as pool:
            problems = list(pool.map(digest_problem, sorted(done)))
            for problem in problems:
                if problem is not None:
                    found.append(problem)
                    del done[problem.task]  # type: ignore[arg-type]
    return done, found


def _check_marker(
    root: str, file: Path, attrs: Mapping[str, Any], p: int, c: int
) -> tuple[dict[str, Any], Damage | None]:
    """The marker of task (p, c), and what is wrong with it or its chunk files' sizes."""

    def bad(what: str, where: Path = file) -> tuple[dict[str, Any], Damage]:
        return {}, Damage(where, what, (p, c))

    try:
        with open(file) as f:
            text = f.read()
    except OSError as err:
        return bad(f"cannot be read ({err.strerror})")
    if not text.strip():
        return bad("empty (a completion marker holds the task's counts)")
    try:
        marker = json.loads(text)
    except (ValueError, RecursionError):
        return bad("not valid JSON (a completion marker is JSON)")
    if not isinstance(marker, dict):
        return bad("not a completion marker (expected a JSON object)")
    if marker.get("store_id") != attrs["store_id"]:
        return bad(
            "written for another store (its store id differs): a task of an earlier "
            "store at this path, or a copied file"
        )
    if marker.get("point") != p or marker.get("chunk") != c:
        return bad(
            f"says point {marker.get('point')}, chunk {marker.get('chunk')}, but is "
            f"the marker of point {p}, chunk {c}"
        )
    walkers = min(attrs["chunk"], attrs["walkers"] - c * attrs["chunk"])
    absorbed = marker.get("absorbed_by")
    counts_ok = (
        marker.get("walkers") == walkers
        and isinstance(marker.get("censored"), int)
        and isinstance(absorbed, list)
        and all(isinstance(n, int) and n >= 0 for n in absorbed)
        and 0 <= marker["censored"] <= walkers
        and marker["censored"] + sum(absorbed) == walkers
    )
    if not counts_ok:
        return bad(
            f"its counts do not fit the task of {walkers} walkers (walkers "
            f"{marker.get('walkers')!r}, censored {marker.get('censored')!r}, "
            f"absorbed {absorbed!r})"
        )
    chunks = marker.get("chunks")
    if not isinstance(chunks, dict) or sorted(chunks) != sorted(
        task_chunk_keys(attrs, p, c)
    ):
        return bad("does not list the chunk files of its task")
    for key, state in chunks.items():
        if state != ABSENT and not (
            isinstance(state, list)
            and len(state) == 2
            and isinstance(state[0], int)
            and isinstance(state[1], str)
        ):
            return bad(f"lists {key} as {state!r}, not as a size and a checksum")
        try:
            now: Any = [os.stat(root + key).st_size, None]
        except (FileNotFoundError, NotADirectoryError):
            now = ABSENT
        same = state == now if ABSENT in (state, now) else now[0] == state[0]
        if not same:
            return bad(
                _difference(state, now, "its task finished")
                + f" (point {p}, chunk {c})",
                Path(root + key),
            )
    return marker, None


def verified_markers(
    path: str | Path, digests: bool = False
) -> tuple[dict[str, Any], dict[tuple[int, int], dict[str, Any]]]:
    """The store's attributes and the markers of its finished tasks, all checked.

    Raises
    ------
    StoreDamagedError
        Any file is damaged; the message names them and says what to do.
    """
    path = Path(path).expanduser()
    attrs = read_attrs(path)
    done, found = scan_markers(path, attrs, digests)
    if found:
        raise damaged(found, _task_hint(path, attrs))
    return attrs, done


def done_tasks(path: Path) -> set[tuple[int, int]]:
    """(point, chunk) of every finished task (markers checked; damage raises).

    Empty while the store does not exist yet (a run is still creating it).
    """
    if not Path(path).expanduser().exists():
        return set()
    return set(verified_markers(path)[1])


def markers_by_point(path: Path) -> dict[int, dict[int, dict[str, Any]]]:
    """Markers of finished tasks (checked; damage raises): point → chunk → marker,
    by store index."""
    out: dict[int, dict[int, dict[str, Any]]] = {}
    for (p, c), marker in verified_markers(path)[1].items():
        out.setdefault(p, {})[c] = marker
    return out


def read_markers(path: Path) -> list[dict[str, Any]]:
    """The summaries written in every completion marker (checked; damage raises)."""
    done = verified_markers(path)[1]
    return [done[task] for task in sorted(done)]


def resume_state(path: Path) -> tuple[str, set[tuple[int, int]]]:
    """For a run: the store id and the finished tasks, all checksums verified.

    A task whose marker or data is damaged is reported (a warning naming the file)
    and its marker removed, so the run recomputes it.
    """
    attrs = read_attrs(path)
    done, found = scan_markers(path, attrs, digests=True)
    for n, problem in enumerate(found):
        p, c = problem.task or (-1, -1)
        inside = 0 <= p < attrs["n_points"] and 0 <= c < attrs["n_chunks"]
        if n < MAX_WARNINGS:
            where = (
                f"recomputing point {p}, chunk {c}"
                if inside
                else "its marker is removed"
            )
            log.warning("store damaged: %s; %s.", problem, where)
        elif n == MAX_WARNINGS:
            log.warning(
                "store damaged: %d more damaged tasks, recomputed as well.",
                len(found) - MAX_WARNINGS,
            )
        if problem.task is not None:
            try:
                os.unlink(path / MARKER_DIR / f"p{p}-c{c}.json")
            except FileNotFoundError:
                pass
            except OSError as err:
                raise os_error(
                    path, "remove the marker of a damaged task", err
                ) from err
    return attrs["store_id"], set(done)


#: Damaged tasks named one by one in a run's warnings; the rest are counted.
MAX_WARNINGS = 20


def check_store_id(path: Path, store_id: str, task: Task) -> None:
    """Raise StaleStoreError unless the store at ``path`` is the one of ``store_id``.

    Read from disk each time: the store may have been deleted and made again by
    another run while this task was queued or running.
    """
    seal = _read_json(path / SEAL_FILE)
    now = None if seal is None else seal.get("store_id")
    if now == store_id:
        return
    state = (
        "no longer exists" if seal is None else f"was replaced by another (id {now})"
    )
    raise StaleStoreError(
        f"{path}: point {task.point}, chunk {task.chunk} was planned for the store "
        f"with id {store_id}, which {state}; the task stops without marking "
        f"anything done."
    )


def write_task(
    path: str,
    task: Task,
    output: TaskOutput,
    summary: dict[str, Any],
    store_id: str,
) -> dict[str, Any]:
    """Write one task's chunks, flush them, then its completion marker.

    Called inside tasks (threads or worker processes); opens the store read-write
    without touching metadata. The store id is checked on disk before the chunks are
    written and again right before the marker is renamed into place.

    Returns
    -------
    dict
        The marker written: ``summary`` with ``store_id`` and ``chunks`` (chunk key →
        ``[size, blake2b]`` or ``"absent"``).
    """
    base = Path(path)
    check_store_id(base, store_id, task)
    root = zarr.open_group(path, mode="r+", use_consolidated=True)
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
    chunks = {}
    for key in written:
        _fsync(base / key)
        chunks[key] = _file_state(base / key, digest=True)
    marker_doc = {**summary, "store_id": store_id, "chunks": chunks}
    marker = base / MARKER_DIR / f"p{p}-c{c}.json"
    tmp = marker.with_name(
        f"{OWN_TMP}{marker.name}-{os.getpid()}-{uuid.uuid4().hex[:6]}"
    )
    try:
        with open(tmp, "w") as f:
            json.dump(marker_doc, f)
            f.flush()
            os.fsync(f.fileno())
        check_store_id(base, store_id, task)
        os.replace(tmp, marker)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    _fsync_dir(marker.parent)
    return marker_doc


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
    n_p, n_c = attrs["n_points"], attrs["n_chunks"]
    done = np.zeros((n_p, n_c), dtype=bool)
    for p, c in markers:
        done[p, c] = True
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
    target = precision.from_canonical(attrs["spec"]["sweep"].get("precision"))
    if target is not None:
        # A precision target: a point runs only the chunks its target needs.
        planned, final = _planned(target, attrs, markers)
        ds["planned"] = xr.DataArray(
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
    order = attrs.get("point_order")
    if order is not None:
        # A grown store appended the points it gained; readers see the points in the
        # definition's order, as in a store made at once from it.
        ds = ds.isel(point=np.argsort(np.asarray(order)))
        ds = ds.assign_coords(
            point=xr.Variable(
                ("point",), np.arange(n_p, dtype=np.int64), ds["point"].attrs
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
