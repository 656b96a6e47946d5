"""Exactly rounded sums of float64 arrays, compiled: the value ``math.fsum`` gives.

Pure computation: numba ``njit(nogil=True)``, no I/O, no validation. Used for the
first-passage-time moments every task stores in its marker
(``sweep.precision.chunk_moments``), which must not depend on how numpy vectorises a
sum on a given machine. ``math.fsum`` gives that, but through a Python list it costs
about 10 ms per 10^5 walkers, half of what a task spends outside its kernel in a short
1-D run; this loop takes well under a millisecond.

The algorithm is the one of CPython's ``math.fsum`` (Shewchuk's non-overlapping
partials, then a final rounding that respects round-half-even across partials). An
exactly rounded sum is unique, so the result equals ``math.fsum``'s bit for bit for
finite inputs whose partial sums stay finite (tested against it); the caller falls back
to ``math.fsum`` when the result is not finite.

For non-negative finite inputs (first-passage times and squared deviations),
:func:`nonnegative_sum_buckets` is several times faster: a superaccumulator that adds
every value's integer mantissa, exactly, into a bucket per binary exponent; the caller
turns the buckets into one Python integer and rounds it once (``sweep.precision``).
"""

from __future__ import annotations

import numpy as np
from numba import njit

#: Room for the partials: non-overlapping doubles number at most about 40 (the
#: exponent range over 53 bits); more than enough.
MAX_PARTIALS = 256

#: Buckets of :func:`nonnegative_sum_buckets`: bucket ``b`` counts units of
#: ``2**(b - SCALE_BITS)``. A double is ``mantissa * 2**(shift - SCALE_BITS)`` with a
#: mantissa below ``2**53`` and ``shift`` = its biased exponent field (1 for
#: subnormals, whose field is 0), so shifts run 1..2046; the sum of fewer than
#: ``2**63`` of them stays below ``2**(2046 + HEADROOM)`` (see there), which needs
#: buckets up to 2046 + HEADROOM = 2163.
BUCKETS = 2176
#: ``2**SCALE_BITS`` is the unit of bucket 0: 2**1074 for the subnormals' last bit
#: times the 2 their shift of 1 stands for.
SCALE_BITS = 1075
#: Values added between carry normalisations (proof in nonnegative_sum_buckets).
NORMALISE_EVERY = 256
#: Bits above the highest shift seen that the running sum can reach: a sum of k < 2**63
#: values each below 2**(53 + hi) is below 2**(hi + 53 + 63) = 2**(hi + 116).
HEADROOM = 117


@njit(nogil=True, cache=True)
def exact_sum(values):  # type: ignore[no-untyped-def]
    """Exactly rounded sum of ``values`` (float64 (n,)); NaN if the partials overflow
    their room (never for finite doubles) or a partial becomes infinite."""
    p = np.empty(MAX_PARTIALS)
    n = 0
    for k in range(values.shape[0]):
        x = values[k]
        i = 0
        for j in range(n):
            y = p[j]
            if abs(x) < abs(y):
                x, y = y, x
            hi = x + y
            lo = y - (hi - x)
            if lo != 0.0:
                p[i] = lo
                i += 1
            x = hi
        n = i
        if x != 0.0:
            if n == MAX_PARTIALS or not np.isfinite(x):
                return np.nan
            p[n] = x
            n += 1
    hi = 0.0
    if n > 0:
        n -= 1
        hi = p[n]
        lo = 0.0
        # Sum from the top, stopping at the first inexact addition.
        while n > 0:
            x = hi
            n -= 1
            y = p[n]
            hi = x + y
            lo = y - (hi - x)
            if lo != 0.0:
                break
        # Round half-even correctly when the rest of the partials tip the balance.
        if n > 0 and ((lo < 0.0 and p[n - 1] < 0.0) or (lo > 0.0 and p[n - 1] > 0.0)):
            y = lo * 2.0
            x = hi + y
            if y == x - hi:
                hi = x
    return hi


@njit(nogil=True, cache=True)
def _normalise(acc, lo, top):  # type: ignore[no-untyped-def]
    """Carry buckets ``lo .. top - 1`` upwards, leaving each 0 or 1."""
    for b in range(lo, top):
        acc[b + 1] += acc[b] >> 1
        acc[b] &= 1


@njit(nogil=True, cache=True)
def nonnegative_sum_buckets(bits):  # type: ignore[no-untyped-def]
    """The exact sum of non-negative finite doubles, as binary digits by exponent.

    ``bits``: the values' IEEE 754 bits (``values.view(np.int64)``, (n,)). Returns
    ``(acc, ok)``: ``acc`` int64 (BUCKETS,) with the exact sum equal to
    ``sum(acc[b] * 2**(b - SCALE_BITS))``, every bucket 0 or 1; ``ok`` False (and
    ``acc`` meaningless) if any value is negative, -0.0, infinite or NaN.

    No int64 overflows (the proof). After each normalisation over ``lo .. top - 1``
    with ``top = min(hi + HEADROOM, BUCKETS - 1)`` (``lo``, ``hi``: the lowest and
    highest shift seen) the buckets below ``top`` are binary digits; buckets above
    ``hi`` only ever receive carries, and the running sum S is below ``2**top``
    (HEADROOM), so the digits below ``top`` already make S and bucket ``top`` and all
    above are 0. Until the next normalisation at most NORMALISE_EVERY = 256 mantissas,
    each below 2**53, arrive, so any bucket holds at most 1 + 256 (2**53 - 1) < 2**61.
    During the carry pass, the carry ``c`` out of bucket b is ``(acc[b] + c') >> 1``
    with ``c'`` the carry into it; by induction ``c < 2**61``, so ``acc[b] + c' <
    2**62`` and the pass never exceeds int64 (below 2**63).
    """
    acc = np.zeros(BUCKETS, np.int64)
    lo = BUCKETS
    hi = 0
    pending = 0
    for k in range(bits.shape[0]):
        x = bits[k]
        field = x >> 52
        if x < 0 or field == 2047:  # sign bit set, or inf/NaN
            return acc, False
        mantissa = x & 0xFFFFFFFFFFFFF
        if field == 0:
            if mantissa == 0:
                continue  # +0.0
            shift = 1  # subnormal: no implicit bit, the exponent of field 1
        else:
            mantissa |= 0x10000000000000
            shift = field
        acc[shift] += mantissa
        lo = min(lo, shift)
        hi = max(hi, shift)
        pending += 1
        if pending == NORMALISE_EVERY:
            _normalise(acc, lo, min(hi + HEADROOM, BUCKETS - 1))
            pending = 0
    if lo < BUCKETS:
        _normalise(acc, lo, min(hi + HEADROOM, BUCKETS - 1))
    return acc, True
