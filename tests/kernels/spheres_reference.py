"""Slow, plain-NumPy reference for ``kernels.spheres.simulate``.

All walkers move together, one move (a jump or a step) per loop iteration; each rule
appears once, written for clarity, not speed. Random numbers come from a numpy
``Generator`` in a different order from the kernel, so the two are compared in
distribution, never bit for bit.

Rules (see ``kernels/spheres.py``):

1. Protective radius: distance to every absorbing face, the ball wall, and every
   target and every mirror image of a target in the reflecting faces (all 3^d
   combinations of "itself, mirrored in the lower face, mirrored in the upper face"
   per axis, enumerated explicitly).
2. Radius above the handover: exit time ``r^2 / D * tau`` with ``tau`` from the centre-exit
   survival :func:`sweep.analytic.ball_survival` (d = 2, 3; ``interval_survival`` for
   d = 1) inverted by interpolation on a dense grid of 200 001 times; exit point uniform
   on the sphere (normalised normal vector), folded into the box by repeated mirroring.
   Past the horizon: censored.
3. Otherwise one step of ``min(dt, horizon - t)``: normal increment, mirrored at
   reflecting faces and at a reflecting ball wall; each absorbing surface is crossed if
   the step ends on or beyond it, else (bridge) with probability
   ``exp(-d1 d2 / (D h))``; the hitting fraction ``U / (h + U)``, ``U`` inverse Gaussian
   (``Generator.wald``); the earliest crossing wins; the exit point is the bridge
   point put on the surface.
4. Reactive surfaces and obstacles (issue 21; docs/surfaces.md, "The spheres scheme"):
   reactive faces, reactive targets, a reactive ball wall and obstacles (with their
   mirror images in the reflecting faces) limit the protective radius like absorbing
   ones. In a step, after the fold: reactive faces (axis by axis, lower first), then
   reactive targets, then a reactive ball wall, each as in
   ``tests/kernels/surfaces_reference.py`` (touched when the end is beyond, or with
   probability exp(-d1 d2 / (D h)) (U below it); pushed back along the normal (the
   radius for spheres) by minus the bridge minimum from that U; reacting with
   probability 1 - exp(-kappa push / D), at the time the bridge first reaches depth
   -ln(1 - V) D / kappa); then obstacles mirror the end radially (r -> 2 a - r);
   then the absorbing surfaces as in 3.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
from numpy.typing import NDArray

from sweep import analytic
from tests.kernels.reference import _hit_fraction


def _inverse_cdf(dimension: int) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(u, tau) pairs of the centre-exit law, for np.interp(u, ...)."""
    tau = np.linspace(1e-3, 15.0, 200_001)
    if dimension == 1:
        surv = analytic.interval_survival(tau, 1.0, 2.0, 1.0)
    else:
        surv = analytic.ball_survival(tau, 0.0, 1.0, 1.0, dimension)
    cdf = 1.0 - surv
    keep = np.concatenate([[True], np.diff(cdf) > 0])
    return cdf[keep], tau[keep]


