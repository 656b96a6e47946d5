"""The yardsticks of ``sweep bench``: how fast this core can produce normals.

* :func:`limit_normals` is the **limit**: the in-register generator of
  :mod:`kernels.rng` (SFC64 in local variables, numpy's ziggurat inline) drawing d
  standard normals per walker-step and summing them, one sum per axis as a walk keeps
  one coordinate per axis, nothing stored. No sound kernel that draws its increments
  one by one can beat it: a walker-step needs at least its d normals.
* :func:`draw_normals` (from :mod:`kernels.walkers`) is the former ceiling: the same
  ziggurat drawn through a numpy ``Generator``'s bit generator, a call through a
  function pointer per draw, about half the limit's rate. Kept so that ``sweep bench``
  can print the former ratios beside the new ones for one release.

Numba's on-disk cache does not notice edits to :mod:`kernels.rng` from here (see its
docstring).
"""

from __future__ import annotations

from numba import njit

from kernels.rng import normal
from kernels.walkers import draw_normals

__all__ = ["draw_normals", "limit_normals"]


@njit(nogil=True, cache=True)
def limit_normals(state, n_steps, dimension):  # type: ignore[no-untyped-def]
    """Draw ``n_steps * dimension`` standard normals from the SFC64 ``state``.

    Parameters
    ----------
    state : uint64 (4,)
        SFC64 state (:func:`kernels.rng.initial_state`); overwritten with the state
        after the draws.
    n_steps : int
        Walker-steps.
    dimension : int
        Normals per walker-step (axes), >= 1.

    Returns
    -------
    float
        The sum of all draws (so the compiler cannot drop them).

    Notes
    -----
    One to three axes keep one running sum per axis in registers (the step loop of a
    walk in one to three dimensions: independent draws the core can overlap); more
    axes loop over them.
    """
    a, b, c, w = state[0], state[1], state[2], state[3]
    s0 = 0.0
    s1 = 0.0
    s2 = 0.0
    if dimension == 1:
        for _ in range(n_steps):
            z, a, b, c, w = normal(a, b, c, w)
            s0 += z
    elif dimension == 2:
        for _ in range(n_steps):
            z, a, b, c, w = normal(a, b, c, w)
            s0 += z
            z, a, b, c, w = normal(a, b, c, w)
            s1 += z
    elif dimension == 3:
        for _ in range(n_steps):
            z, a, b, c, w = normal(a, b, c, w)
            s0 += z
            z, a, b, c, w = normal(a, b, c, w)
            s1 += z
            z, a, b, c, w = normal(a, b, c, w)
            s2 += z
    else:
        for _ in range(n_steps):
            for _ in range(dimension):
                z, a, b, c, w = normal(a, b, c, w)
                s0 += z
    state[0], state[1], state[2], state[3] = a, b, c, w
    return s0 + s1 + s2
