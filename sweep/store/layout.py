"""The store's layout: one table of every array a store holds, and what follows from it.

:data:`ARRAYS` names each array once, with its dimensions, dtype, fill value, chunking
rule, CF attributes, who writes it (the driver at creation, or each task from one of its
outputs), when a store has it, and how :func:`sweep.open` reads it and whether
``sweep export`` copies it by default. Everything else is derived from the table:
creating the arrays (:func:`create_arrays`), the chunk files a task writes
(:func:`task_chunks`, through zarr's own chunk-key encoding), the Dataset
(:mod:`sweep.store.read`), the HDF5 export's defaults and fill values
(:func:`exported_variables`, :func:`read_fill`) and the array table of
``docs/store-format.md`` (:func:`markdown_table`, compared with the document by a test).

Chunking rules: ``"task"`` arrays get one chunk per task (1 along ``point`` and
``chunk``, the sweep's chunk of walkers along ``walker``, whole along every other
dimension), so no two tasks share a chunk file; ``"whole"`` arrays are one chunk,
written once by the driver.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import zarr
from numpy.typing import NDArray

from sweep.plan import coordinate_columns, snapshot_steps
from sweep.spec import Sweep, axis_names, key_quantity

#: Side files and folders inside the store folder, beside zarr's: completion markers
#: (``_tasks/p<point>-c<chunk>.json``), the seal written at creation, the runner lock.
MARKER_DIR = "_tasks"
SEAL_FILE = "_seal.json"
LOCK_FILE = "_lock.json"

#: The name in :data:`ARRAYS` that stands for one array per swept parameter (its store
#: coordinate name, :func:`sweep.plan.coordinate_columns`).
PARAMETER = "<parameter>"
#: The dimension that stands for one histogram-bin dimension per axis (``x_bin``, ...).
BINS = "<axis>_bin"


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
    #: float64 (n_walkers, d): unwrapped displacement (domains with periodic faces).
    displacement: NDArray[np.float64] | None = None


@dataclass(frozen=True)
class DatasetVariable:
    """A variable of :func:`sweep.open`'s Dataset made from a store array."""

    name: str
    long_name: str
    #: Divided by the walkers of finished tasks (a fraction, not a count).
    fraction: bool = False


@dataclass(frozen=True)
class ArraySpec:
    """One array of the store (or, for :data:`PARAMETER`, one per swept parameter).

    Attributes
    ----------
    name : str
        The array's name in the store.
    dims : tuple of str
        Its dimension names; :data:`BINS` stands for ``x_bin, y_bin, ...``.
    dtype : str
        numpy dtype code; ``"values"`` when it follows the values (a parameter).
    fill : float, int or None
        The zarr fill value of a task array (what unfinished or censored entries read
        as); None for driver arrays (zarr's default: they are written whole).
    chunking : {"task", "whole"}
        One chunk per task, or the array as one chunk.
    long_name, standard_name : str
        CF attributes (``standard_name`` only where CF defines one).
    quantity : str or None
        What its ``units`` attribute measures (``"time"``, ``"length"``, or
        ``"by name"`` for a parameter: :func:`sweep.spec.key_quantity`).
    output : str or None
        The :class:`TaskOutput` field a task writes into it; None: the driver writes
        it at creation, from ``values``.
    when : str
        When a store has it: ``"always"``, ``"per_walker"``, ``"fpt_bins"``,
        ``"occupancy"`` (the ``[record]`` settings), or ``"not swept"`` (unless a
        swept parameter of the same name already is the array).
    read : {"index", "coordinate", "variable", "masked", "summed"}
        How :func:`sweep.open` reads it: a dimension coordinate, a coordinate or data
        variable loaded in memory, per walker with unfinished tasks masked to the
        fill value (lazy), or summed over finished chunks (lazy) into ``read_as``.
    read_as : tuple of DatasetVariable
        The Dataset variables of a summed array.
    exported : bool
        Copied by ``sweep export`` by default (as the Dataset variables it reads as).
    flags : bool
        Carries CF ``flag_values`` / ``flag_meanings`` (the wall names).
    values : callable or None
        ``values(sweep)``: the array a driver array holds.
    """

    name: str
    dims: tuple[str, ...]
    dtype: str
    long_name: str
    fill: float | int | None = None
    chunking: str = "whole"
    standard_name: str | None = None
    quantity: str | None = None
    output: str | None = None
    when: str = "always"
    read: str = "variable"
    read_as: tuple[DatasetVariable, ...] = ()
    exported: bool = False
    flags: bool = False
    values: Callable[[Sweep], Any] | None = None

    @property
    def written_by_task(self) -> bool:
        return self.output is not None

    def dataset_names(self) -> tuple[str, ...]:
        """The names it has in :func:`sweep.open`'s Dataset."""
        return tuple(v.name for v in self.read_as) or (self.name,)


