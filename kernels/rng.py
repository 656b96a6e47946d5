"""TEMPORARY stand-in for issue-18g's kernels/rng.py (same API); replaced before merge.

SFC64 state in four uint64 locals ``(a, b, c, w)``; Box-Muller normals.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

_U11 = np.uint64(11)
_U24 = np.uint64(24)
_U40 = np.uint64(40)
_U3 = np.uint64(3)
_U1 = np.uint64(1)
_TWO_M53 = 1.0 / 9007199254740992.0


def initial_state(seq: np.random.SeedSequence) -> np.ndarray:
    """SFC64 state as numpy.random.SFC64(seq) seeds it."""
    return np.random.SFC64(seq).state["state"]["state"].astype(np.uint64).copy()


@njit(nogil=True, cache=True)
def next_u64(a, b, c, w):  # type: ignore[no-untyped-def]
    tmp = a + b + w
    w = w + _U1
    a = b ^ (b >> _U11)
    b = c + (c << _U3)
    c = ((c << _U24) | (c >> _U40)) + tmp
    return tmp, a, b, c, w


@njit(nogil=True, cache=True)
def uniform(a, b, c, w):  # type: ignore[no-untyped-def]
    x, a, b, c, w = next_u64(a, b, c, w)
    return float(x >> _U11) * _TWO_M53, a, b, c, w


@njit(nogil=True, cache=True)
def normal(a, b, c, w):  # type: ignore[no-untyped-def]
    u1, a, b, c, w = uniform(a, b, c, w)
    u2, a, b, c, w = uniform(a, b, c, w)
    z = math.sqrt(-2.0 * math.log1p(-u1)) * math.cos(2.0 * math.pi * u2)
    return z, a, b, c, w


@njit(nogil=True, cache=True)
def wald(mean, shape, a, b, c, w):  # type: ignore[no-untyped-def]
    mu_2l = mean / (2.0 * shape)
    y, a, b, c, w = normal(a, b, c, w)
    y = mean * y * y
    x = mean + mu_2l * (y - math.sqrt(4.0 * shape * y + y * y))
    u, a, b, c, w = uniform(a, b, c, w)
    if u <= mean / (mean + x):
        return x, a, b, c, w
    return mean * mean / x, a, b, c, w
