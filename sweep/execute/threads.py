"""Local threads: a plain thread pool fed a window of tasks (the kernel releases the
GIL), with Ctrl-C waiting for the running tasks (a second Ctrl-C abandons them)."""

from __future__ import annotations

import os
import signal
import sys
import threading
import time
from pathlib import Path
from typing import Any

from sweep.execute.options import RunOptions, RunSummary
from sweep.execute.progress import Progress
from sweep.execute.task import WINDOW_PER_WORKER, record, run_task, take
from sweep.plan import Task
from sweep.simulate import warm_up


def _run_threads(
    path: Path,
    store_id: str,
    pending: list[Task],
    options: RunOptions,
    summary: RunSummary,
    note: str = "",
) -> None:
    """Run tasks on local threads, keeping a window of them submitted.

    A window (WINDOW_PER_WORKER per thread), not the whole list: building a Dask
    graph of every task first took seconds per 10^4 tasks before the first one
    started. The threads are a plain pool: the kernel releases the GIL.
    """
    from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

    n = options.threads or os.cpu_count() or 1
    started = time.monotonic()
    stop = threading.Event()
    progress = Progress(
        summary.n_tasks,
        summary.already_done + summary.completed,
        options.progress,
        n,
        started,
        note,
    )
    # Tasks running now: on Ctrl-C the pool's threads run on (a running kernel cannot
    # be stopped), so the run waits for them (holding the store's lock) before it
    # returns.
    running = _Counter()

    def counted(task: Task) -> dict[str, Any]:
        with running:
            return run_task(str(path), task, store_id, stop)

    pool = ThreadPoolExecutor(max_workers=n, thread_name_prefix="sweep-task")
    queue = iter(pending)
    window = max(2, WINDOW_PER_WORKER * n)
    in_flight: set[Any] = set()
    try:
        try:
            # Inside: a Ctrl-C while compiling is an interruption too.
            # One warm-up per scheme among the pending tasks: each compiles its own
            # loops.
            for scheme in sorted({t.args.scheme for t in pending}):
                first = next(t for t in pending if t.args.scheme == scheme)
                warm_up(first, announce=options.progress)
            in_flight = {pool.submit(counted, t) for t in take(queue, window)}
            while in_flight:
                finished, in_flight = wait(in_flight, return_when=FIRST_COMPLETED)
                for future in finished:
                    record(future.result(), summary, progress, stop)
                if not stop.is_set():
                    in_flight |= {
                        pool.submit(counted, t) for t in take(queue, len(finished))
                    }
        except KeyboardInterrupt:
            stop.set()
            for future in in_flight:
                future.cancel()
            summary.interrupted = True
            sys.stderr.write(
                f"\ninterrupted: waiting for {running.value} running task(s) to "
                "finish (they are kept); Ctrl-C again stops at once and loses them.\n"
            )
            # From here a second Ctrl-C only sets `again`: a KeyboardInterrupt raised
            # while the run releases the store (or the interpreter exits) would leave
            # the lock behind and end the process by the signal instead of code 130.
            again = threading.Event()
            # `run` restores the former handler once the store is released.
            _catch_interrupts(again)
            running.wait_for_zero(again)
            if again.is_set() and running.value:
                summary.abandoned = running.value
    finally:
        stop.set()
        pool.shutdown(wait=False, cancel_futures=True)
        progress.close()


def _catch_interrupts(flag: threading.Event) -> None:
    """Make SIGINT set ``flag`` instead of raising (on the main thread only: handlers
    cannot be set elsewhere, and there nothing changes)."""
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, lambda *_: flag.set())


class _Counter:
    """A thread-safe count of running tasks (``with counter:`` counts one)."""

    def __init__(self) -> None:
        self._value = 0
        self._changed = threading.Condition()

    @property
    def value(self) -> int:
        with self._changed:
            return self._value

    def __enter__(self) -> None:
        with self._changed:
            self._value += 1

    def __exit__(self, *exc: object) -> None:
        with self._changed:
            self._value -= 1
            self._changed.notify_all()

    def wait_for_zero(self, again: threading.Event) -> None:
        # Short timeouts keep the wait responsive to a second Ctrl-C (``again``).
        with self._changed:
            while self._value and not again.is_set():
                self._changed.wait(0.1)
