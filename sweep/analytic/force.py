"""Exact references for walkers in a potential (``[force]``), each citing its source.

Conventions as in ``sweep.analytic`` (each axis' variance grows as 2 D t); U in units
of kT, so the drift is ``mu - D dU/dx``. A constant drift ``mu`` along the axis is
folded into the effective potential ``U(x) - mu x / D``.

* :func:`mean_exit_time` and :func:`splitting`: one-dimensional first passage from an
  interval by the double-integral formulas (C. W. Gardiner, *Handbook of Stochastic
  Methods*, §5.2.7 [memory]; the same formulas in S. Redner, *A Guide to
  First-Passage Processes*, Ch. 1 [memory]). With ``psi = exp(U)`` and
  ``Phi(y) = int_a^y exp(-U)``:
  reflecting at a, absorbing at b: ``T(x0) = (1/D) int_x0^b psi(y) Phi(y) dy``;
  absorbing at both ends:
  ``T(x0) = (1/D) [A1 B2 - A2 B1] / (A1 + A2)`` with ``A1 = int_a^x0 psi``,
  ``A2 = int_x0^b psi``, ``B1 = int_a^x0 psi Phi``, ``B2 = int_x0^b psi Phi``;
  splitting ``P(exit at b) = A1 / (A1 + A2)``. Evaluated by cumulative Simpson
  quadrature on two grids (h and h/2); the difference is returned as the error
  estimate, and the grids are refined until it is below the requested tolerance.
* :func:`kramers_escape_time`: the high-barrier asymptote (H. A. Kramers, Physica 7,
  284 (1940); P. Hänggi, P. Talkner & M. Borkovec, Rev. Mod. Phys. 62, 251 (1990),
  overdamped limit [memory]): ``rate = (D / 2 pi) sqrt(U''(min) |U''(max)|) exp(-dU)``.
  An asymptote, shown beside the exact quadrature, never a pass/fail check.
* :func:`ou_mean`, :func:`ou_variance`: the Ornstein–Uhlenbeck transient and
  stationary moments (G. E. Uhlenbeck & L. S. Ornstein, Phys. Rev. 36, 823 (1930);
  Gardiner §3.8.4 [memory]); stationary variance 1/k (kT / k in physical units).
* :func:`periodic_drift_velocity`: the mean velocity in a tilted periodic potential
  ``V0(x) - F x`` (R. L. Stratonovich (1958); P. Reimann, Phys. Rep. 361, 57 (2002),
  Eq. (2.39)-(2.41) [memory for the equation numbers]):
  ``v = D L (1 - exp(-F L)) / int_0^L dx int_0^L dy exp(V0(x) - V0(x - y) - F y)``.

numpy and scipy only.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.integrate import cumulative_simpson

from sweep.potentials import CONFINED_KT, Force, along

Profile = Callable[[NDArray[np.float64]], NDArray[np.float64]]

#: Default relative tolerance of the quadratures (the two-grid difference).
QUADRATURE_RTOL = 1e-9
#: First grid: points per unit of the largest U range, at least this many in all.
MIN_POINTS = 2001
MAX_POINTS = 2_000_001


@dataclass(frozen=True)
class Quadrature:
    """A quadrature value and its error estimate (the two-grid difference)."""

    value: float
    error: float


def effective_profile(
    force: Force | None, axis: int, diffusivity: float, drift: float = 0.0
) -> Profile:
    """U along ``axis`` (kT) with the constant drift folded in: ``U(x) - drift x / D``."""

    def profile(x: NDArray[np.float64]) -> NDArray[np.float64]:
        u = along(force, axis, x) if force is not None else np.zeros_like(x)
        return u - drift * x / diffusivity

    return profile


def _confine(u: Profile, start: float, direction: float) -> float:
    """Where ``u`` first exceeds its minimum between ``start`` and there by
    CONFINED_KT going in ``direction`` (an infinite reflecting side is cut there)."""
    step = 1.0
    for _ in range(200):
        xs = start + direction * np.linspace(0.0, step, 4097)
        us = u(xs)
        low = np.minimum.accumulate(us)
        beyond = np.nonzero(us - low >= CONFINED_KT)[0]
        if beyond.size:
            return float(xs[beyond[0]])
        step *= 2.0
    raise ValueError(
        "the potential does not confine walkers on the unbounded side: no finite "
        "mean first-passage time to compare with"
    )


def _pieces(
    u: Profile, a: float, x0: float, b: float, n: int
) -> tuple[NDArray[np.float64], NDArray[np.float64], int]:
    """A grid from a to b with x0 on a node (n intervals on each side), and U there."""
    left = np.linspace(a, x0, n + 1)
    right = np.linspace(x0, b, n + 1)
    x = np.concatenate([left, right[1:]])
    return x, u(x), n


def _one_grid(
    u: Profile, a: float, b: float, x0: float, diffusivity: float, walls: str, n: int
) -> tuple[float, float]:
    """(mean exit time, splitting at b) on one grid."""
    x, us, i0 = _pieces(u, a, x0, b, n)
    shift = 0.5 * (us.max() + us.min())  # the formulas are invariant to U + const
    psi = np.exp(us - shift)
    if walls == "absorbing-reflecting":
        # Mirror of reflecting-absorbing: T(x0) = (1/D) int_a^x0 psi(y) int_y^b e^-U.
        tail = cumulative_simpson(np.exp(shift - us)[::-1], x=-x[::-1], initial=0.0)
        g = psi * tail[::-1]
        return float(cumulative_simpson(g, x=x, initial=0.0)[i0]) / diffusivity, 0.0
    phi = cumulative_simpson(np.exp(shift - us), x=x, initial=0.0)
    g = psi * phi
    G = cumulative_simpson(g, x=x, initial=0.0)
    if walls == "reflecting-absorbing":
        return float(G[-1] - G[i0]) / diffusivity, 1.0
    A = cumulative_simpson(psi, x=x, initial=0.0)
    a1, a2 = A[i0], A[-1] - A[i0]
    b1, b2 = G[i0], G[-1] - G[i0]
    return float((a1 * b2 - a2 * b1) / (a1 + a2)) / diffusivity, float(a1 / (a1 + a2))


def _walls_key(lower: str, upper: str) -> str:
    key = f"{lower}-{upper}"
    if key not in (
        "absorbing-absorbing",
        "reflecting-absorbing",
        "absorbing-reflecting",
    ):
        raise ValueError(f"walls {lower!r}, {upper!r}: needs an absorbing end")
    return key


def _refined(
    u: Profile,
    a: float,
    b: float,
    x0: float,
    diffusivity: float,
    walls: str,
    which: int,
    rtol: float,
) -> Quadrature:
    if not a < x0 < b:
        raise ValueError(f"start {x0} must lie strictly inside ({a}, {b})")
    if not math.isfinite(a):
        a = _confine(u, x0, -1.0)
    if not math.isfinite(b):
        b = _confine(u, x0, 1.0)
    n = MIN_POINTS // 2
    coarse = _one_grid(u, a, b, x0, diffusivity, walls, n)[which]
    while True:
        fine = _one_grid(u, a, b, x0, diffusivity, walls, 2 * n)[which]
        error = abs(fine - coarse)
        if error <= rtol * abs(fine) or 4 * n > MAX_POINTS:
            return Quadrature(fine, error)
        n, coarse = 2 * n, fine


def mean_exit_time(
    u: Profile,
    lower: float,
    upper: float,
    x0: float,
    diffusivity: float,
    walls: tuple[str, str] = ("absorbing", "absorbing"),
    rtol: float = QUADRATURE_RTOL,
) -> Quadrature:
    """Mean first-passage time out of [lower, upper] in the potential ``u``.

    Parameters
    ----------
    u : callable
        U(x) in kT (vectorised), e.g. :func:`effective_profile`.
    lower, upper : float
        The interval [length]; an infinite end must be reflecting (it is cut where U
        exceeds its minimum by ``potentials.CONFINED_KT``: confining potentials only).
    x0 : float
        Start, strictly inside [length].
    diffusivity : float
        D [length^2 / time].
    walls : (str, str)
        Kinds at lower and upper: "absorbing" or "reflecting"; at least one absorbing.
    rtol : float
        Relative tolerance of the two-grid difference (refined up to 4·10^6 nodes).

    Returns
    -------
    Quadrature
        The mean time [time] and the two-grid error estimate.
    """
    key = _walls_key(*walls)
    return _refined(u, lower, upper, x0, diffusivity, key, 0, rtol)


def splitting(
    u: Profile, lower: float, upper: float, x0: float, rtol: float = QUADRATURE_RTOL
) -> Quadrature:
    """P(absorbed at ``upper`` before ``lower``), both absorbing: ``int_a^x0 e^U /
    int_a^b e^U`` (Gardiner §5.2.8 [memory]); independent of D."""
    return _refined(u, lower, upper, x0, 1.0, "absorbing-absorbing", 1, rtol)


def kramers_rate(
    diffusivity: float, curvature_min: float, curvature_max: float, barrier: float
) -> float:
    """Kramers' overdamped escape rate [1/time] over a barrier of ``barrier`` kT:
    ``(D / 2 pi) sqrt(U''(min) |U''(max)|) exp(-barrier)`` (curvatures in kT/length^2)."""
    return (
        diffusivity
        / (2.0 * math.pi)
        * math.sqrt(curvature_min * abs(curvature_max))
        * math.exp(-barrier)
    )


def kramers_escape_time(
    barrier: float, half_separation: float, diffusivity: float
) -> float:
    """1 / Kramers rate for the quartic double well ``h ((x/b)^2 - 1)^2``:
    ``U''(+-b) = 8 h / b^2``, ``U''(0) = -4 h / b^2``. The mean time from one minimum to
    the other (the walker is committed once past the barrier) in the high-barrier
    limit [time]."""
    b2 = half_separation**2
    return 1.0 / kramers_rate(
        diffusivity, 8.0 * barrier / b2, -4.0 * barrier / b2, barrier
    )


def ou_mean(
    t: float | NDArray[np.float64],
    x0: float,
    center: float,
    stiffness: float,
    diffusivity: float,
    drift: float = 0.0,
) -> float | NDArray[np.float64]:
    """Mean of an Ornstein–Uhlenbeck coordinate at time t:
    ``c' + (x0 - c') exp(-D k t)`` with ``c' = c + drift / (D k)`` [length]."""
    c = center + drift / (diffusivity * stiffness)
    return c + (x0 - c) * np.exp(-diffusivity * stiffness * np.asarray(t))


