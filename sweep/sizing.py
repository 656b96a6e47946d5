"""Sizing a sweep before it runs: work, disk, run time, and warnings on its choices.

A stage after ``check`` (expected work comes from its closed forms) that simulates
pilots and calibrations through ``sweep.simulate``. Used by ``sweep plan`` (printed)
and ``sweep run`` (its warnings, before starting). Run-time estimates use this
machine's measured kernel speed, cached by ``sweep bench`` or measured here in about
a second. The memory check a run needs lives in ``sweep.memory`` (re-exported here).
"""

from __future__ import annotations

import dataclasses
import functools
import json
import math
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from sweep.memory import (  # noqa: F401  (re-exported: importable from here as before)
    MEMORY_SHARE,
    check_memory,
    memory_limit,
    task_memory,
    task_memory_parts,
)
from sweep.plan import Plan, Task, kernel_args, make_plan
from sweep.spec import PointSpec, Sweep, axis_names, parse_spec
from sweep.text import format_bytes as human_bytes  # noqa: F401  (re-exported)
from sweep.text import format_duration as human_seconds  # noqa: F401  (re-exported)

#: Where measured kernel speeds are kept between runs.
CACHE = Path(
    os.environ.get("SWEEP_CACHE_DIR", Path.home() / ".cache" / "brownian-sweep")
)
#: Tasks shorter than this spend a noticeable share on scheduling (about 1-3 ms per
#: task on Dask, more on a busy scheduler).
MIN_TASK_SECONDS = 1.0
#: Tasks longer than this lose much work when a node dies (a task is redone whole).
MAX_TASK_SECONDS = 3600.0
#: sqrt(2 D dt) above this fraction of the smallest length (target radius, domain
#: width) resolves that length poorly.
STEP_FRACTION = 0.1


@dataclass(frozen=True)
class Sizing:
    """What a sweep will cost, and what looks wrong with it."""

    n_points: int
    n_tasks: int
    walker_steps_bound: float
    walker_steps_expected: float
    disk_bytes: float
    task_memory_bytes: float
    rate_per_core: float
    warnings: tuple[str, ...] = field(default=())
    #: How the expected work was found: "closed forms", "pilot" (some points had
    #: none and were sampled), with a sentence for `sweep plan`.
    estimate_note: str = ""

    def run_seconds(self, cores: int) -> float:
        return self.walker_steps_expected / (self.rate_per_core * max(cores, 1))


def disk_bytes(sweep: Sweep) -> float:
    """Uncompressed bytes of the store's arrays (compression usually shrinks them)."""
    d = sweep.dimension
    rec = sweep.points[0].record
    n_walls = len(sweep.points[0].domain.wall_names())
    per_point = 8 * sweep.n_chunks * rec.survival_points
    if rec.per_walker:
        per_point += sweep.walkers * (8 + 2 + 8 * d)
    per_point += 8 * sweep.n_chunks * len(rec.occupancy_times) * rec.occupancy_bins**d
    per_point += 8 * sweep.n_chunks * n_walls * rec.fpt_bins
    return float(sweep.n_points * per_point)


#: Walkers of the pilot run that sizes a point of the spheres scheme.
PILOT_WALKERS = 64
#: A jump of the spheres scheme costs about as much as this many steps of the step
#: kernel (45 vs 10.5 ns in 3-D, bench case, same run on the development machine).
JUMP_STEPS = 4.0


#: At most this many points of one sweep get a pilot run; the others of the spheres
#: scheme are priced at the mean of those.
PILOT_POINTS = 100


@functools.lru_cache(maxsize=4096)
def sphere_moves(point: PointSpec) -> tuple[float, float]:
    """Mean (jumps, steps) per walker of a spheres point, from a pilot run of
    :data:`PILOT_WALKERS` walkers with a fixed seed (no closed form predicts them)."""
    # numba only when a pilot runs: `sweep plan` of a steps sweep stays numpy-only.
    from sweep.simulate import simulate_spheres_moves

    n = PILOT_WALKERS
    args = kernel_args(point)
    d = point.motion.dimension
    task = Task(point=0, chunk=0, first_walker=0, n_walkers=n, entropy=(0,), args=args)
    _, moves = simulate_spheres_moves(
        task,
        np.empty(n),
        np.empty(n, dtype=np.int16),
        np.empty((n, d)),
        np.zeros(args.recording.survival_times.shape[0], dtype=np.int64),
        np.zeros((0, 0), dtype=np.int64),
    )
    return float(moves[0]) / n, float(moves[1]) / n


