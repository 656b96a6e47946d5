"""Ball ``|x| < R`` with an absorbing surface, no drift: survival (d = 1, 2, 3), mean
exit time, harmonic measure of the exit point and its mean cosine.

Formulas, sources and their status: ``docs/analytic-reference.md``, section E.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special

from sweep.analytic.interval import interval_survival
from sweep.analytic.series import (
    IMAGE_SWITCH,
    FloatArray,
    _eigen_sum,
    _fill_positive_times,
    _finite,
    _image_sum,
    _n_terms,
    _ndtr_diff,
    _positive,
    _time,
)

_J0_ZEROS: FloatArray = np.empty(0)


def _j0_zeros(n: int) -> FloatArray:
    global _J0_ZEROS
    if _J0_ZEROS.size < n:
        _J0_ZEROS = special.jn_zeros(0, max(n, 2 * _J0_ZEROS.size, 64))
    return _J0_ZEROS[:n]


def _ball_check(
    r0: float, radius: float, diffusivity: float
) -> tuple[float, float, float]:
    radius = _positive("radius", radius)
    d = _positive("diffusivity", diffusivity)
    r0 = _finite("r0", r0)
    if not 0.0 <= r0 <= radius:
        raise ValueError(f"r0 = {r0!r} must lie in [0, radius = {radius!r}]")
    return r0, radius, d


def _ball2_eigen(t: FloatArray, r0: float, radius: float, d: float) -> FloatArray:
    """Disk survival, ``sum_n 2 J0(j_n r0/R)/(j_n J1(j_n)) exp(-D j_n**2 t/R**2)`` (E2)."""
    tau = d * t / radius**2
    n_max = _n_terms(np.pi**2 * float(np.min(tau)), shift=0.25)
    zeros = _j0_zeros(n_max)
    coef = 2.0 * special.j0(zeros * r0 / radius) / (zeros * special.j1(zeros))

    def term(n: FloatArray) -> FloatArray:
        idx = n[:, 0].astype(np.int64) - 1
        return coef[idx, None] * np.exp(-(zeros[idx, None] ** 2) * tau)

    return _eigen_sum(n_max, term, t.size)


def _ball3_eigen(t: FloatArray, r0: float, radius: float, d: float) -> FloatArray:
    """Sphere survival, ``2 sum (-1)**(n+1) sinc(n r0/R) exp(-D n**2 pi**2 t/R**2)`` (E2)."""
    tau = d * t / radius**2
    n_max = _n_terms(np.pi**2 * float(np.min(tau)))

    def term(n: FloatArray) -> FloatArray:
        sign = 2.0 * (n % 2.0) - 1.0  # (-1)**(n+1)
        return 2.0 * sign * np.sinc(n * r0 / radius) * np.exp(-(n**2) * np.pi**2 * tau)

    return _eigen_sum(n_max, term, t.size)


def _ball3_image(t: FloatArray, r0: float, radius: float, d: float) -> FloatArray:
    """Sphere survival from the interval image sum ([derived], see ``ball_survival``)."""
    R = radius
    s2 = 2.0 * d * t
    s = np.sqrt(s2)
    if r0 == 0.0:
        tau = d * t / R**2

        def centre(k: int) -> FloatArray:
            if k < 0:
                return np.zeros_like(t)
            return np.exp(-((2 * k + 1) ** 2) / (4.0 * tau))

        return 1.0 - 2.0 / np.sqrt(np.pi * tau) * _image_sum(centre)

    def g(y: FloatArray | float) -> FloatArray:
        return np.exp(-0.5 * np.square(y) / s2) / np.sqrt(2.0 * np.pi * s2)

    def first_moment(c: float) -> FloatArray:
        # I(c) = integral_0^R r g(r - c) dr
        return c * _ndtr_diff((R - c) / s, -c / s) + s2 * (g(c) - g(R - c))

    def term(k: int) -> FloatArray:
        return first_moment(r0 + 2 * k * R) - first_moment(-r0 + 2 * k * R)

    return _image_sum(term) / r0


def ball_survival(
    t: ArrayLike, r0: float, radius: float, diffusivity: float, dimension: int
) -> FloatArray:
    """Survival probability in the ball ``|x| < R`` with absorbing surface, no drift.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time], any shape.
    r0 : float
        Start radius ``|x0|`` in ``[0, R]`` [length].
    radius : float
        ``R`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    dimension : int
        1, 2 or 3 (d = 1 is the AA interval ``[-R, R]``, sheet E2 [E6]).

    Returns
    -------
    ndarray of float64
        ``S(t | r0)``, shape of ``t``.

        * d = 2: ``sum_n 2 J0(j_n r0/R) / (j_n J1(j_n)) exp(-D j_n**2 t/R**2)``, ``j_n`` the
          zeros of ``J0`` (E2).
        * d = 3: ``(2R/(pi r0)) sum_n ((-1)**(n+1)/n) sin(n pi r0/R) exp(-D n**2 pi**2 t/R**2)``
          (E2).  For ``D t/R**2 < 0.05`` (and ``r0 >= 0.01 sqrt(2Dt)``) the image form
          ``S = (1/r0) sum_k [I(r0 + 2kR) - I(2kR - r0)]``, ``I(c) = integral_0^R r
          g(r - c) dr`` (from the E3 relation ``q = (r/r0) p_AA`` and the C1 image sum)
          is used; from the centre ``S = 1 - (2/sqrt(pi tau)) sum_{n>=0}
          exp(-(2n+1)**2/(4 tau))``, ``tau = D t/R**2`` (Jacobi imaginary transformation).
          Both short-time forms are [derived] here.
        * Short-time cutoff (all d): ``S`` is returned as exactly 1 where the union bound
          ``1 - S <= 2 d erfc((R - r0)/(sqrt(2 d) sqrt(2 D t)))`` is below 1e-17.  The disk
          (d = 2) has no image form; its eigen-series is summed with as many zeros as
          needed (``ValueError`` beyond 1e6 terms, i.e. ``r0`` extremely close to ``R`` at
          extremely small ``t``).

    Notes
    -----
    Sources: Carslaw & Jaeger (1959), Ch. IX (sphere) and Ch. VII (infinite cylinder), zero
    surface temperature [memory]; Redner (2001), Ch. 6, spherical geometries [memory];
    Bessel zeros: DLMF section 10.21 [memory], Abramowitz & Stegun Table 9.5 [memory].
    """
    r0, R, d = _ball_check(r0, radius, diffusivity)
    dim = int(dimension)
    if dim != dimension or dim not in (1, 2, 3):
        raise ValueError(f"dimension must be 1, 2 or 3, got {dimension!r}")
    t_arr = _time(t)
    if dim == 1:
        return interval_survival(t_arr, r0 + R, 2.0 * R, d)
    if r0 == R:
        return np.zeros(t_arr.shape)

    def compute(tp: FloatArray) -> FloatArray:
        out = np.ones(tp.shape)
        sigma = np.sqrt(2.0 * d * tp)
        bound = 2.0 * dim * special.erfc((R - r0) / (math.sqrt(2.0 * dim) * sigma))
        live = bound > 1e-17
        if not np.any(live):
            return out
        tl, sl = tp[live], sigma[live]
        res = np.empty(tl.shape)
        if dim == 2:
            res[:] = _ball2_eigen(tl, r0, R, d)
        else:
            img = (d * tl / R**2 < IMAGE_SWITCH) & ((r0 == 0.0) | (r0 >= 0.01 * sl))
            if np.any(img):
                res[img] = _ball3_image(tl[img], r0, R, d)
            if np.any(~img):
                res[~img] = _ball3_eigen(tl[~img], r0, R, d)
        out[live] = res
        return out

    return _fill_positive_times(t_arr, 1.0, compute)


def ball_mean_exit_time(
    r0: float, radius: float, diffusivity: float, dimension: int
) -> float:
    """Mean exit time from the ball ``|x| < R`` (absorbing surface, no drift).

    Parameters
    ----------
    r0 : float
        Start radius in ``[0, R]`` [length].
    radius : float
        ``R`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    dimension : int
        Space dimension ``d >= 1``.

    Returns
    -------
    float
        ``E[T] = (R**2 - r0**2) / (2 d D)`` [time] (E1), from Dynkin's formula with
        ``D Lap |x|**2 = 2 d D``.

    Notes
    -----
    Sources: B. Oksendal, *Stochastic Differential Equations*, Example 7.4.2 (generator
    (1/2) Lap, i.e. D = 1/2) [memory]; Redner (2001), Ch. 6 [memory].
    """
    r0, R, d = _ball_check(r0, radius, diffusivity)
    dim = int(dimension)
    if dim != dimension or dim < 1:
        raise ValueError(f"dimension must be a positive integer, got {dimension!r}")
    return (R**2 - r0**2) / (2.0 * dim * d)


def ball_harmonic_measure(
    x: ArrayLike, x0: ArrayLike, center: ArrayLike, radius: float
) -> NDArray[np.float64]:
    """Density of the exit point on the sphere (harmonic measure, Poisson kernel).

    ``P(x0, x) = (R^2 - |x0 - c|^2) / (omega_d R |x0 - x|^d)`` with respect to the
    surface measure, omega_d = 2 pi^(d/2) / Gamma(d/2) (omega_2 = 2 pi, omega_3 = 4 pi).
    Source: P. Morters & Y. Peres, *Brownian Motion* (CUP 2010), Ch. 3, Theorem 3.44
    [memory for the number]; shared reference sheet E4.

    Parameters
    ----------
    x : array of float, shape (..., d)
        Points on the sphere |x - center| = radius.
    x0 : array of float, shape (d,)
        Start point inside the ball.
    center : array of float, shape (d,)
    radius : float
        R, length units.

    Returns
    -------
    ndarray of float64, shape (...)
        Density per unit surface (length^(1-d)).
    """
    x = np.asarray(x, dtype=np.float64)
    x0 = np.asarray(x0, dtype=np.float64)
    c = np.asarray(center, dtype=np.float64)
    d = x.shape[-1]
    omega = 2.0 * math.pi ** (d / 2) / math.gamma(d / 2)
    r0_sq = float(np.sum((x0 - c) ** 2))
    dist = np.sqrt(np.sum((x - x0) ** 2, axis=-1))
    return (radius**2 - r0_sq) / (omega * radius * dist**d)


def ball_exit_cos_mean(r0: float, radius: float) -> float:
    """Mean cosine of the exit angle from the ball, measured from the start direction.

    Parameters
    ----------
    r0 : float
        Start radius in ``[0, R]`` [length].
    radius : float
        ``R`` [length].

    Returns
    -------
    float
        ``E[cos theta] = r0 / R`` (dimensionless), in every dimension (E4 [E16, E19]);
        equivalently ``E[X_exit] = x0`` by optional stopping.

    Notes
    -----
    Harmonic measure / Poisson kernel of the ball; in d = 2 the exit angle is
    ``scipy.stats.wrapcauchy(c = r0/R)``.  Sources: P. Morters & Y. Peres, *Brownian Motion*
    (CUP 2010), Ch. 3, Theorem 3.44 [memory for the number]; S. C. Port & C. J. Stone,
    *Brownian Motion and Classical Potential Theory* (1978) [memory].
    """
    r0, R, _ = _ball_check(r0, radius, 1.0)
    return r0 / R
