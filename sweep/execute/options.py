"""Run options and run summary: what a caller asks of a run and what it did.

:class:`RunOptions` validates once, at the edge, in the library's terms
(``threads must be >= 1``); errors name options through
:class:`sweep.errors.OptionError` templates so the command line can say ``--threads``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from sweep.errors import OptionError, escape


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
            raise OptionError(
                "choose one executor; got "
                + ", ".join(f"{{{c}}}" for c in chosen)
                + ".",
                options=chosen,
            )
        for name in ("threads", "processes"):
            value = getattr(self, name)
            if value is not None and value < 1:
                raise OptionError(
                    f"{{{name}}} must be >= 1; got {escape(repr(value))}.",
                    options=(name,),
                )
        if self.scheduler is not None:
            from distributed.comm.addressing import parse_address, parse_host_port

            try:
                _, location = parse_address(self.scheduler)
                parse_host_port(location)
            except (ValueError, TypeError) as err:
                raise OptionError(
                    f"{{scheduler}}: {escape(str(err))}; expected an address like "
                    f"tcp://10.0.0.5:8786; got {escape(repr(self.scheduler))}.",
                    options=("scheduler",),
                ) from None
        if self.scheduler_file is not None and not Path(self.scheduler_file).is_file():
            where = escape(self.scheduler_file)
            raise OptionError(
                f"{{scheduler_file}} {where}: no such file; start the scheduler first "
                f"(dask scheduler --scheduler-file {where}).",
                options=("scheduler_file",),
            )

    @property
    def kind(self) -> Literal["threads", "processes", "cluster"]:
        """Which executor runs the tasks: local threads, a local cluster of
        processes, or an existing cluster."""
        if self.processes is not None:
            return "processes"
        if self.scheduler is not None or self.scheduler_file is not None:
            return "cluster"
        return "threads"


@dataclass
class RunSummary:
    """What a run did.

    Attributes
    ----------
    store : Path
        The store's absolute path.
    n_tasks : int
        Tasks of the whole sweep.
    already_done : int
        Tasks finished before this run (resumed).
    completed : int
        Tasks finished by this run.
    failed : list of str
        One line per failed task (point, chunk, error).
    walker_steps : int
        Walker-steps (spheres: moves) simulated by this run.
    seconds : float
        Wall-clock time of the tasks, s.
    kernel_seconds : float
        CPU time the completed tasks spent in the kernel, s (each task's own thread,
        summed): the rest of the run's CPU time went to zarr, Dask and bookkeeping
        (``sweep bench`` compares the two within one run).
    interrupted : bool
        The run was stopped (Ctrl-C, SIGTERM) before every task ran.
    """

    store: Path
    n_tasks: int
    already_done: int
    completed: int = 0
    failed: list[str] = field(default_factory=list)
    #: A task could not write because the disk is full, over quota or read-only.
    storage_full: bool = False
    walker_steps: int = 0
    seconds: float = 0.0
    kernel_seconds: float = 0.0
    interrupted: bool = False
    #: Tasks still running in this process's threads when a second Ctrl-C asked to
    #: stop at once: their work is lost (the store is intact). The caller should exit
    #: without waiting for them (the ``sweep`` command does).
    abandoned: int = 0

    @property
    def complete(self) -> bool:
        return self.already_done + self.completed == self.n_tasks
