"""From a validated sweep to tasks: points x chunks, kernel arguments, random streams.

A task simulates one chunk of walkers of one point. Its random stream comes from a
``numpy.random.SeedSequence`` keyed by the sweep seed, a digest of the point's resolved
parameters and the chunk index, so it depends neither on scheduling order nor on the
other points of the grid.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from kernels import inputs
from sweep.exit_times import centre_exit_table
from sweep.potentials import kernel_force
from sweep.spec import Domain, PointSpec, Sweep, axis_names

#: The generator of every task's stream, as numpy names it. SFC64 (a small fast chaotic
#: generator with a 64-bit counter; passes PractRand and TestU01 per numpy's
#: documentation): the kernel keeps its four words in local variables
#: (kernels/rng.py), seeded from the task's SeedSequence exactly as
#: ``np.random.SFC64`` seeds itself, so ``Generator(BIT_GENERATOR(seq))`` draws the
#: same numbers (docs/kernels.md).
BIT_GENERATOR = np.random.SFC64

#: The spheres scheme jumps while a walker's protective radius exceeds HANDOVER
#: sqrt(2 D dt) and steps inside that layer. A jump of radius r advances the clock by
#: r^2 / (2 d D) on average, i.e. HANDOVER^2 / d = 3 steps' worth (d = 3) at the
#: layer's edge: below about sqrt(d) sigma a jump buys less time than a step, and jumps
#: would pile up ever shorter against a surface. Three sigma keeps the layer (the only
#: place with discretisation error) thin: a walker crosses it in about ten steps.
HANDOVER = 3.0


@dataclass(frozen=True)
class KernelArgs:
    """Everything the kernel needs for one point (see kernels.walkers), plus how the
    executor puts its occupancy rows back in the user's order."""

    geometry: inputs.Geometry
    motion: inputs.Motion
    recording: inputs.Recording
    #: The kernel walks snapshots in ascending step order; row k of its histogram is
    #: the user's snapshot occupancy_order[k].
    occupancy_order: NDArray[np.int64]
    #: "steps" or "spheres" (then also the fields below).
    scheme: str = "steps"
    #: Protective radius below which the spheres scheme steps, length units.
    handover: float = 0.0
    #: The centre-exit inverse CDF of a d-ball (sweep.exit_times.ExitTable): knot values,
    #: slopes times the spacing, first knot, spacing, tail slope.
    exit_tau: NDArray[np.float64] = field(default_factory=lambda: np.zeros(0))
    exit_dtau: NDArray[np.float64] = field(default_factory=lambda: np.zeros(0))
    exit_s0: float = 0.0
    exit_ds: float = 1.0
    exit_slope: float = 0.0


@dataclass(frozen=True)
class Task:
    """One unit of work: chunk ``chunk`` of point ``point``.

    Attributes
    ----------
    point, chunk : int
        Indices into the store's ``point`` and ``chunk`` dimensions.
    first_walker, n_walkers : int
        The walkers this task owns: ``first_walker : first_walker + n_walkers``.
    entropy : tuple of int
        SeedSequence entropy of this task's random stream.
    args : KernelArgs
    """

    point: int
    chunk: int
    first_walker: int
    n_walkers: int
    entropy: tuple[int, ...]
    args: KernelArgs

    @property
    def name(self) -> str:
        return f"point {self.point}, chunk {self.chunk}"

    def stream_state(self) -> NDArray[np.uint64]:
        """A fresh copy of this task's random stream for the kernel: SFC64's state,
        uint64 (4,), seeded from the task's SeedSequence as ``SFC64`` seeds itself
        (``kernels.rng.initial_state``); the kernel advances it in place, so never
        share one between threads."""
        from kernels.rng import initial_state  # numba: imported only when running

        return initial_state(np.random.SeedSequence(self.entropy))


@dataclass(frozen=True)
class Plan:
    """All tasks of a sweep plus the sizes the store needs."""

    sweep: Sweep
    tasks: tuple[Task, ...]

    @property
    def n_tasks(self) -> int:
        return len(self.tasks)

    def walker_steps_bound(self) -> int:
        """Walker-steps if no walker is ever absorbed (an upper bound on the work)."""
        return sum(t.n_walkers * t.args.motion.n_steps for t in self.tasks)


def point_digest(point: PointSpec) -> tuple[int, ...]:
    """Four 32-bit words digesting a point's physical parameters (for seeding).

    What is recorded (``[record]``) does not enter: it draws no random numbers, so a
    per-walker run and an aggregate-only run of one point simulate the same walkers.
    """
    physics = {k: v for k, v in point.canonical().items() if k != "record"}
    text = json.dumps(physics, sort_keys=True, separators=(",", ":"))
    digest = hashlib.sha256(text.encode()).digest()
    return tuple(int.from_bytes(digest[i : i + 4], "little") for i in range(0, 16, 4))


def snapshot_steps(point: PointSpec) -> NDArray[np.int64]:
    """Occupancy snapshot times snapped to the step grid, as step numbers."""
    return np.array(
        [round(t / point.timing.dt) for t in point.record.occupancy_times],
        dtype=np.int64,
    )


