"""Running a plan: Dask fans tasks out, numba kernels simulate, the store keeps results.

The only module that imports dask. Local threads are a plain thread pool fed a window
of tasks (the kernel releases the GIL; a Dask graph of every task took minutes to
build for 10^5 tasks); ``--processes`` starts a ``distributed.LocalCluster`` (a dead
worker's task is rerun elsewhere); ``--scheduler`` / ``--scheduler-file`` connect to an
existing cluster. Every path submits the same task function, so results are
bit-identical whichever is used.
"""

from __future__ import annotations

import contextlib
import dataclasses
import errno
import ipaddress
import json
import logging
import math
import os
import socket
import sys
import threading
import time
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from kernels import spheres
from kernels.inputs import allocate
from kernels.walkers import simulate
from sweep import precision, store
from sweep.errors import StoreError, SweepError, TaskError
from sweep.plan import Plan, Task, make_plan
from sweep.sizing import check_memory
from sweep.spec import Sweep, load_spec

log = logging.getLogger(__name__)

#: At most this many tasks per worker thread are in flight on a distributed cluster,
#: so 10^5 tasks do not flood the scheduler.
WINDOW_PER_WORKER = 4
#: Seconds to wait for an existing Dask scheduler before giving up (the environment
#: variable SWEEP_CONNECT_TIMEOUT overrides it).
CONNECT_TIMEOUT = 30.0


@dataclass(frozen=True)
class RunOptions:
    """Where and how to run. At most one of the executor choices may be set.

    Attributes
    ----------
    threads : int or None
        Local threads (the default, with one per core).
    processes : int or None
        Worker processes of a local ``distributed.LocalCluster``.
    scheduler : str or None
        Address of an existing Dask scheduler, e.g. ``tcp://10.0.0.5:8786``.
    scheduler_file : str or None
        Scheduler file written by ``dask scheduler --scheduler-file``.
    progress : bool
        Show a progress line on stderr.
    """

    threads: int | None = None
    processes: int | None = None
    scheduler: str | None = None
    scheduler_file: str | None = None
    progress: bool = True

    def __post_init__(self) -> None:
        chosen = [
            name
            for name in ("threads", "processes", "scheduler", "scheduler_file")
            if getattr(self, name) is not None
        ]
        if len(chosen) > 1:
            raise SweepError(
                f"choose one executor; got {', '.join('--' + c.replace('_', '-') for c in chosen)}."
            )
        for name in ("threads", "processes"):
            value = getattr(self, name)
            if value is not None and value < 1:
                raise SweepError(f"--{name} must be >= 1; got {value}.")
        if self.scheduler is not None:
            from distributed.comm.addressing import parse_address, parse_host_port

            try:
                _, location = parse_address(self.scheduler)
                parse_host_port(location)
            except (ValueError, TypeError) as err:
                raise SweepError(
                    f"--scheduler: {err}; expected an address like "
                    f"tcp://10.0.0.5:8786; got {self.scheduler!r}."
                ) from None
        if self.scheduler_file is not None and not Path(self.scheduler_file).is_file():
            raise SweepError(
                f"--scheduler-file {self.scheduler_file}: no such file; start the "
                f"scheduler first (dask scheduler --scheduler-file "
                f"{self.scheduler_file})."
            )

    @property
    def kind(self) -> str:
        if self.processes is not None:
            return "processes"
        if self.scheduler is not None or self.scheduler_file is not None:
            return "cluster"
        return "threads"


@dataclass
class RunSummary:
    """What a run did."""

    store: Path
    n_tasks: int
    already_done: int
    completed: int = 0
    failed: list[str] = field(default_factory=list)
    #: A task could not write because the disk is full, over quota or read-only.
    storage_full: bool = False
    walker_steps: int = 0
    seconds: float = 0.0
    interrupted: bool = False
    #: Tasks still running in this process's threads when a second Ctrl-C asked to
    #: stop at once: their work is lost (the store is intact). The caller should exit
    #: without waiting for them (the ``sweep`` command does).
    abandoned: int = 0

    @property
    def complete(self) -> bool:
        return self.already_done + self.completed == self.n_tasks


# --------------------------------------------------------------------------- task