def _per_point(value: Callable[[Any], Any], dtype: type = np.float64) -> Any:
    """``values`` for a per-point array: ``value(point)`` for every point."""
    return lambda sweep: np.array([value(p) for p in sweep.points], dtype=dtype)


def _horizon(point: Any) -> float:
    return float(point.timing.n_steps * point.timing.dt)


def _start(point: Any) -> Any:
    start = point.motion.start
    return start if start is not None else [np.nan] * point.motion.dimension


def _occupancy_edge(side: str) -> Callable[[Sweep], Any]:
    return _per_point(
        lambda p: getattr(p.record, f"occupancy_{side}") or getattr(p.domain, side)
    )


def _snapshot_times(sweep: Sweep) -> Any:
    times = np.array(
        [snapshot_steps(p) * p.timing.dt for p in sweep.points], dtype=np.float64
    )
    return times.reshape(sweep.n_points, len(sweep.points[0].record.occupancy_times))


#: Every array of a store, in the order of the documented layout and of the Dataset.
ARRAYS: tuple[ArraySpec, ...] = (
    ArraySpec(
        "point", ("point",), "i8", "sweep point index", read="index",
        values=lambda sweep: np.arange(sweep.n_points, dtype=np.int64),
    ),
    ArraySpec(
        PARAMETER, ("point",), "values", f"swept parameter {PARAMETER}",
        quantity="by name", read="coordinate",
    ),
    ArraySpec(
        "chunk", ("chunk",), "i8", "task chunk index", read="index",
        values=lambda sweep: np.arange(sweep.n_chunks, dtype=np.int64),
    ),
    ArraySpec(
        "chunk_walkers", ("chunk",), "i8", "walkers per chunk", read="coordinate",
        values=lambda sweep: np.array(
            [sweep.chunk_walkers(c) for c in range(sweep.n_chunks)], dtype=np.int64
        ),
    ),
    # The definition's own names (time.dt, time.horizon) for the per-point time step
    # and horizon; a swept one is already a coordinate of that name.
    ArraySpec(
        "horizon", ("point",), "f8",
        "horizon: walkers still free then are censored (snapped to the step grid)",
        quantity="time", when="not swept", read="coordinate",
        values=_per_point(_horizon),
    ),
    ArraySpec(
        "dt", ("point",), "f8", "time step dt", quantity="time", when="not swept",
        read="coordinate", values=_per_point(lambda p: p.timing.dt),
    ),
    ArraySpec(
        "time", ("time",), "f8", "time of the survival grid", standard_name="time",
        quantity="time", read="index",
        values=lambda sweep: np.array(
            sweep.points[0].record.survival_times, dtype=np.float64
        ),
    ),
    ArraySpec(
        "first_passage_time", ("point", "walker"), "f8",
        "first-passage time (NaN: still free at the horizon)", fill=np.nan,
        chunking="task", quantity="time", output="time", when="per_walker",
        read="masked", exported=True,
    ),
    ArraySpec(
        "absorbing_wall", ("point", "walker"), "i2",
        "index of the wall or target that absorbed the walker", fill=-1,
        chunking="task", output="wall", when="per_walker", read="masked",
        exported=True, flags=True,
    ),
    ArraySpec(
        "exit_position", ("point", "walker", "axis"), "f8", "position at absorption",
        fill=np.nan, chunking="task", quantity="length", output="position",
        when="per_walker", read="masked", exported=True,
    ),
    ArraySpec(
        "displacement", ("point", "walker", "axis"), "f8",
        "unwrapped displacement from the start to absorption or the horizon "
        "(through periodic faces)",
        fill=np.nan, chunking="task", quantity="length", output="displacement",
        when="displacement", read="masked", exported=True,
    ),
    ArraySpec(
        "survival_count", ("point", "chunk", "time"), "i8",
        "walkers of the chunk still free", fill=0, chunking="task",
        output="survival", read="summed", exported=True,
        read_as=(
            DatasetVariable("survival", "fraction of walkers still free", True),
            DatasetVariable("survival_count", "walkers still free"),
        ),
    ),
    ArraySpec(
        "first_passage_count", ("point", "chunk", "wall", "fpt_bin"), "i8",
        "walkers of the chunk absorbed per wall and time bin", fill=0,
        chunking="task", output="fpt_histogram", when="fpt_bins", read="summed",
        read_as=(
            DatasetVariable(
                "fpt_histogram",
                "walkers absorbed per wall and time bin "
                "[fpt_bin * fpt_bin_width, (fpt_bin + 1) * fpt_bin_width)",
            ),
        ),
    ),
    ArraySpec(
        "fpt_bin_width", ("point",), "f8", "width of the first-passage-time bins",
        quantity="time", when="fpt_bins",
        values=_per_point(lambda p: _horizon(p) / p.record.fpt_bins),
    ),
    ArraySpec(
        "start_position", ("point", "axis"), "f8",
        "start point of every walker (NaN: uniform over the domain)",
        quantity="length", values=_per_point(_start),
    ),
    ArraySpec(
        "occupancy_count", ("point", "chunk", "snapshot", BINS), "i8",
        "free walkers of the chunk per bin", fill=0, chunking="task",
        output="occupancy", when="occupancy", read="summed", exported=True,
        read_as=(DatasetVariable("occupancy", "free walkers per bin"),),
    ),
    ArraySpec(
        "snapshot_time", ("point", "snapshot"), "f8",
        "occupancy snapshot time, snapped to the step grid", quantity="time",
        when="occupancy", exported=True, values=_snapshot_times,
    ),
    ArraySpec(
        "occupancy_lower", ("point", "axis"), "f8",
        "lower edge of the occupancy histogram per axis", quantity="length",
        when="occupancy", exported=True, values=_occupancy_edge("lower"),
    ),
    ArraySpec(
        "occupancy_upper", ("point", "axis"), "f8",
        "upper edge of the occupancy histogram per axis", quantity="length",
        when="occupancy", exported=True, values=_occupancy_edge("upper"),
    ),
)  # fmt: skip

