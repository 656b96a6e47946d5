"""Slow, plain-NumPy reference for ``kernels.walkers.simulate`` on box domains.

Box domains only: a fixed start point, no ball, no targets, no occupancy. All walkers
move together, one time step per loop iteration, so each rule of the kernel appears
once, in the order the kernel applies it. The reference draws its random numbers in a
different order from the kernel, so the two are compared in distribution, never bit for
bit.

Rules (see the step template ``kernels/step.py`` and the analytic sheet, sections F4, F6 and G1):

1. Free step: ``y = x + drift dt + sqrt(2 D dt) xi`` per axis.
2. Reflecting faces: mirror ``y`` in the face, repeated while it is outside.
3. Absorbing faces: a walker whose step ends on or beyond the face is absorbed. With
   ``bridge``, a walker whose step ends inside is absorbed with the Brownian-bridge
   probability ``exp(-(a - x1)(a - x2) / (D dt))``, and the absorption time inside the
   step is ``tau = h U / (h + U)``, ``U ~ IG(h alpha / gamma, alpha^2 / (2 D))`` (Levy
   with scale ``alpha^2 / (2 D)`` when ``gamma = 0``); without ``bridge`` it is the step
   end. The earliest crossing wins; a tie goes to the face listed first.
4. Exit position: on the wall; the other axes follow the Brownian bridge from ``x1`` to
   ``x2`` at the hitting fraction, clipped to the box.

With a force (``slope`` or ``harmonic``), rule 1 becomes (``sweep.potentials``,
analytic sheet J9):

1'. Euler–Maruyama: ``y = x + drift dt - D dt dU/dx(x) + sqrt(2 D dt) xi``, with
    ``slope(x)`` giving dU/dx per axis; or, for a harmonic well (stiffness k_i,
    centre c_i), the exact Ornstein–Uhlenbeck update per axis with the drift folded
    into the centre, ``c' = c + drift / (D k)``:
    ``y = c' + (x - c') e^{-D k dt} + sqrt((1 - e^{-2 D k dt}) / k) xi`` (k = 0: free).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike, NDArray


def simulate_reference(
    rng: np.random.Generator,
    n_walkers: int,
    start: ArrayLike,
    lower: ArrayLike,
    upper: ArrayLike,
    absorbing_low: ArrayLike,
    absorbing_high: ArrayLike,
    diffusivity: float,
    drift: ArrayLike,
    dt: float,
    n_steps: int,
    bridge: bool,
    survival_times: ArrayLike,
    slope: Callable[[NDArray[np.float64]], NDArray[np.float64]] | None = None,
    harmonic: tuple[ArrayLike, ArrayLike] | None = None,
) -> tuple[
    NDArray[np.float64],
    NDArray[np.int16],
    NDArray[np.float64],
    NDArray[np.int64],
    NDArray[np.float64],
]:
    """Simulate ``n_walkers`` walkers in a box to absorption or the horizon.

    Arguments mean what they mean for ``kernels.walkers.simulate``.

    Returns
    -------
    time : float64 (n_walkers,)
        First-passage time; NaN when censored.
    wall : int16 (n_walkers,)
        Absorbing face (x_lower, x_upper, y_lower, ...); -1 when censored.
    position : float64 (n_walkers, d)
        Position at absorption; NaN when censored.
    survival_count : int64 (m,)
        Number of walkers whose first-passage time exceeds each survival time.
    final_position : float64 (n_walkers, d)
        Position at the horizon of walkers still free then; NaN for absorbed ones.
    """
    start = np.asarray(start, dtype=np.float64)
    lower = np.asarray(lower, dtype=np.float64)
    upper = np.asarray(upper, dtype=np.float64)
    absorbing_low = np.asarray(absorbing_low, dtype=np.bool_)
    absorbing_high = np.asarray(absorbing_high, dtype=np.bool_)
    drift = np.asarray(drift, dtype=np.float64)
    survival_times = np.asarray(survival_times, dtype=np.float64)
    d = start.shape[0]
    sigma = math.sqrt(2.0 * diffusivity * dt)

    # Absorbing faces in the kernel's wall order: (wall index, axis, level, inward
    # sign). The inward sign makes the signed distance (x - level) * sign positive
    # inside.
    faces = []
    for axis in range(d):
        if absorbing_low[axis] and np.isfinite(lower[axis]):
            faces.append((2 * axis, axis, lower[axis], 1.0))
        if absorbing_high[axis] and np.isfinite(upper[axis]):
            faces.append((2 * axis + 1, axis, upper[axis], -1.0))

    x = np.tile(start, (n_walkers, 1))
    time = np.full(n_walkers, np.nan)
    wall = np.full(n_walkers, -1, dtype=np.int16)
    position = np.full((n_walkers, d), np.nan)
    free = np.ones(n_walkers, dtype=np.bool_)

    for step in range(1, n_steps + 1):
        walkers = np.flatnonzero(free)
        if walkers.size == 0:
            break
        x1 = x[walkers]
        # 1. Free step (1'. in a force field).
        xi = rng.standard_normal(x1.shape)
        if harmonic is not None:
            x2 = _ou_step(x1, xi, harmonic, drift, diffusivity, dt)
        else:
            x2 = x1 + drift * dt + sigma * xi
            if slope is not None:
                x2 = x2 - diffusivity * dt * slope(x1)
        # 2. Mirror images at reflecting faces.
        x2 = _reflect(x2, lower, upper, ~absorbing_low, ~absorbing_high)

        # 3. Absorbing faces: the earliest crossing wins.
        frac = np.full(walkers.size, np.inf)
        hit = np.full(walkers.size, -1)
        for index, axis, level, inward in faces:
            d1 = (x1[:, axis] - level) * inward
            d2 = (x2[:, axis] - level) * inward
            crossed = d2 <= 0.0
            if bridge:
                inside = ~crossed
                kill = np.exp(-d1[inside] * d2[inside] / (diffusivity * dt))
                crossed[inside] = rng.random(kill.size) < kill
            f = np.ones(walkers.size)
            if bridge:
                f[crossed] = _hit_fraction(
                    rng, d1[crossed], np.abs(d2[crossed]), diffusivity, dt
                )
            earlier = crossed & (f < frac)
            frac[earlier] = f[earlier]
            hit[earlier] = index

        # 4. Record the absorbed walkers; move the others.
        absorbed = hit >= 0
        gone = walkers[absorbed]
        time[gone] = (step - 1 + frac[absorbed]) * dt
        wall[gone] = hit[absorbed]
        position[gone] = _exit_points(
            rng,
            x1[absorbed],
            x2[absorbed],
            frac[absorbed],
            sigma,
            hit[absorbed],
            lower,
            upper,
        )
        free[gone] = False
        x[walkers[~absorbed]] = x2[~absorbed]

    final_position = np.where(free[:, None], x, np.nan)
    first_passage = np.where(wall >= 0, time, np.inf)
    survival_count = np.array(
        [np.count_nonzero(first_passage > t) for t in survival_times], dtype=np.int64
    )
    return time, wall, position, survival_count, final_position


def _ou_step(
    x: NDArray[np.float64],
    xi: NDArray[np.float64],
    harmonic: tuple[ArrayLike, ArrayLike],
    drift: NDArray[np.float64],
    diffusivity: float,
    dt: float,
) -> NDArray[np.float64]:
    """Rule 1': the exact Ornstein-Uhlenbeck update, axis by axis."""
    k = np.asarray(harmonic[0], dtype=np.float64)
    c = np.asarray(harmonic[1], dtype=np.float64)
    y = np.empty_like(x)
    for axis in range(x.shape[1]):
        if k[axis] == 0.0:
            y[:, axis] = (
                x[:, axis]
                + drift[axis] * dt
                + math.sqrt(2 * diffusivity * dt) * xi[:, axis]
            )
            continue
        rate = diffusivity * k[axis]
        centre = c[axis] + drift[axis] / rate
        decay = math.exp(-rate * dt)
        spread = math.sqrt((1.0 - decay**2) / k[axis])
        y[:, axis] = centre + (x[:, axis] - centre) * decay + spread * xi[:, axis]
    return y