def simulate_task(task: Task) -> tuple[store.TaskOutput, int]:
    """Run the kernel for one task; returns its output and the walker-steps done."""
    a = task.args
    n, d = task.n_walkers, a.geometry.dimension
    out = allocate(n, a.geometry, a.recording)
    if a.scheme == "spheres":
        return _simulate_spheres(
            task, out.time, out.wall, out.position, out.survival, out.fpt_hist
        )
    steps = simulate(task.stream_state(), n, a.geometry, a.motion, a.recording, out)
    n_snap = out.occupancy.shape[0]
    occupancy = None
    if n_snap:
        # The kernel visits snapshots in ascending step order (see plan.kernel_args);
        # undo that sort so rows follow the user's list of times.
        occupancy = np.empty_like(out.occupancy)
        occupancy[a.occupancy_order] = out.occupancy
        occupancy = occupancy.reshape((n_snap, *(a.recording.occupancy_bins,) * d))
    output = store.TaskOutput(
        out.time,
        out.wall,
        out.position,
        out.survival,
        occupancy,
        out.fpt_hist if a.recording.fpt_bins else None,
    )
    return output, int(steps)


def _simulate_spheres(
    task: Task,
    out_time: np.ndarray,
    out_wall: np.ndarray,
    out_position: np.ndarray,
    out_survival: np.ndarray,
    out_fpt: np.ndarray,
) -> tuple[store.TaskOutput, int]:
    """:func:`simulate_task` for the spheres scheme; the work returned counts jumps
    and steps alike (moves)."""
    output, moves = simulate_spheres_moves(
        task, out_time, out_wall, out_position, out_survival, out_fpt
    )
    return output, int(moves.sum())