#: The arrays tasks write, in table order.
TASK_ARRAYS = tuple(spec for spec in ARRAYS if spec.written_by_task)
#: Dataset variables that come from the markers, not from an array.
MARKER_VARIABLES = ("done", "walkers_done")
#: ... and those only a store with a precision target has (sweep.precision): the
#: tasks its points' targets plan so far; not exported by default.
TARGET_VARIABLES = ("planned",)


def by_name(name: str) -> ArraySpec:
    """The spec of a store array (a name not in the table is a swept parameter)."""
    for spec in ARRAYS:
        if spec.name == name:
            return spec
    return next(spec for spec in ARRAYS if spec.name == PARAMETER)


def record_flags(sweep: Sweep) -> dict[str, bool]:
    """Which of the optional records a sweep keeps, as the root attributes say it."""
    rec = sweep.points[0].record
    return {
        "per_walker": rec.per_walker,
        "occupancy": bool(rec.occupancy_times),
        "fpt_bins": bool(rec.fpt_bins),
        # Only stores with periodic faces (and per-walker values) name it, so the
        # attributes of every other store stay as they were.
        **(
            {"displacement": True}
            if rec.per_walker and any(sweep.points[0].domain.periodic)
            else {}
        ),
    }


def present(spec: ArraySpec, flags: Mapping[str, Any], swept: Any = ()) -> bool:
    """Whether a store with record ``flags`` and swept coordinates ``swept`` has it."""
    if spec.when == "always":
        return True
    if spec.when == "not swept":
        return spec.name not in swept
    return bool(flags.get(spec.when))


