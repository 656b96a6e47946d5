"""Half-line ``[0, inf)`` absorbing at 0: survival, first-passage density, hitting
probability and mean first-passage time, with or without drift.

Formulas, sources and their status: ``docs/analytic-reference.md``, section B.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from sweep.analytic.series import (
    _SQRT2,
    FloatArray,
    _f64,
    _finite,
    _ndtr_diff,
    _positive,
    _time,
)


def halfline_survival(
    t: ArrayLike, x0: ArrayLike, diffusivity: float, drift: ArrayLike = 0.0
) -> FloatArray:
    """Survival probability on the half-line ``[0, inf)`` with an absorbing wall at 0.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; broadcast against ``x0`` and ``drift``.
    x0 : array_like
        Start position ``>= 0`` [length] (distance from the wall).
    diffusivity : float
        ``D`` [length**2/time].
    drift : array_like, optional
        ``mu`` [length/time]; ``mu > 0`` points away from the wall, ``mu < 0`` toward it.

    Returns
    -------
    ndarray of float64
        ``S(t) = Phi((x0 + mu t)/s) - exp(-mu x0/D) Phi((mu t - x0)/s)`` with
        ``s = sqrt(2 D t)``; without drift this is ``erf(x0 / sqrt(4 D t))``.

    Notes
    -----
    Sheet B1/B2.  Where ``x0 + mu t < 0`` the equivalent form
    ``exp(-z1**2/2) [erfcx(-z1/sqrt2) - erfcx(-z2/sqrt2)] / 2`` is used to keep relative
    accuracy in the far tail.  Sources: Redner (2001), Ch. 3, semi-infinite system [memory
    for section numbers]; Borodin & Salminen (2002), Part II, Ch. 1-2 [memory for formula
    numbers]; Karlin & Taylor (1975), Ch. 7 [memory].
    """
    d = _positive("diffusivity", diffusivity)
    t_b, x0_b, mu_b = np.broadcast_arrays(_time(t), _f64(x0), _f64(drift))
    if np.any(~(x0_b >= 0.0)):
        raise ValueError("x0 must be >= 0 on the half-line [0, inf)")
    out = np.where(x0_b > 0.0, 1.0, 0.0)
    m = (t_b > 0.0) & (x0_b > 0.0)
    tt, xx, mm = t_b[m], x0_b[m], mu_b[m]
    s = np.sqrt(2.0 * d * tt)
    z1 = (xx + mm * tt) / s
    z2 = (mm * tt - xx) / s
    res = np.empty_like(tt)
    far = z1 < 0.0  # only possible for mu < 0 (drift toward the wall)
    zf1, zf2 = z1[far], z2[far]
    res[far] = (
        0.5
        * np.exp(-0.5 * zf1**2)
        * (special.erfcx(-zf1 / _SQRT2) - special.erfcx(-zf2 / _SQRT2))
    )
    near = ~far
    zn1, zn2 = z1[near], z2[near]
    # S = [Phi(z1) - Phi(z2)] - (exp(y) - 1) Phi(z2), with y = -mu x0 / D
    y = -mm[near] * xx[near] / d
    excess = np.where(
        y < 700.0,
        np.expm1(np.minimum(y, 700.0)) * special.ndtr(zn2),
        np.exp(y + special.log_ndtr(zn2)),
    )
    res[near] = _ndtr_diff(zn1, zn2) - excess
    out[m] = res
    return out


def halfline_fpt_density(
    t: ArrayLike, x0: ArrayLike, diffusivity: float, drift: ArrayLike = 0.0
) -> FloatArray:
    """First-passage-time density to 0 on the half-line ``[0, inf)``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; 0 is returned at ``t = 0``.
    x0 : array_like
        Start position ``>= 0`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : array_like, optional
        ``mu`` [length/time]; ``mu > 0`` away from the wall.

    Returns
    -------
    ndarray of float64
        ``f(t) = x0 / sqrt(4 pi D t**3) exp(-(x0 + mu t)**2 / (4 D t))`` [1/time].
        Without drift this is the Levy density ``scipy.stats.levy(scale=x0**2/(2D))``; with
        drift toward the wall the inverse Gaussian IG(x0/|mu|, x0**2/(2D)); with drift away it
        is ``exp(-mu x0/D)`` times that IG density (defective).

    Notes
    -----
    Sheet B1/B2.  Sources: Redner (2001), Ch. 3 [memory]; Borodin & Salminen (2002),
    Part II, Ch. 1-2 [memory]; R. S. Chhikara & J. L. Folks, *The Inverse Gaussian
    Distribution* (1989) [memory].
    """
    d = _positive("diffusivity", diffusivity)
    t_b, x0_b, mu_b = np.broadcast_arrays(_time(t), _f64(x0), _f64(drift))
    if np.any(~(x0_b >= 0.0)):
        raise ValueError("x0 must be >= 0 on the half-line [0, inf)")
    out = np.zeros(t_b.shape)
    m = t_b > 0.0
    tt, xx, mm = t_b[m], x0_b[m], mu_b[m]
    out[m] = (
        xx
        / np.sqrt(4.0 * np.pi * d * tt**3)
        * np.exp(-((xx + mm * tt) ** 2) / (4.0 * d * tt))
    )
    return out


def halfline_hit_probability(
    x0: float, diffusivity: float, drift: float = 0.0
) -> float:
    """Probability of ever reaching the wall at 0 from ``x0 >= 0``.

    Parameters
    ----------
    x0 : float
        Start position [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time]; ``mu > 0`` away from the wall.

    Returns
    -------
    float
        1 if ``mu <= 0``, else ``exp(-mu x0 / D)`` (dimensionless).

    Notes
    -----
    Sheet B2 [B18, B19].  Sources: Karlin & Taylor (1975), Ch. 7, hitting times of BM with
    drift [memory]; Borodin & Salminen (2002), Part II, Ch. 2 [memory].
    """
    d = _positive("diffusivity", diffusivity)
    x0 = _finite("x0", x0)
    if x0 < 0.0:
        raise ValueError("x0 must be >= 0 on the half-line [0, inf)")
    drift = _finite("drift", drift)
    if drift <= 0.0:
        return 1.0
    return math.exp(-drift * x0 / d)


def halfline_mean_fpt(x0: float, diffusivity: float, drift: float) -> float:
    """Mean first-passage time to 0 on the half-line ``[0, inf)``.

    Parameters
    ----------
    x0 : float
        Start position ``>= 0`` [length].
    diffusivity : float
        ``D`` [length**2/time] (the mean does not depend on it).
    drift : float
        ``mu`` [length/time]; ``mu < 0`` is toward the wall.

    Returns
    -------
    float
        ``x0 / |mu|`` [time] for ``mu < 0`` (mean of IG(x0/|mu|, x0**2/(2D))); ``inf`` for
        ``mu >= 0`` (the walker may never arrive, or the Levy law has no mean); 0 if
        ``x0 = 0``.

    Notes
    -----
    Sheet B2 [B11-B13].  Sources: Chhikara & Folks (1989) [memory]; Redner (2001), Ch. 3
    [memory]; Karlin & Taylor (1975), Ch. 7 [memory].
    """
    _positive("diffusivity", diffusivity)
    x0 = _finite("x0", x0)
    if x0 < 0.0:
        raise ValueError("x0 must be >= 0 on the half-line [0, inf)")
    drift = _finite("drift", drift)
    if x0 == 0.0:
        return 0.0
    if drift < 0.0:
        return x0 / -drift
    return math.inf
