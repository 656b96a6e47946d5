"""Rounds of a sweep with a precision target: which tasks run next, and the note the
progress line shows (sweep.precision has the stopping rule)."""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

from sweep import precision, store
from sweep.plan import Plan, Task

#: Set to a round number to make a targeted run wait before that round (for tests
#: that kill a run between rounds); never set in normal use.
ROUND_PAUSE_ENV = "SWEEP_ROUND_PAUSE"


def pause_before_round(number: int) -> None:
    """Wait (an hour) before round ``number`` if :data:`ROUND_PAUSE_ENV` asks."""
    if os.environ.get(ROUND_PAUSE_ENV) == str(number):
        sys.stderr.write(f"run paused before round {number}\n")
        sys.stderr.flush()
        time.sleep(3600)


def targeted_round(plan: Plan, path: Path) -> tuple[list[Task], str]:
    """The next round of a sweep with a precision target, and a progress note.

    Each point is judged by :func:`sweep.precision.decide` from its finished chunks
    (markers checked); a point not yet decided gets the chunks up to its next
    checkpoint. The plan's tasks are in (point, chunk) order, by store index.
    """
    sweep = plan.sweep
    target = sweep.precision
    assert target is not None
    by_point = store.markers_by_point(path)
    n_c = sweep.n_chunks
    wall_index = precision.wall_index(sweep)
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