def dims_of(spec: ArraySpec, dimension: int) -> tuple[str, ...]:
    """The array's dimension names in a store of ``dimension`` space dimensions."""
    bins = tuple(f"{a}_bin" for a in axis_names(dimension))
    return tuple(d for dim in spec.dims for d in (bins if dim == BINS else (dim,)))


def dim_sizes(sweep: Sweep) -> dict[str, int]:
    """The length of every dimension of the store of ``sweep``."""
    first = sweep.points[0]
    rec = first.record
    sizes = {
        "point": sweep.n_points,
        "walker": sweep.walkers,
        "chunk": sweep.n_chunks,
        "axis": sweep.dimension,
        "time": len(rec.survival_times),
        "wall": len(first.domain.wall_names()),
        "fpt_bin": rec.fpt_bins,
        "snapshot": len(rec.occupancy_times),
    }
    for axis in axis_names(sweep.dimension):
        sizes[f"{axis}_bin"] = rec.occupancy_bins
    return sizes


def instances(sweep: Sweep) -> Iterator[tuple[str, ArraySpec]]:
    """(name, spec) of every array the store of ``sweep`` has, in table order."""
    columns = coordinate_columns(sweep)
    flags = record_flags(sweep)
    for spec in ARRAYS:
        if spec.name == PARAMETER:
            yield from ((name, spec) for name in columns)
        elif present(spec, flags, columns):
            yield spec.name, spec


def attributes(
    spec: ArraySpec, name: str, sweep: Sweep, coordinates: str
) -> dict[str, Any]:
    """The CF attributes of array ``name`` (key order as stores have always had it)."""
    attrs: dict[str, Any] = {}
    if spec.written_by_task and coordinates:
        attrs["coordinates"] = coordinates
    attrs["long_name"] = spec.long_name.replace(PARAMETER, name)
    if spec.standard_name:
        attrs["standard_name"] = spec.standard_name
    if spec.flags:
        walls = sweep.points[0].domain.wall_names()
        attrs["flag_values"] = list(range(-1, len(walls)))
        attrs["flag_meanings"] = " ".join(("censored", *walls))
    quantity = key_quantity(name) if spec.quantity == "by name" else spec.quantity
    if quantity:
        # CF style: the unit as free text (see sweep.spec.Units).
        attrs["units"] = sweep.units.of(quantity)
    return attrs


def create_arrays(root: zarr.Group, sweep: Sweep) -> None:
    """Create every array of the store of ``sweep`` in ``root``; write the driver's.

    Task arrays are created empty (their chunks are written by the tasks).
    """
    columns = coordinate_columns(sweep)
    coordinates = " ".join(columns)
    sizes = dim_sizes(sweep)
    for name, spec in instances(sweep):
        dims = dims_of(spec, sweep.dimension)
        attrs = attributes(spec, name, sweep, coordinates)
        if spec.written_by_task:
            root.create_array(
                name,
                shape=tuple(sizes[d] for d in dims),
                chunks=tuple(_task_chunk_length(d, sizes, sweep) for d in dims),
                dtype=spec.dtype,
                fill_value=spec.fill,
                dimension_names=dims,
                attributes=attrs,
            )
            continue
        values = np.asarray(
            columns[name] if spec.values is None else spec.values(sweep)
        )
        if values.dtype.kind == "U":
            values = values.astype(object)
        array = root.create_array(
            name,
            shape=values.shape,
            dtype=values.dtype if values.dtype != object else str,
            chunks=values.shape or None,
            dimension_names=dims,
            attributes=attrs,
        )
        array[...] = values


def _task_chunk_length(dim: str, sizes: Mapping[str, int], sweep: Sweep) -> int:
    if dim in ("point", "chunk"):
        return 1
    if dim == "walker":
        return sweep.chunk
    return sizes[dim]


def task_chunk_coords(dims: tuple[str, ...], point: int, chunk: int) -> tuple[int, ...]:
    """The chunk grid coordinates of task (point, chunk) in a task array."""
    # A task owns index ``point`` and the ``chunk``-th run of walkers (or index
    # ``chunk``), whole along every other dimension: one chunk along each.
    return tuple(
        point if d == "point" else chunk if d in ("chunk", "walker") else 0
        for d in dims
    )


