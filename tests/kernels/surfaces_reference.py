"""Slow, plain-NumPy reference for the surfaces of issue 21 in a box: reactive faces,
periodic axes and reflecting obstacles (no targets, a fixed start, no occupancy).

All walkers move together, one step per loop iteration; each rule appears once, in the
kernel's order (``kernels/step.py``: free step, reflecting faces, reactive faces,
obstacles, then the periodic wrap of walkers that did not react). Random numbers are
drawn in a different order from the kernel, so the two are compared in distribution.

Rules (analytic reference F4, F6, G2; ``kernels.walkers._react``):

1. Free step ``y = x + drift dt + sqrt(2 D dt) xi``; reflecting faces mirror ``y``.
2. Reactive face at distance d1 (start) and d2 (free end; negative beyond): the path
   touched it when d2 <= 0, or with probability exp(-d1 d2 / (D dt)) (U below it).
   Then its minimum distance is m = (d1 + d2 - sqrt((d2 - d1)^2 - 4 D dt ln U)) / 2
   with that same U, the end is pushed back by -m along the normal (Skorokhod), and
   with probability 1 - exp(-kappa (-m) / D) the walker reacts, at the time the
   bridge first reaches depth l = -ln(1 - V) D / kappa (V uniform), drawn from F6.
3. Obstacles: an end inside is mirrored radially (r -> 2 a - r).
4. Periodic axes: positions wrapped into [lower, upper), the widths crossed counted
   for the unwrapped displacement.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from tests.kernels.reference import _hit_fraction, _reflect


def simulate_surfaces_reference(
    rng: np.random.Generator,
    n_walkers: int,
    start: tuple[float, ...],
    lower: tuple[float, ...],
    upper: tuple[float, ...],
    kinds: tuple[tuple[str | float, str | float], ...],
    diffusivity: float,
    dt: float,
    n_steps: int,
    drift: tuple[float, ...] | None = None,
    obstacles: tuple[tuple[tuple[float, ...], float], ...] = (),
) -> tuple[NDArray[np.float64], NDArray[np.int16], NDArray[np.float64]]:
    """Walkers in a box whose faces are given per axis as (lower kind, upper kind):
    "reflecting", "periodic", "open" (infinite side) or a reactivity kappa (float).

    Returns
    -------
    time : float64 (n,), NaN when censored
    wall : int16 (n,), 2 i (+1 for upper) of the face reacted with, -1 when censored
    displacement : float64 (n, d), unwrapped end minus start of censored walkers
        (NaN for those that reacted)
    """
    d = len(start)
    lo = np.array(lower, float)
    hi = np.array(upper, float)
    mu = np.zeros(d) if drift is None else np.array(drift, float)
    sigma = math.sqrt(2.0 * diffusivity * dt)
    refl_lo = np.array([k[0] == "reflecting" for k in kinds])
    refl_hi = np.array([k[1] == "reflecting" for k in kinds])
    periodic = np.array([k[0] == "periodic" for k in kinds])
    width = np.where(periodic, hi - lo, 0.0)
    x = np.tile(np.array(start, float), (n_walkers, 1))
    wraps = np.zeros((n_walkers, d))
    alive = np.ones(n_walkers, bool)
    time = np.full(n_walkers, np.nan)
    wall = np.full(n_walkers, -1, np.int16)
    for step in range(1, n_steps + 1):
        idx = np.flatnonzero(alive)
        if idx.size == 0:
            break
        x1 = x[idx]
        y = x1 + mu * dt + sigma * rng.standard_normal(x1.shape)
        y = _reflect(y, lo, hi, refl_lo, refl_hi)
        frac = np.full(idx.size, 2.0)
        hit = np.full(idx.size, -1, np.int16)
        for i in range(d):
            for side in (0, 1):
                kappa = kinds[i][side]
                if isinstance(kappa, str):
                    continue
                sign = 1.0 if side == 0 else -1.0
                face = lo[i] if side == 0 else hi[i]
                d1 = sign * (x1[:, i] - face)
                d2 = sign * (y[:, i] - face)
                u = rng.random(idx.size)
                with np.errstate(over="ignore"):
                    touched = (d2 <= 0.0) | (u < np.exp(-d1 * d2 / (diffusivity * dt)))
                m = 0.5 * (
                    d1
                    + d2
                    - np.sqrt(
                        (d2 - d1) ** 2
                        - 4.0 * diffusivity * dt * np.log(np.maximum(u, 2.0**-60))
                    )
                )
                push = np.where(touched, np.maximum(-m, 0.0), 0.0)
                y[:, i] += sign * push
                v = rng.random(idx.size)
                react = touched & (v < -np.expm1(-kappa / diffusivity * push))
                if react.any():
                    level = -np.log1p(-v[react]) * diffusivity / kappa
                    f = _hit_fraction(
                        rng,
                        d1[react] + level,
                        np.abs(d2[react] + level),
                        diffusivity,
                        dt,
                    )
                    rows = np.flatnonzero(react)
                    earlier = f < frac[rows]
                    frac[rows[earlier]] = f[earlier]
                    hit[rows[earlier]] = 2 * i + side
        for center, radius in obstacles:
            c = np.array(center, float)
            r = np.linalg.norm(y - c, axis=1)
            inside = r < radius
            scale = (2.0 * radius - r[inside]) / r[inside]
            y[inside] = c + (y[inside] - c) * scale[:, None]
        reacted = hit >= 0
        time[idx[reacted]] = (step - 1 + frac[reacted]) * dt
        wall[idx[reacted]] = hit[reacted]
        alive[idx[reacted]] = False
        keep = idx[~reacted]
        y = y[~reacted]
        n_wrap = np.where(
            periodic, np.floor((y - lo) / np.where(periodic, width, 1.0)), 0.0
        )
        x[keep] = y - n_wrap * width
        wraps[keep] += n_wrap
    displacement = x + wraps * width - np.array(start, float)
    displacement[~alive] = np.nan
    return time, wall, displacement