def simulate_spheres_moves(
    task: Task,
    out_time: np.ndarray,
    out_wall: np.ndarray,
    out_position: np.ndarray,
    out_survival: np.ndarray,
    out_fpt: np.ndarray,
) -> tuple[store.TaskOutput, np.ndarray]:
    """Run the spheres kernel for ``task``; returns its output and (jumps, steps)."""
    a = task.args
    g, m, r = a.geometry, a.motion, a.recording
    moves = np.zeros(2, dtype=np.int64)
    spheres.simulate(
        task.stream_state(),
        task.n_walkers,
        m.start,
        m.uniform_start,
        g.lower,
        g.upper,
        g.absorbing_lower,
        g.absorbing_upper,
        g.ball_center,
        g.ball_radius,
        g.ball_absorbing,
        g.target_center,
        g.target_radius,
        m.diffusivity,
        m.dt,
        m.n_steps,
        m.bridge,
        a.handover,
        a.exit_tau,
        a.exit_dtau,
        a.exit_s0,
        a.exit_ds,
        a.exit_slope,
        r.survival_times,
        out_time,
        out_wall,
        out_position,
        out_survival,
        r.fpt_bin_width,
        out_fpt,
        moves,
    )
    output = store.TaskOutput(
        out_time,
        out_wall,
        out_position,
        out_survival,
        None,
        out_fpt if r.fpt_bins else None,
    )
    return output, moves


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
        ``{"point", "chunk", "walkers", "steps", "seconds", "censored", "host", "pid"}``
        on success, ``{"point", "chunk", "error", "errno"}`` on failure, or
        ``{"point", "chunk", "skipped": True}`` when the run is stopping.
    """
    if stop is not None and stop.is_set():
        return {"point": task.point, "chunk": task.chunk, "skipped": True}
    try:
        # Before the work too: a queued task of a dead driver stops at once.
        store.check_store_id(Path(store_path), store_id, task)
        start = time.perf_counter()
        output, steps = simulate_task(task)
        summary = {
            "point": task.point,
            "chunk": task.chunk,
            "walkers": task.n_walkers,
            "steps": steps,
            "seconds": round(time.perf_counter() - start, 6),
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


#: Seconds the warm-up may take before it is announced as compiling (loading
#: compiled kernels from numba's cache takes about a second on a busy machine;
#: compiling one takes 5-15 s).
COMPILE_NOTICE_AFTER = 3.0
#: Steps of the warm-up's single walker.
WARM_UP_STEPS = 16


def warm_up(
    task: Task | None = None, announce: bool = False, scheme: str = "steps"
) -> None:
    """Compile the kernel loop ``task`` needs (one walker of it; default: a 1-D
    interval with ``scheme``) in the driver, before tasks fan out.

    With ``announce``, a warm-up that is still running after
    :data:`COMPILE_NOTICE_AFTER` seconds (numba compiling rather than loading its
    cache) is said on stderr, and how long it took once done.
    """
    if task is not None:
        # One walker for a few steps: compiling needs a call, not a simulation (a
        # walker of a fine-dt point could otherwise run for seconds).
        job = dataclasses.replace(
            task,
            n_walkers=1,
            args=dataclasses.replace(
                task.args,
                motion=task.args.motion._replace(
                    n_steps=min(task.args.motion.n_steps, WARM_UP_STEPS)
                ),
            ),
        )
    else:
        job = _tiny_task(scheme)
    if not announce:
        simulate_task(job)
        return
    start = time.monotonic()
    failure: list[BaseException] = []

    def compile_it() -> None:
        try:
            simulate_task(job)
        except BaseException as err:  # re-raised in the caller's thread
            failure.append(err)

    worker = threading.Thread(target=compile_it, name="sweep-warm-up", daemon=True)
    worker.start()
    worker.join(COMPILE_NOTICE_AFTER)
    if worker.is_alive():
        sys.stderr.write("compiling kernels (first run only)…\n")
        sys.stderr.flush()
        while worker.is_alive():
            worker.join(0.1)  # short waits keep Ctrl-C responsive
        sys.stderr.write(f"kernels compiled in {time.monotonic() - start:.1f} s.\n")
        sys.stderr.flush()
    if failure:
        raise failure[0]


def _tiny_task(scheme: str = "steps") -> Task:
    from sweep.spec import parse_spec

    tiny = parse_spec(
        f"""
        [sweep]
        seed = 0
        walkers = 1
        [motion]
        dimension = 1
        diffusivity = 1.0
        start = 0.5
        [time]
        dt = 0.1
        horizon = 0.2
        scheme = "{scheme}"
        [domain]
        lower = 0.0
        upper = 1.0
        walls = {{ x_lower = "absorbing", x_upper = "reflecting" }}
        """,
        source="<warm-up>",
    )
    return make_plan(tiny).tasks[0]


# --------------------------------------------------------------------------- progress


class Progress:
    """One status line on stderr: tasks done/total, walker-steps per second, time left."""

    def __init__(
        self,
        total: int,
        done: int,
        enabled: bool,
        concurrency: int,
        started: float | None = None,
        note: str = "",
    ) -> None:
        #: Shown after the counts (a precision target's state of the points).
        self.note = note
        self.total = total
        self.done = done
        self.start_done = done
        self.enabled = enabled
        self.steps = 0
        self.t0 = time.monotonic()
        #: When the run started (before compiling): "elapsed" counts from here; rates
        #: and time left from ``t0``, when tasks began.
        self.started = self.t0 if started is None else started
        self.last = 0.0
        self.tty = sys.stderr.isatty()
        self.concurrency = concurrency
        self.lock = threading.Lock()

    def update(self, summary: dict[str, Any]) -> None:
        with self.lock:
            if "steps" in summary:
                self.done += 1
                self.steps += summary["steps"]
            now = time.monotonic()
            interval = 0.5 if self.tty else 30.0
            if self.enabled and (
                now - self.last >= interval or self.done == self.total
            ):
                self.last = now
                self._show(now)

    def _show(self, now: float) -> None:
        elapsed = max(now - self.t0, 1e-9)
        new = self.done - self.start_done
        rate = self.steps / elapsed
        left = self.total - self.done
        eta = "?" if new == 0 else _duration(elapsed / new * left)
        width = 24
        filled = int(width * self.done / max(self.total, 1))
        bar = "#" * filled + "." * (width - filled)
        line = (
            f"[{bar}] {self.done}/{self.total} tasks  {rate / 1e6:8.2f} M walker-steps/s  "
            f"elapsed {_duration(now - self.started)}  left {eta}"
        )
        if self.note:
            line += f"  {self.note}"
        sys.stderr.write(("\r" + line) if self.tty else (line + "\n"))
        sys.stderr.flush()

    def close(self) -> None:
        if self.enabled and self.tty:
            self._show(time.monotonic())
            sys.stderr.write("\n")
            sys.stderr.flush()


def _duration(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "?"
    s = int(round(seconds))
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"{h}:{m:02d}:{sec:02d}" if h else f"{m:02d}:{sec:02d}"


# --------------------------------------------------------------------------- run


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
    plan: Any, store_path: str | Path, options: RunOptions, client: Any
) -> RunSummary:
    path = store.prepare(store_path, plan)
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
            _targeted_round(plan, path)
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
                _pause_before_round(rounds)
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
                pending, note = _targeted_round(plan, path)
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


def _targeted_round(plan: Plan, path: Path) -> tuple[list[Task], str]:
    """The next round of a sweep with a precision target, and a progress note.

    Each point is judged by :func:`sweep.precision.decide` from its finished chunks
    (markers checked); a point not yet final gets the chunks up to its next
    checkpoint.
    """
    sweep = plan.sweep
    target = sweep.precision
    assert target is not None
    by_point = store.markers_by_point(path)
    n_c = sweep.n_chunks
    wall_index = target_wall_index(sweep)
    first = -(-target.first_walkers // sweep.chunk)
    tasks: list[Task] = []
    met = 0
    worst: precision.Estimate | None = None
    for p in range(sweep.n_points):
        done = by_point.get(p, {})
        decision = precision.decide(target, wall_index, first, n_c, done)
        if decision.final:
            met += decision.last is not None and decision.last.met
            continue
        last = decision.last
        if last is not None and (
            worst is None
            or last.censored > worst.censored
            or not last.halfwidth <= worst.halfwidth
        ):
            worst = last
        tasks += [
            plan.tasks[p * n_c + c] for c in range(decision.chunks) if c not in done
        ]
    final = sweep.n_points - len({t.point for t in tasks})
    note = f"{final}/{sweep.n_points} points decided ({met} at target)"
    if worst is not None:
        # The farthest undecided point: its precision against the target.
        note += f"; worst open {precision.describe_estimate(target, worst)}"
    return tasks, note


#: Set to a round number to make a targeted run wait before that round (for tests
#: that kill a run between rounds); never set in normal use.
ROUND_PAUSE_ENV = "SWEEP_ROUND_PAUSE"


def _pause_before_round(number: int) -> None:
    if os.environ.get(ROUND_PAUSE_ENV) == str(number):
        sys.stderr.write(f"run paused before round {number}\n")
        sys.stderr.flush()
        time.sleep(3600)


def target_wall_index(sweep: Any) -> int:
    """Index of the precision target's wall among the store's walls (0 if none)."""
    target = sweep.precision
    if target is None or target.wall is None:
        return 0
    return list(sweep.points[0].domain.wall_names()).index(target.wall)


def _handle(
    result: dict[str, Any],
    summary: RunSummary,
    progress: Progress,
    stop: threading.Event,
) -> None:
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
    progress.update(result)


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
            in_flight = {pool.submit(counted, t) for t in _take(queue, window)}
            while in_flight:
                finished, in_flight = wait(in_flight, return_when=FIRST_COMPLETED)
                for future in finished:
                    _handle(future.result(), summary, progress, stop)
                if not stop.is_set():
                    in_flight |= {
                        pool.submit(counted, t) for t in _take(queue, len(finished))
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
            try:
                running.wait_for_zero()
            except KeyboardInterrupt:
                summary.abandoned = running.value
    finally:
        stop.set()
        pool.shutdown(wait=False, cancel_futures=True)
        progress.close()


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

    def wait_for_zero(self) -> None:
        # Short timeouts keep the wait interruptible by Ctrl-C.
        with self._changed:
            while self._value:
                self._changed.wait(0.1)


def connect_timeout() -> float:
    """Seconds to wait for an existing scheduler (``$SWEEP_CONNECT_TIMEOUT``, else
    :data:`CONNECT_TIMEOUT`)."""
    try:
        return float(os.environ.get("SWEEP_CONNECT_TIMEOUT", CONNECT_TIMEOUT))
    except ValueError:
        return CONNECT_TIMEOUT


def connect(options: RunOptions) -> Any:
    """A ``distributed.Client`` of the existing cluster ``options`` names; says
    where it connects (stderr) and fails with one message after
    :func:`connect_timeout` seconds."""
    from distributed import Client

    where = options.scheduler_file or options.scheduler
    _warn_if_open(options)
    timeout = connect_timeout()
    sys.stderr.write(f"connecting to the Dask scheduler {where} …\n")
    sys.stderr.flush()
    try:
        if options.scheduler_file is not None:
            return Client(scheduler_file=options.scheduler_file, timeout=timeout)
        return Client(options.scheduler, timeout=timeout)
    except (OSError, TimeoutError, ValueError) as err:
        raise SweepError(
            f"cannot connect to the Dask scheduler {where} within {timeout:g} s: "
            f"{err}. Check that it runs and that this machine can reach it (or set "
            f"SWEEP_CONNECT_TIMEOUT for a slow one); nothing was created or changed."
        ) from None


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
            submit(_take(queue, window)), with_results=True, raise_errors=False
        )
        try:
            for future, result in futures:
                if isinstance(result, BaseException) or future.status == "error":
                    summary.failed.append(f"{future.key}: {result!r}")
                elif isinstance(result, dict):
                    _handle(result, summary, progress, stop)
                future.release()
                if not stop.is_set():
                    for f in submit(_take(queue, 1)):
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


def _local_cluster(n_workers: int) -> Any:
    """A ``LocalCluster`` that only this process can use.

    Without credentials, anyone on the machine who finds the scheduler's port (it is in
    Dask's log) could connect and run code in the workers as the user of the run. So:
    TLS with a certificate made for this run alone (kept in memory, handed to the
    worker processes by their nannies), every socket on 127.0.0.1, and no HTTP server.
    Dask opens one on the scheduler (port 8787) and on each worker even without a
    dashboard: it serves no routes here and is closed once the cluster is up.
    """
    import dask
    from distributed import LocalCluster
    from distributed.security import Security

    # Tasks that kill their worker are retried a few times, then reported.
    with dask.config.set(
        {
            "distributed.scheduler.allowed-failures": 3,
            "distributed.scheduler.http.routes": [],
            "distributed.worker.http.routes": [],
        }
    ):
        cluster = LocalCluster(
            n_workers=n_workers,
            threads_per_worker=1,
            processes=True,
            host="127.0.0.1",
            protocol="tls://",
            security=Security.temporary(),
            dashboard_address="127.0.0.1:0",  # None would mean port 8787
            scheduler_kwargs={"dashboard": False},
            silence_logs=logging.WARNING,
        )
    cluster.sync(_stop_http_server, cluster.scheduler)
    return cluster


def _hush_logging() -> None:
    logging.getLogger("distributed").setLevel(logging.CRITICAL)


async def _close_workers(cluster: Any) -> None:
    import asyncio

    await asyncio.gather(*(w.close(timeout=2) for w in cluster.workers.values()))


async def _stop_http_server(server: Any) -> None:
    server.http_server.stop()


def _no_http_server() -> Any:
    """A worker plugin closing each worker's HTTP port as it joins (a worker restarted
    after a crash opens a new one). Made here: distributed is imported only when used."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class NoHttpServer(WorkerPlugin):
        async def setup(self, worker: Any) -> None:
            worker.http_server.stop()

    return NoHttpServer()


