"""Series helpers shared by every family of closed forms.

Argument checks (times, positive and finite parameters, wall kinds), the truncation of
eigenfunction series and of method-of-images sums to ``SERIES_RTOL``, and differences of
normal CDFs without cancellation. The families import these; nothing here is a closed
form itself.

Eigenfunction series are truncated once the neglected tail is below ``SERIES_RTOL``
(times a safety factor of 1e-2) relative to the envelope of the slowest mode. Where the
dimensionless time ``D t / L**2`` is below ``IMAGE_SWITCH`` (0.05, sheet section H) the
method-of-images sums are used instead; they are summed until the last pair of images
changes the result by less than ``SERIES_RTOL * 1e-2`` relative.

Series versus images: ``docs/analytic-reference.md``, section H.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special

FloatArray = NDArray[np.float64]

#: Target relative accuracy of every truncated series or image sum in this module.
SERIES_RTOL: float = 1e-12

#: Below this dimensionless time ``D t / L**2`` the image sums replace eigen-series
#: (shared reference sheet, section H).
IMAGE_SWITCH: float = 0.05

_WALL_KINDS = ("absorbing", "reflecting")
_SAFETY = 1e-2  # extra margin on SERIES_RTOL for truncation decisions
_IMAGE_RTOL = SERIES_RTOL * _SAFETY
_TINY = 1e-300
_MAX_IMAGES = 10_000
_MAX_TERMS = 1_000_000
_CHUNK_ELEMENTS = 1 << 20
_SQRT2 = math.sqrt(2.0)


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
