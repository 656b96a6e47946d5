"""Running tasks on a Dask cluster (local processes or an existing cluster): a
window of submitted futures, released as they finish; a stop cancels what has not
started, and Dask's own noise is kept down."""

from __future__ import annotations

import contextlib
import logging
import os
import sys
import threading
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import Any

from sweep.execute.cluster import _local_cluster, _no_http_server
from sweep.execute.options import RunOptions, RunSummary
from sweep.execute.progress import Progress
from sweep.execute.task import WINDOW_PER_WORKER, record, run_task, take
from sweep.plan import Task


@contextlib.contextmanager
def _quiet_dask() -> Iterator[None]:
    """Dask's own messages at WARNING and above during a run, unless the user set a
    level (``DASK_LOGGING__DISTRIBUTED=info``, Dask's configuration variable)."""
    import distributed  # noqa: F401  (its import sets its loggers' levels: first)

    if "DASK_LOGGING__DISTRIBUTED" in os.environ:
        yield
        return
    logger = logging.getLogger("distributed")
    before = logger.level
    logger.setLevel(max(before, logging.WARNING))
    try:
        yield
    finally:
        logger.setLevel(before)


@_quiet_dask()
def _run_distributed(
    path: Path,
    store_id: str,
    pending: list[Task],
    options: RunOptions,
    summary: RunSummary,
    client: Any = None,
    note: str = "",
) -> None:
    from distributed import Client, as_completed

    stop = threading.Event()
    cluster = None
    if options.processes is not None:
        cluster = _local_cluster(options.processes)
        client = Client(cluster)  # with the cluster's credentials
        client.register_plugin(_no_http_server(), name="sweep-no-http-server")
    own_client = cluster is not None
    try:
        n_threads = max(1, sum(client.nthreads().values()))
        progress = Progress(
            summary.n_tasks,
            summary.already_done + summary.completed,
            options.progress,
            n_threads,
            note=note,
        )
        window = max(2, WINDOW_PER_WORKER * n_threads)
        queue = iter(pending)
        prefix = f"sweep-{path.name}-{os.getpid()}"

        def submit(batch: Iterable[Task]) -> list[Any]:
            return [
                client.submit(
                    run_task,
                    str(path),
                    t,
                    store_id,
                    key=f"{prefix}-p{t.point}-c{t.chunk}",
                    pure=False,
                )
                for t in batch
            ]

        futures = as_completed(
            submit(take(queue, window)), with_results=True, raise_errors=False
        )
        try:
            for future, result in futures:
                if isinstance(result, BaseException) or future.status == "error":
                    summary.failed.append(f"{future.key}: {result!r}")
                elif isinstance(result, dict):
                    record(result, summary, progress, stop)
                future.release()
                if not stop.is_set():
                    for f in submit(take(queue, 1)):
                        futures.add(f)
        except KeyboardInterrupt:
            summary.interrupted = True
            sys.stderr.write(
                "\ninterrupted: finished tasks are kept; rerun the same command to resume.\n"
            )
        finally:
            # Tasks not started yet must not start once this driver is gone (running
            # ones cannot be stopped; their store id check keeps them out of another
            # run's store).
            outstanding = [f for f in list(futures.futures) if not f.done()]
            if outstanding:
                with contextlib.suppress(Exception):
                    client.cancel(outstanding, force=True)
            progress.close()
    finally:
        with _hushed(summary.interrupted):
            if cluster is not None and summary.interrupted:
                # Workers stopped mid-task report the tasks they drop: expected here.
                with contextlib.suppress(Exception):
                    client.run(_hush_logging)
            if own_client:  # a cluster's client is closed by `run`, which opened it
                client.close()
            if cluster is not None:
                if summary.interrupted:
                    # Workers first, while the scheduler is up: a worker still in
                    # a task would otherwise log tracebacks about a lost scheduler.
                    cluster.sync(_close_workers, cluster)
                cluster.close()


@contextlib.contextmanager
def _hushed(stopping: bool) -> Iterator[None]:
    """When a run stops mid-task, closing cuts connections in use and Dask logs
    tracebacks about them that tell the user nothing: keep only critical messages."""
    if not stopping:
        yield
        return
    loggers = [logging.getLogger(n) for n in ("distributed", "tornado", "asyncio")]
    before = [logger.level for logger in loggers]
    for logger in loggers:
        logger.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        for logger, level in zip(loggers, before):
            logger.setLevel(level)


def _hush_logging() -> None:
    logging.getLogger("distributed").setLevel(logging.CRITICAL)


async def _close_workers(cluster: Any) -> None:
    import asyncio

    await asyncio.gather(*(w.close(timeout=2) for w in cluster.workers.values()))