def simulate_reference(  # noqa: C901 - one rule after another, on purpose
    rng: np.random.Generator,
    n_walkers: int,
    start: NDArray[np.float64],
    lower: NDArray[np.float64],
    upper: NDArray[np.float64],
    absorbing_low: NDArray[np.bool_],
    absorbing_high: NDArray[np.bool_],
    ball_center: NDArray[np.float64],
    ball_radius: float,
    ball_absorbing: bool,
    target_center: NDArray[np.float64],
    target_radius: NDArray[np.float64],
    diffusivity: float,
    dt: float,
    horizon: float,
    handover: float,
    reactivity_low: NDArray[np.float64] | None = None,
    reactivity_high: NDArray[np.float64] | None = None,
    ball_reactivity: float = math.nan,
    target_reactivity: NDArray[np.float64] | None = None,
    obstacle_center: NDArray[np.float64] | None = None,
    obstacle_radius: NDArray[np.float64] | None = None,
) -> tuple[NDArray[np.float64], NDArray[np.int64], NDArray[np.float64]]:
    """First-passage time (NaN: censored), wall index (-1) and exit position (NaN)."""
    d = start.shape[0]
    is_ball = math.isfinite(ball_radius)
    n_box = 0 if is_ball else 2 * d
    n_targets = target_radius.shape[0]
    u_grid, tau_grid = _inverse_cdf(d)
    nan_d = np.full(d, np.nan)
    k_lo = nan_d if reactivity_low is None or is_ball else np.asarray(reactivity_low)
    k_hi = nan_d if reactivity_high is None or is_ball else np.asarray(reactivity_high)
    k_tg = (
        np.full(n_targets, np.nan)
        if target_reactivity is None
        else np.asarray(target_reactivity)
    )
    o_c = np.zeros((0, d)) if obstacle_center is None else np.asarray(obstacle_center)
    o_r = np.zeros(0) if obstacle_radius is None else np.asarray(obstacle_radius)
    ball_reactive = is_ball and not math.isnan(ball_reactivity)
    x = np.tile(start, (n_walkers, 1)).astype(np.float64)
    t = np.zeros(n_walkers)
    wall = np.full(n_walkers, -1, dtype=np.int64)
    alive = np.ones(n_walkers, dtype=bool)
    refl_lo = [
        not is_ball
        and not absorbing_low[i]
        and math.isnan(k_lo[i])
        and np.isfinite(lower[i])
        for i in range(d)
    ]
    refl_hi = [
        not is_ball
        and not absorbing_high[i]
        and math.isnan(k_hi[i])
        and np.isfinite(upper[i])
        for i in range(d)
    ]

    # Images of the targets and obstacles: every combination of per-axis mirrors.
    balls = [(target_center[k], target_radius[k]) for k in range(n_targets)]
    balls += [(o_c[k], o_r[k]) for k in range(o_r.shape[0])]
    images: list[tuple[float, NDArray[np.float64]]] = []
    for centre_k, radius_k in balls:
        choices = []
        for i in range(d):
            c = centre_k[i]
            axis = [c]
            if refl_lo[i]:
                axis.append(2 * lower[i] - c)
            if refl_hi[i]:
                axis.append(2 * upper[i] - c)
            choices.append(axis)
        for combo in itertools.product(*choices):
            images.append((radius_k, np.array(combo)))

    def fold(y: NDArray[np.float64]) -> NDArray[np.float64]:
        y = y.copy()
        for i in range(d):
            for _ in range(1000):
                lo_out = refl_lo[i] & (y[:, i] < lower[i])
                hi_out = refl_hi[i] & (y[:, i] > upper[i])
                if not (lo_out.any() or hi_out.any()):
                    break
                y[lo_out, i] = 2 * lower[i] - y[lo_out, i]
                y[hi_out, i] = 2 * upper[i] - y[hi_out, i]
        return y

    while alive.any():
        idx = np.nonzero(alive)[0]
        xa = x[idx]
        # 1. Protective radius.
        r = np.full(idx.size, np.inf)
        if is_ball:
            r = ball_radius - np.linalg.norm(xa - ball_center, axis=1)
        else:
            for i in range(d):
                if absorbing_low[i] or not math.isnan(k_lo[i]):
                    r = np.minimum(r, xa[:, i] - lower[i])
                if absorbing_high[i] or not math.isnan(k_hi[i]):
                    r = np.minimum(r, upper[i] - xa[:, i])
        for radius_k, centre in images:
            r = np.minimum(r, np.linalg.norm(xa - centre, axis=1) - radius_k)
        # 2. Jumps.
        jump = r > handover
        j = idx[jump]
        if j.size:
            rj = r[jump]
            tau = np.interp(rng.random(j.size), u_grid, tau_grid)
            with np.errstate(invalid="ignore"):
                t[j] += tau * rj**2 / diffusivity
            over = t[j] >= horizon
            alive[j[over]] = False
            go = j[~over]
            z = rng.standard_normal((go.size, d))
            z /= np.linalg.norm(z, axis=1, keepdims=True)
            x[go] = fold(x[go] + rj[~over, None] * z)
        # 3. Steps.
        layer = idx[~jump]
        at_end = t[layer] >= horizon * (1 - 1e-15)
        alive[layer[at_end]] = False
        s = layer[~at_end]
        if not s.size:
            continue
        h = np.minimum(dt, horizon - t[s])
        sigma = np.sqrt(2 * diffusivity * h)
        xo = x[s]
        y = fold(xo + sigma[:, None] * rng.standard_normal((s.size, d)))
        frac = np.full(s.size, 2.0)
        hit = np.full(s.size, -1)
        # 4. Reactive surfaces: (wall index, unit normal into the domain per walker as
        #    a function of the end, distance function), resolved in the kernel's order.
        reactive = []  # (wall index, kappa, signed distance, push the end by L)
        for i in range(d):
            for side, kappa in ((0, k_lo[i]), (1, k_hi[i])):
                if math.isnan(kappa):
                    continue
                sign = 1.0 if side == 0 else -1.0
                face = lower[i] if side == 0 else upper[i]

                def dist(p, i=i, sign=sign, face=face):  # type: ignore[no-untyped-def]
                    return sign * (p[:, i] - face)

                def move(p, push, i=i, sign=sign):  # type: ignore[no-untyped-def]
                    p[:, i] += sign * push

                reactive.append((2 * i + side, kappa, dist, move))
        for k in range(n_targets):
            if math.isnan(k_tg[k]):
                continue
            c_k, a_k = target_center[k], target_radius[k]

            def dist(p, c_k=c_k, a_k=a_k):  # type: ignore[no-untyped-def]
                return np.linalg.norm(p - c_k, axis=1) - a_k

            def move(p, push, c_k=c_k):  # type: ignore[no-untyped-def]
                rr = np.linalg.norm(p - c_k, axis=1)
                p[:] = c_k + (p - c_k) * ((rr + push) / rr)[:, None]

            reactive.append((n_box + k, k_tg[k], dist, move))
        if ball_reactive:

            def dist(p):  # type: ignore[no-untyped-def]
                return ball_radius - np.linalg.norm(p - ball_center, axis=1)

            def move(p, push):  # type: ignore[no-untyped-def]
                rr = np.linalg.norm(p - ball_center, axis=1)
                new = np.maximum(rr - push, 0.0)
                p[:] = ball_center + (p - ball_center) * (new / rr)[:, None]

            reactive.append((n_targets, ball_reactivity, dist, move))
        for index, kappa, dist, move in reactive:
            d1 = dist(xo)
            d2 = dist(y)
            u = rng.random(s.size)
            with np.errstate(over="ignore"):
                touched = (d2 <= 0.0) | (u < np.exp(-d1 * d2 / (diffusivity * h)))
            m = 0.5 * (
                d1
                + d2
                - np.sqrt(
                    (d2 - d1) ** 2
                    - 4.0 * diffusivity * h * np.log(np.maximum(u, 2.0**-60))
                )
            )
            push = np.where(touched, np.maximum(-m, 0.0), 0.0)
            pushed = push > 0.0
            if pushed.any():
                sub = y[pushed]
                move(sub, push[pushed])
                y[pushed] = sub
            v = rng.random(s.size)
            with np.errstate(invalid="ignore"):
                react = pushed & (v < -np.expm1(-kappa / diffusivity * push))
            for m_ in np.nonzero(react)[0]:
                level = -math.log1p(-v[m_]) * diffusivity / kappa
                f = _hit_fraction(
                    rng,
                    np.array([d1[m_] + level]),
                    np.array([abs(d2[m_] + level)]),
                    diffusivity,
                    h[m_],
                )[0]
                if f < frac[m_]:
                    frac[m_] = f
                    hit[m_] = index
        #    Obstacles: radial mirror image out of each.
        for k in range(o_r.shape[0]):
            rr = np.linalg.norm(y - o_c[k], axis=1)
            inside = rr < o_r[k]
            y[inside] = (
                o_c[k]
                + (y[inside] - o_c[k])
                * ((2 * o_r[k] - rr[inside]) / rr[inside])[:, None]
            )
        if is_ball and not ball_absorbing and not ball_reactive:
            for _ in range(1000):
                rr = np.linalg.norm(y - ball_center, axis=1)
                out = rr > ball_radius
                if not out.any():
                    break
                y[out] = (
                    ball_center
                    + (y[out] - ball_center)
                    * ((2 * ball_radius - rr[out]) / rr[out])[:, None]
                )
        surfaces = []  # (wall index, d1, d2)
        if not is_ball:
            for i in range(d):
                if absorbing_low[i]:
                    surfaces.append((2 * i, xo[:, i] - lower[i], y[:, i] - lower[i]))
                if absorbing_high[i]:
                    surfaces.append(
                        (2 * i + 1, upper[i] - xo[:, i], upper[i] - y[:, i])
                    )
        elif ball_absorbing:
            surfaces.append(
                (
                    n_targets,
                    ball_radius - np.linalg.norm(xo - ball_center, axis=1),
                    ball_radius - np.linalg.norm(y - ball_center, axis=1),
                )
            )
        for k in range(n_targets):
            if not math.isnan(k_tg[k]):
                continue
            surfaces.append(
                (
                    n_box + k,
                    np.linalg.norm(xo - target_center[k], axis=1) - target_radius[k],
                    np.linalg.norm(y - target_center[k], axis=1) - target_radius[k],
                )
            )
        for index, d1, d2 in surfaces:
            p = np.where(
                d2 <= 0, 1.0, np.exp(-np.maximum(d1, 0) * d2 / (diffusivity * h))
            )
            crossed = rng.random(s.size) < p
            f = np.ones(s.size)
            for m in np.nonzero(crossed)[0]:
                a1, g = d1[m], abs(d2[m])
                if a1 <= 1e-9 * math.sqrt(diffusivity * h[m]):
                    f[m] = 0.0
                    continue
                shape = a1 * a1 / (2 * diffusivity)
                if g > 0:
                    u = rng.wald(h[m] * a1 / g, shape)
                else:
                    u = shape / rng.standard_normal() ** 2
                f[m] = u / (h[m] + u)
            better = crossed & (f < frac)
            frac[better] = f[better]
            hit[better] = index
        done = hit >= 0
        x[s[~done]] = y[~done]
        t[s[~done]] += h[~done]
        for m in np.nonzero(done)[0]:
            fm = frac[m]
            spread = sigma[m] * math.sqrt(max(fm * (1 - fm), 0.0))
            p = xo[m] + (y[m] - xo[m]) * fm + spread * rng.standard_normal(d)
            w = hit[m]
            if w < n_box:
                p = np.clip(p, lower, upper)
                p[w // 2] = lower[w // 2] if w % 2 == 0 else upper[w // 2]
            else:
                centre, radius = (
                    (target_center[w - n_box], target_radius[w - n_box])
                    if w - n_box < n_targets
                    else (ball_center, ball_radius)
                )
                p = centre + (p - centre) * radius / np.linalg.norm(p - centre)
                if not is_ball:
                    p = np.clip(p, lower, upper)
            x[s[m]] = p
            t[s[m]] += fm * h[m]
            wall[s[m]] = w
            alive[s[m]] = False
    absorbed = wall >= 0
    time = np.where(absorbed, t, np.nan)
    position = np.where(absorbed[:, None], x, np.nan)
    return time, wall, position
