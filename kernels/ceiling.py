"""The speed limit of a walker kernel: drawing d standard normals per walker-step.

Used by ``sweep bench`` as the denominator of throughput ratios. Same rules as every
kernel: numba ``njit(nogil=True)``, a Generator passed in, no I/O.
"""

from __future__ import annotations

from numba import njit


@njit(nogil=True, cache=True)
def draw_normals(rng, n_steps, dimension):  # type: ignore[no-untyped-def]
    """Draw ``n_steps * dimension`` standard normals as a d-dimensional walk would.

    Returns the sum so the compiler cannot drop the draws. The d draws of one step are
    independent (like a kernel's axis loop), so they can overlap in the pipeline.
    """
    total = 0.0
    for _ in range(n_steps):
        for _ in range(dimension):
            total += rng.standard_normal()
    return total
