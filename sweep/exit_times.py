"""Exit time of a d-ball from its centre: survival series and the tabulated inverse CDF
that the "spheres" scheme samples its jumps from.

``plan`` builds the kernel inputs from :func:`centre_exit_table`, so this module sits
early in the layering (it imports nothing from ``sweep``); :mod:`sweep.analytic`
re-exports its names. Formula: sheet sections E2 (r0 = 0) and J11 of
``docs/analytic-reference.md``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special

FloatArray = NDArray[np.float64]

#: Terms of the centre-exit series: the 400th Bessel zero exceeds 1200, so the
#: neglected terms are below exp(-1200^2 tau), negligible for tau >= 1e-3 where the
#: tables start (the exit probability there is below 1e-30).
_CENTRE_TERMS = 400


def _bessel_zeros(order: float, n: int) -> FloatArray:
    """The first ``n`` positive zeros of ``J_order`` (any real order > -1).

    Sign changes of ``J_order`` on a grid of step 0.05 (zeros are about pi apart),
    each refined by Brent's method.
    """
    from scipy.optimize import brentq

    if float(order).is_integer():
        return np.asarray(special.jn_zeros(int(order), n), dtype=np.float64)
    stop = (n + order / 2.0 + 2.0) * math.pi
    x = np.arange(0.05, stop, 0.05)
    v = special.jv(order, x)
    where = np.nonzero(np.sign(v[:-1]) * np.sign(v[1:]) < 0)[0][:n]
    return np.array(
        [brentq(lambda z: float(special.jv(order, z)), x[i], x[i + 1]) for i in where]
    )


@functools.lru_cache(maxsize=16)
def _centre_exit_modes(dimension: int) -> tuple[FloatArray, FloatArray]:
    """Rates ``j_n**2`` and weights of the centre-exit series of the unit d-ball
    (computed once per dimension; callers must not modify them)."""
    nu = dimension / 2.0 - 1.0
    zeros = _bessel_zeros(nu, _CENTRE_TERMS)
    # log of j^(nu-1) / (2^(nu-1) Gamma(nu+1) J_{nu+1}(j)) with the sign kept apart:
    # the weights grow like j^(nu - 1/2) in high dimension.
    jn1 = special.jv(nu + 1.0, zeros)
    log_w = (
        (nu - 1.0) * np.log(zeros)
        - (nu - 1.0) * math.log(2.0)
        - special.gammaln(nu + 1.0)
        - np.log(np.abs(jn1))
    )
    return zeros**2, np.sign(jn1) * np.exp(log_w)


def centre_exit_survival(tau: ArrayLike, dimension: int) -> FloatArray:
    """Survival of a walker started at the centre of the unit ball, absorbing surface.

    Parameters
    ----------
    tau : array_like
        Dimensionless time ``D t / R**2`` (>= 0), any shape.
    dimension : int
        Space dimension d >= 1 (d = 1: the interval [-1, 1] from 0).

    Returns
    -------
    ndarray of float64
        ``S(tau) = sum_n w_n exp(-j_n**2 tau)``, ``j_n`` the zeros of ``J_nu``,
        ``nu = d/2 - 1``, ``w_n = j_n**(nu-1) / (2**(nu-1) Gamma(nu+1) J_{nu+1}(j_n))``.
        d = 1: ``(4/pi) sum (-1)**n/(2n+1) exp(-(2n+1)**2 pi**2 tau/4)``; d = 2:
        ``sum 2/(j_n J1(j_n)) exp(-j_n**2 tau)``; d = 3: ``2 sum (-1)**(n+1)
        exp(-n**2 pi**2 tau)`` (sheet E2 at r0 = 0 and J11; the d = 1, 2, 3 cases
        agree with :func:`ball_survival` at r0 = 0).
        Values for ``tau < 1e-3`` (exit probability below 1e-30) are returned as 1.

    Notes
    -----
    Sources: S. Redner, *A Guide to First-Passage Processes* (2001), Ch. 1-2 and 6
    [memory]; H. S. Carslaw & J. C. Jaeger, *Conduction of Heat in Solids* (1959),
    Ch. VII and IX [memory]. The absolute error is the rounding of the alternating
    sum, about 1e-16 times the largest weight.
    """
    dim = int(dimension)
    if dim != dimension or dim < 1:
        raise ValueError(f"dimension must be a positive integer, got {dimension!r}")
    t = np.asarray(tau, dtype=np.float64)
    rates, weights = _centre_exit_modes(dim)
    flat = np.maximum(t.reshape(-1), 1e-3)
    out = np.exp(-np.outer(flat, rates)) @ weights
    out[t.reshape(-1) < 1e-3] = 1.0
    return np.clip(out, 0.0, 1.0).reshape(t.shape)


def _centre_exit_density(tau: FloatArray, dimension: int) -> FloatArray:
    rates, weights = _centre_exit_modes(dimension)
    return np.exp(-np.outer(np.maximum(tau, 1e-3), rates)) @ (weights * rates)


#: Logit range and spacing of the exit-time tables (see :func:`centre_exit_table`).
EXIT_TABLE_LOGIT = 28.0
EXIT_TABLE_STEP = 0.02


@dataclass(frozen=True)
class ExitTable:
    """Inverse CDF of the centre-exit time, tabulated against ``s = logit(u)``.

    Attributes
    ----------
    tau : float64 (n,)
        ``F^-1(u)`` at ``s = s0 + k ds`` (dimensionless time D t / R**2).
    dtau : float64 (n,)
        ``ds * d tau / ds`` at the knots, for cubic Hermite interpolation.
    s0, ds : float
        First knot and spacing in ``s = log(u) - log(1 - u)``.
    slope : float
        ``1 / j_1**2``: beyond the last knot ``tau`` grows as ``s / j_1**2`` (the slowest
        mode alone; its neighbour is below ``1e-12 exp(-(j_2**2 - j_1**2) tau)``).
    error : float
        ``max |F(tau(u)) - u|`` over the table's cell midpoints and knots, the
        Kolmogorov distance of the sampled law from the exact one (plus at most
        ``1 / (1 + exp(28)) = 7e-13`` from the clamped lower tail).
    """

    tau: FloatArray
    dtau: FloatArray
    s0: float
    ds: float
    slope: float
    error: float


_EXIT_TABLES: dict[int, ExitTable] = {}


def centre_exit_table(dimension: int) -> ExitTable:
    """The exit-time sampler's table for a d-ball, built once per process.

    ``tau`` is smooth in ``s = logit(u)`` at both ends (``tau ~ B / (A - s)`` for
    ``u -> 0``, ``tau ~ (s + log w_1) / j_1**2`` for ``u -> 1``), so linear
    interpolation on a uniform ``s`` grid is accurate everywhere: knots from
    ``s = -28`` to ``28`` every 0.02 (u from 7e-13 to 1 - 7e-13). Each knot solves
    ``logit F(tau) = s`` by Newton's method from an interpolated first guess.

    Sources: the law is :func:`centre_exit_survival` (sheet E2 at r0 = 0 and J11;
    Redner (2001), Ch. 6 [memory]); the inversion and its error bound ``error`` are
    [derived] here, measured on :func:`hermite` as the kernel interpolates.
    """
    dim = int(dimension)
    if dim in _EXIT_TABLES:
        return _EXIT_TABLES[dim]
    rates, weights = _centre_exit_modes(dim)
    n = int(round(2 * EXIT_TABLE_LOGIT / EXIT_TABLE_STEP)) + 1
    s = -EXIT_TABLE_LOGIT + EXIT_TABLE_STEP * np.arange(n)

    def logit_cdf(t: FloatArray) -> FloatArray:
        surv = centre_exit_survival(t, dim)
        return np.log1p(-surv) - np.log(surv)

    # First guess: logit F on a dense grid of log tau, inverted by interpolation.
    grid = np.exp(np.linspace(math.log(2e-3), math.log(60.0 / rates[0] + 1.0), 6000))
    with np.errstate(divide="ignore"):
        g = logit_cdf(grid)
    ok = np.isfinite(g)
    tau = np.interp(s, g[ok], grid[ok])
    for _ in range(6):
        surv = centre_exit_survival(tau, dim)
        dens = _centre_exit_density(tau, dim)
        # d logit F / d tau = f / (F (1 - F))
        step = (np.log1p(-surv) - np.log(surv) - s) * (1.0 - surv) * surv / dens
        tau = np.maximum(tau - step, 0.5 * tau)
    surv = centre_exit_survival(tau, dim)
    slope_s = (1.0 - surv) * surv / _centre_exit_density(tau, dim)  # d tau / d s
    # Kolmogorov distance of the interpolant: F between the knots vs the u there.
    fine = np.linspace(s[0], s[-1], 8 * (n - 1) + 1)
    err = float(
        np.max(
            np.abs(
                (1.0 - centre_exit_survival(hermite(fine, s[0], tau, slope_s), dim))
                - special.expit(fine)
            )
        )
    )
    table = ExitTable(
        tau=np.ascontiguousarray(tau),
        dtau=np.ascontiguousarray(slope_s * EXIT_TABLE_STEP),
        s0=float(s[0]),
        ds=EXIT_TABLE_STEP,
        slope=float(1.0 / rates[0]),
        error=err,
    )
    _EXIT_TABLES[dim] = table
    return table


def hermite(s: ArrayLike, s0: float, tau: FloatArray, slope: FloatArray) -> FloatArray:
    """Cubic Hermite interpolation of the exit-time table at ``s`` (inside the knots),
    as the kernel does it (``kernels/spheres.py``, ``_exit_time``); ``slope`` is
    ``d tau / d s`` per unit ``s``.

    Sources: the cubic Hermite basis on a uniform grid (sheet J11), e.g. R. L. Burden &
    J. D. Faires, *Numerical Analysis*, 9th ed. (2011), Sec. 3.4 [memory].
    """
    s_arr = np.asarray(s, dtype=np.float64)
    ds = EXIT_TABLE_STEP
    pos = (s_arr - s0) / ds
    k = np.clip(np.floor(pos).astype(np.int64), 0, tau.size - 2)
    h = pos - k
    h2, h3 = h * h, h * h * h
    return (
        (2 * h3 - 3 * h2 + 1) * tau[k]
        + (h3 - 2 * h2 + h) * slope[k] * ds
        + (-2 * h3 + 3 * h2) * tau[k + 1]
        + (h3 - h2) * slope[k + 1] * ds
    )
