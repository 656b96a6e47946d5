"""Two threads against one: the kernel's speed-up and this machine's own (drawing
the normals alone), by the wall clock."""

from __future__ import annotations

import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from kernels.ceiling import limit_normals
from kernels.rng import initial_state
from sweep.plan import Task
from sweep.simulate import simulate_task

#: Tasks per thread-scaling measurement: like a sweep, many tasks shared out to
#: whichever thread is free, so one thread's delay does not idle the other.
THREAD_TASKS = 16

#: Threads compared with one in the scaling measurement.
THREADS = 2


@dataclass
class ThreadRuns:
    """Wall times (s) of :data:`THREAD_TASKS` jobs run on one thread and on
    :data:`THREADS` threads taking jobs as they free up.

    Two kinds of job, in turn within each repetition: copies of the kernel's
    ``task``, and jobs of the limit's loop drawing as many normals as one task needs
    (the generator alone: this machine's own two-thread speed-up for the work that
    limits the kernel).
    """

    task: Task
    kernel_one: list[float] = field(default_factory=list)
    kernel_two: list[float] = field(default_factory=list)
    draws_one: list[float] = field(default_factory=list)
    draws_two: list[float] = field(default_factory=list)
    #: Walker-steps of one task (the same every run), found by the first measure.
    steps: int = field(default=0, init=False)

    def measure(self, repeats: int) -> None:
        """``repeats`` more of each of the four timings."""
        if not self.steps:
            _, self.steps = simulate_task(self.task)  # also a warm-up, untimed
        steps, d = self.steps, self.task.args.geometry.dimension

        def draws(seed: int) -> None:
            limit_normals(initial_state(np.random.SeedSequence(seed)), steps, d)

        kinds: list[tuple[Callable, list, list[float], list[float]]] = [
            (
                simulate_task,
                [self.task] * THREAD_TASKS,
                self.kernel_one,
                self.kernel_two,
            ),
            (draws, list(range(THREAD_TASKS)), self.draws_one, self.draws_two),
        ]
        with ThreadPoolExecutor(THREADS) as pool:
            for _ in range(repeats):
                for job, jobs, one, two in kinds:
                    start = time.perf_counter()
                    for j in jobs:
                        job(j)
                    one.append(time.perf_counter() - start)
                    start = time.perf_counter()
                    list(pool.map(job, jobs))
                    two.append(time.perf_counter() - start)

    def kernel(self) -> float:
        """The kernel's two-thread speed-up (see :func:`thread_speedup`)."""
        return thread_speedup(self.kernel_one, self.kernel_two)

    def draws(self) -> float:
        """The generator loop's two-thread speed-up: what this machine gives."""
        return thread_speedup(self.draws_one, self.draws_two)


def thread_speedup(one: list[float], two: list[float]) -> float:
    """The fastest one-thread time over the fastest two-thread time (s / s)."""
    return min(one) / min(two)


def thread_line(threads: ThreadRuns) -> str:
    """Both two-thread speed-ups, the kernel's first, as ``sweep bench`` prints
    them."""
    return (
        f"two threads / one thread: {threads.kernel():.2f}x "
        f"(drawing the normals alone: {threads.draws():.2f}x)"
    )
