"""Closed forms for reactive (partially absorbing) surfaces, reflecting obstacles and
periodic boxes, each citing its source (the analytic stage; used by ``sweep check``).

Conventions as in ``sweep/analytic.py``: each axis' variance grows as 2 D t; the
reactivity κ (length/time) enters through the Robin (radiation) condition
D ∂p/∂n = κ p on the surface (n pointing out of the domain, into the surface), so
κ = 0 reflects and κ → inf absorbs. A backward (mean-time) function T then obeys
D ∇²T = -1 in the domain, D ∂T/∂n = -κ T on a reactive surface, ∂T/∂n = 0 on a
reflecting one and T = 0 on an absorbing one.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special


def half_line_reactive_cdf(
    t: ArrayLike, x0: float, diffusivity: float, reactivity: float
) -> NDArray[np.float64]:
    """P(T <= t) of the reaction time on the half-line [0, inf) with a reactive wall at 0.

    With u = x0 / sqrt(4 D t):
    ``P(T <= t) = erfc(u) - exp(κ x0 / D + κ² t / D) erfc(u + κ sqrt(t / D))``
    (Carslaw & Jaeger 1959, §2.9, radiation condition [from memory]; analytic
    reference J1, checked there against a finite-volume solution). The product is
    evaluated as ``erfcx(z) exp(κ x0/D + κ² t/D - z²)``, z = u + κ sqrt(t/D), whose
    exponent is exactly -u² (expand z²), so it never overflows. κ = inf gives erfc(u) (absorbing wall), κ = 0 gives 0.

    Parameters
    ----------
    t : array of float, time units, >= 0
    x0 : float
        Start distance from the wall, length units, > 0.
    diffusivity : float
        D, length^2 / time.
    reactivity : float
        κ, length / time, >= 0 (inf allowed).

    Returns
    -------
    ndarray of float, the shape of ``t``

    Source
    ------
    Carslaw & Jaeger 1959, Conduction of Heat in Solids, §2.9, radiation condition
    [memory]; docs/analytic-reference.md J1.
    """
    t = np.asarray(t, dtype=np.float64)
    d, k = diffusivity, reactivity
    with np.errstate(divide="ignore", invalid="ignore"):
        u = x0 / np.sqrt(4.0 * d * t)
        absorbing = special.erfc(u)
        if math.isinf(k):
            return np.where(t > 0, absorbing, 0.0)
        if k == 0.0:
            return np.zeros_like(t)  # a reflecting wall: never (not 1e-16)
        z = u + k * np.sqrt(t / d)
        product = special.erfcx(z) * np.exp(-u * u)
        out = absorbing - product
    return np.where(t > 0, np.clip(out, 0.0, 1.0), 0.0)


def interval_reactive_mean(
    x0: float, length: float, diffusivity: float, reactivity: float
) -> float:
    """Mean reaction time on [0, L], reactive at 0, reflecting at L, start x0.

    ``T(x0) = (L x0 - x0² / 2) / D + L / κ``. Derivation: D T'' = -1 with
    T'(L) = 0 (reflecting) and D T'(0) = κ T(0) (Robin, the normal at 0 points to
    -x): T = (L x - x²/2)/D + c, T'(0) = L/D, so c = L/κ. κ → inf recovers the
    absorbing-reflecting interval (Redner 2001 ch. 2 [from memory]); analytic
    reference J2 (check value L = 1, D = 0.5, κ = 2, x0 = 0.5: 1.25).

    Source
    ------
    Redner 2001, A Guide to First-Passage Processes, ch. 2 [memory]; derivation in
    docs/analytic-reference.md J2 [derived].
    """
    extra = 0.0 if math.isinf(reactivity) else length / reactivity
    return (length * x0 - 0.5 * x0 * x0) / diffusivity + extra


def ball_reactive_mean(
    r0: float, radius: float, diffusivity: float, reactivity: float, dimension: int
) -> float:
    """Mean reaction time of a walker inside a ball whose whole wall is reactive.

    ``T(r0) = (R² - r0²) / (2 d D) + R / (d κ)``. Derivation: the radial solution of
    D ∇²T = -1 is (R² - r²)/(2 d D) + c; at r = R, D T'(R) = -R/d must equal -κ T(R) =
    -κ c, so c = R / (d κ). κ → inf recovers the absorbing ball (Øksendal,
    Example 7.4.2 [from memory]).

    Source
    ------
    Derived here (backward equation with the Robin condition; docs/analytic-
    reference.md, section J); the absorbing limit: Øksendal, Stochastic Differential
    Equations, Example 7.4.2 [memory].
    """
    extra = 0.0 if math.isinf(reactivity) else radius / (dimension * reactivity)
    return (radius * radius - r0 * r0) / (2.0 * dimension * diffusivity) + extra


def centre_target_reactive_mean(
    r0: float, target: float, radius: float, diffusivity: float, reactivity: float
) -> float:
    """Mean reaction time with a reactive target ball (radius a) at the centre of a
    reflecting 3-D ball (radius R), start at distance r0 (a < r0 < R).

    ``T(r0) = (a² - r0²)/(6 D) + R³ (1/a - 1/r0)/(3 D) + (R³ - a³)/(3 κ a²)``.
    Derivation (analytic reference J3): the radial solution of D ∇²T = -1 with
    T'(R) = 0 is T = -r²/(6D) - R³/(3 D r) + c; the Robin condition at the target,
    whose outward normal (out of the domain) points to -r, is D T'(a) = κ T(a), and
    D T'(a) = (R³ - a³)/(3 a²) fixes c. κ → inf recovers the absorbing target.

    Source
    ------
    Derived here (docs/analytic-reference.md J3) [derived]; the absorbing limit is the
    classical narrow-escape mean, Redner 2001, ch. 6 [memory].
    """
    a, big_r, d = target, radius, diffusivity
    absorbing = (a * a - r0 * r0) / (6.0 * d) + big_r**3 * (1.0 / a - 1.0 / r0) / (
        3.0 * d
    )
    if math.isinf(reactivity):
        return absorbing
    return absorbing + (big_r**3 - a**3) / (3.0 * reactivity * a * a)


def sphere_reactive_cdf(
    t: ArrayLike, r0: float, radius: float, diffusivity: float, reactivity: float
) -> NDArray[np.float64]:
    """P(T <= t) of capture by a reactive sphere of radius a in free 3-D space, start at
    distance r0 > a from its centre.

    ``P(T <= t) = (a / r0) · κa / (κa + D) · F1(t; x0 = r0 - a, κ1 = κ + D / a)``,
    F1 the half-line law of :func:`half_line_reactive_cdf`. Derivation: u = r p
    reduces the radial diffusion equation to the half-line in x = r - a, and the
    Robin condition D ∂p/∂r = κ p at r = a to D u' = (κ + D/a) u; the capture rate
    4π a² κ p(a, t) is then a κ / (r0 κ1) times the half-line's reaction rate
    κ1 u1(0, t) for unit initial mass. As t → inf this tends to the eventual capture
    probability (a / r0) κa / (κa + D) (Collins & Kimball 1949, J. Colloid Sci. 4
    [from memory]; analytic reference J4); κ → inf gives (a / r0) erfc((r0 - a) /
    sqrt(4 D t)) (Smoluchowski).

    Source
    ------
    Collins & Kimball 1949, J. Colloid Sci. 4 [memory]; docs/analytic-reference.md
    J4.
    """
    a, d, k = radius, diffusivity, reactivity
    if math.isinf(k):
        t = np.asarray(t, dtype=np.float64)
        with np.errstate(divide="ignore"):
            return np.where(
                t > 0,
                (a / r0) * special.erfc((r0 - a) / np.sqrt(4 * d * np.abs(t))),
                0.0,
            )
    weight = (a / r0) * k * a / (k * a + d)
    return weight * half_line_reactive_cdf(t, r0 - a, d, k + d / a)


def sphere_capture_probability(
    r0: float, radius: float, diffusivity: float, reactivity: float
) -> float:
    """Eventual capture probability ``(a/r0) κa/(κa + D)`` by a reactive sphere in free
    3-D space (Collins & Kimball 1949 [from memory]; analytic reference J4).

    Source
    ------
    Collins & Kimball 1949, J. Colloid Sci. 4 [memory]; docs/analytic-reference.md
    J4.
    """
    a = radius
    if math.isinf(reactivity):
        return a / r0
    return (a / r0) * reactivity * a / (reactivity * a + diffusivity)


def obstacle_ball_mean(
    r0: float, obstacle: float, radius: float, diffusivity: float, dimension: int
) -> float:
    """Mean exit time from an absorbing ball (radius R) around a reflecting obstacle
    ball (radius a) at its centre, start at distance r0 (a < r0 < R); d = 2 or 3.

    3-D: ``(R² - r0²)/(6D) + a³ (1/R - 1/r0)/(3D)``; 2-D: ``(R² - r0²)/(4D) +
    (a²/(2D)) ln(r0/R)`` (radial solution of D ∇²T = -1 with T(R) = 0, T'(a) = 0;
    analytic reference J5, derived).

    Source
    ------
    Radial solution of the backward equation [derived]; docs/analytic-reference.md J5.
    """
    a, big_r, d = obstacle, radius, diffusivity
    if dimension == 3:
        return (big_r**2 - r0**2) / (6 * d) + a**3 * (1 / big_r - 1 / r0) / (3 * d)
    if dimension == 2:
        return (big_r**2 - r0**2) / (4 * d) + (a * a / (2 * d)) * math.log(r0 / big_r)
    raise NotImplementedError("obstacle_ball_mean: d = 2 or 3 only")


def free_msd(
    t: float, diffusivity: float, dimension: int, drift: tuple[float, ...] = ()
) -> float:
    """Mean-square displacement ``2 d D t + |μ t|²`` of free motion, which walkers in a
    periodic box keep in unwrapped coordinates (analytic reference A2; Karlin &
    Taylor 1975 ch. 7 [from memory]).

    Source
    ------
    Karlin & Taylor 1975, A First Course in Stochastic Processes, ch. 7 [memory];
    docs/analytic-reference.md A2.
    """
    return 2.0 * dimension * diffusivity * t + sum((v * t) ** 2 for v in drift)


def free_msd_variance(
    t: float, diffusivity: float, dimension: int, drift: tuple[float, ...] = ()
) -> float:
    """Variance of one walker's squared displacement |X(t) - x0|² under free motion:
    per axis X - x0 = μ t + s Z with s² = 2 D t, so (μt + sZ)² has variance
    2 s⁴ + 4 μ² t² s² (Gaussian moments), summed over the independent axes.

    Source
    ------
    Gaussian moments (E Z² = 1, E Z⁴ = 3) [derived].
    """
    s2 = 2.0 * diffusivity * t
    mu = list(drift) or [0.0] * dimension
    return sum(2.0 * s2 * s2 + 4.0 * (v * t) ** 2 * s2 for v in mu)
