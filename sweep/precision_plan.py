"""``sweep plan``'s estimate of the walkers a precision target needs per point.

A splitting target uses the closed-form probability where ``sweep.check`` has one
(one box axis absorbing at both faces): the normal approximation of the binomial
interval needs N = z^2 p (1 - p) / h^2 walkers. Otherwise, and for a mean's target
(no closed form of the first-passage time's variance is used), a pilot simulates
the first :data:`PILOT_WALKERS` walkers of the point's first task (its own random
stream, so the pilot's walkers are the run's first walkers) and the sample's
coefficient of variation c gives N = (z c / h)^2. The run then stops at the first
checkpoint (sweep.precision) at or above N, at most ``max_walkers``.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from sweep import precision
from sweep.check.exact import _absorbing_axis, _exact_splitting
from sweep.plan import Plan
from sweep.spec import axis_names

#: Walkers of the pilot of one point (from its first task's stream).
PILOT_WALKERS = 2000
#: At most this many points get a pilot, evenly spread (the others are not shown).
PILOT_POINTS = 8


@dataclass(frozen=True)
class Need:
    """Walkers one point needs for its target.

    ``walkers``: the estimate N (inf when the pilot saw censored walkers under a
    mean's target, which is then never met); ``planned``: the walkers the run
    will give it (the first checkpoint at or above N, capped); ``how``: where
    N comes from.
    """

    point: int
    walkers: float
    planned: int
    how: str


def walkers_needed(plan: Plan) -> list[Need]:
    """The estimate for up to :data:`PILOT_POINTS` points of a targeted sweep."""
    from sweep.simulate import simulate_task

    sweep = plan.sweep
    target = sweep.precision
    assert target is not None
    stride = max(1, -(-sweep.n_points // PILOT_POINTS))
    first = -(-target.first_walkers // sweep.chunk)
    stops = precision.checkpoints(first, sweep.n_chunks)
    wall = precision.wall_index(sweep)
    out = []
    for p in range(0, sweep.n_points, stride):
        point = sweep.points[p]
        how = f"pilot of {PILOT_WALKERS} walkers"
        needed: float
        exact = None
        if target.statistic == "splitting" and target.wall:
            axis = _absorbing_axis(point)
            axis_name, _, side = target.wall.rpartition("_")
            names = list(axis_names(point.motion.dimension))
            if (
                axis is not None
                and side in ("lower", "upper")
                and axis_name in names
                and names.index(axis_name) == axis
            ):
                upper = _exact_splitting(point)
                exact = upper if side == "upper" else 1.0 - upper
        if exact is not None:
            how = "closed form"
            needed = precision.Z**2 * exact * (1 - exact) / target.halfwidth**2
        else:
            task = next(t for t in plan.tasks if t.point == p)
            pilot = dataclasses.replace(
                task, n_walkers=min(PILOT_WALKERS, task.n_walkers)
            )
            output, _ = simulate_task(pilot)
            if target.statistic == "splitting":
                share = float(np.mean(output.wall == wall))
                needed = precision.Z**2 * share * (1 - share) / target.halfwidth**2
            else:
                times = output.time[np.isfinite(output.time)]
                if times.size < output.time.size:
                    needed = math.inf
                    how += f", {output.time.size - times.size} censored"
                elif times.size < 2 or times.mean() <= 0:
                    needed = math.inf
                else:
                    cv = float(times.std(ddof=1) / times.mean())
                    needed = (precision.Z * cv / target.halfwidth) ** 2
        chunks = next((m for m in stops if m * sweep.chunk >= needed), sweep.n_chunks)
        out.append(Need(p, needed, min(chunks * sweep.chunk, sweep.walkers), how))
    return out
