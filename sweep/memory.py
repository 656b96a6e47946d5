"""Memory checks: what a task allocates, what this process may use, and the refusal
of a sweep whose running tasks would not fit.

Needs only the definition (no executor, no kernels): ``sweep.execute`` calls
:func:`check_memory` before anything is written; ``sweep plan`` prints
:func:`task_memory` and :func:`memory_limit`.
"""

from __future__ import annotations

import os
from pathlib import Path

from sweep.errors import PlanError, escape
from sweep.spec import Sweep
from sweep.text import format_bytes

#: Fraction of the memory this process may use (the machine's, or its cgroup limit where
#: lower) that the tasks running at once may take.
MEMORY_SHARE = 0.8


def task_memory_parts(sweep: Sweep) -> dict[str, tuple[float, str]]:
    """Bytes a task allocates, by the definition key that sets them (with a label)."""
    d = sweep.dimension
    rec = sweep.points[0].record
    n_walls = len(sweep.points[0].domain.wall_names())
    per_walker = 8 + 2 + 8 * d + 8 * d  # time, wall, exit position, final position
    return {
        "sweep.chunk": (
            float(sweep.chunk * per_walker),
            f"{sweep.chunk} walkers per task",
        ),
        "record.occupancy": (
            float(8 * len(rec.occupancy_times) * rec.occupancy_bins**d),
            f"{len(rec.occupancy_times)} snapshots x {rec.occupancy_bins}^{d} bins",
        ),
        "record.fpt_bins": (
            float(8 * n_walls * rec.fpt_bins),
            f"{n_walls} walls x {rec.fpt_bins} bins",
        ),
        "record.survival": (
            float(8 * rec.survival_points),
            f"{rec.survival_points} times",
        ),
    }


def task_memory(sweep: Sweep) -> float:
    """Peak bytes a task allocates for its outputs (per-walker arrays, histograms)."""
    return sum(size for size, _ in task_memory_parts(sweep).values())


def check_memory(
    sweep: Sweep, concurrent_tasks: int, limit: tuple[float, str] | None = None
) -> None:
    """Refuse a sweep whose running tasks would not fit in the memory this process may
    use.

    ``limit`` is (bytes, what sets it), by default :func:`memory_limit`'s.

    Raises
    ------
    PlanError
        With the per-task estimate and how to shrink it.
    """
    total, where = memory_limit() if limit is None else limit
    per_task = task_memory(sweep)
    need = per_task * concurrent_tasks
    if total and need > MEMORY_SHARE * total:
        parts = task_memory_parts(sweep)
        key = max(parts, key=lambda k: parts[k][0])
        size, label = parts[key]
        tasks = "task" if concurrent_tasks == 1 else "tasks"
        said = (
            f"{sweep.source}: [{key}] = {label} needs about {format_bytes(size)} per "
            f"task ({format_bytes(per_task)} in all, {format_bytes(need)} for "
            f"{concurrent_tasks} {tasks} at once), more than {MEMORY_SHARE:.0%} of "
            f"{where}'s {format_bytes(total)}. Lower {key}, or run fewer tasks at once "
        )
        raise PlanError(
            escape(said) + "({threads} / {processes}).",
            options=("threads", "processes"),
        )


#: cgroup memory limits at or above this are "no limit" (cgroup v1 writes 2^63 rounded
#: down to a page; v2 writes "max").
_NO_LIMIT = 2**60


def memory_limit(root: Path = Path("/")) -> tuple[float, str]:
    """Memory this process may use: the machine's, or its control group's limit where
    lower.

    Batch schedulers (Slurm with cgroup enforcement, containers) confine a job to a
    memory limit far below the node's physical memory and kill it beyond; checking
    against the node alone would let a sweep start that is certain to be killed.

    Parameters
    ----------
    root : Path
        Filesystem root holding ``proc`` and ``sys`` (tests point it at a directory
        tree of their own).

    Returns
    -------
    (bytes, where) : (float, str)
        The limit in bytes (0.0 when unknown) and what sets it, for messages: "this
        machine" or "the cgroup limit (path)".
    """
    try:
        total = float(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (ValueError, OSError, AttributeError):
        total = 0.0
    where = "this machine"
    for path, limit in _cgroup_limits(root):
        if limit < _NO_LIMIT and (total == 0.0 or limit < total):
            total, where = float(limit), f"the cgroup limit ({path})"
    return total, where


def _cgroup_limits(root: Path) -> list[tuple[str, int]]:
    """Memory limits of this process's control group and of every group above it
    (a limit set on a parent binds too), cgroup v2 and v1; unreadable ones are
    skipped."""
    try:
        lines = (root / "proc/self/cgroup").read_text().splitlines()
    except OSError:
        return []
    files = []
    for line in lines:
        # "0::/path" (v2) or "4:memory:/path" (v1); the path is relative to the
        # hierarchy's mount, which a container may show as its root.
        fields = line.split(":", 2)
        if len(fields) != 3:
            continue
        _, controllers, group = fields
        if controllers == "":
            mount, name = root / "sys/fs/cgroup", "memory.max"
        elif "memory" in controllers.split(","):
            mount, name = root / "sys/fs/cgroup/memory", "memory.limit_in_bytes"
        else:
            continue
        parts = [p for p in group.split("/") if p]
        for depth in range(len(parts), -1, -1):
            files.append(mount.joinpath(*parts[:depth], name))
    limits = []
    for path in files:
        try:
            text = path.read_text().strip()
        except OSError:
            continue
        if text.isdigit():
            limits.append((f"/{path.relative_to(root)}", int(text)))
    return limits
