"""One task on a worker (simulate, then store) and its result back in the driver.

:func:`run_task` is what every executor submits (threads, a local cluster, an existing
cluster), so results are bit-identical whichever runs them; :func:`record` folds its
result into the :class:`RunSummary`.
"""

from __future__ import annotations

import errno
import os
import socket
import threading
import time
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import numpy as np

from sweep import precision, store
from sweep.execute.options import RunSummary
from sweep.execute.progress import Progress
from sweep.plan import Task
from sweep.simulate import simulate_task

#: At most this many tasks per worker thread are in flight on a distributed cluster,
#: so 10^5 tasks do not flood the scheduler.
WINDOW_PER_WORKER = 4


def run_task(
    store_path: str,
    task: Task,
    store_id: str,
    stop: threading.Event | None = None,
) -> dict[str, Any]:
    """Simulate and store one task; never raises (errors come back in the summary).

    ``store_id`` is the id of the store the task was planned for: a task whose store
    was deleted or replaced meanwhile (a driver killed, its store removed and made
    again by another run) stops before writing and writes no marker.

    Returns
    -------
    dict
        ``{"point", "chunk", "walkers", "steps", "seconds", "cpu_seconds",
        "censored", "absorbed_by", "host", "pid", "thread"}`` on success, ``{"point", "chunk", "error", "errno"}`` on failure, or
        ``{"point", "chunk", "skipped": True}`` when the run is stopping.
    """
    if stop is not None and stop.is_set():
        return {"point": task.point, "chunk": task.chunk, "skipped": True}
    try:
        # Before the work too: a queued task of a dead driver stops at once.
        store.check_store_id(Path(store_path), store_id, task)
        start = time.perf_counter()
        cpu = time.thread_time()
        output, steps = simulate_task(task)
        cpu = time.thread_time() - cpu
        summary = {
            "point": task.point,
            "chunk": task.chunk,
            "walkers": task.n_walkers,
            "steps": steps,
            "seconds": round(time.perf_counter() - start, 6),
            "cpu_seconds": round(cpu, 6),  # the kernel's thread alone
            "censored": int(np.count_nonzero(output.wall < 0)),
            "absorbed_by": np.bincount(output.wall[output.wall >= 0]).tolist(),
            # For precision targets (sweep.precision): count, mean and squared
            # deviations of this chunk's first-passage times.
            "fpt_moments": precision.chunk_moments(output.time),
            "host": socket.gethostname(),
            "pid": os.getpid(),
            "thread": threading.current_thread().name,
        }
        store.write_task(store_path, task, output, summary, store_id)
        return summary
    except Exception as err:  # reported per task; the other tasks go on
        return {
            "point": task.point,
            "chunk": task.chunk,
            "error": f"{type(err).__name__}: {err}",
            "errno": getattr(err, "errno", None),
        }


def record(
    result: dict[str, Any],
    summary: RunSummary,
    progress: Progress,
    stop: threading.Event,
) -> None:
    """Count a task's result (from :func:`run_task`) in ``summary`` and ``progress``;
    a full disk sets ``stop``: nothing more can be written."""
    if result.get("skipped"):
        return
    if "error" in result:
        summary.failed.append(
            f"point {result['point']}, chunk {result['chunk']}: {result['error']}"
        )
        if result.get("errno") in (errno.ENOSPC, errno.EDQUOT, errno.EROFS):
            summary.storage_full = True
            stop.set()  # nothing more can be written; stop starting tasks
    else:
        summary.completed += 1
        summary.walker_steps += int(result["steps"])
        summary.kernel_seconds += float(result.get("cpu_seconds", 0.0))
    progress.update(result)


def take(queue: Iterable[Task], n: int) -> list[Task]:
    """The next ``n`` tasks of ``queue`` (fewer at its end)."""
    out = []
    for task in queue:
        out.append(task)
        if len(out) == n:
            break
    return out
