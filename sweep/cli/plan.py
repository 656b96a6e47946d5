"""``sweep plan``: the points, tasks, work, disk, memory and run time of a
definition, before anything runs."""

from __future__ import annotations

import argparse
import math
import os
from typing import Any

from sweep.text import format_bytes, format_duration


def plan_command(args: argparse.Namespace) -> int:
    """``sweep plan``: print what a definition will cost."""
    from sweep.memory import memory_limit
    from sweep.plan import make_plan
    from sweep.sizing import size
    from sweep.spec import load_spec

    sweep = load_spec(args.definition)
    plan = make_plan(sweep)
    sizing = size(plan)
    cores = args.cores or os.cpu_count() or 1
    print(f"sweep {sweep.name!r} ({sweep.source})")
    print(f"  points:          {sweep.n_points}")
    print(
        f"  walkers/point:   {sweep.walkers:,}  (tasks of {sweep.chunk:,} walkers, "
        f"{sweep.n_chunks} per point)"
    )
    print(f"  tasks:           {plan.n_tasks:,}")
    if sweep.precision is not None:
        _plan_precision(plan)
    if sweep.swept:
        from sweep.plan import coordinate_columns

        # The definition's key, then the name tables, plots and the store use.
        names = list(coordinate_columns(sweep))
        print(f"  swept:           {', '.join(sweep.swept)}")
        print(f"  named:           {', '.join(names)} (in tables, plots and the store)")
    print(
        f"  walker-steps:    about {sizing.walker_steps_expected:.3g} expected, at most "
        f"{sizing.walker_steps_bound:.3g} (no walker absorbed before the horizon)"
    )
    spheres = [i for i, p in enumerate(sweep.points) if p.timing.scheme == "spheres"]
    if spheres:
        from sweep.sizing import JUMP_STEPS, PILOT_POINTS, PILOT_WALKERS, sphere_moves

        stride = max(1, -(-len(spheres) // PILOT_POINTS))
        moves = [sphere_moves(sweep.points[i]) for i in spheres[::stride]]
        jumps = sum(m[0] for m in moves) / len(moves)
        steps = sum(m[1] for m in moves) / len(moves)
        print(
            f"  spheres scheme:  {len(spheres)} point(s), about {jumps:.3g} jumps and "
            f"{steps:.3g} steps per walker (pilot of {PILOT_WALKERS} walkers per "
            f"point); a jump counts as {JUMP_STEPS:g} walker-steps above"
        )
    print(f"                   ({sizing.estimate_note})")
    print(
        f"  disk:            at most {format_bytes(sizing.disk_bytes)} (uncompressed)"
    )
    limit, where = memory_limit()
    allowed = f" ({where} allows {format_bytes(limit)})" if limit else ""
    print(f"  memory per task: about {format_bytes(sizing.task_memory_bytes)}{allowed}")
    print(
        f"  run time:        about {format_duration(sizing.run_seconds(cores))} on {cores} "
        f"cores at {sizing.rate_per_core / 1e6:.0f} M walker-steps/s per core "
        f"(measured on this machine)"
    )
    for warning in sizing.warnings:
        print(f"  warning: {warning}")
    return 0


def _plan_precision(plan: Any) -> None:
    """``sweep plan``'s lines for a precision target: walkers needed per point."""
    from sweep.precision_plan import walkers_needed

    target = plan.sweep.precision
    print(
        f"  precision:       {target.describe()} (95 %); first round "
        f"{target.first_walkers:,} walkers, then doubling, at most "
        f"{target.max_walkers:,} per point (the tasks and walker-steps below are "
        f"that ceiling's)"
    )
    for need in walkers_needed(plan):
        wanted = (
            f"about {need.walkers:,.0f}"
            if math.isfinite(need.walkers)
            else "never met (walkers censored: raise time.horizon)"
        )
        print(
            f"    point {need.point}: needs {wanted} walkers ({need.how}); the run "
            f"gives it {need.planned:,}"
        )