def kernel_args(point: PointSpec) -> KernelArgs:
    """Translate one point's parameters into the kernel's named inputs."""
    m, tm, dom, rec = point.motion, point.timing, point.domain, point.record
    d = m.dimension
    targets = dom.targets
    occupancy_steps = snapshot_steps(point)
    order = np.argsort(occupancy_steps, kind="stable")
    spheres: dict[str, Any] = {}
    if tm.scheme == "spheres":
        table = centre_exit_table(d)
        spheres = dict(
            scheme="spheres",
            handover=HANDOVER * math.sqrt(2.0 * m.diffusivity * tm.dt),
            exit_tau=table.tau,
            exit_dtau=table.dtau,
            exit_s0=table.s0,
            exit_ds=table.ds,
            exit_slope=table.slope,
        )
    ball = dom.shape == "ball"
    return KernelArgs(
        geometry=inputs.geometry(
            dom.lower,
            dom.upper,
            dom.absorbing_low,
            dom.absorbing_high,
            ball_center=dom.center if ball else None,
            ball_radius=dom.radius if ball else math.inf,
            ball_absorbing=dom.surface_absorbing,
            target_center=[t.center for t in targets],
            target_radius=[t.radius for t in targets],
            **surface_inputs(dom),
        ),
        motion=inputs.motion(
            m.start,
            dimension=d,
            diffusivity=m.diffusivity,
            dt=tm.dt,
            n_steps=tm.n_steps,
            drift=m.drift,
            bridge=tm.monitoring == "bridge",
            force=kernel_force(point.force, d, m.diffusivity, tm.dt, m.drift),
        ),
        recording=inputs.recording(
            d,
            survival_times=rec.survival_times,
            # The kernel walks snapshots in ascending step order; the store keeps the
            # user's order, so results are permuted back on write.
            occupancy_steps=occupancy_steps[order],
            occupancy_lower=rec.occupancy_lower or dom.lower,
            occupancy_upper=rec.occupancy_upper or dom.upper,
            occupancy_bins=rec.occupancy_bins,
            fpt_bins=rec.fpt_bins,
            fpt_bin_width=tm.n_steps * tm.dt / max(rec.fpt_bins, 1),
            displacement=any(dom.periodic),
        ),
        occupancy_order=order.astype(np.int64),
        **spheres,
    )


def surface_inputs(dom: Domain) -> dict[str, Any]:
    """The kernel's inputs for reactive walls and targets, periodic faces and
    obstacles (``kernels.inputs.geometry`` keywords; NaN reactivity: not reactive)."""
    nan = math.nan
    d = dom.dimension

    def kappas(values: tuple[float | None, ...]) -> list[float]:
        return [nan if k is None else k for k in (values or (None,) * d)]

    return dict(
        reactivity_lower=kappas(dom.reactivity_low),
        reactivity_upper=kappas(dom.reactivity_high),
        periodic=list(dom.periodic or (False,) * d),
        ball_reactivity=nan
        if dom.surface_reactivity is None
        else dom.surface_reactivity,
        target_reactivity=[
            nan if t.reactivity is None else t.reactivity for t in dom.targets
        ],
        obstacle_center=[o.center for o in dom.obstacles],
        obstacle_radius=[o.radius for o in dom.obstacles],
    )


def make_plan(sweep: Sweep) -> Plan:
    """Split every point of ``sweep`` into chunks of ``sweep.chunk`` walkers.

    Returns
    -------
    Plan
        Tasks in (point, chunk) order.
    """
    tasks: list[Task] = []
    for p, point in enumerate(sweep.points):
        args = kernel_args(point)
        digest = point_digest(point)
        for c in range(sweep.n_chunks):
            tasks.append(
                Task(
                    point=p,
                    chunk=c,
                    first_walker=c * sweep.chunk,
                    n_walkers=sweep.chunk_walkers(c),
                    entropy=(sweep.seed, *digest, c),
                    args=args,
                )
            )
    return Plan(sweep=sweep, tasks=tuple(tasks))


#: Names a parameter coordinate must not take: the store's dimensions
#: (sweep.store.layout) and the variables of every statistic's result (sweep.stats),
#: which carry the point coordinates; a clash breaks xarray's merge.
#: tests/store/test_layout.py and tests/test_swept_values.py keep these in step.
RESERVED_NAMES = frozenset(
    ("point", "walker", "chunk", "axis", "time", "wall", "fpt_bin", "snapshot")
    + ("estimate", "stderr", "lower", "upper", "n")
)


