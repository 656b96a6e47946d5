"""Running a plan: Dask fans tasks out, numba kernels simulate, the store keeps results.

The only stage that imports dask. Local threads are a plain thread pool fed a window
of tasks (the kernel releases the GIL; a Dask graph of every task took minutes to
build for 10^5 tasks); ``processes`` starts a ``distributed.LocalCluster`` (a dead
worker's task is rerun elsewhere); ``scheduler`` / ``scheduler_file`` connect to an
existing cluster. Every path submits the same task function, so results are
bit-identical whichever is used.

Modules, one job each: :mod:`~sweep.execute.options` (what a caller asks, what a
run did), :mod:`~sweep.execute.task` (one task on a worker, its result in the
driver), :mod:`~sweep.execute.threads`, :mod:`~sweep.execute.distributed` and
:mod:`~sweep.execute.cluster` (the executors, connecting and securing clusters),
:mod:`~sweep.execute.progress` (the progress line), :mod:`~sweep.execute.runner`
(the run itself). Simulating a task is :mod:`sweep.simulate`'s job (re-exported here).
"""

from __future__ import annotations

from sweep.execute.cluster import (
    CONNECT_TIMEOUT,
    _private_address,
    connect,
    connect_timeout,
)
from sweep.execute.options import RunOptions, RunSummary
from sweep.execute.progress import Progress
from sweep.execute.runner import run
from sweep.execute.task import WINDOW_PER_WORKER, run_task
from sweep.simulate import (
    COMPILE_NOTICE_AFTER,
    WARM_UP_STEPS,
    simulate_spheres_moves,
    simulate_task,
    warm_up,
)
from sweep.simulate import tiny_task as _tiny_task

__all__ = [
    "COMPILE_NOTICE_AFTER",
    "CONNECT_TIMEOUT",
    "WARM_UP_STEPS",
    "WINDOW_PER_WORKER",
    "Progress",
    "RunOptions",
    "RunSummary",
    "_private_address",
    "_tiny_task",
    "connect",
    "connect_timeout",
    "run",
    "run_task",
    "simulate_spheres_moves",
    "simulate_task",
    "warm_up",
]