class ChunkKeys:
    """The store keys of the chunks each task writes, from zarr's chunk-key encoding.

    Built once per store from its task arrays' metadata (the encoding each array was
    created with), then called per task: ``keys(point, chunk)`` gives array name →
    store key, which is also the chunk file's path relative to the store folder.
    """

    def __init__(self, root: zarr.Group) -> None:
        self.arrays: dict[str, zarr.Array] = {}
        for spec in TASK_ARRAYS:
            if spec.name in root:
                array = root[spec.name]
                assert isinstance(array, zarr.Array), spec.name
                self.arrays[spec.name] = array

    def __call__(self, point: int, chunk: int) -> dict[str, str]:
        return {
            name: task_chunk_key(array, point, chunk)
            for name, array in self.arrays.items()
        }


def task_chunk_key(
    array: zarr.Array | zarr.AsyncArray[Any], point: int, chunk: int
) -> str:
    """The store key of the chunk task (point, chunk) writes in ``array`` (a task
    array, synchronous or asynchronous), from the array's own chunk-key encoding."""
    dims = tuple(array.metadata.dimension_names or ())
    coords = task_chunk_coords(dims, point, chunk)
    return f"{array.path}/{array.metadata.encode_chunk_key(coords)}"


def read_fill(name: str) -> float | int | None:
    """The fill value of Dataset variable ``name`` where it is masked per walker."""
    for spec in ARRAYS:
        if spec.read == "masked" and spec.name == name:
            return spec.fill
    return None


def exported_variables() -> tuple[str, ...]:
    """The Dataset variables ``sweep export`` writes by default, in order."""
    names = [n for spec in ARRAYS if spec.exported for n in spec.dataset_names()]
    return (*names, *MARKER_VARIABLES)


# --------------------------------------------------------------------------- the document


WHEN_TEXT = {
    "always": "always",
    "not swept": "unless swept (then the swept coordinate)",
    "per_walker": "`record.per_walker`",
    "fpt_bins": "`record.fpt_bins` > 0",
    "occupancy": "`record.occupancy`",
    "displacement": "periodic faces and `record.per_walker` (docs/surfaces.md)",
}
READ_TEXT = {
    "index": "index coordinate",
    "coordinate": "coordinate",
    "variable": "variable",
    "masked": "variable; unfinished tasks read as the fill value",
    "summed": "summed over finished chunks",
}


def markdown_table() -> str:
    """The array table of ``docs/store-format.md``, made from :data:`ARRAYS`."""
    rows = [
        "| array | dims | dtype (fill) | chunks | written by | present | "
        "in `sweep.open` | exported | attributes |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    for spec in ARRAYS:
        dims = ", ".join("x_bin, …" if d == BINS else d for d in spec.dims)
        dtype = "f8, bool or string" if spec.dtype == "values" else spec.dtype
        if spec.fill is not None:
            dtype += f" ({'NaN' if spec.fill != spec.fill else spec.fill})"
        chunks = "one chunk"
        if spec.chunking == "task":
            chunk = {"point": "1", "chunk": "1", "walker": "chunk", BINS: "whole, …"}
            chunks = "(" + ", ".join(chunk.get(d, "whole") for d in spec.dims) + ")"
        read = READ_TEXT[spec.read]
        if spec.read_as:
            read += ": " + ", ".join(f"`{v.name}`" for v in spec.read_as)
        attrs = ["long_name"]
        if spec.written_by_task:
            attrs.insert(0, "coordinates*")
        if spec.standard_name:
            attrs.append(f"standard_name = {spec.standard_name}")
        if spec.flags:
            attrs += ["flag_values", "flag_meanings"]
        if spec.quantity:
            unit = "of the parameter" if spec.quantity == "by name" else spec.quantity
            attrs.append(f"units ({unit})")
        cells = (
            f"`{spec.name}`",
            dims,
            dtype,
            chunks,
            f"task (`TaskOutput.{spec.output}`)" if spec.output else "driver",
            "one per swept parameter"
            if spec.name == PARAMETER
            else WHEN_TEXT[spec.when],
            read,
            "yes" if spec.exported else "no",
            ", ".join(attrs),
        )
        rows.append("| " + " | ".join(cells) + " |")
    return "\n".join(rows) + "\n"
