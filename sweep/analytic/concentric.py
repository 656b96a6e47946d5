"""Concentric absorbing spheres: the splitting probability between an inner and an
outer sphere (1, 2 and 3 dimensions, no drift).

Formulas, sources and their status: ``docs/analytic-reference.md``, section J6.
"""

from __future__ import annotations

import math

from sweep.analytic.series import _positive


def concentric_splitting(
    r0: float, inner: float, outer: float, dimension: int
) -> float:
    """Probability of reaching the inner of two concentric absorbing spheres first.

    Parameters
    ----------
    r0 : float
        Start distance from the common centre, ``inner <= r0 <= outer`` [length].
    inner, outer : float
        Radii ``a < R`` of the two spheres [length].
    dimension : int
        1, 2 or 3.

    Returns
    -------
    float
        ``(R - r0) / (R - a)`` in 1-D, ``ln(R / r0) / ln(R / a)`` in 2-D,
        ``(1/r0 - 1/R) / (1/a - 1/R)`` in 3-D; no drift.

    Notes
    -----
    The harmonic function of r with value 1 on the inner and 0 on the outer sphere;
    independent of D. Sheet J6. Sources: S. Redner, *A Guide to First-Passage
    Processes* (2001), Ch. 6 [memory].
    """
    a, big = _positive("inner", inner), _positive("outer", outer)
    if not a < big:
        raise ValueError(f"inner radius {a} must be below the outer radius {big}")
    if not a <= r0 <= big:
        raise ValueError(f"start distance {r0} must lie in [{a}, {big}]")
    if dimension == 1:
        return (big - r0) / (big - a)
    if dimension == 2:
        return math.log(big / r0) / math.log(big / a)
    if dimension == 3:
        return (1.0 / r0 - 1.0 / big) / (1.0 / a - 1.0 / big)
    raise NotImplementedError(f"concentric splitting in {dimension} dimensions")
