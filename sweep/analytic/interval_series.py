"""Engines of the interval ``[0, L]``: argument checks, image sums and eigen-series.

Private to the interval family (:mod:`sweep.analytic.interval`,
:mod:`sweep.analytic.interval_moments`) and the box: the absorbing-absorbing (AA) and
reflecting-reflecting (RR) series and image sums, evaluated for times ``t > 0``, with
the switch between the two forms at ``IMAGE_SWITCH``.

Formulas, sources and their status: ``docs/analytic-reference.md``, sections C1-C5
and H.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import special

from sweep.analytic.series import (
    IMAGE_SWITCH,
    FloatArray,
    _eigen_sum,
    _finite,
    _image_sum,
    _log_ndtr_diff,
    _n_terms,
    _positive,
    _walls,
)


def _interval_start(x0: float, length: float) -> float:
    x0 = _finite("x0", x0)
    if not 0.0 <= x0 <= length:
        raise ValueError(f"x0 = {x0!r} must lie in [0, length = {length!r}]")
    return x0


def _aa_image(
    kind: str,
    t: FloatArray,
    x0: float,
    length: float,
    d: float,
    mu: float,
    x: FloatArray | None = None,
) -> FloatArray:
    """Image sums for the AA interval with drift (``kind``: survival, f0, fL, density).

    ``t`` (and ``x`` for the density) are 1-D arrays with ``t > 0``.  The drifted image
    forms follow from the Doob transform of sheet C2 applied to the image sums of C1
    [derived].
    """
    L = length
    s = np.sqrt(2.0 * d * t)
    mt = mu * t
    four_dt = 4.0 * d * t
    if kind == "survival":

        def term(k: int) -> FloatArray:
            l1 = mu * k * L / d + _log_ndtr_diff(
                (L - x0 - 2 * k * L - mt) / s, (-x0 - 2 * k * L - mt) / s
            )
            l2 = mu * (k * L - x0) / d + _log_ndtr_diff(
                (L + x0 - 2 * k * L - mt) / s, (x0 - 2 * k * L - mt) / s
            )
            return np.exp(l1) - np.exp(l2)

    elif kind == "f0":
        pref = 1.0 / (np.sqrt(np.pi * four_dt) * t)

        def term(k: int) -> FloatArray:
            c = x0 + 2 * k * L
            return c * pref * np.exp(-((c + mt) ** 2) / four_dt + mu * k * L / d)

    elif kind == "fL":
        pref = 1.0 / (np.sqrt(np.pi * four_dt) * t)

        def term(k: int) -> FloatArray:
            c = L - x0 + 2 * k * L
            return c * pref * np.exp(-((c - mt) ** 2) / four_dt - mu * k * L / d)

    elif kind == "density":
        assert x is not None
        pref = 1.0 / np.sqrt(np.pi * four_dt)

        def term(k: int) -> FloatArray:
            e1 = -((x - x0 - 2 * k * L - mt) ** 2) / four_dt + mu * k * L / d
            e2 = -((x + x0 - 2 * k * L - mt) ** 2) / four_dt + mu * (k * L - x0) / d
            return pref * (np.exp(e1) - np.exp(e2))

    else:  # pragma: no cover
        raise ValueError(kind)
    return _image_sum(term)


def _aa_eigen(
    kind: str,
    t: FloatArray,
    x0: float,
    length: float,
    d: float,
    mu: float,
    x: FloatArray | None = None,
) -> FloatArray:
    """Eigenfunction series for the AA interval with drift (sheet C1, C2)."""
    L = length
    a = mu / (2.0 * d)
    n_max = _n_terms(np.pi**2 * d * float(np.min(t)) / L**2)

    if kind == "survival":

        def term(n: FloatArray) -> FloatArray:
            k = n * np.pi / L
            en_t = d * (k**2 + a**2) * t
            sign = 1.0 - 2.0 * (n % 2.0)  # (-1)**n
            return (
                np.sin(k * x0)
                * k
                / (a**2 + k**2)
                * (np.exp(-a * x0 - en_t) - sign * np.exp(a * (L - x0) - en_t))
            )

        scale = 2.0 / L
    elif kind == "f0":

        def term(n: FloatArray) -> FloatArray:
            k = n * np.pi / L
            return k * np.sin(k * x0) * np.exp(-a * x0 - d * (k**2 + a**2) * t)

        scale = 2.0 * d / L
    elif kind == "fL":

        def term(n: FloatArray) -> FloatArray:
            k = n * np.pi / L
            sign = 1.0 - 2.0 * (n % 2.0)
            return (
                sign * k * np.sin(k * x0) * np.exp(a * (L - x0) - d * (k**2 + a**2) * t)
            )

        scale = -2.0 * d / L
    elif kind == "density":
        assert x is not None

        def term(n: FloatArray) -> FloatArray:
            k = n * np.pi / L
            return (
                np.sin(k * x0)
                * np.sin(k * x)
                * np.exp(a * (x - x0) - d * (k**2 + a**2) * t)
            )

        scale = 2.0 / L
    else:  # pragma: no cover
        raise ValueError(kind)
    return scale * _eigen_sum(n_max, term, t.size)


def _aa(
    kind: str,
    t: FloatArray,
    x0: float,
    length: float,
    d: float,
    mu: float,
    x: FloatArray | None = None,
) -> FloatArray:
    """AA interval quantity for 1-D ``t > 0``; images where ``D t / L**2 < IMAGE_SWITCH``.

    With drift the eigen-terms carry ``e^{a(x - x0) - a**2 D t}``, ``a = mu/(2D)``; the
    loss of relative accuracy is at most ``e^{|a|L - (aL)**2 D t/L**2} <= e^5`` for
    ``D t/L**2 >= 0.05``, so the same switch keeps the series well conditioned.
    """
    out = np.empty(t.shape)
    small = d * t / length**2 < IMAGE_SWITCH
    for mask, engine in ((small, _aa_image), (~small, _aa_eigen)):
        if np.any(mask):
            xm = None if x is None else x[mask]
            out[mask] = engine(kind, t[mask], x0, length, d, mu, xm)
    return out


def _rr_image(
    t: FloatArray, x: FloatArray, x0: float, length: float, d: float, mu: float
) -> FloatArray:
    """Image series for the RR propagator, with or without drift.

    For ``mu >= 0``, with ``b = mu/D`` and ``s = sqrt(2 D t)``::

        p = sum_m [ e^{b m L} g(x - x0 - 2mL - mu t) + e^{b(mL - x0)} g(x + x0 - 2mL - mu t) ]
            - b sum_{m<=0} e^{b(x - mL)} Phi(-(x + x0 - 2mL + mu t)/s)
            + b sum_{m>=1} e^{b(x - mL)} Phi( (x + x0 - 2mL + mu t)/s)

    and ``mu < 0`` follows from the mirror ``x -> L - x``.  Without drift this is the image
    sum of sheet C4 [C34].  With drift it is obtained [derived here] by Poisson summation of
    the C5 eigen-series; the m = 0 terms are the single-wall Harrison kernel (sheet G2) and
    the geometric tails of the continuous images cancel the stationary term exactly.  Every
    term is bounded (exponents combined), so the form stays well conditioned where the
    eigen-series suffers from the factor ``e^{a(x - x0)}``.
    """
    if mu < 0.0:
        return _rr_image(t, length - x, length - x0, length, d, -mu)
    L = length
    b = mu / d
    four_dt = 4.0 * d * t
    norm = 1.0 / np.sqrt(np.pi * four_dt)
    s = np.sqrt(2.0 * d * t)
    mt = mu * t

    def term(m: int) -> FloatArray:
        e1 = -((x - x0 - 2 * m * L - mt) ** 2) / four_dt + b * m * L
        e2 = -((x + x0 - 2 * m * L - mt) ** 2) / four_dt + b * (m * L - x0)
        val = norm * (np.exp(e1) + np.exp(e2))
        if mu != 0.0:
            z = (x + x0 - 2 * m * L + mt) / s
            if m <= 0:
                val -= b * np.exp(b * (x - m * L) + special.log_ndtr(-z))
            else:
                val += b * np.exp(b * (x - m * L) + special.log_ndtr(z))
        return val

    return _image_sum(term, min_pairs=3)


def _rr_stationary(x: FloatArray, length: float, d: float, mu: float) -> FloatArray:
    """Stationary density of RR with drift, ``(mu/D) e^{mu x/D} / (e^{mu L/D} - 1)``."""
    if mu == 0.0:
        return np.full(x.shape, 1.0 / length)
    b = mu / d
    if b > 0.0:
        return b * np.exp(b * (x - length)) / -math.expm1(-b * length)
    return b * np.exp(b * x) / math.expm1(b * length)


def _rr_eigen(
    t: FloatArray, x: FloatArray, x0: float, length: float, d: float, mu: float
) -> FloatArray:
    """Eigen-series for the RR propagator, with drift (sheet C4; C5 [derived])."""
    L = length
    a = mu / (2.0 * d)
    n_max = _n_terms(np.pi**2 * d * float(np.min(t)) / L**2)

    def term(n: FloatArray) -> FloatArray:
        k = n * np.pi / L
        psi_x = k * np.cos(k * x) + a * np.sin(k * x)
        psi_0 = k * np.cos(k * x0) + a * np.sin(k * x0)
        return (
            psi_x * psi_0 / (k**2 + a**2) * np.exp(a * (x - x0) - d * (k**2 + a**2) * t)
        )

    return _rr_stationary(x, L, d, mu) + (2.0 / L) * _eigen_sum(n_max, term, t.size)


def _interval_setup(
    x0: float, length: float, diffusivity: float, drift: float, walls: Sequence[str]
) -> tuple[float, float, float, float, tuple[str, str]]:
    length = _positive("length", length)
    d = _positive("diffusivity", diffusivity)
    mu = _finite("drift", drift)
    x0 = _interval_start(x0, length)
    return x0, length, d, mu, _walls(walls)


def _no_drift_closed_form(what: str, walls: tuple[str, str]) -> NotImplementedError:
    return NotImplementedError(
        f"{what} for walls={walls} with nonzero drift has no closed form in the reference "
        "sheet (the AR eigenvalues solve tan(kL) = 2Dk/mu; sheet C3); only the mean exit "
        "time is available"
    )


def _on_absorbing_wall(x0: float, length: float, walls: tuple[str, str]) -> bool:
    return (x0 == 0.0 and walls[0] == "absorbing") or (
        x0 == length and walls[1] == "absorbing"
    )
