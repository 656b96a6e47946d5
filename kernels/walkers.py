"""The walker kernel: Brownian walkers in a box or ball, with absorbing targets.

Pure computation: numba ``njit(nogil=True)``, the task's random stream passed in (SFC64's
state, kept in local variables by :mod:`kernels.rng`; one per task, never shared between
threads), preallocated outputs, no I/O, no validation.

Where things are: the step loop is written once, in the template ``kernels/step.py``,
and generated per kind of domain and dimension into ``kernels/_loops.py`` (do not
edit; ``python -m kernels.generate``). This module holds :func:`simulate`, a
plain-Python dispatcher to those loops; the normal sampler; the generator seam
(:func:`draw_normal`, :func:`draw_uniform`, :func:`draw_wald`, the only way the loops
draw); and the helpers the loops call. The inputs are the named structures of
:mod:`kernels.inputs`. numba's on-disk cache keys a function by its own file, so the
generated module carries a digest of this one: edit a helper here, regenerate.

Each axis moves as ``dX = drift dt + sqrt(2 D) dW``; a step draws one standard normal
per axis. Walls:

* reflecting flat wall: the increment is mirrored (exact in law without drift);
* reflecting ball surface and obstacles: radial mirror image;
* reactive (partially absorbing) surfaces: Skorokhod push, reacting when the
  boundary local time passes an exponential threshold (:func:`_react`);
* periodic faces: positions wrapped into the cell, widths crossed counted;
* absorbing wall, target or ball surface: a walker whose step ends beyond it is absorbed.
  With ``bridge`` on, a walker whose step ends inside is also absorbed with the
  Brownian-bridge crossing probability ``exp(-(a - x1)(a - x2) / (D dt))`` (curved
  surfaces: distances to the tangent plane), and the absorption time is drawn from the
  bridge's conditional hitting-time law instead of the step end. This makes the
  first-passage bias O(dt) instead of O(sqrt(dt)) (exact for a single flat wall).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numba import njit

# numpy's ziggurat tables and the raw bit-generator calls, as numba ships them for its
# own Generator support: the former normal sampler, on a Generator's bit generator, for
# `sweep bench`'s former ceiling (tests/kernels/test_walkers.py checks that _normal
# reproduces numpy's standard_normal stream bit for bit).
from numba.np.random._constants import (
    fi_double,
    ki_double,
    wi_double,
    ziggurat_nor_inv_r,
    ziggurat_nor_r,
)
from numba.np.random.generator_core import next_double, next_uint64
from numpy.typing import NDArray

from kernels import inputs, rng
from kernels.inputs import Geometry, Motion, Outputs, Recording


@njit(nogil=True, cache=True)
def _normal(bits):  # type: ignore[no-untyped-def]
    """One standard normal from ``bits`` (a Generator's ``bit_generator``).

    numpy's ziggurat draw for draw, so the stream equals ``rng.standard_normal()``'s;
    but the random sign is applied by multiplying with +-1 instead of by a branch, whose
    mispredictions (half of all draws) cost numba's own version about half its rate on
    the development machines (docs/kernels.md). Every integer constant is a
    uint64: with plain int literals numba types the masks as int64 and compares the
    mixed-sign ``rabs < ki_double[idx]`` in floating point, a conversion that cost the
    kernels about 10 % (same-run A/B; exact either way, as the values are below 2^53).
    """
    r = next_uint64(bits)
    idx = r & np.uint64(0xFF)
    r >>= np.uint64(8)
    rabs = (r >> np.uint64(1)) & np.uint64(0x000FFFFFFFFFFFFF)
    x = float(np.int64(rabs)) * wi_double[idx]
    if rabs < ki_double[idx]:
        return x * (1.0 - 2.0 * float(np.int64(r & np.uint64(1))))
    return _normal_rare(bits, idx, r, rabs, x)


@njit(nogil=True, cache=True)
def _normal_rare(bits, idx, r, rabs, x):  # type: ignore[no-untyped-def]
    """The ziggurat's rare branches (about 1 % of draws): tail, wedge and redraws, with
    numpy's arithmetic. ``x`` is the unsigned candidate of the draw ``r``. The redraw
    keeps :func:`_normal`'s uint64 constants, so ``r``, ``idx`` and ``rabs`` keep one
    integer type."""
    while True:
        if r & np.uint64(1):
            x = -x
        if rabs < ki_double[idx]:
            return x
        if idx == 0:
            while True:
                xx = -ziggurat_nor_inv_r * np.log1p(-next_double(bits))
                yy = -np.log1p(-next_double(bits))
                if yy + yy > xx * xx:
                    if (rabs >> np.uint64(8)) & np.uint64(1):
                        return -(ziggurat_nor_r + xx)
                    return ziggurat_nor_r + xx
        elif (fi_double[idx - 1] - fi_double[idx]) * next_double(bits) + fi_double[
            idx
        ] < np.exp(-0.5 * x * x):
            return x
        r = next_uint64(bits)
        idx = r & np.uint64(0xFF)
        r >>= np.uint64(8)
        rabs = (r >> np.uint64(1)) & np.uint64(0x000FFFFFFFFFFFFF)
        x = float(np.int64(rabs)) * wi_double[idx]


# ------------------------------------------------------------------ the generator seam
# Every draw of the step loop goes through these three, and the random state ``rs``
# is threaded explicitly through every helper that draws (``z, rs = draw_normal(rs)``):
# changing the generator changes these three functions, :func:`_random_state` and
# :func:`_store_state`, nothing else. ``rs`` is the task's stream: the four SFC64 words
# of kernels/rng.py (kept in local variables) as one tuple of int64 bit patterns.
# int64, not uint64: the tests' uncompiled loop (a generated loop's ``py_func``)
# carries ``rs`` through Python, whose integers numba would type as int64 or uint64 by
# their value, one compilation per mix and wrong shifts for the int64 ones; with int64
# throughout they keep one type. The casts cost nothing compiled (same bits). The
# wrappers are left to LLVM to inline: forcing it in numba's IR (inline="always")
# measured the reflecting box with a target 3-6 % slower (paired medians) and the rest
# within noise.


@njit(nogil=True, cache=True)
def _words(rs):  # type: ignore[no-untyped-def]
    """The stream ``rs`` as kernels/rng.py's four uint64 words."""
    return np.uint64(rs[0]), np.uint64(rs[1]), np.uint64(rs[2]), np.uint64(rs[3])


@njit(nogil=True, cache=True)
def _stream(a, b, c, w):  # type: ignore[no-untyped-def]
    """Four uint64 words as the stream ``rs``."""
    return np.int64(a), np.int64(b), np.int64(c), np.int64(w)


@njit(nogil=True, cache=True)
def _random_state(state):  # type: ignore[no-untyped-def]
    """The random state the step loop threads through its draws, loaded from the
    task's SFC64 ``state`` (uint64 (4,), :func:`kernels.rng.initial_state`)."""
    words = state.view(np.int64)
    return words[0], words[1], words[2], words[3]


@njit(nogil=True, cache=True)
def _store_state(state, rs):  # type: ignore[no-untyped-def]
    """Write the stream ``rs`` after the last draw back into ``state``."""
    words = state.view(np.int64)
    words[0], words[1], words[2], words[3] = rs


@njit(nogil=True, cache=True)
def draw_normal(rs):  # type: ignore[no-untyped-def]
    """(standard normal, new state): :func:`kernels.rng.normal`."""
    a, b, c, w = _words(rs)
    z, a, b, c, w = rng.normal(a, b, c, w)
    return z, _stream(a, b, c, w)


@njit(nogil=True, cache=True)
def draw_uniform(rs):  # type: ignore[no-untyped-def]
    """(uniform on [0, 1), new state): :func:`kernels.rng.uniform`."""
    a, b, c, w = _words(rs)
    u, a, b, c, w = rng.uniform(a, b, c, w)
    return u, _stream(a, b, c, w)


@njit(nogil=True, cache=True)
def draw_wald(rs, mean, shape):  # type: ignore[no-untyped-def]
    """(inverse Gaussian variate, new state): :func:`kernels.rng.wald`."""
    a, b, c, w = _words(rs)
    x, a, b, c, w = rng.wald(mean, shape, a, b, c, w)
    return x, _stream(a, b, c, w)


@njit(nogil=True, cache=True)
def draw_normals(generator, n_steps, dimension):  # type: ignore[no-untyped-def]
    """Draw ``n_steps * dimension`` standard normals as a d-dimensional walk would (the
    kernels' speed limit, see :mod:`kernels.ceiling`); returns their sum so the
    compiler cannot drop the draws."""
    bits = generator.bit_generator
    total = 0.0
    for _ in range(n_steps):
        for _ in range(dimension):
            total += _normal(bits)
    return total


#: The bridge probability is only evaluated when (a - x1)(a - x2) < BRIDGE_CUTOFF * D dt;
#: beyond that it is below exp(-20) ~ 2e-9 and is skipped (planning figure, see
#: docs/kernels.md).
BRIDGE_CUTOFF = 20.0

#: No standard normal the generator draws exceeds this in magnitude: the ziggurat's
#: rectangles and wedges give |z| < r = 3.6542 (ziggurat_nor_r), its tail r + xx with
#: xx = -log1p(-u) / r and a uniform u <= 1 - 2^-53, so xx <= 53 ln 2 / r = 10.05 and
#: |z| <= 13.71 (kernels/rng.py). The step loop uses it to know that no step of a
#: reflecting box can overshoot the opposite face (``short_mirror``).
NORMAL_BOUND = 14.0

#: See _crossing: 1 + 1e-12 exceeds the rounding error of u * cubic (a few 1e-16) and
#: of exp (under one unit in the last place).
EXP_MARGIN = 1.0 + 1e-12

#: Curved surfaces are examined only for steps within REACH sigma of them, sigma =
#: sqrt(2 D dt): the cut is BRIDGE_CUTOFF D dt = 10 sigma^2 < REACH^2 sigma^2 = 12.25
#: sigma^2, so no step beyond could be near (the margin absorbs rounding).
REACH = 3.5

#: With endpoint monitoring (cut 0) only a step that ends inside a curved surface
#: matters, so the reach shrinks to the surface itself, widened by this relative margin
#: (far above sqrt's rounding): a step skipped beyond it has d1, d2 > 0, so d1 d2 > 0
#: = cut, exactly as if it had been examined. Skipping the shell of REACH sigma made
#: the plain reflecting box with a target 1.5 % faster (median of paired runs).
SURFACE_MARGIN = 1e-12


@njit(nogil=True, cache=True)
def _hit_fraction(rs, alpha, gamma, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """(Fraction of the step (0, 1] at which the path first touched the wall, state).

    ``alpha`` > 0 is the start's distance to the wall, ``gamma`` >= 0 the end's distance
    (either side). Given a crossing, the hitting time is tau = h U / (h + U) with
    U ~ inverse Gaussian(mean h alpha / gamma, shape alpha^2 / (2 D)); U is Levy
    distributed when gamma = 0. Without the bridge the step end is used.
    """
    if not bridge:
        return 1.0, rs
    if alpha <= 0.0:
        return 0.0, rs
    shape = alpha * alpha / (2.0 * diffusivity)
    if gamma > 0.0:
        u, rs = draw_wald(rs, dt * alpha / gamma, shape)
    else:
        z, rs = draw_normal(rs)
        u = shape / (z * z) if z != 0.0 else math.inf
    return u / (dt + u), rs


# --------------------------------------------------------------------------- kernel


def simulate(
    state: NDArray[np.uint64],
    n_walkers: int,
    geometry: Geometry,
    motion: Motion,
    recording: Recording,
    out: Outputs,
) -> int:
    """Simulate ``n_walkers`` walkers to absorption or the horizon.

    Parameters
    ----------
    state : uint64 (4,)
        This task's random stream: SFC64's state (:func:`kernels.rng.initial_state`
        of the task's SeedSequence), loaded into local variables once and
        overwritten with the state after the last draw.
    n_walkers : int
    geometry, motion, recording : Geometry, Motion, Recording
        Made by :mod:`kernels.inputs` (``geometry``, ``motion``, ``recording``).
    out : Outputs
        Preallocated by ``kernels.inputs.allocate``; written and incremented in place.

    Returns
    -------
    int
        Walker-steps simulated.
    """
    loop = step_loop(geometry, motion, out)
    return loop(state, n_walkers, geometry, motion, recording, out)  # type: ignore[no-any-return]


def step_loop(geometry: Geometry, motion: Motion, out: Outputs) -> Any:
    """The compiled loop :func:`simulate` runs for these inputs: one per kind of
    domain and dimension (kernels/_loops.py, generated from the step template
    kernels/step.py) in the table :func:`loop_table` picks, each compiled on first
    use (a plain-Python dispatcher, as an njit one would compile them all at its
    first call). Its ``py_func`` is the same loop uncompiled, for debugging."""
    if geometry.ball_radius < math.inf:
        kind = BALL
    elif geometry.target_radius.shape[0] > 0:
        kind = BOX_TARGETS
    else:
        kind = BOX
    return loop_table(geometry, motion, out)[kind, geometry.lower.shape[0]]


def loop_table(geometry: Geometry, motion: Motion, out: Outputs) -> dict:  # type: ignore[type-arg]
    """The table of generated loops (kernels/_loops.py) for these inputs.

    Loops with a force, loops for reactive, periodic or obstacle surfaces (or a
    displacement output), and plain loops with a drift are separate variants: the
    common loops hold none of their code, which costs plain steps even when never
    taken. The test is conservative: anything else than a plain geometry gets the
    loops that handle every surface (and a drift).
    """
    if motion.force.kind != inputs.NO_FORCE:
        return _loops.FORCE_LOOPS  # type: ignore[no-any-return]
    plain = (
        np.isnan(geometry.reactivity_lower).all()
        and np.isnan(geometry.reactivity_upper).all()
        and not np.any(geometry.periodic)
        and np.isnan(geometry.target_reactivity).all()
        and math.isnan(geometry.ball_reactivity)
        and geometry.obstacle_radius.shape[0] == 0
        and out.displacement.shape[0] == 0
    )
    if not plain:
        return _loops.SURFACE_LOOPS  # type: ignore[no-any-return]
    if np.any(motion.drift != 0.0):
        return _loops.DRIFT_LOOPS  # type: ignore[no-any-return]
    return _loops.LOOPS  # type: ignore[no-any-return]


#: Kinds of domain, each stepped by its own compiled loops (KIND in kernels/step.py):
#: a box, a box with targets, a ball (with or without targets).
BOX, BOX_TARGETS, BALL = 0, 1, 2


@njit(nogil=True, cache=True)
def _earliest(rs, d1, d2, wall, frac, hit_wall, kill_scale, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """(frac, wall, state) after resolving one surface near the step (distances
    ``d1``, ``d2``, see :func:`_crossing`): its crossing fraction and index ``wall`` if
    earlier than ``frac``, else ``frac`` and ``hit_wall`` unchanged."""
    f, rs = _crossing(rs, d1, d2, kill_scale, diffusivity, dt, bridge)
    if f < frac:
        return f, wall, rs
    return frac, hit_wall, rs


@njit(nogil=True, cache=True)
def _norm(x, center):  # type: ignore[no-untyped-def]
    r2 = 0.0
    for i in range(x.shape[0]):
        r2 += (x[i] - center[i]) ** 2
    return math.sqrt(r2)


@njit(nogil=True, cache=True)
def _free(x, is_ball, ball_center, ball_radius, target_center, target_radius):  # type: ignore[no-untyped-def]
    """Whether ``x`` lies inside the ball (if any) and outside every target."""
    if is_ball and _norm(x, ball_center) >= ball_radius:
        return False
    for k in range(target_radius.shape[0]):
        if _norm(x, target_center[k]) <= target_radius[k]:
            return False
    return True


@njit(nogil=True, cache=True)
def _fold(y, lo, hi):  # type: ignore[no-untyped-def]
    """Mirror ``y``, which lies outside [lo, hi], into it (either bound may be infinite).

    The common case, one mirror image in the face that was crossed, is ``2 lo - y`` or
    ``2 hi - y``: one rounding and no division (the floating-point modulo below, once
    taken for every mirror between two reflecting walls, cost the 3-D reflecting box
    with a target 7-10 %; same-run A/B). Only a step that overshoots the whole box
    needs more: between two reflecting walls the images repeat with period 2 (hi - lo),
    so it folds in constant time.
    """
    if y < lo:
        image = 2.0 * lo - y
        if image <= hi:
            return image
    else:
        image = 2.0 * hi - y
        if image >= lo:
            return image
    width = hi - lo
    u = (y - lo) % (2.0 * width)
    if u > width:
        u = 2.0 * width - u
    return lo + u


@njit(nogil=True, cache=True)
def _band(rl, rh, al, ah, cut):  # type: ignore[no-untyped-def]
    """(lo, hi): the band of one axis where a step changes nothing at its box faces.

    ``rl``, ``rh`` are the axis' reflecting faces and ``al``, ``ah`` its absorbing ones
    (absent ones at -+inf), ``cut`` the step loop's product cut. For a step whose start
    x and end y both lie in [lo, hi], the loop's face tests are known to fail, so it
    may skip them: y is not folded (rl <= lo, hi <= rh), and each absorbing face's
    product, computed as the loop computes it, exceeds the cut. For the lower face:
    rounding is monotonic, so x, y >= lo give fl(x - al) and fl(y - al) >= q =
    fl(lo - al) > 0 and fl(fl(x - al) fl(y - al)) >= fl(q q) > cut, which ``lo`` is
    chosen to satisfy; the upper face likewise, with both factors <= fl(hi - ah) < 0.
    Exact, whatever the rounding: skipping the tests gives the same bits. An empty
    band (lo > hi) makes every step take the tests.
    """
    lo = rl
    if al > -math.inf:
        b = al + max(math.sqrt(cut) * (1.0 + 1e-9), 1e-150)
        while not (b - al > 0.0 and (b - al) * (b - al) > cut):
            b = np.nextafter(b, math.inf)
        lo = max(lo, b)
    hi = rh
    if ah < math.inf:
        b = ah - max(math.sqrt(cut) * (1.0 + 1e-9), 1e-150)
        while not (b - ah < 0.0 and (b - ah) * (b - ah) > cut):
            b = np.nextafter(b, -math.inf)
        hi = min(hi, b)
    return lo, hi


@njit(nogil=True, cache=True)
def _crossing(rs, d1, d2, kill_scale, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """(Step fraction at which a face was first touched, or 2.0 when it was not;
    state).

    ``d1`` > 0 and ``d2`` are the signed distances of the step's start and end from
    the face (negative: beyond it). An end inside is killed with the bridge crossing
    probability exp(-d1 d2 / (D dt)).
    """
    if d2 > 0.0:
        u, rs = draw_uniform(rs)
        z = d1 * d2 * kill_scale
        # Survival, u >= exp(-z), is mostly decided without exp: e^z >= the cubic
        # 1 + z + z^2/2 + z^3/6, so u * cubic >= 1 + margin implies it. The margin,
        # far above the rounding of both sides, makes the decision the same as
        # exp's in every case, so the draws stay bit-identical.
        if u * (1.0 + z * (1.0 + z * (0.5 + z * (1.0 / 6.0)))) >= EXP_MARGIN:
            return 2.0, rs
        if u >= math.exp(-z):
            return 2.0, rs
    return _hit_fraction(rs, d1, abs(d2), diffusivity, dt, bridge)


#: The smallest uniform the bridge-minimum formula takes (log(0) would give an
#: infinite push; a uniform this small has probability 2^-53 per draw).
TINY_UNIFORM = 2.0**-60


@njit(nogil=True, cache=True)
def _react(rs, d1, d2, q, kill_scale, diffusivity, dt):  # type: ignore[no-untyped-def]
    """(Step fraction of a reaction, or 2.0 when none; push >= 0; state) for a reactive
    surface near the step (Robin condition D dp/dn = kappa p; ``q`` = kappa / D).

    ``d1`` >= 0 and ``d2`` are the signed distances of the free step's start and end
    from the surface (negative: beyond it). The walker is reflected by the Skorokhod
    map: the end moves along the normal by ``push`` = -m, m < 0 the Brownian bridge's
    minimum distance (analytic reference F4, G2: exact in law for a flat wall, with or
    without drift). The push is the boundary local time the step adds, and a reaction
    happens when the accumulated local time passes an exponential threshold of rate
    q (the encounter-based form of the Robin condition, survival E[exp(-q l)];
    Grebenkov 2020, Phys. Rev. Lett. 125, 078102 [abstract seen; q = kappa / D
    derived in docs/surfaces.md]): each step draws its own threshold
    (memoryless), reacts with probability 1 - exp(-q push), and then at the time the
    bridge first reaches the depth of the threshold (F6). No step-size limit:
    kappa = inf reacts at the first touch (absorbing), kappa = 0 never (reflecting).
    The bridge's crossing test and its minimum share one uniform (an end inside is
    touched exactly when the minimum from that uniform is negative).
    """
    u, rs = draw_uniform(rs)
    if d2 > 0.0 and u >= math.exp(-d1 * d2 * kill_scale):
        return 2.0, 0.0, rs
    g = d2 - d1
    spread = 4.0 * diffusivity * dt * math.log(max(u, TINY_UNIFORM))
    push = -0.5 * (d1 + d2 - math.sqrt(g * g - spread))
    if push <= 0.0:
        return 2.0, 0.0, rs
    v, rs = draw_uniform(rs)
    if v >= -math.expm1(-q * push):
        return 2.0, push, rs
    level = -math.log1p(-v) / q
    f, rs = _hit_fraction(rs, d1 + level, abs(d2 + level), diffusivity, dt, True)
    return f, push, rs


@njit(nogil=True, cache=True)
def _outside(x, obstacle_center, obstacle_radius):  # type: ignore[no-untyped-def]
    """Whether ``x`` lies outside every obstacle (no obstacles: True, no draws)."""
    for k in range(obstacle_radius.shape[0]):
        if _norm(x, obstacle_center[k]) <= obstacle_radius[k]:
            return False
    return True


@njit(nogil=True, cache=True)
def _cell(x, lower, upper, bins):  # type: ignore[no-untyped-def]
    """Bin of ``x`` on one axis of the occupancy histogram, -1 outside (used by
    :func:`_bin` and by the register loop on scalars)."""
    b = int(math.floor((x - lower) / (upper - lower) * bins))
    if x == upper:
        b = bins - 1
    if b < 0 or b >= bins:
        return -1
    return b


@njit(nogil=True, cache=True)
def _cell_next(cell, x, lower, upper, bins):  # type: ignore[no-untyped-def]
    """The flattened cell ``cell`` (-1: outside) extended by the next axis."""
    b = _cell(x, lower, upper, bins)
    if cell < 0 or b < 0:
        return -1
    return cell * bins + b


@njit(nogil=True, cache=True, inline="always")
def _slope(x, kind, p0, p1, p2, table, table_lower, table_spacing):  # type: ignore[no-untyped-def]
    """dU/dx (kT / length) at ``x`` of a one-dimensional family of
    ``kernels.inputs.Force`` (its kind, params and table, passed as scalars and one
    array: the loop keeps them in registers; inlined)."""
    if kind == inputs.DOUBLE_WELL:  # p = centre, 4 barrier / b^2, 1 / b^2
        u = x - p0
        return p1 * (u * u * p2 - 1.0) * u
    if (
        kind == inputs.TILTED_PERIODIC
    ):  # p = amplitude 2 pi / period, 2 pi / period, tilt
        return -p0 * math.sin(p1 * x) - p2
    # The table's spline, cell by the knot spacing (clamped: walkers stay inside
    # the domain, which the table covers, up to rounding).
    cells = table.shape[0]
    j = int(math.floor((x - table_lower) / table_spacing))
    j = min(max(j, 0), cells - 1)
    t = x - (table_lower + j * table_spacing)
    return table[j, 0] + t * (table[j, 1] + table[j, 2] * t)


# The generated loops import the helpers above from this module, so they come last.
from kernels import _loops  # noqa: E402
