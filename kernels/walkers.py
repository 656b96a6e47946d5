"""The walker kernel: Brownian walkers in a box or ball, with absorbing targets.

Pure computation: numba ``njit(nogil=True)``, the task's random stream passed in (SFC64's
state, kept in local variables by :mod:`kernels.rng`; one per task, never shared between
threads), preallocated outputs, no I/O, no validation. The kernel and every helper it
calls except the generator live in this one file because numba's on-disk cache does not
notice edits to helpers in other files (after editing ``kernels/rng.py``, delete
``kernels/__pycache__``).

Each axis moves as ``dX = drift dt + sqrt(2 D) dW``; a step draws one standard normal
per axis. Walls:

* reflecting flat wall: the increment is mirrored (exact in law without drift);
* reflecting ball surface: radial mirror image;
* absorbing wall, target or ball surface: a walker whose step ends beyond it is absorbed.
  With ``bridge`` on, a walker whose step ends inside is also absorbed with the
  Brownian-bridge crossing probability ``exp(-(a - x1)(a - x2) / (D dt))`` (curved
  surfaces: distances to the tangent plane), and the absorption time is drawn from the
  bridge's conditional hitting-time law instead of the step end. This makes the
  first-passage bias O(dt) instead of O(sqrt(dt)) (exact for a single flat wall).
"""

from __future__ import annotations

import math

import numba
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

from kernels import rng


@njit(nogil=True, cache=True)
def _normal(bits):  # type: ignore[no-untyped-def]
    """One standard normal from ``bits`` (a Generator's ``bit_generator``).

    numpy's ziggurat draw for draw, so the stream equals ``rng.standard_normal()``'s;
    but the random sign is applied by multiplying with +-1 instead of by a branch, whose
    mispredictions (half of all draws) cost numba's own version about half its rate on
    the development machines (DEVELOPERS.md, "Kernels"). Every integer constant is a
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


# The kernel's random stream ``g``: the four SFC64 words of kernels/rng.py as one
# tuple of int64 bit patterns, threaded through every helper that draws (each returns
# it advanced). int64, not uint64: the tests' uncompiled loop (``_simulate.py_func``)
# carries ``g`` through Python, whose integers numba would type as int64 or uint64 by
# their value, one compilation per mix and wrong shifts for the int64 ones; with int64
# throughout they keep one type. The casts cost nothing compiled (same bits).


@njit(nogil=True, cache=True)
def _words(g):  # type: ignore[no-untyped-def]
    """The stream ``g`` as kernels/rng.py's four uint64 words."""
    return np.uint64(g[0]), np.uint64(g[1]), np.uint64(g[2]), np.uint64(g[3])


@njit(nogil=True, cache=True)
def _stream(a, b, c, w):  # type: ignore[no-untyped-def]
    """Four uint64 words as the stream ``g``."""
    return np.int64(a), np.int64(b), np.int64(c), np.int64(w)


@njit(nogil=True, cache=True)
def _gauss(g):  # type: ignore[no-untyped-def]
    """A standard normal from the stream ``g``; returns ``(z, g)``, ``g`` advanced."""
    a, b, c, w = _words(g)
    z, a, b, c, w = rng.normal(a, b, c, w)
    return z, _stream(a, b, c, w)


@njit(nogil=True, cache=True)
def _uniform(g):  # type: ignore[no-untyped-def]
    """A double in [0, 1) from the stream ``g``; returns ``(u, g)``."""
    a, b, c, w = _words(g)
    u, a, b, c, w = rng.uniform(a, b, c, w)
    return u, _stream(a, b, c, w)


