"""Free motion (no walls): mean, variance, covariance and Gaussian propagator.

Formulas, sources and their status: ``docs/analytic-reference.md``, section A.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from sweep.analytic.series import FloatArray, _f64, _positive, _time


def free_mean(t: ArrayLike, x0: ArrayLike, drift: ArrayLike) -> FloatArray:
    """Mean position of a free drifted walker along one axis.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; broadcast against ``x0`` and ``drift``.
    x0 : array_like
        Start position [length].
    drift : array_like
        Drift velocity ``mu`` [length/time].

    Returns
    -------
    ndarray of float64
        ``E[X(t)] = x0 + mu t`` [length], broadcast shape of the inputs.

    Notes
    -----
    Sheet A2.  Sources: S. Karlin & H. M. Taylor, *A First Course in Stochastic Processes*,
    2nd ed. (1975), Ch. 7 [memory]; S. Redner, *A Guide to First-Passage Processes* (CUP
    2001), Ch. 1 [memory].
    """
    return _f64(_f64(x0) + _f64(drift) * _time(t))


def free_variance(t: ArrayLike, diffusivity: float) -> FloatArray:
    """Variance of one Cartesian coordinate of a free walker.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time].
    diffusivity : float
        ``D`` [length**2/time].

    Returns
    -------
    ndarray of float64
        ``Var[X_i(t)] = 2 D t`` [length**2], shape of ``t``.  Independent of drift.

    Notes
    -----
    Sheet A2.  Sources: Karlin & Taylor (1975), Ch. 7 [memory]; A. N. Borodin &
    P. Salminen, *Handbook of Brownian Motion*, 2nd ed. (2002), Part I, Ch. II [memory].
    """
    return _f64(2.0 * _positive("diffusivity", diffusivity) * _time(t))


def free_covariance(t1: ArrayLike, t2: ArrayLike, diffusivity: float) -> FloatArray:
    """Covariance of one coordinate of a free walker at two times.

    Parameters
    ----------
    t1, t2 : array_like
        Times ``>= 0`` [time]; broadcast together.
    diffusivity : float
        ``D`` [length**2/time].

    Returns
    -------
    ndarray of float64
        ``Cov[X_i(t1), X_i(t2)] = 2 D min(t1, t2)`` [length**2].  Different axes are
        uncorrelated; the drift does not enter.

    Notes
    -----
    Sheet A2.  Sources: Karlin & Taylor (1975), Ch. 7 [memory]; Borodin & Salminen
    (2002), Part I, Ch. II [memory].
    """
    d = _positive("diffusivity", diffusivity)
    return _f64(2.0 * d * np.minimum(_time(t1), _time(t2)))


def free_density(
    x: ArrayLike,
    t: ArrayLike,
    x0: ArrayLike,
    diffusivity: float,
    drift: ArrayLike = 0.0,
) -> FloatArray:
    """One-dimensional Gaussian propagator of free Brownian motion with drift.

    Parameters
    ----------
    x : array_like
        Evaluation point(s) [length].
    t : array_like
        Time(s) ``>= 0`` [time].  At ``t = 0`` the result is 0 (delta not represented).
    x0 : array_like
        Start position [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : array_like, optional
        Drift ``mu`` [length/time], default 0.

    Returns
    -------
    ndarray of float64
        ``p(x,t|x0) = (4 pi D t)**(-1/2) exp(-(x - x0 - mu t)**2 / (4 D t))`` [1/length],
        broadcast shape of ``x, t, x0, drift``.

    Notes
    -----
    Sheet A1.  Sources: Karlin & Taylor (1975), Ch. 7 [memory]; Redner (2001), Ch. 1
    [memory]; Borodin & Salminen (2002), Part I, Ch. II [memory].
    """
    d = _positive("diffusivity", diffusivity)
    x_b, t_b, x0_b, mu_b = np.broadcast_arrays(_f64(x), _time(t), _f64(x0), _f64(drift))
    out = np.zeros(x_b.shape)
    pos = t_b > 0.0
    tt = t_b[pos]
    y = x_b[pos] - x0_b[pos] - mu_b[pos] * tt
    out[pos] = np.exp(-(y**2) / (4.0 * d * tt)) / np.sqrt(4.0 * np.pi * d * tt)
    return out