def coordinate_columns(sweep: Sweep) -> dict[str, list[Any]]:
    """Per-point coordinate values of every swept key, vectors split per axis.

    ``motion.diffusivity`` becomes ``diffusivity``; ``domain.upper`` becomes
    ``upper_x``, ``upper_y``, ...; ``domain.targets.0.radius`` becomes
    ``target_0_radius``. A name that would repeat, or one of
    :data:`RESERVED_NAMES` (``domain.wall``, ``force.axis``, ``force.upper``), gets
    its table as prefix (``domain_wall``, ``force_axis``, ``force_upper``).

    A whole table swept at once gets the columns its parts would get if swept one
    by one: ``domain.walls`` one per wall (``wall_x_lower``, ...), ``domain.targets``
    and ``domain.obstacles`` one per entry and key (``target_0_center_x``,
    ``target_0_radius``, ...); a part absent at a point is NaN there (``""`` in a
    text column). A column of numbers is float; of numeric vectors, split per axis
    (NaN past a shorter vector's end); any other mixture (``"uniform"`` beside
    points, a wall kind beside ``{ reactivity = 2.0 }``) is one text column, each
    value as written (tables and lists as JSON text).
    """
    axes = axis_names(sweep.dimension)
    parts: list[tuple[str, str, list[Any]]] = []  # (key, leaf name, value per point)
    for j, key in enumerate(sweep.swept):
        values = [v[j] for v in sweep.values]
        for sub, sub_values in _split_tables(key, values):
            parts.append((key, _leaf_name(sub), sub_values))
    leaves = [leaf for _, leaf, _ in parts]
    columns: dict[str, list[Any]] = {}
    for key, leaf, values in parts:
        vectors = _as_vectors(values, sweep.dimension)
        labels = [""]
        if vectors is not None:
            width = max(len(v) for v in vectors)
            labels = [f"_{axes[i]}" if i < len(axes) else f"_{i}" for i in range(width)]
        # Two keys with one leaf name (domain.lower, force.lower), or a reserved
        # name (domain.wall, force.axis, a scalar force.upper): prefix the table.
        clash = leaves.count(leaf) > 1 or any(
            leaf + label in RESERVED_NAMES for label in labels
        )
        name = f"{key.split('.')[0]}_{leaf}" if clash else leaf
        if vectors is not None:
            for i, label in enumerate(labels):
                columns[name + label] = [
                    float(v[i]) if i < len(v) else math.nan for v in vectors
                ]
        elif all(v is _ABSENT or _is_number(v) for v in values):
            columns[name] = [math.nan if v is _ABSENT else float(v) for v in values]
        else:
            columns[name] = [_text(v) for v in values]
    return columns


#: A part of a swept table missing at a point (a wall not named, fewer obstacles).
_ABSENT: Any = object()


def _split_tables(key: str, values: list[Any]) -> list[tuple[str, list[Any]]]:
    """A swept whole table as its sweepable parts: (dotted key, value per point)."""
    section_key = key.split(".")[1:]
    if section_key == ["walls"] and all(isinstance(v, dict) for v in values):
        names = list(dict.fromkeys(w for v in values for w in v))
        return [(f"{key}.{w}", [v.get(w, _ABSENT) for v in values]) for w in names]
    if section_key in (["targets"], ["obstacles"]) and all(
        isinstance(v, list) and all(isinstance(e, dict) for e in v) for v in values
    ):
        found = dict.fromkeys(
            (i, field) for v in values for i, e in enumerate(v) for field in e
        )
        return [
            (
                f"{key}.{i}.{field}",
                [v[i].get(field, _ABSENT) if i < len(v) else _ABSENT for v in values],
            )
            # entry by entry, each entry's keys in the order first written
            for i, field in sorted(found, key=lambda f: f[0])
        ]
    return [(key, values)]


def _is_number(value: Any) -> bool:
    """A number or an infinity spelled as text (stored as a float)."""
    if isinstance(value, str):
        return value.strip() in ("inf", "+inf", "-inf")
    return isinstance(value, int | float) and not isinstance(value, bool)


def _as_vectors(values: list[Any], dimension: int) -> list[list[Any]] | None:
    """The values as lists of numbers (absent ones empty), or None if any is not.

    In one dimension a bare number stands for a one-element list (as the definition
    allows), so ``[0.2, [0.3]]`` is one vector column; elsewhere a bare number beside
    lists makes the column text, never a number repeated along every axis.
    """
    if not any(isinstance(v, list) for v in values):
        return None
    vectors: list[list[Any]] = []
    for v in values:
        if v is _ABSENT:
            vectors.append([])
        elif isinstance(v, list) and all(_is_number(x) for x in v):
            vectors.append(v)
        elif dimension == 1 and _is_number(v):
            vectors.append([v])
        else:
            return None
    return vectors


def _leaf_name(key: str) -> str:
    parts = key.split(".")
    if parts[1] == "targets" and len(parts) == 4:
        return f"target_{parts[2]}_{parts[3]}"
    if parts[1] == "obstacles" and len(parts) == 4:
        return f"obstacle_{parts[2]}_{parts[3]}"
    if parts[1] == "walls" and len(parts) == 4:
        return f"{parts[2]}_{parts[3]}"  # x_upper_reactivity
    if parts[1] == "walls" and len(parts) == 3:
        return f"wall_{parts[2]}"
    return parts[-1]


def _text(value: Any) -> str:
    """A value of a text column: a string as written, anything else as JSON text."""
    if value is _ABSENT:
        return ""
    if isinstance(value, str):
        return value
    return json.dumps(value)