def ou_variance(
    t: float | NDArray[np.float64], stiffness: float, diffusivity: float
) -> float | NDArray[np.float64]:
    """Variance ``(1 - exp(-2 D k t)) / k`` of an OU coordinate started at a point
    [length^2]; tends to the stationary 1/k (kT / k)."""
    return -np.expm1(-2.0 * diffusivity * stiffness * np.asarray(t)) / stiffness


def periodic_drift_velocity(
    v0: Profile,
    period: float,
    tilt: float,
    diffusivity: float,
    drift: float = 0.0,
    n: int = 4096,
) -> float:
    """Mean velocity [length/time] in ``V0(x) - tilt x`` (V0 of period ``period``, in
    kT; tilt in kT/length), plus a constant ``drift`` (an extra tilt drift / D).

    Stratonovich's formula (Reimann 2002, [memory] for equation numbers):
    ``v = D L (1 - e^{-F L}) / int_0^L dx int_0^L dy e^{V0(x) - V0(x - y) - F y}``;
    the x integral is periodic (trapezoid rule, spectrally accurate), the y integral
    by Simpson on ``n`` intervals.
    """
    f = tilt + drift / diffusivity
    L = period
    xs = np.linspace(0.0, L, n, endpoint=False)
    ys = np.linspace(0.0, L, n + 1)
    vx = v0(xs)
    total = 0.0
    for i in range(0, n, 512):
        x = xs[i : i + 512, None]
        inner = np.exp(vx[i : i + 512, None] - v0(x - ys[None, :]) - f * ys[None, :])
        total += float(np.sum(cumulative_simpson(inner, x=ys, axis=1)[:, -1]))
    integral = total * L / n
    if f == 0.0:
        return 0.0
    return diffusivity * L * -math.expm1(-f * L) / integral