def _warn_if_open(options: RunOptions) -> None:
    """Warn when an existing cluster's scheduler is open to others (plain TCP, not on
    this machine)."""
    where = options.scheduler_file or options.scheduler
    address = options.scheduler
    if options.scheduler_file is not None:
        try:
            address = json.loads(Path(options.scheduler_file).read_text())["address"]
        except (OSError, ValueError, KeyError, TypeError):
            address = None  # the connection says what is wrong
    if address is not None and not _private_address(address):
        log.warning(
            "the Dask scheduler %s (from %s) is not encrypted and not on this "
            "machine: anyone who can reach it can run code in its workers as you. "
            'Start it with TLS (README, "Clusters and batch systems"; '
            "sweeps/hpc/slurm-job.sh does).",
            address,
            where,
        )


def _private_address(address: str) -> bool:
    """True for a ``tls://`` address (it authenticates) or one on the loopback."""
    from distributed.comm.addressing import get_address_host, parse_address

    try:
        scheme, _ = parse_address(address)
        if scheme in ("tls", "inproc"):
            return True
        host = get_address_host(address)
    except (ValueError, TypeError):
        return False
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        pass
    try:
        infos = socket.getaddrinfo(host, None)
    except OSError:
        return False
    return bool(infos) and all(
        ipaddress.ip_address(info[4][0]).is_loopback for info in infos
    )


def _take(queue: Iterable[Task], n: int) -> list[Task]:
    out = []
    for task in queue:
        out.append(task)
        if len(out) == n:
            break
    return out


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
