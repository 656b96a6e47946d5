"""Discrete monitoring: the outward wall shift that mimics checking walls only at step
ends, and the Brownian-bridge probability of touching a wall within a step.

Formulas, sources and their status: ``docs/analytic-reference.md``, section F.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from sweep.analytic.series import FloatArray, _f64, _finite, _positive, _time

#: Limiting mean overshoot of a Gaussian random walk per unit step standard deviation,
#: ``-zeta(1/2) / sqrt(2 pi)`` (sheet F1; Broadie, Glasserman & Kou 1997 [seen];
#: Chang & Peres 1997 [seen]).  Correctly rounded value of 0.58259715793901067...
BETA: float = float(-special.zeta(0.5) / math.sqrt(2.0 * math.pi))


def discrete_monitoring_shift(diffusivity: float, dt: float) -> float:
    """Outward boundary shift that mimics discrete monitoring with step ``dt``.

    Parameters
    ----------
    diffusivity : float
        ``D`` [length**2/time].
    dt : float
        Monitoring interval ``>= 0`` [time].

    Returns
    -------
    float
        ``delta = BETA sqrt(2 D dt)`` [length]; each absorbing boundary moves *outward*
        (enlarging the domain) by ``delta`` (F1-F3; error O(dt) for the mean exit time).

    Notes
    -----
    Sources: M. Broadie, P. Glasserman & S. Kou (1997), *Mathematical Finance* 7(4),
    325-348 [seen] ("Theorem 1" [memory]); J. T. Chang & Y. Peres (1997), *Ann. Probab.*
    25(2), 787-802 [seen]; D. Siegmund, *Sequential Analysis* (1985), Ch. X [memory].
    """
    d = _positive("diffusivity", diffusivity)
    dt = _finite("dt", dt)
    if dt < 0.0:
        raise ValueError("dt must be >= 0")
    return BETA * math.sqrt(2.0 * d * dt)


def bridge_crossing_probability(
    a: ArrayLike,
    x1: ArrayLike,
    x2: ArrayLike,
    diffusivity: float,
    dt: ArrayLike,
) -> FloatArray:
    """Probability that a Brownian bridge from ``x1`` to ``x2`` touches the level ``a``.

    Parameters
    ----------
    a : array_like
        Wall position [length].
    x1, x2 : array_like
        Positions at the start and the end of the step [length].
    diffusivity : float
        ``D`` [length**2/time] (path variance ``2 D`` per unit time).
    dt : array_like
        Step duration ``>= 0`` [time].

    Returns
    -------
    ndarray of float64
        ``exp(-(a - x1)(a - x2) / (D dt))`` when ``x1`` and ``x2`` lie strictly on the same
        side of ``a`` (either side), else 1 (an endpoint on or beyond the wall).  Broadcast
        shape of ``a, x1, x2, dt``.  The drift is irrelevant given the endpoints.

    Notes
    -----
    Sheet F4, reflection principle [F10, F11].  Sources: I. Karatzas & S. Shreve, *Brownian
    Motion and Stochastic Calculus* (1991), Section 2.8 [memory]; P. Glasserman, *Monte
    Carlo Methods in Financial Engineering* (2004), Ch. 6 [memory]; L. Andersen &
    R. Brotherton-Ratcliffe (1996), *Risk* 9 [memory].
    """
    d = _positive("diffusivity", diffusivity)
    a_b, x1_b, x2_b, dt_b = np.broadcast_arrays(_f64(a), _f64(x1), _f64(x2), _time(dt))
    prod = (a_b - x1_b) * (a_b - x2_b)
    out = np.ones(prod.shape)
    same_side = prod > 0.0
    step = same_side & (dt_b > 0.0)
    out[same_side & ~step] = 0.0
    out[step] = np.exp(-prod[step] / (d * dt_b[step]))
    return out
