"""A random stream kept in local variables: numpy's SFC64 and its samplers in numba.

A kernel that draws through a numpy ``Generator`` calls its bit generator through a
function pointer, so the compiler must assume the call touches memory: every position
and constant the loop keeps in arrays is reloaded after each draw, and nothing is
vectorised across draws. Here the generator's state is four ``uint64`` scalars that the
caller keeps in its own local variables, passes in and takes back::

    a, b, c, w = state[0], state[1], state[2], state[3]
    for ...:
        z, a, b, c, w = normal(a, b, c, w)
    state[:] = a, b, c, w          # optional: where the stream stopped

After LLVM inlines these small functions the state lives in registers and a draw is a
few integer operations plus one table look-up (the ziggurat's common case).

The stream is numpy's own: SFC64 (Chris Doty-Humphrey's Small Fast Chaotic generator,
a, b, c and the counter w; ``numpy/random/src/sfc64/sfc64.h``), seeded as
``numpy.random.SFC64(seed_sequence)`` seeds it (:func:`initial_state`), and the samplers
are numpy's ``Generator.random``, ``standard_normal`` (ziggurat with numpy's tables,
which numba ships) and ``wald``, draw for draw (tests/kernels/test_rng.py checks all of
them bit for bit against numpy). The one liberty: the ziggurat's random sign is applied
by multiplying with +-1 instead of a branch, whose mispredictions (half of all draws)
would cost about half the sampler's rate; the product is the same double.

Every integer constant is a ``uint64``: with plain int literals numba types mixed
uint64/int64 arithmetic as float64, which is both wrong (rounding) and slow.

Numba's on-disk cache does not notice edits to this file from kernels that call it
(the cache is keyed on the calling function's own file): after editing it, delete the
``__pycache__`` directories under ``kernels/`` (DEVELOPERS.md, "Debugging the kernels").
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

# numpy's ziggurat tables for doubles, as numba ships them for its own Generator support.
from numba.np.random._constants import (
    fi_double,
    ki_double,
    wi_double,
    ziggurat_nor_inv_r,
    ziggurat_nor_r,
)

__all__ = ["initial_state", "next_u64", "normal", "uniform", "wald"]

_U1 = np.uint64(1)
_U3 = np.uint64(3)
_U8 = np.uint64(8)
_U11 = np.uint64(11)
_U24 = np.uint64(24)
_U40 = np.uint64(40)
_LOW8 = np.uint64(0xFF)
_LOW52 = np.uint64(0x000FFFFFFFFFFFFF)
#: 2^-53: a 53-bit integer times this is a double in [0, 1), numpy's ``next_double``.
_TWO_M53 = 1.0 / 9007199254740992.0


def initial_state(seq: np.random.SeedSequence) -> np.ndarray:
    """The SFC64 state that ``numpy.random.SFC64(seq)`` starts from.

    Parameters
    ----------
    seq : numpy.random.SeedSequence
        The task's seed material (not advanced: ``generate_state`` has no side effect).

    Returns
    -------
    numpy.ndarray of uint64, shape (4,)
        ``(a, b, c, w)``: numpy's seeding, i.e. three words from
        ``seq.generate_state(3, uint64)``, the counter w = 1, then twelve outputs
        discarded (``sfc64_set_seed`` in numpy's ``sfc64.c``). A fresh array the
        kernel may overwrite with the final state.
    """
    words = seq.generate_state(3, np.uint64)
    a, b, c, w = (int(words[0]), int(words[1]), int(words[2]), 1)
    mask = (1 << 64) - 1
    for _ in range(12):
        tmp = (a + b + w) & mask
        w = (w + 1) & mask
        a = b ^ (b >> 11)
        b = (c + (c << 3)) & mask
        c = ((((c << 24) | (c >> 40)) & mask) + tmp) & mask
    return np.array([a, b, c, w], dtype=np.uint64)


@njit(nogil=True, cache=True)
def next_u64(a, b, c, w):  # type: ignore[no-untyped-def]
    """One SFC64 output; returns ``(x, a, b, c, w)`` with the advanced state (uint64)."""
    x = a + b + w
    w += _U1
    a = b ^ (b >> _U11)
    b = c + (c << _U3)
    c = ((c << _U24) | (c >> _U40)) + x
    return x, a, b, c, w


@njit(nogil=True, cache=True)
def uniform(a, b, c, w):  # type: ignore[no-untyped-def]
    """A double in [0, 1) (``Generator.random``); returns ``(u, a, b, c, w)``."""
    x, a, b, c, w = next_u64(a, b, c, w)
    return float(x >> _U11) * _TWO_M53, a, b, c, w


@njit(nogil=True, cache=True)
def normal(a, b, c, w):  # type: ignore[no-untyped-def]
    """A standard normal (``Generator.standard_normal``); returns ``(z, a, b, c, w)``.

    The ziggurat's common case (99 % of draws) is here, its tail, wedges and redraws in
    :func:`_normal_rare`, which is kept out of line so that callers inline only this.
    """
    r, a, b, c, w = next_u64(a, b, c, w)
    idx = r & _LOW8
    r >>= _U8
    rabs = (r >> _U1) & _LOW52
    x = float(np.int64(rabs)) * wi_double[idx]
    if rabs < ki_double[idx]:
        return x * (1.0 - 2.0 * float(np.int64(r & _U1))), a, b, c, w
    return _normal_rare(idx, r, rabs, x, a, b, c, w)


@njit(nogil=True, cache=True)
def _normal_rare(idx, r, rabs, x, a, b, c, w):  # type: ignore[no-untyped-def]
    """The ziggurat's rare branches with numpy's arithmetic: ``x`` is the unsigned
    candidate of the draw ``r`` (shifted by 8), which missed its rectangle."""
    while True:
        if r & _U1:
            x = -x
        if rabs < ki_double[idx]:
            return x, a, b, c, w
        if idx == 0:
            while True:
                u, a, b, c, w = uniform(a, b, c, w)
                xx = -ziggurat_nor_inv_r * math.log1p(-u)
                u, a, b, c, w = uniform(a, b, c, w)
                yy = -math.log1p(-u)
                if yy + yy > xx * xx:
                    if (rabs >> _U8) & _U1:
                        return -(ziggurat_nor_r + xx), a, b, c, w
                    return ziggurat_nor_r + xx, a, b, c, w
        else:
            u, a, b, c, w = uniform(a, b, c, w)
            if (fi_double[idx - 1] - fi_double[idx]) * u + fi_double[idx] < math.exp(
                -0.5 * x * x
            ):
                return x, a, b, c, w
        r, a, b, c, w = next_u64(a, b, c, w)
        idx = r & _LOW8
        r >>= _U8
        rabs = (r >> _U1) & _LOW52
        x = float(np.int64(rabs)) * wi_double[idx]


@njit(nogil=True, cache=True)
def wald(mean, shape, a, b, c, w):  # type: ignore[no-untyped-def]
    """An inverse-Gaussian variate (``Generator.wald(mean, shape)``: Michael, Schucany
    and Haas' transformation with numpy's arithmetic, as of numpy 2.3.4, which
    rationalised it); returns ``(x, a, b, c, w)``.

    ``mean`` > 0 and ``shape`` > 0 (numpy's ``scale``), in the caller's units.
    """
    y, a, b, c, w = normal(a, b, c, w)
    y = mean * y * y
    # mean + mean / (2 shape) (y - sqrt(4 shape y + y^2)), the smaller root, written
    # as numpy writes it since 2.3.4: the difference lost every digit for y >> shape
    # (negative variates when mean >> shape). y = 0 (z exactly 0) gives the limit,
    # mean, as numpy's 4 shape / 0 = inf does (numba would raise instead).
    if y > 0.0:
        x = mean * (1.0 - 2.0 / (1.0 + math.sqrt(1.0 + 4.0 * shape / y)))
    else:
        x = mean
    u, a, b, c, w = uniform(a, b, c, w)
    if u <= mean / (mean + x):
        return x, a, b, c, w
    return mean * mean / x, a, b, c, w