def _reflect(
    y: NDArray[np.float64],
    lower: NDArray[np.float64],
    upper: NDArray[np.float64],
    reflect_low: NDArray[np.bool_],
    reflect_high: NDArray[np.bool_],
) -> NDArray[np.float64]:
    """Mirror every coordinate in its reflecting faces until none is outside them."""
    y = y.copy()
    while True:
        below = (y < lower) & reflect_low
        above = (y > upper) & reflect_high
        if not (below.any() or above.any()):
            return y
        y = np.where(below, 2.0 * lower - y, y)
        y = np.where(above, 2.0 * upper - y, y)


def _hit_fraction(
    rng: np.random.Generator,
    alpha: NDArray[np.float64],
    gamma: NDArray[np.float64],
    diffusivity: float,
    dt: float,
) -> NDArray[np.float64]:
    """Fraction tau / dt of the step at which the bridge first touched the wall (F6).

    ``alpha`` is the start's distance to the wall, ``gamma`` the end's (either side).
    """
    shape = alpha**2 / (2.0 * diffusivity)
    u = np.zeros(alpha.shape)  # alpha = 0 (start on the wall): touched at once
    wald = (alpha > 0.0) & (gamma > 0.0)
    levy = (alpha > 0.0) & (gamma == 0.0)
    u[wald] = rng.wald(dt * alpha[wald] / gamma[wald], shape[wald])
    u[levy] = shape[levy] / rng.standard_normal(np.count_nonzero(levy)) ** 2
    return u / (dt + u)


def _exit_points(
    rng: np.random.Generator,
    x1: NDArray[np.float64],
    x2: NDArray[np.float64],
    frac: NDArray[np.float64],
    sigma: float,
    wall: NDArray[np.int_],
    lower: NDArray[np.float64],
    upper: NDArray[np.float64],
) -> NDArray[np.float64]:
    """Points on ``wall`` where walkers were absorbed, ``frac`` of the way into a step.

    Off the wall's axis the path is a Brownian bridge from ``x1`` to ``x2``: normal with
    mean ``x1 + (x2 - x1) frac`` and variance ``sigma^2 frac (1 - frac)``.
    """
    mean = x1 + (x2 - x1) * frac[:, None]
    spread = sigma * np.sqrt(frac * (1.0 - frac))[:, None]
    points = np.clip(mean + spread * rng.standard_normal(x1.shape), lower, upper)
    axis, side = np.divmod(wall, 2)
    rows = np.arange(points.shape[0])
    points[rows, axis] = np.where(side == 1, upper[axis], lower[axis])
    return points
