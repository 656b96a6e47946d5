"""Splitting between concentric spheres (:mod:`sweep.analytic.concentric`, sheet
section J6) against a finite-difference solution.
"""

from __future__ import annotations

import numpy as np

FD_TOL = 1e-6


def test_concentric_splitting_is_the_harmonic_function_of_r() -> None:
    """J6 against a finite-difference solution of the radial Laplace equation
    u'' + (d - 1) u' / r = 0 with u(a) = 1, u(R) = 0 (an independent computation)."""
    from scipy.linalg import solve_banded

    from sweep.analytic import concentric_splitting

    a, big, n = 0.2, 1.0, 2001
    r = np.linspace(a, big, n)
    h = r[1] - r[0]
    inner = r[1:-1]
    for d in (1, 2, 3):
        below = 1.0 / h**2 - (d - 1) / (2 * h * inner)
        above = 1.0 / h**2 + (d - 1) / (2 * h * inner)
        bands = np.zeros((3, inner.size))
        bands[0, 1:] = above[:-1]
        bands[1, :] = -2.0 / h**2
        bands[2, :-1] = below[1:]
        rhs = np.zeros(inner.size)
        rhs[0] = -below[0]  # u(a) = 1 moved to the right-hand side
        u = solve_banded((1, 1), bands, rhs)
        for r0 in (0.3, 0.5, 0.9):
            fd = float(np.interp(r0, inner, u))
            assert abs(concentric_splitting(r0, a, big, d) - fd) < FD_TOL, (d, r0)