def expected_steps(point: PointSpec) -> float | None:
    """Expected steps per walker: mean first-passage time capped by the horizon, or
    None where no closed form (nor rule of thumb) gives the mean.

    For the spheres scheme: step-equivalents, the pilot's steps plus its jumps
    weighted by :data:`JUMP_STEPS`.
    """
    from sweep import check

    if point.timing.scheme == "spheres":
        jumps, steps = sphere_moves(point)
        return JUMP_STEPS * jumps + steps

    horizon_steps = point.timing.n_steps
    if point.domain.has_surface_kinds():
        # Reactive, periodic and obstacle surfaces have their own closed forms
        # (sweep.check.surfaces); elsewhere the pilot measures these points.
        from sweep.check import surfaces

        mean = surfaces.exact_mean(point)
        return (
            None if mean is None else float(min(mean / point.timing.dt, horizon_steps))
        )
    narrow = _narrow_escape_time(point)
    if narrow is not None:
        return float(min(narrow / point.timing.dt, horizon_steps))
    if check.unsupported(point):
        return None
    try:
        mean = check.exact_mean(point)
    except (NotImplementedError, ValueError):
        return None
    return float(min(mean / point.timing.dt, horizon_steps))


def _expected_per_point(sweep: Sweep) -> list[float | None]:
    """:func:`expected_steps` of every point; spheres points beyond
    :data:`PILOT_POINTS` (evenly spaced) are priced at the mean of those piloted."""
    spheres = [i for i, p in enumerate(sweep.points) if p.timing.scheme == "spheres"]
    stride = max(1, math.ceil(len(spheres) / PILOT_POINTS))
    piloted = set(spheres[::stride])
    skipped = set(spheres) - piloted
    out = [
        math.nan if i in skipped else expected_steps(p)
        for i, p in enumerate(sweep.points)
    ]
    if piloted:
        mean = sum(float(out[i] or 0.0) for i in piloted) / len(piloted)
        out = [mean if v is not None and math.isnan(v) else v for v in out]
    return out


#: A pilot runs this many walkers of a point without a closed form ...
STEP_PILOT_WALKERS = 256
#: ... for at most this many walker-steps (it stops them at an earlier horizon) ...
STEP_PILOT_BUDGET = 1e7
#: ... at up to this many such points, evenly spread (the others are scaled from
#: them by their horizons).
STEP_PILOT_POINTS = 4


