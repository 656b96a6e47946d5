"""Simulating one task: a planned task in, its kernel outputs and work out.

The bridge between the plan and the kernels: allocates a task's outputs, calls the
kernel of its scheme (steps or spheres) and shapes what comes back into a
:class:`sweep.store.TaskOutput`. Also the warm-up that compiles a kernel in the driver
before tasks fan out. No scheduling (``sweep.execute``), no writing (``sweep.store``).
"""

from __future__ import annotations

import dataclasses
import sys
import threading
import time

import numpy as np

from kernels import spheres
from kernels.inputs import allocate
from kernels.walkers import simulate
from sweep import store
from sweep.plan import Task, make_plan
from sweep.spec import parse_spec


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
        out.displacement if a.recording.displacement else None,
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
        g.reactivity_lower,
        g.reactivity_upper,
        g.ball_reactivity,
        g.target_reactivity,
        g.obstacle_center,
        g.obstacle_radius,
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
        job = tiny_task(scheme)
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


def tiny_task(scheme: str = "steps") -> Task:
    """The one task of a one-walker, two-step 1-D interval sweep with ``scheme``
    (what :func:`warm_up` compiles by default)."""
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
