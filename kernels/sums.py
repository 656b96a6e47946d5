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
"""

from __future__ import annotations

import numpy as np
from numba import njit

#: Room for the partials: non-overlapping doubles number at most about 40 (the
#: exponent range over 53 bits); more than enough.
MAX_PARTIALS = 256


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