def pilot_steps(plan: Plan, point: int) -> tuple[float, float]:
    """(low, high) bounds of the mean steps per walker of ``point``, from a pilot of
    :data:`STEP_PILOT_WALKERS` walkers of its first task's random stream, stopped after
    :data:`STEP_PILOT_BUDGET` walker-steps in all. Equal bounds when the pilot
    reached the point's horizon; otherwise walkers still free at the pilot's
    earlier stop may take anything up to the remaining steps."""
    from sweep.simulate import simulate_task

    task = next(t for t in plan.tasks if t.point == point)
    horizon = task.args.motion.n_steps
    cap = int(max(1, min(horizon, STEP_PILOT_BUDGET // STEP_PILOT_WALKERS)))
    walkers = min(STEP_PILOT_WALKERS, task.n_walkers)
    pilot = dataclasses.replace(
        task,
        n_walkers=walkers,
        args=dataclasses.replace(
            task.args, motion=task.args.motion._replace(n_steps=cap)
        ),
    )
    output, steps = simulate_task(pilot)
    mean = steps / walkers
    free = float(np.count_nonzero(output.wall < 0)) / walkers
    return mean, mean + free * (horizon - cap)


def _narrow_escape_time(point: PointSpec) -> float | None:
    """Mean time to find small absorbing targets in a reflecting 3-D domain.

    Rule of thumb (common practice, the leading term of the narrow-escape asymptotics):
    T ~ V / (4 pi D sum_k a_k) for targets of radii a_k much smaller than the domain.
    """
    dom, m = point.domain, point.motion
    if m.dimension != 3 or not dom.targets or not dom.bounded:
        return None
    if dom.shape == "ball":
        if dom.surface_absorbing:
            return None
        volume = 4.0 / 3.0 * math.pi * dom.radius**3
    else:
        if any(dom.absorbing_low) or any(dom.absorbing_high):
            return None
        volume = math.prod(hi - lo for lo, hi in zip(dom.lower, dom.upper))
    return volume / (4.0 * math.pi * m.diffusivity * sum(t.radius for t in dom.targets))


def slowest_decay_time(point: PointSpec) -> float:
    """1 / (slowest decay rate) of the survival, for bounded driftless cases; else inf."""
    dom, m = point.domain, point.motion
    if any(v != 0.0 for v in m.drift):
        return math.inf
    narrow = _narrow_escape_time(point)
    if narrow is not None:
        return narrow  # the survival decays nearly exponentially at that mean time
    if dom.targets:
        return math.inf
    if dom.shape == "ball":
        if not dom.surface_absorbing:
            return math.inf
        # First zero of the Bessel function J_{d/2-1}: 2.405 (d = 2), pi (d = 3).
        zero = {2: 2.404825557695773, 3: math.pi}.get(m.dimension, math.pi)
        return dom.radius**2 / (m.diffusivity * zero**2)
    rate = 0.0
    for lo, hi, a_lo, a_hi in zip(
        dom.lower, dom.upper, dom.absorbing_low, dom.absorbing_high
    ):
        width = hi - lo
        if not math.isfinite(width):
            continue
        if a_lo and a_hi:
            rate += m.diffusivity * (math.pi / width) ** 2
        elif a_lo or a_hi:
            rate += m.diffusivity * (math.pi / (2 * width)) ** 2
    return 1.0 / rate if rate > 0 else math.inf


def point_warnings(index: int, point: PointSpec) -> list[str]:
    """Choices that waste work or mislead, for one point."""
    out = []
    m, tm, dom = point.motion, point.timing, point.domain
    step = math.sqrt(2 * m.diffusivity * tm.dt)
    lengths = [("target radius", t.radius) for t in dom.targets]
    if dom.shape == "ball":
        lengths.append(("ball radius", dom.radius))
    else:
        lengths += [
            ("domain width", hi - lo)
            for lo, hi in zip(dom.lower, dom.upper)
            if math.isfinite(hi - lo)
        ]
    if lengths:
        name, smallest = min(lengths, key=lambda item: item[1])
        if step > STEP_FRACTION * smallest:
            out.append(
                f"point {index}: dt = {tm.dt:g} is coarse: the step sqrt(2 D dt) = "
                f"{step:.3g} exceeds {STEP_FRACTION:g} x the smallest {name} "
                f"({smallest:.3g}); halve dt until results stop moving."
            )
    tau = slowest_decay_time(point)
    if math.isfinite(tau) and tm.horizon < 3 * tau:
        censored = math.exp(-tm.horizon / tau)
        out.append(
            f"point {index}: horizon {tm.horizon:g} is short: the slowest decay time is "
            f"{tau:.3g}, so roughly {censored:.0%} of walkers may still be free (censored) "
            f"at the horizon."
        )
    return out


def measured_rate(dimension: int) -> float:
    """Kernel walker-steps per second per core for ``dimension``, cached on disk."""
    cache = CACHE / "rates.json"
    try:
        rates = json.loads(cache.read_text())
    except (OSError, ValueError):
        rates = {}
    key = str(dimension)
    if key in rates:
        return float(rates[key])
    rate = _calibrate(dimension)
    rates[key] = rate
    try:
        CACHE.mkdir(parents=True, exist_ok=True)
        cache.write_text(json.dumps(rates))
    except OSError:
        pass  # an unwritable cache only costs a recalibration next time
    return rate


def record_rates(rates: dict[int, float]) -> None:
    """Store rates measured by ``sweep bench`` for later estimates."""
    cache = CACHE / "rates.json"
    try:
        known = json.loads(cache.read_text())
    except (OSError, ValueError):
        known = {}
    known.update({str(k): v for k, v in rates.items()})
    try:
        CACHE.mkdir(parents=True, exist_ok=True)
        cache.write_text(json.dumps(known))
    except OSError:
        pass


def _calibrate(dimension: int) -> float:
    from sweep.simulate import simulate_task

    axes = range(dimension)
    text = f"""
[sweep]
seed = 1
walkers = 2000
[motion]
dimension = {dimension}
diffusivity = 0.5
start = {[0.5 for _ in axes]}
[time]
dt = 1e-3
horizon = 2.0
[domain]
lower = {[0.0 for _ in axes]}
upper = {[1.0 for _ in axes]}
walls = {{ {", ".join(f'{a}_lower = "absorbing", {a}_upper = "absorbing"' for a in _axes(dimension))} }}
"""
    task: Task = make_plan(parse_spec(text, source="<calibration>")).tasks[0]
    simulate_task(task)  # compile
    start = time.perf_counter()
    _, steps = simulate_task(task)
    return steps / (time.perf_counter() - start)


def _axes(dimension: int) -> list[str]:
    return list(axis_names(dimension))


def size(plan: Plan) -> Sizing:
    """Everything ``sweep plan`` prints about ``plan``."""
    sweep = plan.sweep
    per_point = _expected_per_point(sweep)
    unknown = [i for i, e in enumerate(per_point) if e is None]
    note = "from closed forms of the mean first-passage time"
    if unknown:
        picks = sorted(
            {
                unknown[round(k)]
                for k in np.linspace(0, len(unknown) - 1, STEP_PILOT_POINTS)
            }
        )
        bounds = {i: pilot_steps(plan, i) for i in picks}
        capped = any(high > low for low, high in bounds.values())
        # Points not piloted: the piloted points' mean share of their horizons.
        share = float(
            np.mean(
                [
                    high / sweep.points[i].timing.n_steps
                    for i, (_, high) in bounds.items()
                ]
            )
        )
        for i in unknown:
            per_point[i] = (
                bounds[i][1] if i in bounds else share * sweep.points[i].timing.n_steps
            )
        note = (
            f"{len(unknown)} of {sweep.n_points} points have no closed form: estimated "
            f"from a pilot of {STEP_PILOT_WALKERS} walkers at {len(picks)} of them"
            + ("" if len(picks) == len(unknown) else " (the others scaled by horizon)")
            + (
                "; some pilot walkers were still free when it stopped, so this is "
                "an upper bound"
                if capped
                else ""
            )
        )
    expected = sum(float(e) for e in per_point if e is not None) * sweep.walkers
    warnings: list[str] = []
    for i, point in enumerate(sweep.points):
        warnings += point_warnings(i, point)
    rate = measured_rate(sweep.dimension)
    per_task = expected / max(plan.n_tasks, 1) / rate
    if per_task < MIN_TASK_SECONDS and plan.n_tasks > 1:
        warnings.append(
            f"tasks are short (about {per_task:.2g} s each): per-task scheduling overhead "
            f"will show; raise sweep.chunk (now {sweep.chunk})."
        )
    if per_task > MAX_TASK_SECONDS:
        warnings.append(
            f"tasks are long (about {per_task / 3600:.1f} h each): a killed node loses up "
            f"to that much work per task; lower sweep.chunk (now {sweep.chunk})."
        )
    return Sizing(
        n_points=sweep.n_points,
        n_tasks=plan.n_tasks,
        walker_steps_bound=float(plan.walker_steps_bound()),
        walker_steps_expected=expected,
        disk_bytes=disk_bytes(sweep),
        task_memory_bytes=task_memory(sweep),
        rate_per_core=rate,
        warnings=tuple(warnings),
        estimate_note=note,
    )
