"""The run: plan, memory check, connect, prepare and lock the store, run the pending
tasks on the chosen executor, log, and report failures as one error."""

from __future__ import annotations

import logging
import os
import signal
import socket
import threading
import time
from pathlib import Path
from typing import Any

from sweep import store
from sweep.errors import StoreError, TaskError
from sweep.execute.cluster import connect
from sweep.execute.distributed import _run_distributed
from sweep.execute.options import RunOptions, RunSummary
from sweep.execute.rounds import pause_before_round, targeted_round
from sweep.execute.threads import _run_threads
from sweep.memory import check_memory
from sweep.plan import Plan, make_plan
from sweep.spec import Sweep, load_spec

log = logging.getLogger("sweep.execute")


def run(
    spec: Sweep | str | Path,
    store_path: str | Path | None = None,
    options: RunOptions | None = None,
) -> RunSummary:
    """Run (or resume) a sweep into a zarr store.

    Parameters
    ----------
    spec : Sweep, str or Path
        A validated sweep or the path of its definition file.
    store_path : str or Path, optional
        Where the zarr store lives; default ``<definition name>.zarr`` in the current
        directory. An existing store of the same definition is resumed: only tasks
        without a completion marker run.
    options : RunOptions, optional
        Executor choice and progress display; default local threads, one per core.

    Returns
    -------
    RunSummary

    Raises
    ------
    SweepError
        Bad input, a store of another definition, a locked store, a full disk.
    TaskError
        Some tasks failed; the others' results are stored and a rerun retries them.
    """
    options = options or RunOptions()
    sweep = spec if isinstance(spec, Sweep) else load_spec(spec)
    if store_path is None:
        store_path = Path.cwd() / f"{Path(sweep.source).stem}.zarr"
    plan = make_plan(sweep)
    if options.kind != "cluster":
        # Workers of an existing cluster have their own memory; locally we know it.
        local = options.threads or options.processes or os.cpu_count() or 1
        check_memory(sweep, local)
    # An existing cluster first: nothing is created before a connection exists.
    client = connect(options) if options.kind == "cluster" else None
    try:
        return _run_prepared(plan, store_path, options, client)
    finally:
        if client is not None:
            client.close()


def _run_prepared(
    plan: Plan, store_path: str | Path, options: RunOptions, client: Any
) -> RunSummary:
    path = store.prepare(store_path, plan)
    # A Ctrl-C run installs its own SIGINT handler until the store is released
    # (execute.threads); the caller's handler comes back after that.
    main = threading.current_thread() is threading.main_thread()
    previous = signal.getsignal(signal.SIGINT) if main else None
    try:
        return _run_locked(plan, path, options, client)
    finally:
        if previous is not None:
            signal.signal(signal.SIGINT, previous)


def _run_locked(plan: Plan, path: Path, options: RunOptions, client: Any) -> RunSummary:
    with store.runner_lock(path):
        # A growth stopped midway is finished first; then the definition is checked
        # again under the lock, and a definition that adds work grows the store.
        store.finish_growth(path)
        growth = store.check_matches(path, plan.sweep)
        if growth is not None:
            store.grow(path, plan.sweep, growth)
        # Tasks are numbered by the store's point indices (grown stores append
        # the points they gained).
        plan = make_plan(store.ordered_sweep(path, plan.sweep))
        removed = store.clean_partials(path)
        if removed:
            log.warning(
                "%s: removed %d temporary files left by a killed writer.", path, removed
            )
        store_id, done = store.resume_state(path)
        targeted = plan.sweep.precision is not None
        pending, note = (
            targeted_round(plan, path)
            if targeted
            else ([t for t in plan.tasks if (t.point, t.chunk) not in done], "")
        )
        summary = RunSummary(
            store=path, n_tasks=len(done) + len(pending), already_done=len(done)
        )
        if not pending:
            return summary
        _log_run(
            path,
            f"start {options.kind}: {len(pending)} of {plan.n_tasks} tasks pending"
            + (" (first round of a precision target)" if targeted else ""),
        )
        start = time.monotonic()
        try:
            # One round without a target; with one, rounds until every point has
            # met its target or its ceiling (sweep.precision: each round's tasks
            # follow from the finished chunks alone).
            rounds = 0
            while pending:
                rounds += 1
                pause_before_round(rounds)
                summary.n_tasks = (
                    summary.already_done + summary.completed + len(pending)
                )
                if options.kind == "threads":
                    _run_threads(path, store_id, pending, options, summary, note)
                else:
                    _run_distributed(
                        path, store_id, pending, options, summary, client, note
                    )
                if not targeted or summary.interrupted or summary.failed:
                    break
                pending, note = targeted_round(plan, path)
        finally:
            summary.seconds = time.monotonic() - start
            # Counted from the markers: tasks that finished while the run was being
            # interrupted are done although their results never reached this loop.
            finished = len(store.done_tasks(path))
            _log_run(
                path,
                f"end: {finished} of {plan.n_tasks} tasks done "
                f"({finished - summary.already_done} in this run), "
                f"{len(summary.failed)} failed, interrupted={summary.interrupted}",
            )
    _raise_failures(summary)
    return summary


def _raise_failures(summary: RunSummary) -> None:
    if not summary.failed:
        return
    shown = "\n  ".join(summary.failed[:10])
    more = (
        f"\n  ... and {len(summary.failed) - 10} more"
        if len(summary.failed) > 10
        else ""
    )
    if summary.storage_full:
        unstarted = (
            summary.n_tasks
            - summary.already_done
            - summary.completed
            - len(summary.failed)
        )
        raise StoreError(
            f"{summary.store}: the disk is full (or over quota, or read-only); "
            f"{len(summary.failed)} task(s) could not be written and {unstarted} were not "
            f"started. Results already stored are intact; free space and rerun the same "
            f"command to resume.\n  {shown}{more}"
        )
    raise TaskError(
        f"{summary.store}: {len(summary.failed)} of {summary.n_tasks} tasks failed; the "
        f"results of the others are stored and a rerun retries only the failed ones.\n"
        f"  {shown}{more}"
    )


def _log_run(path: Path, message: str) -> None:
    """Append a line to the store's run log (what ran where, and when)."""
    stamp = time.strftime("%Y-%m-%dT%H:%M:%S%z")
    line = f"{stamp} host={socket.gethostname()} pid={os.getpid()} {message}\n"
    try:
        with open(path / "_runs.log", "a") as f:
            f.write(line)
    except OSError as err:
        raise store.os_error(path, "write the run log", err) from err