@njit(nogil=True, cache=True)
def _wald(g, mean, shape):  # type: ignore[no-untyped-def]
    """An inverse-Gaussian variate from the stream ``g``; returns ``(x, g)``."""
    a, b, c, w = _words(g)
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
#: DEVELOPERS.md "Kernels").
BRIDGE_CUTOFF = 20.0

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
def _hit_fraction(g, alpha, gamma, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """Fraction of the step (0, 1] at which the path first touched the wall, and the
    stream ``g`` after the draws.

    ``alpha`` > 0 is the start's distance to the wall, ``gamma`` >= 0 the end's distance
    (either side). Given a crossing, the hitting time is tau = h U / (h + U) with
    U ~ inverse Gaussian(mean h alpha / gamma, shape alpha^2 / (2 D)); U is Levy
    distributed when gamma = 0. Without the bridge the step end is used.
    """
    if not bridge:
        return 1.0, g
    if alpha <= 0.0:
        return 0.0, g
    shape = alpha * alpha / (2.0 * diffusivity)
    if gamma > 0.0:
        u, g = _wald(g, dt * alpha / gamma, shape)
    else:
        z, g = _gauss(g)
        u = shape / (z * z) if z != 0.0 else math.inf
    return u / (dt + u), g


def simulate(  # type: ignore[no-untyped-def]
    state,
    n_walkers,
    start,
    uniform_start,
    lower,
    upper,
    absorbing_low,
    absorbing_high,
    ball_center,
    ball_radius,
    ball_absorbing,
    target_center,
    target_radius,
    diffusivity,
    drift,
    dt,
    n_steps,
    bridge,
    survival_times,
    occupancy_steps,
    occupancy_lower,
    occupancy_upper,
    occupancy_bins,
    out_time,
    out_wall,
    out_position,
    out_survival,
    out_occupancy,
    out_final,
    fpt_bin_width,
    out_fpt_hist,
):
    """Simulate ``n_walkers`` walkers to absorption or the horizon.

    Parameters
    ----------
    state : uint64 (4,)
        This task's random stream: SFC64's state (:func:`kernels.rng.initial_state`
        of the task's SeedSequence), loaded into local variables once and
        overwritten with the state after the last draw.
    n_walkers : int
    start : float64 (d,)
        Start point (ignored when ``uniform_start``).
    uniform_start : bool
        Start uniformly over the domain outside targets (bounded domains only).
    lower, upper : float64 (d,)
        Box extent per axis (+-inf allowed); for a ball, its bounding box.
    absorbing_low, absorbing_high : bool (d,)
        Kind of each box face (finite faces only; ignored for a ball).
    ball_center : float64 (d,), ball_radius : float
        The ball domain; ``ball_radius = inf`` means a box domain.
    ball_absorbing : bool
    target_center : float64 (k, d), target_radius : float64 (k,)
        Absorbing balls inside the domain.
    diffusivity : float
        D, length^2 / time; each axis' variance grows as 2 D t.
    drift : float64 (d,)
        Constant velocity, length / time.
    dt : float
        Time step.
    n_steps : int
        Steps to the horizon; walkers still free then are censored.
    bridge : bool
        Brownian-bridge monitoring of absorbing walls between steps.
    survival_times : float64 (m,)
        Ascending times at which survivors are counted.
    occupancy_steps : int64 (s,)
        Ascending step numbers at which free walkers are binned.
    occupancy_lower, occupancy_upper : float64 (d,)
        Histogram range per axis.
    occupancy_bins : int
        Bins per axis.
    out_time : float64 (n_walkers,)
        First-passage time; NaN when censored.
    out_wall : int16 (n_walkers,)
        Index of the absorbing wall (box faces x_lower, x_upper, y_lower, ..., then targets,
        then the ball surface); -1 when censored.
    out_position : float64 (n_walkers, d)
        Position at absorption; NaN when censored.
    out_survival : int64 (m,)
        Incremented by the number of walkers with first-passage time > t_k.
    out_occupancy : int64 (s, occupancy_bins ** d)
        Incremented by the binned positions of free walkers at each snapshot.
    out_final : float64 (n_walkers, d)
        Position at the horizon of walkers still free then; NaN for absorbed ones.
    fpt_bin_width : float
        Width of the first-passage-time histogram's bins, time units.
    out_fpt_hist : int64 (n_walls, n_bins)
        Incremented at [wall, floor(time / fpt_bin_width)] per absorbed walker; pass
        shape (0, 0) to skip.

    Returns
    -------
    int
        Walker-steps simulated.
    """
    # One compiled loop per case (literal arguments of _simulate), each compiled on
    # first use: each kind of domain leaves out the code of the others (it slows the
    # loop even when unused), and one to three axes keep the position in registers.
    # A plain-Python dispatcher: an njit one would compile all twelve loops at its
    # first call.
    a = (
        state, n_walkers, start, uniform_start, lower, upper, absorbing_low,
        absorbing_high, ball_center, ball_radius, ball_absorbing, target_center,
        target_radius, diffusivity, drift, dt, n_steps, bridge, survival_times,
        occupancy_steps, occupancy_lower, occupancy_upper, occupancy_bins, out_time,
        out_wall, out_position, out_survival, out_occupancy, out_final, fpt_bin_width,
        out_fpt_hist,
    )  # fmt: skip
    if ball_radius < math.inf:
        shape = BALL
    elif target_radius.shape[0] > 0:
        shape = BOX_TARGETS
    else:
        shape = BOX
    d = start.shape[0]
    return _LOOPS[shape, d if d <= 3 else 0](*a)


#: Kinds of domain, each stepped by its own compiled loop (the literal ``shape`` of
#: _simulate): a box, a box with targets, a ball (with or without targets).
BOX, BOX_TARGETS, BALL = 0, 1, 2


@njit(nogil=True, cache=True)
def _simulate(a, shape, dim):  # type: ignore[no-untyped-def]
    """:func:`simulate` with its arguments packed in ``a``, compiled once per literal
    ``shape`` (:data:`BOX`, :data:`BOX_TARGETS` or :data:`BALL`) and ``dim`` (1-3: the
    step loop keeps the position in scalar registers; 0: any dimension, positions in
    arrays)."""
    numba.literally(shape)
    numba.literally(dim)
    (
        state, n_walkers, start, uniform_start, lower, upper, absorbing_low,
        absorbing_high, ball_center, ball_radius, ball_absorbing, target_center,
        target_radius, diffusivity, drift, dt, n_steps, bridge, survival_times,
        occupancy_steps, occupancy_lower, occupancy_upper, occupancy_bins, out_time,
        out_wall, out_position, out_survival, out_occupancy, out_final, fpt_bin_width,
        out_fpt_hist,
    ) = a  # fmt: skip
    d = start.shape[0]
    n_targets = target_radius.shape[0]
    # The random stream, kept in local variables: every draw below takes it and
    # returns it advanced (kernels/rng.py); int64 bit patterns (see _words).
    words = state.view(np.int64)
    g = (words[0], words[1], words[2], words[3])
    # Compile-time constants of each loop: its tests of the domain's kind fold away
    # (a box with a target ran 8-11 % faster than with them as run-time tests, median
    # of paired runs; DEVELOPERS.md, "Kernels").
    is_ball = shape == BALL
    general = shape != BOX  # ball or target code present
    has_targets = shape == BOX_TARGETS or n_targets > 0
    n_box_walls = 0 if is_ball else 2 * d
    sigma = math.sqrt(2.0 * diffusivity * dt)
    cutoff = BRIDGE_CUTOFF * diffusivity * dt
    # One test per face and step: (x1 - a)(x2 - a) <= cut holds when the step ends on
    # or beyond the face at a, or (bridge) ends near it. Absent faces sit at -+inf,
    # where the product is +inf.
    cut = cutoff if bridge else 0.0
    kill_scale = 1.0 / (diffusivity * dt)
    n_survival = survival_times.shape[0]
    n_fpt_bins = out_fpt_hist.shape[1] if out_fpt_hist.shape[0] > 0 else 0
    hist = np.zeros(n_survival + 1, np.int64)
    x = np.empty(d)  # position, updated in place each step
    xo = np.empty(d)  # position at the start of the step
    drift_step = np.empty(d)
    for i in range(d):
        drift_step[i] = drift[i] * dt
    refl_lo = np.full(d, -math.inf)
    refl_hi = np.full(d, math.inf)
    abs_lo = np.full(d, -math.inf)
    abs_hi = np.full(d, math.inf)
    if not is_ball:
        for i in range(d):
            if absorbing_low[i]:
                abs_lo[i] = lower[i]
            else:
                refl_lo[i] = lower[i]
            if absorbing_high[i]:
                abs_hi[i] = upper[i]
            else:
                refl_hi[i] = upper[i]
    # The same, one scalar per axis for the register loop (unused axes: no walls).
    s0, s1, s2 = _axes(drift_step, 0.0)
    rl0, rl1, rl2 = _axes(refl_lo, -math.inf)
    rh0, rh1, rh2 = _axes(refl_hi, math.inf)
    al0, al1, al2 = _axes(abs_lo, -math.inf)
    ah0, ah1, ah2 = _axes(abs_hi, math.inf)
    bc0, bc1, bc2 = _axes(ball_center, 0.0)
    lo0, lo1, lo2 = _axes(lower, -math.inf)
    hi0, hi1, hi2 = _axes(upper, math.inf)
    ol0, ol1, ol2 = _axes(occupancy_lower, 0.0)
    oh0, oh1, oh2 = _axes(occupancy_upper, 1.0)
    n_snapshots = occupancy_steps.shape[0]
    t00, t01, t02 = _axes(target_center[0], 0.0) if n_targets > 0 else (0.0, 0.0, 0.0)
    absorbing_faces = False
    for i in range(d):
        if abs_lo[i] > -math.inf or abs_hi[i] < math.inf:
            absorbing_faces = True
    # A target or ball surface is only examined for steps that start or end within
    # REACH sigma of it: farther, d1 d2 > REACH^2 sigma^2 exceeds any cut. Endpoint
    # monitoring only needs steps that end inside (SURFACE_MARGIN).
    reach2 = np.empty(n_targets)
    for k in range(n_targets):
        if bridge:
            reach = target_radius[k] + REACH * sigma
        else:
            reach = target_radius[k] * (1.0 + SURFACE_MARGIN)
        reach2[k] = reach * reach
    reach_0 = reach2[0] if n_targets > 0 else -1.0
    ball_r2 = ball_radius * ball_radius
    if bridge:
        inner = ball_radius - REACH * sigma
    else:
        inner = ball_radius * (1.0 - SURFACE_MARGIN)
    inner2 = inner * inner if inner > 0.0 else -1.0
    steps_done = 0

    for w in range(n_walkers):
        # 1. Start point: given, or uniform over the domain outside targets (rejection).
        if uniform_start:
            while True:
                for i in range(d):
                    u, g = _uniform(g)
                    x[i] = lower[i] + (upper[i] - lower[i]) * u
                if _free(
                    x, is_ball, ball_center, ball_radius, target_center, target_radius
                ):
                    break
        else:
            for i in range(d):
                x[i] = start[i]

        hit_wall = -1
        frac = 2.0
        step = 0
        if dim > 0:
            # A snapshot at step 0 is binned by the loop's snapshot code below (its
            # inner loop runs no step up to it).
            o = 0
            next_snapshot = occupancy_steps[0] if n_snapshots > 0 else -1
            # One to three axes: the position lives in scalars (registers). The array
            # loop below reloads its arrays after every draw, since the generator is
            # called through a pointer; this loop runs markedly faster (DEVELOPERS.md,
            # "Kernels"). Same draws in the same order, same arithmetic: bit-identical.
            x0, x1, x2 = _axes(x, 0.0)
            rb1 = (x0 - bc0) ** 2 + (x1 - bc1) ** 2 + (x2 - bc2) ** 2
            r1_0 = _r2(target_center, 0, x0, x1, x2) if n_targets > 0 else math.inf
            far = np.int64(0)
            for k in range(1, min(n_targets, 63)):
                if _r2(target_center, k, x0, x1, x2) > reach2[k]:
                    far |= np.int64(1) << k
            while True:
                # Steps up to the next snapshot (or the horizon) in an inner loop, so
                # the common step does not test for a snapshot (8 % in 1-D).
                limit = n_steps
                if 0 <= next_snapshot <= n_steps:
                    limit = next_snapshot
                while step < limit:
                    step += 1
                    # 2. Free increment, mirrored at reflecting faces.
                    z, g = _gauss(g)
                    y0 = x0 + s0 + sigma * z
                    y1 = x1
                    y2 = x2
                    if dim >= 2:
                        z, g = _gauss(g)
                        y1 = x1 + s1 + sigma * z
                    if dim >= 3:
                        z, g = _gauss(g)
                        y2 = x2 + s2 + sigma * z
                    if not is_ball:
                        if y0 < rl0 or y0 > rh0:
                            y0 = _fold(y0, rl0, rh0)
                        if dim >= 2:
                            if y1 < rl1 or y1 > rh1:
                                y1 = _fold(y1, rl1, rh1)
                        if dim >= 3:
                            if y2 < rl2 or y2 > rh2:
                                y2 = _fold(y2, rl2, rh2)
                    if shape == BOX or (shape == BOX_TARGETS and absorbing_faces):
                        # 3. Absorbing faces near the step. One branch per step on the
                        #    smallest face product; then each face in the array loop's
                        #    order (axis by axis, low first); the earliest crossing wins.
                        #    Written out per axis: a helper per axis made the 1-D loops
                        #    3-5 % slower (same-run A/B).
                        p = min((x0 - al0) * (y0 - al0), (x0 - ah0) * (y0 - ah0))
                        if dim >= 2:
                            p = min(p, (x1 - al1) * (y1 - al1), (x1 - ah1) * (y1 - ah1))
                        if dim >= 3:
                            p = min(p, (x2 - al2) * (y2 - al2), (x2 - ah2) * (y2 - ah2))
                        if p <= cut:
                            if (x0 - al0) * (y0 - al0) <= cut:
                                frac, hit_wall, g = _earliest(
                                    g, x0 - al0, y0 - al0, 0, frac, hit_wall, kill_scale,
                                    diffusivity, dt, bridge,
                                )  # fmt: skip
                            if (x0 - ah0) * (y0 - ah0) <= cut:
                                frac, hit_wall, g = _earliest(
                                    g, ah0 - x0, ah0 - y0, 1, frac, hit_wall, kill_scale,
                                    diffusivity, dt, bridge,
                                )  # fmt: skip
                            if dim >= 2:
                                if (x1 - al1) * (y1 - al1) <= cut:
                                    frac, hit_wall, g = _earliest(
                                        g, x1 - al1, y1 - al1, 2, frac, hit_wall,
                                        kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                                if (x1 - ah1) * (y1 - ah1) <= cut:
                                    frac, hit_wall, g = _earliest(
                                        g, ah1 - x1, ah1 - y1, 3, frac, hit_wall,
                                        kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                            if dim >= 3:
                                if (x2 - al2) * (y2 - al2) <= cut:
                                    frac, hit_wall, g = _earliest(
                                        g, x2 - al2, y2 - al2, 4, frac, hit_wall,
                                        kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                                if (x2 - ah2) * (y2 - ah2) <= cut:
                                    frac, hit_wall, g = _earliest(
                                        g, ah2 - x2, ah2 - y2, 5, frac, hit_wall,
                                        kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                    if general:
                        # _earliest written out below: calling it here made even the box
                        # loops 6 % slower (same-run A/B; the code generator sees this
                        # block before it drops it from them).
                        if is_ball:
                            rb2 = (y0 - bc0) ** 2 + (y1 - bc1) ** 2 + (y2 - bc2) ** 2
                            if not ball_absorbing:
                                if rb2 > ball_r2:
                                    y0, y1, y2, rb2 = _mirror(
                                        y0, y1, y2, bc0, bc1, bc2, ball_radius
                                    )
                            elif rb1 >= inner2 or rb2 >= inner2:
                                # Within REACH sigma of the surface (farther, d1 d2
                                # exceeds any cut): distances along the radius.
                                d1 = ball_radius - math.sqrt(rb1)
                                d2 = ball_radius - math.sqrt(rb2)
                                if d1 * d2 <= cut:
                                    f, g = _crossing(
                                        g,
                                        d1,
                                        d2,
                                        kill_scale,
                                        diffusivity,
                                        dt,
                                        bridge,
                                    )
                                    if f < frac:
                                        frac = f
                                        hit_wall = n_targets
                            rb1 = rb2
                        if has_targets:
                            # Target 0 (most set-ups have one) in scalars, its start
                            # distance carried from the last step: 9 % faster than
                            # the loop below (same-run A/B).
                            r2 = (y0 - t00) ** 2
                            if dim >= 2:
                                r2 += (y1 - t01) ** 2
                            if dim >= 3:
                                r2 += (y2 - t02) ** 2
                            if r2 <= reach_0 or r1_0 <= reach_0:
                                d1 = math.sqrt(r1_0) - target_radius[0]
                                d2 = math.sqrt(r2) - target_radius[0]
                                if d1 * d2 <= cut:
                                    f, g = _crossing(
                                        g, d1, d2, kill_scale, diffusivity, dt,
                                        bridge,
                                    )  # fmt: skip
                                    if f < frac:
                                        frac = f
                                        hit_wall = n_box_walls
                            r1_0 = r2
                        if n_targets > 1:
                            # The others in a helper: kept out of this loop, the
                            # common one-target case runs 4 % faster.
                            frac, hit_wall, far, g = _other_targets(
                                g, x0, x1, x2, y0, y1, y2, far, target_center,
                                target_radius, reach2, cut, frac, hit_wall, n_box_walls,
                                kill_scale, diffusivity, dt, bridge,
                            )  # fmt: skip
                    if hit_wall >= 0:
                        x0, x1, x2, g = _bridge_point(
                            g, dim, x0, x1, x2, y0, y1, y2, frac, sigma
                        )
                        break
                    x0 = y0
                    x1 = y1
                    x2 = y2
                if hit_wall >= 0:
                    break
                if step == next_snapshot:
                    # _bin on scalars: a call with the arrays cost 12 % in 1-D.
                    cell = _cell(x0, ol0, oh0, occupancy_bins)
                    if dim >= 2:
                        cell = _cell_next(cell, x1, ol1, oh1, occupancy_bins)
                    if dim >= 3:
                        cell = _cell_next(cell, x2, ol2, oh2, occupancy_bins)
                    while o < n_snapshots and occupancy_steps[o] == step:
                        if cell >= 0:
                            out_occupancy[o, cell] += 1
                        o += 1
                    next_snapshot = occupancy_steps[o] if o < n_snapshots else -1
                if step >= n_steps:
                    break
            if hit_wall >= 0:
                # The exit point on the surface hit, :func:`_exit_point` on scalars: the
                # call with arrays cost about 50 ns per walker, 3 % of a 1-D walker's
                # time in the bench case (same-run A/B).
                if hit_wall < n_box_walls:
                    x0, x1, x2 = _on_face(
                        hit_wall, x0, x1, x2, lo0, lo1, lo2, hi0, hi1, hi2
                    )
                else:
                    k = hit_wall - n_box_walls
                    if k < n_targets:
                        c0, c1, c2 = _axes(target_center[k], 0.0)
                        x0, x1, x2 = _on_sphere(
                            dim, x0, x1, x2, c0, c1, c2, target_radius[k]
                        )
                        if not is_ball:
                            x0, x1, x2 = _clamp(
                                x0, x1, x2, lo0, lo1, lo2, hi0, hi1, hi2
                            )
                    else:
                        x0, x1, x2 = _on_sphere(
                            dim, x0, x1, x2, bc0, bc1, bc2, ball_radius
                        )
            _put(x, x0, x1, x2)
        else:
            o, next_snapshot = _snapshots(
                x, 0, 0, occupancy_steps, occupancy_lower, occupancy_upper,
                occupancy_bins, out_occupancy,
            )  # fmt: skip
            while step < n_steps:
                step += 1
                # 2. Free increment and mirror images at reflecting faces, in place.
                near = False
                for i in range(d):
                    xi = x[i]
                    z, g = _gauss(g)
                    yi = xi + drift_step[i] + sigma * z
                    if yi < refl_lo[i] or yi > refl_hi[i]:
                        yi = _fold(yi, refl_lo[i], refl_hi[i])
                    xo[i] = xi
                    x[i] = yi
                    if (xi - abs_lo[i]) * (yi - abs_lo[i]) <= cut or (
                        xi - abs_hi[i]
                    ) * (yi - abs_hi[i]) <= cut:
                        near = True
                # 3. Absorbing faces near the step: crossed at the end or (bridge) in
                #    between; the earliest crossing wins.
                if near:
                    frac, hit_wall, g = _face_crossing(
                        g,
                        xo,
                        x,
                        abs_lo,
                        abs_hi,
                        cut,
                        kill_scale,
                        diffusivity,
                        dt,
                        bridge,
                    )
                if general:
                    if is_ball:
                        if not ball_absorbing:
                            _reflect_ball(x, ball_center, ball_radius)
                        else:
                            # Curved surface: distances along the radius, i.e. to the
                            # tangent plane at the nearest point.
                            d1 = ball_radius - _norm(xo, ball_center)
                            d2 = ball_radius - _norm(x, ball_center)
                            if d1 * d2 <= cut:
                                frac, hit_wall, g = _earliest(
                                    g, d1, d2, n_targets, frac, hit_wall, kill_scale,
                                    diffusivity, dt, bridge,
                                )  # fmt: skip
                    for k in range(n_targets):
                        r1 = 0.0
                        r2 = 0.0
                        for i in range(d):
                            r1 += (xo[i] - target_center[k, i]) ** 2
                            r2 += (x[i] - target_center[k, i]) ** 2
                        if r2 > reach2[k] and r1 > reach2[k]:
                            continue
                        d1 = math.sqrt(r1) - target_radius[k]
                        d2 = math.sqrt(r2) - target_radius[k]
                        if d1 * d2 <= cut:
                            frac, hit_wall, g = _earliest(
                                g, d1, d2, n_box_walls + k, frac, hit_wall, kill_scale,
                                diffusivity, dt, bridge,
                            )  # fmt: skip
                if hit_wall >= 0:
                    g = _exit_point(
                        g, xo, x, frac, sigma, hit_wall, n_box_walls, lower, upper,
                        is_ball, ball_center, ball_radius, target_center, target_radius,
                    )  # fmt: skip
                    break
                if step == next_snapshot:
                    o, next_snapshot = _snapshots(
                        x, step, o, occupancy_steps, occupancy_lower, occupancy_upper,
                        occupancy_bins, out_occupancy,
                    )  # fmt: skip

        steps_done += step
        out_wall[w] = hit_wall
        if hit_wall >= 0:
            hit_time = (step - 1 + frac) * dt
            out_time[w] = hit_time
            for i in range(d):
                out_position[w, i] = x[i]
                out_final[w, i] = math.nan
            if n_fpt_bins > 0:
                b = int(hit_time / fpt_bin_width)
                out_fpt_hist[hit_wall, min(b, n_fpt_bins - 1)] += 1
            # 4. Survival: counted at every grid time before the absorption.
            hist[np.searchsorted(survival_times, hit_time, side="left")] += 1
        else:
            out_time[w] = math.nan
            for i in range(d):
                out_position[w, i] = math.nan
                out_final[w, i] = x[i]
            hist[n_survival] += 1

    above = 0
    for k in range(n_survival - 1, -1, -1):
        above += hist[k + 1]
        out_survival[k] += above
    words[0], words[1], words[2], words[3] = g
    return steps_done


def _loop(shape, dim):  # type: ignore[no-untyped-def]
    """The compiled step loop for one kind of domain and number of axes (see
    :func:`_simulate`), taking :func:`simulate`'s arguments one by one.

    One by one, not packed in a tuple (nor as ``*args``, which numba packs the same
    way): numba types a tuple argument in Python, one element at a time, which cost
    0.3 ms per call (20 arrays), 1-2 % of a bench run of the 1-D kernel and time
    under the GIL, on which two threads serialise; single arguments take its fast
    path (30 us). Each loop is its own function for numba's on-disk cache, whose
    index tells them apart by ``shape`` and ``dim`` (the closure's values).
    """

    @njit(nogil=True, cache=True)
    def loop(  # type: ignore[no-untyped-def]
        state, n_walkers, start, uniform_start, lower, upper, absorbing_low,
        absorbing_high, ball_center, ball_radius, ball_absorbing, target_center,
        target_radius, diffusivity, drift, dt, n_steps, bridge, survival_times,
        occupancy_steps, occupancy_lower, occupancy_upper, occupancy_bins, out_time,
        out_wall, out_position, out_survival, out_occupancy, out_final, fpt_bin_width,
        out_fpt_hist,
    ):  # fmt: skip
        a = (
            state, n_walkers, start, uniform_start, lower, upper, absorbing_low,
            absorbing_high, ball_center, ball_radius, ball_absorbing, target_center,
            target_radius, diffusivity, drift, dt, n_steps, bridge, survival_times,
            occupancy_steps, occupancy_lower, occupancy_upper, occupancy_bins,
            out_time, out_wall, out_position, out_survival, out_occupancy, out_final,
            fpt_bin_width, out_fpt_hist,
        )  # fmt: skip
        return _simulate(a, shape, dim)

    return loop


#: (shape, dim) -> its compiled loop; dim 0 is any dimension.
_LOOPS = {
    (shape, dim): _loop(shape, dim)
    for shape in (BOX, BOX_TARGETS, BALL)
    for dim in (1, 2, 3, 0)
}


@njit(nogil=True, cache=True)
def _other_targets(  # type: ignore[no-untyped-def]
    g, x0, x1, x2, y0, y1, y2, far, target_center, target_radius, reach2, cut,
    frac, hit_wall, n_box_walls, kill_scale, diffusivity, dt, bridge,
):  # fmt: skip
    """The register loop's targets 1, 2, ... for the step (x0, x1, x2) -> (y0, y1, y2)
    (unused axes 0): the earliest crossing, in index order, after target 0's. Returns
    (frac, hit_wall, far, g); bit k of ``far`` (k < 63) marks a step start beyond reach of
    target k (the last step's end), so its distance need not be computed again."""
    for k in range(1, target_radius.shape[0]):
        r2 = _r2(target_center, k, y0, y1, y2)
        bit = np.int64(1) << k if k < 63 else np.int64(0)
        if r2 > reach2[k]:
            if far & bit:
                continue
            far |= bit
        else:
            far &= ~bit
        r1 = _r2(target_center, k, x0, x1, x2)
        if r2 > reach2[k] and r1 > reach2[k]:
            continue
        d1 = math.sqrt(r1) - target_radius[k]
        d2 = math.sqrt(r2) - target_radius[k]
        if d1 * d2 <= cut:
            frac, hit_wall, g = _earliest(
                g, d1, d2, n_box_walls + k, frac, hit_wall, kill_scale, diffusivity,
                dt, bridge,
            )  # fmt: skip
    return frac, hit_wall, far, g


@njit(nogil=True, cache=True)
def _face_crossing(  # type: ignore[no-untyped-def]
    g, xo, x, abs_lo, abs_hi, cut, kill_scale, diffusivity, dt, bridge
):
    """(fraction of the step, wall index) of the earliest face crossing, or (2.0, -1),
    and the stream ``g`` after the draws.

    Called only for steps that end on, beyond or (bridge) near an absorbing face.
    """
    frac = 2.0
    wall = -1
    for i in range(xo.shape[0]):
        for side in range(2):
            a = abs_lo[i] if side == 0 else abs_hi[i]
            if not math.isfinite(a):
                continue
            # Signed distances, positive inside the domain.
            d1 = xo[i] - a if side == 0 else a - xo[i]
            d2 = x[i] - a if side == 0 else a - x[i]
            if d1 * d2 <= cut:
                frac, wall, g = _earliest(
                    g, d1, d2, 2 * i + side, frac, wall, kill_scale, diffusivity,
                    dt, bridge,
                )  # fmt: skip
    return frac, wall, g


@njit(nogil=True, cache=True)
def _earliest(g, d1, d2, wall, frac, hit_wall, kill_scale, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """(frac, wall, g) after resolving one surface near the step (distances ``d1``,
    ``d2``, see :func:`_crossing`): its crossing fraction and index ``wall`` if earlier
    than ``frac``, else ``frac`` and ``hit_wall`` unchanged; ``g``, the stream."""
    f, g = _crossing(g, d1, d2, kill_scale, diffusivity, dt, bridge)
    if f < frac:
        return f, wall, g
    return frac, hit_wall, g


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
def _crossing(g, d1, d2, kill_scale, diffusivity, dt, bridge):  # type: ignore[no-untyped-def]
    """Step fraction at which a face was first touched, or 2.0 when it was not; and
    the stream ``g`` after the draws.

    ``d1`` > 0 and ``d2`` are the signed distances of the step's start and end from
    the face (negative: beyond it). An end inside is killed with the bridge crossing
    probability exp(-d1 d2 / (D dt)).
    """
    if d2 > 0.0:
        u, g = _uniform(g)
        z = d1 * d2 * kill_scale
        # Survival, u >= exp(-z), is mostly decided without exp: e^z >= the cubic
        # 1 + z + z^2/2 + z^3/6, so u * cubic >= 1 + margin implies it. The margin,
        # far above the rounding of both sides, makes the decision the same as
        # exp's in every case, so the draws stay bit-identical.
        if u * (1.0 + z * (1.0 + z * (0.5 + z * (1.0 / 6.0)))) >= EXP_MARGIN:
            return 2.0, g
        if u >= math.exp(-z):
            return 2.0, g
    return _hit_fraction(g, d1, abs(d2), diffusivity, dt, bridge)


@njit(nogil=True, cache=True)
def _reflect_ball(y, center, radius):  # type: ignore[no-untyped-def]
    """Radial mirror image of a point that left a reflecting ball."""
    d = y.shape[0]
    while True:
        r2 = 0.0
        for i in range(d):
            r2 += (y[i] - center[i]) ** 2
        if r2 <= radius * radius:
            return
        r = math.sqrt(r2)
        scale = (2.0 * radius - r) / r
        for i in range(d):
            y[i] = center[i] + (y[i] - center[i]) * scale


@njit(nogil=True, cache=True)
def _axes(v, fill):  # type: ignore[no-untyped-def]
    """The first three entries of ``v``, ``fill`` for those it lacks."""
    n = v.shape[0]
    return v[0], (v[1] if n > 1 else fill), (v[2] if n > 2 else fill)


@njit(nogil=True, cache=True)
def _put(v, a0, a1, a2):  # type: ignore[no-untyped-def]
    """Write up to three scalars into ``v`` (as many as it holds)."""
    n = v.shape[0]
    v[0] = a0
    if n > 1:
        v[1] = a1
    if n > 2:
        v[2] = a2


@njit(nogil=True, cache=True)
def _r2(centers, k, y0, y1, y2):  # type: ignore[no-untyped-def]
    """Squared distance of the point (y0, y1, y2), first ``centers.shape[1]`` axes, from
    ``centers[k]``."""
    n = centers.shape[1]
    r2 = (y0 - centers[k, 0]) ** 2
    if n > 1:
        r2 += (y1 - centers[k, 1]) ** 2
    if n > 2:
        r2 += (y2 - centers[k, 2]) ** 2
    return r2


@njit(nogil=True, cache=True)
def _mirror(y0, y1, y2, c0, c1, c2, radius):  # type: ignore[no-untyped-def]
    """:func:`_reflect_ball` on scalars (unused axes 0); returns the point and its
    squared distance from the center."""
    while True:
        r2 = (y0 - c0) ** 2 + (y1 - c1) ** 2 + (y2 - c2) ** 2
        if r2 <= radius * radius:
            return y0, y1, y2, r2
        r = math.sqrt(r2)
        scale = (2.0 * radius - r) / r
        y0 = c0 + (y0 - c0) * scale
        y1 = c1 + (y1 - c1) * scale
        y2 = c2 + (y2 - c2) * scale


@njit(nogil=True, cache=True)
def _exit_point(  # type: ignore[no-untyped-def]
    g, x, y, frac, sigma, wall, n_box_walls, lower, upper,
    is_ball, ball_center, ball_radius, target_center, target_radius,
):  # fmt: skip
    """Overwrite ``y`` with the position at absorption, a fraction ``frac`` into the step;
    returns the stream ``g`` after the draws.

    Off the wall's normal the path is a Brownian bridge between x and y: a normal with
    mean x + (y - x) frac and variance sigma^2 frac (1 - frac). The point is then put
    on the wall (flat: its coordinate; curved: the radial projection).
    """
    d = x.shape[0]
    spread = sigma * math.sqrt(max(frac * (1.0 - frac), 0.0))
    for i in range(d):
        z, g = _gauss(g)
        y[i] = x[i] + (y[i] - x[i]) * frac + spread * z
    if wall < n_box_walls:
        axis = wall // 2
        for i in range(d):
            y[i] = min(max(y[i], lower[i]), upper[i])
        y[axis] = lower[axis] if wall % 2 == 0 else upper[axis]
        return g
    if wall - n_box_walls < target_radius.shape[0]:
        k = wall - n_box_walls
        _project(y, target_center[k], target_radius[k])
    else:
        _project(y, ball_center, ball_radius)
    if not is_ball:
        for i in range(d):
            y[i] = min(max(y[i], lower[i]), upper[i])
    return g


@njit(nogil=True, cache=True)
def _bridge_point(g, dim, x0, x1, x2, y0, y1, y2, frac, sigma):  # type: ignore[no-untyped-def]
    """The first part of :func:`_exit_point` on scalars (the first ``dim`` axes drawn,
    the others returned as 0): the bridge's position a fraction ``frac`` into the step
    (x0, x1, x2) -> (y0, y1, y2), and the stream ``g`` after the draws."""
    spread = sigma * math.sqrt(max(frac * (1.0 - frac), 0.0))
    z, g = _gauss(g)
    z0 = x0 + (y0 - x0) * frac + spread * z
    z1 = 0.0
    z2 = 0.0
    if dim >= 2:
        z, g = _gauss(g)
        z1 = x1 + (y1 - x1) * frac + spread * z
    if dim >= 3:
        z, g = _gauss(g)
        z2 = x2 + (y2 - x2) * frac + spread * z
    return z0, z1, z2, g


@njit(nogil=True, cache=True)
def _clamp(y0, y1, y2, lo0, lo1, lo2, hi0, hi1, hi2):  # type: ignore[no-untyped-def]
    """Each coordinate clamped into [lo, hi]."""
    return (
        min(max(y0, lo0), hi0),
        min(max(y1, lo1), hi1),
        min(max(y2, lo2), hi2),
    )


@njit(nogil=True, cache=True)
def _on_face(wall, y0, y1, y2, lo0, lo1, lo2, hi0, hi1, hi2):  # type: ignore[no-untyped-def]
    """:func:`_exit_point`'s placement on box face ``wall`` on scalars: clamped into
    the box, the face's coordinate set."""
    y0, y1, y2 = _clamp(y0, y1, y2, lo0, lo1, lo2, hi0, hi1, hi2)
    if wall == 0:
        y0 = lo0
    elif wall == 1:
        y0 = hi0
    elif wall == 2:
        y1 = lo1
    elif wall == 3:
        y1 = hi1
    elif wall == 4:
        y2 = lo2
    else:
        y2 = hi2
    return y0, y1, y2


@njit(nogil=True, cache=True)
def _on_sphere(dim, y0, y1, y2, c0, c1, c2, radius):  # type: ignore[no-untyped-def]
    """:func:`_project` on scalars, first ``dim`` axes (the others stay as given)."""
    r2 = (y0 - c0) ** 2
    if dim >= 2:
        r2 += (y1 - c1) ** 2
    if dim >= 3:
        r2 += (y2 - c2) ** 2
    r = math.sqrt(r2)
    if r == 0.0:
        return c0 + radius, c1, c2
    scale = radius / r
    return c0 + (y0 - c0) * scale, c1 + (y1 - c1) * scale, c2 + (y2 - c2) * scale


@njit(nogil=True, cache=True)
def _project(y, center, radius):  # type: ignore[no-untyped-def]
    """Move ``y`` radially onto the sphere |y - center| = radius."""
    d = y.shape[0]
    r2 = 0.0
    for i in range(d):
        r2 += (y[i] - center[i]) ** 2
    r = math.sqrt(r2)
    if r == 0.0:
        y[0] = center[0] + radius
        for i in range(1, d):
            y[i] = center[i]
        return
    for i in range(d):
        y[i] = center[i] + (y[i] - center[i]) * (radius / r)


@njit(nogil=True, cache=True)
def _snapshots(x, step, o, steps, lower, upper, bins, out):  # type: ignore[no-untyped-def]
    """Bin ``x`` into every snapshot due at ``step`` (several times may snap to one
    step); returns the next snapshot's index and its step (-1 when none is left)."""
    n = steps.shape[0]
    while o < n and steps[o] == step:
        _bin(x, lower, upper, bins, out, o)
        o += 1
    return o, (steps[o] if o < n else -1)


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


@njit(nogil=True, cache=True)
def _bin(x, lower, upper, bins, out, snapshot):  # type: ignore[no-untyped-def]
    """Add the point ``x`` to row ``snapshot`` of the flattened occupancy histogram."""
    index = 0
    for i in range(x.shape[0]):
        b = _cell(x[i], lower[i], upper[i], bins)
        if b < 0:
            return
        index = index * bins + b
    out[snapshot, index] += 1
