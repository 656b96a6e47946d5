"""What the kernel's rates are measured against: the in-register limit, numpy's
bulk sampler, and (for one release) the former ceiling and a vectorised numpy walk."""

from __future__ import annotations

import math

import numpy as np

from kernels.ceiling import draw_normals, limit_normals
from kernels.rng import initial_state
from sweep.bench.cases import _cpu, _per_second
from sweep.plan import BIT_GENERATOR, KernelArgs, Task
from sweep.simulate import simulate_task


def _kernel_rate(task: Task) -> tuple[float, int]:
    start = _cpu()
    _, steps = simulate_task(task)
    return _per_second(steps, start), steps


def _ceiling_rate(steps: int, dimension: int, seed: int) -> float:
    rng = np.random.Generator(BIT_GENERATOR(seed))
    start = _cpu()
    draw_normals(rng, steps, dimension)
    return _per_second(steps, start)


def _limit_rate(steps: int, dimension: int, seed: int) -> float:
    """Normals/s of the limit drawing ``steps`` walker-steps' worth."""
    state = initial_state(np.random.SeedSequence(seed))
    start = _cpu()
    limit_normals(state, steps, dimension)
    return _per_second(steps * dimension, start)


#: Normals per call of numpy's bulk sampler: 512 KiB, within the core's own cache
#: (numpy's rate here was flat from 10^3 to 10^6 per call, within noise).
BULK_SIZE = 65_536


def _bulk_rate(normals: int, seed: int) -> float:
    """Normals/s of ``Generator(SFC64).standard_normal(out=...)``, refilling one
    preallocated array until about ``normals`` are drawn."""
    rng = np.random.Generator(np.random.SFC64(seed))
    out = np.empty(BULK_SIZE)
    calls = max(1, normals // BULK_SIZE)
    start = _cpu()
    for _ in range(calls):
        rng.standard_normal(out=out)
    return _per_second(calls * BULK_SIZE, start)


def numpy_walk(
    args: KernelArgs,
    n_walkers: int,
    rng: np.random.Generator,
    budget: float = math.inf,
) -> int:
    """Plain vectorised numpy version of the kernel's step loop; returns walker-steps.

    Stops at the horizon or once ``budget`` walker-steps are done: the early steps,
    with every walker still free, are numpy's most efficient, so a budget can only
    flatter numpy.

    Same physics as the kernel (mirror reflection, bridge test near absorbing walls,
    targets, ball surface, occupancy snapshots) without its bookkeeping of exit points
    and hitting times, which would only slow numpy further.
    """
    g, m, r = args.geometry, args.motion, args.recording
    x = np.tile(m.start, (n_walkers, 1))
    sigma = math.sqrt(2 * m.diffusivity * m.dt)
    cutoff = 20.0 * m.diffusivity * m.dt
    drift = m.drift * m.dt
    lo, hi = g.lower, g.upper
    refl_lo = np.where(g.absorbing_lower, -np.inf, lo)
    refl_hi = np.where(g.absorbing_upper, np.inf, hi)
    abs_lo = np.where(g.absorbing_lower, lo, -np.inf)
    abs_hi = np.where(g.absorbing_upper, hi, np.inf)
    ball = math.isfinite(g.ball_radius)
    snapshots = set(r.occupancy_steps.tolist())
    steps = 0
    for step in range(1, m.n_steps + 1):
        if x.shape[0] == 0 or steps >= budget:
            break
        steps += x.shape[0]
        y = x + drift + sigma * rng.standard_normal(x.shape)
        while True:  # mirror until inside (narrow boxes)
            below, above = y < refl_lo, y > refl_hi
            if not (below.any() or above.any()):
                break
            y = np.where(below, 2 * refl_lo - y, y)
            y = np.where(above, 2 * refl_hi - y, y)
        dead = ((y <= abs_lo) | (y >= abs_hi)).any(axis=1)
        if m.bridge:
            for a, sign in ((abs_lo, 1.0), (abs_hi, -1.0)):
                d1, d2 = sign * (x - a), sign * (y - a)
                prod = np.where(d2 > 0, d1 * d2, np.inf)
                near = prod < cutoff
                if near.any():
                    p = np.exp(-np.where(near, prod, 0) / (m.diffusivity * m.dt))
                    dead |= (near & (rng.random(x.shape) < p)).any(axis=1)
        if ball:
            r1 = np.linalg.norm(x - g.ball_center, axis=1)
            r2 = np.linalg.norm(y - g.ball_center, axis=1)
            if g.ball_absorbing:
                dead |= r2 >= g.ball_radius
                if m.bridge:
                    prod = (g.ball_radius - r1) * (g.ball_radius - r2)
                    near = (prod > 0) & (prod < cutoff)
                    dead |= near & (
                        rng.random(len(x)) < np.exp(-prod / (m.diffusivity * m.dt))
                    )
            else:
                out = r2 > g.ball_radius
                y[out] = (
                    g.ball_center
                    + (y[out] - g.ball_center)
                    * ((2 * g.ball_radius - r2[out]) / r2[out])[:, None]
                )
        for center, radius in zip(g.target_center, g.target_radius):
            r1 = np.linalg.norm(x - center, axis=1) - radius
            r2 = np.linalg.norm(y - center, axis=1) - radius
            dead |= r2 <= 0
            if m.bridge:
                prod = r1 * r2
                near = (prod > 0) & (prod < cutoff)
                dead |= near & (
                    rng.random(len(x)) < np.exp(-prod / (m.diffusivity * m.dt))
                )
        x = y[~dead]
        if step in snapshots:
            edges = [
                np.linspace(a, b, r.occupancy_bins + 1)
                for a, b in zip(r.occupancy_lower, r.occupancy_upper)
            ]
            np.histogramdd(x, bins=edges)
    return steps


#: Walker-steps per numpy measurement (see numpy_walk).
NUMPY_BUDGET = 1e7


def _numpy_rate(task: Task, walkers: int, seed: int) -> float:
    rng = np.random.Generator(BIT_GENERATOR(seed))
    start = _cpu()
    steps = numpy_walk(task.args, walkers, rng, NUMPY_BUDGET)
    return _per_second(steps, start)
