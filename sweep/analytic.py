"""Closed-form and series results for first-passage problems of Brownian walkers.

Pure numpy/scipy reference implementations used to check the simulators.

Conventions (shared reference sheet, section 0)
------------------------------------------------
* Every Cartesian coordinate obeys ``dX = mu dt + sqrt(2 D) dW``, so each axis has variance
  ``2 D t``.  ``D`` (``diffusivity``) is in length**2 / time, ``mu`` (``drift``) in
  length / time, and ``mu > 0`` points towards ``+x``.
* "Survival" ``S(t) = P(T > t)``; "FPT density" ``f(t) = -dS/dt``; "propagator" or
  "density" is the density of *surviving* walkers, so ``integral p dx = S(t)``.
* Walls are ``"absorbing"`` (killed at first contact) or ``"reflecting"``.
* At ``t = 0`` survival is 1 and all densities are 0 (the initial delta function is not
  represented).  A walker that starts *on* an absorbing wall is killed at once: its survival
  is 0 for every ``t >= 0``.

Numerics
--------
Eigenfunction series are truncated once the neglected tail is below ``SERIES_RTOL`` (times a
safety factor of 1e-2) relative to the envelope of the slowest mode.  Where the dimensionless
time ``D t / L**2`` is below ``IMAGE_SWITCH`` (0.05, sheet section H) the method-of-images
sums are used instead; they are summed until the last pair of images changes the result by
less than ``SERIES_RTOL * 1e-2`` relative.

Citation markers follow the shared reference sheet (``docs/analytic-reference.md``):
[seen] = bibliographic data and key statement seen; [memory] = chapter / section / equation
number from memory, formula verified numerically; [derived] = derived (and verified) in the
sheet or in this module, no published source checked.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import integrate, special

__all__ = [
    "BETA",
    "IMAGE_SWITCH",
    "SERIES_RTOL",
    "ball_exit_cos_mean",
    "ball_mean_exit_time",
    "ball_survival",
    "box_mean_exit_time",
    "box_survival",
    "bridge_crossing_probability",
    "discrete_monitoring_shift",
    "free_covariance",
    "free_density",
    "free_mean",
    "free_variance",
    "halfline_fpt_density",
    "halfline_hit_probability",
    "halfline_mean_fpt",
    "halfline_survival",
    "interval_conditional_mean_exit_time",
    "interval_density",
    "interval_exit_density",
    "interval_fpt_density",
    "interval_mean_exit_time",
    "interval_second_moment",
    "interval_splitting",
    "interval_survival",
]

FloatArray = NDArray[np.float64]

#: Target relative accuracy of every truncated series or image sum in this module.
SERIES_RTOL: float = 1e-12

#: Below this dimensionless time ``D t / L**2`` the image sums replace eigen-series
#: (shared reference sheet, section H).
IMAGE_SWITCH: float = 0.05

#: Limiting mean overshoot of a Gaussian random walk per unit step standard deviation,
#: ``-zeta(1/2) / sqrt(2 pi)`` (sheet F1; Broadie, Glasserman & Kou 1997 [seen];
#: Chang & Peres 1997 [seen]).  Correctly rounded value of 0.58259715793901067...
BETA: float = float(-special.zeta(0.5) / math.sqrt(2.0 * math.pi))

_WALL_KINDS = ("absorbing", "reflecting")
_SAFETY = 1e-2  # extra margin on SERIES_RTOL for truncation decisions
_IMAGE_RTOL = SERIES_RTOL * _SAFETY
_TINY = 1e-300
_MAX_IMAGES = 10_000
_MAX_TERMS = 1_000_000
_CHUNK_ELEMENTS = 1 << 20
# |mu L / D| below which the drifted mean exit times return their mu -> 0 limit
_DRIFT_LIMIT = 1e-8
_SQRT2 = math.sqrt(2.0)

# ----------------------------------------------------------------------------------
# private helpers
# ----------------------------------------------------------------------------------


def _f64(value: ArrayLike) -> FloatArray:
    return np.asarray(value, dtype=np.float64)


def _time(t: ArrayLike) -> FloatArray:
    arr = _f64(t)
    if np.any(~((arr >= 0.0) & (arr < np.inf))):
        raise ValueError(f"time t must be finite and >= 0, got {t!r}")
    return arr


def _positive(name: str, value: float) -> float:
    value = float(value)
    if not (value > 0.0 and math.isfinite(value)):
        raise ValueError(f"{name} must be positive and finite, got {value!r}")
    return value


def _finite(name: str, value: float) -> float:
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"{name} must be finite, got {value!r}")
    return value


def _walls(walls: Sequence[str]) -> tuple[str, str]:
    if isinstance(walls, str) or len(walls) != 2:
        raise ValueError(f"walls must be a pair (low_kind, high_kind), got {walls!r}")
    low, high = (str(w) for w in walls)
    for kind in (low, high):
        if kind not in _WALL_KINDS:
            raise ValueError(f"wall kind must be one of {_WALL_KINDS}, got {kind!r}")
    return low, high


def _interval_start(x0: float, length: float) -> float:
    x0 = _finite("x0", x0)
    if not 0.0 <= x0 <= length:
        raise ValueError(f"x0 = {x0!r} must lie in [0, length = {length!r}]")
    return x0


def _n_terms(rate: float, shift: float = 0.0, power: float = 3.0) -> int:
    """Number of eigen-terms for a series with envelope ``n**power exp(-rate (n-shift)**2)``.

    Returns the smallest ``N`` (plus one for safety) such that the first neglected term,
    relative to the first term, is below ``SERIES_RTOL * _SAFETY``.
    """
    target = math.log(1.0 / (SERIES_RTOL * _SAFETY))
    base = rate * (1.0 - shift) ** 2
    n = shift + math.sqrt((target + base) / rate)
    for _ in range(4):
        n = shift + math.sqrt((target + base + power * math.log(n + 1.0)) / rate)
    n_int = int(math.ceil(n)) + 1
    if n_int > _MAX_TERMS:
        raise ValueError(
            f"eigen-series would need {n_int} terms (> {_MAX_TERMS}); the time is too "
            "small relative to the domain size for this series"
        )
    return n_int


def _eigen_sum(
    n_max: int, term: Callable[[FloatArray], FloatArray], size: int
) -> FloatArray:
    """Sum ``term(n)`` for n = 1..n_max; ``term`` maps an (m, 1) column to (m, size)."""
    total = np.zeros(size)
    chunk = max(1, min(n_max, _CHUNK_ELEMENTS // max(size, 1)))
    for start in range(1, n_max + 1, chunk):
        n = np.arange(start, min(start + chunk, n_max + 1), dtype=np.float64)[:, None]
        total += term(n).sum(axis=0)
    return total


def _image_sum(term: Callable[[int], FloatArray], min_pairs: int = 2) -> FloatArray:
    """Sum ``term(k)`` over all integers k, stopping once a pair (k, -k) is negligible.

    At least ``min_pairs`` pairs are always added (the terms decrease monotonically in
    ``|k|`` beyond that for every sum used in this module).
    """
    total = np.array(term(0), dtype=np.float64, copy=True)
    for k in range(1, _MAX_IMAGES):
        new = term(k) + term(-k)
        total += new
        if k >= min_pairs and np.all(
            np.abs(new) <= _IMAGE_RTOL * np.abs(total) + _TINY
        ):
            return total
    raise RuntimeError("image sum did not converge")  # pragma: no cover


def _log_ndtr_diff(b: FloatArray, a: FloatArray) -> FloatArray:
    """``log(Phi(b) - Phi(a))`` for ``b > a`` without cancellation in either tail."""
    out = np.empty(np.broadcast(a, b).shape)
    a, b = np.broadcast_arrays(a, b)
    right = a > 0.0
    la, lb = special.log_ndtr(-a[right]), special.log_ndtr(-b[right])
    out[right] = la + np.log1p(-np.exp(lb - la))
    left = ~right
    la, lb = special.log_ndtr(a[left]), special.log_ndtr(b[left])
    out[left] = lb + np.log1p(-np.exp(la - lb))
    return out


def _ndtr_diff(b: FloatArray, a: FloatArray) -> FloatArray:
    """``Phi(b) - Phi(a)`` for ``b >= a``, evaluated in the tail that avoids cancellation."""
    a, b = np.broadcast_arrays(_f64(a), _f64(b))
    return np.where(
        a >= 0.0,
        special.ndtr(-a) - special.ndtr(-b),
        np.where(
            b <= 0.0,
            special.ndtr(b) - special.ndtr(a),
            0.5 * (special.erf(b / _SQRT2) - special.erf(a / _SQRT2)),
        ),
    )


def _expm1_neg_plus(y: float) -> float:
    """``exp(-y) - 1 + y`` accurate also for small ``|y|``."""
    if abs(y) < 0.5:
        term, total = 1.0, 0.0
        for k in range(1, 30):
            term *= -y / k
            if k >= 2:
                total += term
        return total
    return math.expm1(-y) + y


def _fill_positive_times(
    t: FloatArray, at_zero: float, compute: Callable[[FloatArray], FloatArray]
) -> FloatArray:
    """Evaluate ``compute`` on the 1-D array of times ``t > 0``; ``at_zero`` at t = 0."""
    out = np.full(t.shape, at_zero, dtype=np.float64)
    pos = t > 0.0
    if np.any(pos):
        out[pos] = compute(t[pos])
    return out


# ----------------------------------------------------------------------------------
# A. free motion
# ----------------------------------------------------------------------------------


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


# ----------------------------------------------------------------------------------
# B. half-line
# ----------------------------------------------------------------------------------


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


# ----------------------------------------------------------------------------------
# C. interval, private engines
# ----------------------------------------------------------------------------------


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


# ----------------------------------------------------------------------------------
# C. interval, public API
# ----------------------------------------------------------------------------------


def interval_survival(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> FloatArray:
    """Survival probability in the interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time], any shape.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``x = L``.  Supported for AA and RR only.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``, each ``"absorbing"`` or ``"reflecting"``.

    Returns
    -------
    ndarray of float64
        ``S(t)``, shape of ``t``.

        * AA: ``(4/pi) sum_{n odd} sin(n pi x0/L)/n exp(-D (n pi/L)**2 t)`` (C1); with drift
          the C2 series ``(2/L) e^{-a x0 - mu**2 t/(4D)} sum_n sin(k_n x0) k_n
          (1 - (-1)**n e^{aL}) / (a**2 + k_n**2) e^{-D k_n**2 t}``, ``a = mu/(2D)``.  For
          ``D t/L**2 < 0.05`` the image sum (C1 [C2]; drifted version [derived] by the Doob
          transform) is used.
        * AR / RA (no drift): ``S_AR(t|x0; L) = S_AA(t|x0; 2L)`` (fold identity, C3).
        * RR: 1.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2, "First passage in an interval" and biased diffusion
    [memory for section and equation numbers]; H. S. Carslaw & J. C. Jaeger, *Conduction of
    Heat in Solids*, 2nd ed. (1959), Ch. III [memory]; Borodin & Salminen (2002), Part II,
    Ch. 1 [memory]; D. R. Cox & H. D. Miller, *The Theory of Stochastic Processes* (1965),
    Ch. 5 [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    t_arr = _time(t)
    if w == ("reflecting", "reflecting"):
        return np.ones(t_arr.shape)
    if _on_absorbing_wall(x0, L, w):
        return np.zeros(t_arr.shape)
    if w == ("absorbing", "absorbing"):
        start, span = x0, L
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("survival", w)
        start = x0 if w[0] == "absorbing" else L - x0
        span = 2.0 * L
    return _fill_positive_times(
        t_arr, 1.0, lambda tp: _aa("survival", tp, start, span, d, mu)
    )


def interval_exit_density(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
) -> tuple[FloatArray, FloatArray]:
    """Exit-time densities through each end of the AA interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; 0 is returned at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``x = L``.

    Returns
    -------
    (f_0, f_L) : tuple of ndarray of float64
        Densities [1/time] of exiting at 0 and at L; ``f_0 + f_L = -dS/dt``.  Series (C1,
        C2 [C22]): ``f_0 = (2D/L) e^{-a x0 - mu**2 t/(4D)} sum k_n sin(k_n x0) e^{-D k_n**2
        t}``, ``f_L = -(2D/L) e^{a(L-x0) - mu**2 t/(4D)} sum k_n (-1)**n sin(k_n x0)
        e^{-D k_n**2 t}``; for ``D t/L**2 < 0.05`` the image sums of C1 [C6, C7] (drifted
        version [derived]).

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Carslaw &
    Jaeger (1959), Ch. III [memory]; Cox & Miller (1965), Ch. 5 [memory].
    """
    x0, L, d, mu, _ = _interval_setup(
        x0, length, diffusivity, drift, ("absorbing", "absorbing")
    )
    t_arr = _time(t)
    if x0 in (0.0, L):
        return np.zeros(t_arr.shape), np.zeros(t_arr.shape)
    f0 = _fill_positive_times(t_arr, 0.0, lambda tp: _aa("f0", tp, x0, L, d, mu))
    fl = _fill_positive_times(t_arr, 0.0, lambda tp: _aa("fL", tp, x0, L, d, mu))
    return f0, fl


def interval_fpt_density(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> FloatArray:
    """First-passage (exit) time density ``f = -dS/dt`` in the interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; 0 is returned at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time]; supported for AA and RR only.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    ndarray of float64
        ``f(t)`` [1/time], shape of ``t``.  AA: ``f_0 + f_L`` (C1, C2); AR/RA (no drift):
        ``(2D/L) sum_m kappa_m sin(kappa_m x0) exp(-D kappa_m**2 t)``, ``kappa_m =
        (m + 1/2) pi/L`` (C3), evaluated through the fold onto AA on ``[0, 2L]``; RR: 0.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Carslaw &
    Jaeger (1959), Ch. III [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    t_arr = _time(t)
    if w == ("reflecting", "reflecting") or _on_absorbing_wall(x0, L, w):
        return np.zeros(t_arr.shape)
    if w == ("absorbing", "absorbing"):
        start, span = x0, L
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("FPT density", w)
        start = x0 if w[0] == "absorbing" else L - x0
        span = 2.0 * L

    def compute(tp: FloatArray) -> FloatArray:
        return _aa("f0", tp, start, span, d, mu) + _aa("fL", tp, start, span, d, mu)

    return _fill_positive_times(t_arr, 0.0, compute)


def interval_density(
    x: ArrayLike,
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    walls: Sequence[str] = ("absorbing", "absorbing"),
    drift: float = 0.0,
) -> FloatArray:
    """Propagator (density of surviving walkers) in the interval ``[0, L]``.

    Parameters
    ----------
    x : array_like
        Evaluation point(s) [length]; 0 outside ``[0, L]``.  Broadcast against ``t``.
    t : array_like
        Time(s) ``>= 0`` [time]; 0 at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.
    drift : float, optional
        ``mu`` [length/time]; supported for AA (C2) and RR (C5).

    Returns
    -------
    ndarray of float64
        ``p(x, t | x0)`` [1/length], broadcast shape of ``x`` and ``t``;
        ``integral_0^L p dx = S(t)``.

        * AA: ``(2/L) sum sin(k_n x0) sin(k_n x) e^{-D k_n**2 t}`` (C1), times
          ``exp(a(x - x0) - mu**2 t/(4D))`` with drift (C2); image sum for
          ``D t/L**2 < 0.05`` (C1 [C1]; drifted version [derived]).
        * AR / RA (no drift): ``p_AA,2L(x) + p_AA,2L(2L - x)`` (C3 fold identity).
        * RR (no drift): ``1/L + (2/L) sum cos(k_n x0) cos(k_n x) e^{-D k_n**2 t}``, image
          sum ``sum_k [g(x-x0-2kL) + g(x+x0-2kL)]`` for small times (C4).
        * RR with drift: ``p_inf(x) + (2/L) e^{a(x-x0)} sum psi_n(x) psi_n(x0)/(k_n**2 +
          a**2) e^{-D(k_n**2 + a**2) t}``, ``psi_n = k_n cos(k_n x) + a sin(k_n x)`` (C5).
          For ``D t/L**2 < 0.05`` an exact image series is used, obtained by Poisson
          summation of the C5 series [derived]; its m = 0 terms are the single-wall
          Harrison kernel of sheet G2.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory]; Carslaw & Jaeger (1959), Ch. III [memory];
    Cox & Miller (1965), Ch. 5 [memory].  The RR cosine series (C4) has no published source
    recorded in the sheet.  C5 is [derived] in the sheet (Sturm-Liouville expansion after
    the similarity transform); H. Risken, *The Fokker-Planck Equation* (1989), treats this
    class of problems [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    x_arr = _f64(x)
    t_arr = _time(t)
    x_b, t_b = np.broadcast_arrays(x_arr, t_arr)
    out = np.zeros(x_b.shape)
    inside = (x_b >= 0.0) & (x_b <= L) & (t_b > 0.0)
    if not np.any(inside) or _on_absorbing_wall(x0, L, w):
        return out
    xi, ti = x_b[inside], t_b[inside]
    if w == ("absorbing", "absorbing"):
        out[inside] = _aa("density", ti, x0, L, d, mu, xi)
    elif w == ("reflecting", "reflecting"):
        res = np.empty(ti.shape)
        eig = d * ti / L**2 >= IMAGE_SWITCH  # eigen loss <= e^5, see _aa
        if np.any(~eig):
            res[~eig] = _rr_image(ti[~eig], xi[~eig], x0, L, d, mu)
        if np.any(eig):
            res[eig] = _rr_eigen(ti[eig], xi[eig], x0, L, d, mu)
        out[inside] = res
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("propagator", w)
        if w[0] == "absorbing":
            start, xf = x0, xi
        else:
            start, xf = L - x0, L - xi
        out[inside] = _aa("density", ti, start, 2.0 * L, d, 0.0, xf) + _aa(
            "density", ti, start, 2.0 * L, d, 0.0, 2.0 * L - xf
        )
    return out


def interval_splitting(
    x0: float, length: float, diffusivity: float, drift: float = 0.0
) -> float:
    """Splitting probability ``P(exit at L)`` of the AA interval ``[0, L]``.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``L``.

    Returns
    -------
    float
        ``pi_L = x0/L`` without drift (C1 [C12]);
        ``(1 - exp(-mu x0/D)) / (1 - exp(-mu L/D))`` with drift (C2 [C24]), evaluated with
        ``expm1`` in a form that cannot overflow.

    Notes
    -----
    Sources: Redner (2001), Ch. 2, splitting probabilities and biased diffusion [memory];
    S. Karlin & H. M. Taylor, *A Second Course in Stochastic Processes* (1981), Ch. 15,
    scale function [memory]; Cox & Miller (1965), Ch. 5 [memory].
    """
    x0, L, d, mu, _ = _interval_setup(
        x0, length, diffusivity, drift, ("absorbing", "absorbing")
    )
    b = mu / d
    if b == 0.0:
        return x0 / L
    if b > 0.0:
        return math.expm1(-b * x0) / math.expm1(-b * L)
    return math.exp(b * (L - x0)) * math.expm1(b * x0) / math.expm1(b * L)


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
    The harmonic function of r with value 1 on the inner and 0 on the outer sphere
    (analytic reference J6; Redner (2001), Ch. 6 [memory]). Independent of D.
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


def interval_mean_exit_time(
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> float:
    """Mean exit (absorption) time from the interval ``[0, L]``.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``L``.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    float
        Mean exit time [time].

        * AA: ``x0 (L - x0)/(2D)`` (C1 [C8]); with drift ``(L pi_L - x0)/mu`` (C2 [C25]).
        * AR: ``x0 (2L - x0)/(2D)`` (C3 [C30]); with drift
          ``-x0/mu + (D/mu**2) e^{mu L/D} (1 - e^{-mu x0/D})`` (C3 [C33b]).
        * RA: AR mirrored, ``x0 -> L - x0``, ``mu -> -mu``.
        * RR: ``inf``.

        When ``|mu L / D| < 1e-8`` the ``mu -> 0`` limit is returned.  Otherwise the drifted
        formulas are evaluated in cancellation-free rearrangements (e.g. AA:
        ``[L q(b x0) - x0 q(b L)] / (mu expm1(-b L))`` with ``q(y) = e^{-y} - 1 + y``,
        ``b = mu/D``).

    Notes
    -----
    Sources: Redner (2001), Ch. 2, unconditional exit times, biased diffusion, reflecting /
    absorbing interval [memory]; Karlin & Taylor (1981), Ch. 15, scale function and speed
    measure [memory]; Cox & Miller (1965), Ch. 5 [memory]; Carslaw & Jaeger (1959),
    Ch. III [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    if w == ("reflecting", "reflecting"):
        return math.inf
    b = mu / d
    small_drift = abs(b * L) < _DRIFT_LIMIT
    if w == ("absorbing", "absorbing"):
        if small_drift:
            return x0 * (L - x0) / (2.0 * d)
        if abs(b * L) <= 1.0:
            num = L * _expm1_neg_plus(b * x0) - x0 * _expm1_neg_plus(b * L)
            return num / (mu * math.expm1(-b * L))
        return (L * interval_splitting(x0, L, d, mu) - x0) / mu
    # AR, or RA mirrored onto AR
    if w[0] == "reflecting":
        x0, b, mu = L - x0, -b, -mu
    if small_drift:
        return x0 * (2.0 * L - x0) / (2.0 * d)
    if b * L >= -1.0:
        bl = b * L
        if bl > 700.0:
            log_val = bl + math.log(-math.expm1(-b * x0)) - math.log(d * b * b)
            return math.exp(log_val) if log_val < 709.0 else math.inf
        num = math.expm1(bl) * -math.expm1(-b * x0) - _expm1_neg_plus(b * x0)
        return num / (d * b * b)
    # strong drift toward the absorbing end: direct form, both exponentials <= 1
    return -x0 / mu - (d / mu**2) * math.exp(b * (L - x0)) * -math.expm1(b * x0)


def interval_second_moment(
    x0: float,
    length: float,
    diffusivity: float,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> float:
    """Second moment ``E[T**2]`` of the exit time from ``[0, L]`` without drift.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    float
        ``E[T**2]`` [time**2]: AA ``x0 (L - x0)(L**2 + L x0 - x0**2)/(12 D**2)`` (C1 [C10]);
        AR ``(8 L**3 x0 - 4 L x0**3 + x0**4)/(12 D**2)`` (C3 [C31]); RA mirrored; RR ``inf``.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Borodin &
    Salminen (2002), Part II, Ch. 1, exit time from an interval [memory].
    """
    x0, L, d, _, w = _interval_setup(x0, length, diffusivity, 0.0, walls)
    if w == ("reflecting", "reflecting"):
        return math.inf
    if w == ("absorbing", "absorbing"):
        return x0 * (L - x0) * (L**2 + L * x0 - x0**2) / (12.0 * d**2)
    if w[0] == "reflecting":
        x0 = L - x0
    return (8.0 * L**3 * x0 - 4.0 * L * x0**3 + x0**4) / (12.0 * d**2)


def interval_conditional_mean_exit_time(
    x0: float, length: float, diffusivity: float
) -> tuple[float, float]:
    """Conditional mean exit times of the AA interval ``[0, L]`` without drift.

    Parameters
    ----------
    x0 : float
        Start position in ``(0, L)`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].

    Returns
    -------
    (E[T | exit at 0], E[T | exit at L]) : tuple of float
        ``x0 (2L - x0)/(6D)`` (C1 [C15]) and ``(L**2 - x0**2)/(6D)`` (C1 [C14]) [time].

    Notes
    -----
    Sources: Redner (2001), Ch. 2, conditional exit times [memory for section and equation
    numbers].
    """
    x0, L, d, _, _ = _interval_setup(
        x0, length, diffusivity, 0.0, ("absorbing", "absorbing")
    )
    return x0 * (2.0 * L - x0) / (6.0 * d), (L**2 - x0**2) / (6.0 * d)


# ----------------------------------------------------------------------------------
# D. box
# ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Axis:
    """One axis of a box, reduced to a canonical 1-D problem.

    kind: "free" (never absorbs), "interval" (finite, at least one absorbing wall) or
    "halfline" (absorbing wall at distance ``x0``; ``mu > 0`` means away from the wall).
    """

    kind: str
    x0: float
    length: float
    walls: tuple[str, str]
    d: float
    mu: float

    def survival(self, t: FloatArray) -> FloatArray:
        if self.kind == "free":
            return np.ones(t.shape)
        if self.kind == "halfline":
            return halfline_survival(t, self.x0, self.d, self.mu)
        return interval_survival(t, self.x0, self.length, self.d, self.mu, self.walls)

    def decay(self) -> tuple[str, float]:
        """Long-time behaviour of S: ("exp", rate), ("algebraic", 0) or ("none", 0)."""
        if self.kind == "free":
            return "none", 0.0
        if self.kind == "halfline":
            if self.mu < 0.0:
                return "exp", self.mu**2 / (4.0 * self.d)
            return ("algebraic", 0.0) if self.mu == 0.0 else ("none", 0.0)
        if self.walls == ("absorbing", "absorbing"):
            rate = self.d * (np.pi / self.length) ** 2 + self.mu**2 / (4.0 * self.d)
            return "exp", float(rate)
        return "exp", float(self.d * (np.pi / (2.0 * self.length)) ** 2)

    def mean(self) -> float:
        if self.kind == "free":
            return math.inf
        if self.kind == "halfline":
            return halfline_mean_fpt(self.x0, self.d, self.mu)
        return interval_mean_exit_time(
            self.x0, self.length, self.d, self.mu, self.walls
        )

    def time_scales(self) -> list[float]:
        if self.kind == "halfline":
            dists = [self.x0]
        elif self.kind == "interval":
            dists = [
                dist
                for dist, kind in zip(
                    (self.x0, self.length - self.x0), self.walls, strict=True
                )
                if kind == "absorbing"
            ]
        else:
            dists = []
        return [dist**2 / self.d for dist in dists if dist > 0.0]


def _box_axes(
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None,
) -> list[_Axis]:
    x0_a = np.atleast_1d(_f64(x0))
    lo_a = np.atleast_1d(_f64(lower))
    hi_a = np.atleast_1d(_f64(upper))
    dim = x0_a.size
    if x0_a.ndim != 1 or lo_a.shape != (dim,) or hi_a.shape != (dim,):
        raise ValueError("x0, lower and upper must be sequences of the same length d")
    if len(walls) != dim:
        raise ValueError("walls must hold one (low_kind, high_kind) pair per axis")
    d_a = np.broadcast_to(_f64(diffusivity), (dim,))
    mu_a = np.zeros(dim) if drift is None else np.atleast_1d(_f64(drift))
    if mu_a.shape != (dim,):
        raise ValueError("drift must be None or a sequence of length d")
    axes = []
    for i in range(dim):
        lo, hi, xi = float(lo_a[i]), float(hi_a[i]), float(x0_a[i])
        w = _walls(walls[i])
        di = _positive(f"diffusivity[{i}]", float(d_a[i]))
        mi = _finite(f"drift[{i}]", float(mu_a[i]))
        if not lo < hi or math.isnan(lo) or math.isnan(hi):
            raise ValueError(f"axis {i}: need lower < upper, got {lo!r}, {hi!r}")
        if not (lo <= xi <= hi and math.isfinite(xi)):
            raise ValueError(f"axis {i}: x0 = {xi!r} outside [{lo!r}, {hi!r}]")
        lo_fin, hi_fin = math.isfinite(lo), math.isfinite(hi)
        if lo_fin and hi_fin:
            if w == ("reflecting", "reflecting"):
                axes.append(_Axis("free", xi - lo, hi - lo, w, di, mi))
            else:
                axes.append(_Axis("interval", xi - lo, hi - lo, w, di, mi))
        elif lo_fin and w[0] == "absorbing":
            axes.append(_Axis("halfline", xi - lo, math.inf, w, di, mi))
        elif hi_fin and w[1] == "absorbing":
            axes.append(_Axis("halfline", hi - xi, math.inf, w, di, -mi))
        else:
            axes.append(_Axis("free", 0.0, math.inf, w, di, mi))
    return axes


def box_survival(
    t: ArrayLike,
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None = None,
) -> FloatArray:
    """Survival probability in a box ``prod_i [lower_i, upper_i]`` (product rule).

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time], any shape.
    x0, lower, upper : sequence of float, length d
        Start point and per-axis bounds [length]; bounds may be ``-inf`` / ``inf``.
    walls : sequence of (str, str), length d
        ``(kind at lower, kind at upper)`` per axis.  The kind given for an infinite side
        is ignored (a wall at infinity is never reached).
    diffusivity : float or sequence of float
        ``D`` [length**2/time], isotropic or per axis.
    drift : sequence of float or None, optional
        Per-axis drift ``mu_i`` [length/time], ``mu_i > 0`` toward ``upper_i``.

    Returns
    -------
    ndarray of float64
        ``S_box(t) = prod_i S_i(t)``, shape of ``t``.  Axes with both sides infinite, with
        only reflecting finite walls, or RR intervals contribute 1; an axis with one finite
        absorbing side is a half-line (``halfline_survival``); a finite axis is an interval
        (``interval_survival``).

    Raises
    ------
    NotImplementedError
        An AR/RA axis with nonzero drift.

    Notes
    -----
    Sheet section D: the coordinates are independent, so the survival factorises.  Sources:
    Carslaw & Jaeger (1959), Ch. VI, rectangular parallelepiped, product solutions
    [memory]; the product rule itself follows from independence.
    """
    t_arr = _time(t)
    axes = _box_axes(x0, lower, upper, walls, diffusivity, drift)
    out = np.ones(t_arr.shape)
    for axis in axes:
        out *= axis.survival(t_arr)
    return out


def box_mean_exit_time(
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None = None,
) -> float:
    """Mean exit time from a box, ``E[T] = integral_0^inf prod_i S_i(t) dt``.

    Parameters
    ----------
    x0, lower, upper, walls, diffusivity, drift
        As in :func:`box_survival`.

    Returns
    -------
    float
        ``E[T]`` [time].  If only one axis can absorb, the 1-D closed form is returned
        (``interval_mean_exit_time`` or ``halfline_mean_fpt``).  Otherwise the integral is
        computed with ``scipy.integrate.quad`` (relative tolerance 1e-11) on ``[0, T_max]``,
        where ``T_max`` is chosen from the summed exponential decay rates of the axes
        (``D pi**2/L**2 + mu**2/(4D)`` for AA, ``D pi**2/(4 L**2)`` for AR, ``v**2/(4D)`` for
        a half-line with drift toward its wall) so that the neglected tail is below 1e-12
        relative.  Returns ``inf`` when no axis can absorb, or when ``prod S_i`` is not
        integrable: no exponentially decaying axis and fewer than three driftless
        half-lines (``S ~ t**(-1/2)`` each).  With three or more driftless half-lines and
        no exponential axis the integral is taken to infinity by ``quad``.

    Notes
    -----
    Sheet section D [D1, D5]: the mean exit time does not factorise and has no elementary
    closed form.  Sources: Carslaw & Jaeger (1959), Ch. VI [memory]; the square's value
    (torsion function) is classical, e.g. Timoshenko & Goodier, *Theory of Elasticity*
    [memory].
    """
    axes = _box_axes(x0, lower, upper, walls, diffusivity, drift)
    active = [axis for axis in axes if axis.kind != "free"]
    if not active:
        return math.inf
    if len(active) == 1:
        return active[0].mean()
    for axis in active:
        if (axis.kind == "halfline" and axis.x0 == 0.0) or (
            axis.kind == "interval"
            and _on_absorbing_wall(axis.x0, axis.length, axis.walls)
        ):
            return 0.0
    decays = [axis.decay() for axis in active]
    rate = sum(r for kind, r in decays if kind == "exp")
    n_alg = sum(1 for kind, _ in decays if kind == "algebraic")
    if rate == 0.0 and n_alg < 3:
        return math.inf

    def surv(tt: float) -> float:
        arr = np.array([tt])
        val = 1.0
        for axis in active:
            val *= float(axis.survival(arr)[0])
        return val

    scales = sorted({s for axis in active for s in axis.time_scales()})
    opts = {"epsabs": 0.0, "epsrel": 1e-11, "limit": 500}
    if rate == 0.0:
        t1 = max(scales)
        head = integrate.quad(surv, 0.0, t1, points=scales[:-1] or None, **opts)[0]
        tail = integrate.quad(surv, t1, math.inf, **opts)[0]
        return head + tail
    t_max = 40.0 / rate
    for _ in range(60):
        pts = [s for s in [*scales, 1.0 / rate] if s < t_max] or None
        value = integrate.quad(surv, 0.0, t_max, points=pts, **opts)[0]
        if surv(t_max) / rate <= SERIES_RTOL * value:
            return value
        t_max *= 2.0
    raise RuntimeError("box_mean_exit_time: survival did not decay")  # pragma: no cover


# ----------------------------------------------------------------------------------
# E. ball
# ----------------------------------------------------------------------------------

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


# ----------------------------------------------------------------------------------
# F. discrete monitoring
# ----------------------------------------------------------------------------------


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


# ----------------------------------------------------------------------------------
# first exit time of a d-ball from its centre (the "spheres" scheme's jump law)
# ----------------------------------------------------------------------------------

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
    ``d tau / d s`` per unit ``s``."""
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
