"""The sphere-jump kernel: exact jumps in the bulk, bridge-monitored steps near surfaces.

Pure computation: numba ``njit(nogil=True)``, the task's SFC64 state passed in (four
uint64 words, :mod:`kernels.rng`), preallocated outputs, no I/O, no validation.

A walker at ``x`` looks for its *protective radius* ``r``: the distance to the nearest
surface its free path may not cross. Absorbing and reactive box faces, targets
(absorbing or reactive), obstacles and the ball wall (of any kind) count. Reflecting
flat box faces do not: reflected Brownian motion in a box is the fold of free motion
(exact without drift), so the walker moves freely in the unfolded space and its
position is folded back into the box; the mirror images of targets and obstacles in
the reflecting faces then count too (per axis the nearest image of a centre is the
centre itself or its mirror in the lower or upper face). Periodic faces are not
supported (refused by the definition).

* ``r > handover``: **jump**. Free motion started at ``x`` leaves the ball of radius
  ``r`` at a uniformly distributed point of its sphere, at a time ``r**2 / D * tau``
  where ``tau`` follows the unit ball's centre-exit law; it cannot touch any surface
  before. ``tau`` comes from a tabulated inverse CDF (``sweep.analytic.centre_exit_table``,
  cubic Hermite interpolation in ``s = logit(u)``; its Kolmogorov distance from the
  exact law is stored with the table, about 3e-11). Direction and time are independent
  (rotational symmetry), so both are drawn separately. A jump whose exit time passes the
  horizon censors the walker (nothing can absorb it inside the sphere: exact).
* ``r <= handover``: one **step** of ``dt`` (shorter when the horizon comes first), as
  in :mod:`kernels.walkers` and in its order: a normal increment, folded at reflecting
  faces; reactive faces, targets and ball wall pushed back and reacting by the step
  kernel's ``_react`` (boundary local time against an exponential threshold of rate
  kappa / D, drawn afresh each step: memoryless, so nothing carries across jumps,
  which add no local time); mirrored radially out of obstacles and into a reflecting
  ball wall; absorbing faces, targets and an absorbing ball wall are checked at the
  step end and (``bridge``) between steps with the Brownian-bridge crossing
  probability, the hitting time drawn from the bridge's law.

The Markov property makes the switch between jumps and steps exact; the only
approximation is that of the steps in the layer next to surfaces (O(dt) with bridge
monitoring), plus the table's 3e-11.

The step logic (crossing test, hitting fraction, exit point, folding, the ball mirror,
the uniform start) repeats :mod:`kernels.walkers`' on array positions with the
generator state threaded through; docs/kernels.md ("The spheres scheme") lists it for a
later unification.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from kernels.rng import normal, uniform, wald

# The step kernel's helpers, one definition each: the fold at reflecting faces, and the
# reactive surfaces' Skorokhod push and reaction (with the step kernel's threaded
# random state, converted from and to this kernel's four words around the call).
from kernels.walkers import REACH, _fold, _react, _stream, _words

#: The bridge probability is only evaluated when d1 d2 < BRIDGE_CUTOFF * D h (below
#: exp(-20) beyond), as in kernels.walkers.
BRIDGE_CUTOFF = 20.0

#: A step start closer to a surface than this many sqrt(D h) counts as on it (see
#: _crossing).
ON_SURFACE = 1e-9

#: 2^-54: added to a uniform draw in [0, 1) (multiples of 2^-53) to make it lie in
#: (0, 1), so its logit is finite.
_HALF_ULP = 1.0 / 18014398509481984.0


@njit(nogil=True, cache=True)
def _exit_time(u, table, dtable, s0, ds, slope):  # type: ignore[no-untyped-def]
    """Centre-exit time of the unit ball (D = 1) for the uniform ``u`` in (0, 1).

    Cubic Hermite interpolation of ``table`` (values) and ``dtable`` (slopes times
    ``ds``) at ``s = logit(u)``; below the first knot the first value (probability
    < 7e-13), beyond the last the slowest mode's straight line of slope ``slope``.
    """
    s = math.log(u / (1.0 - u))  # 1 - u is exact for u in (0, 1) on the 2^-54 grid
    pos = (s - s0) / ds
    n = table.shape[0]
    if pos <= 0.0:
        return table[0]
    if pos >= n - 1:
        return table[n - 1] + (s - (s0 + (n - 1) * ds)) * slope
    k = int(pos)
    h = pos - k
    h2 = h * h
    h3 = h2 * h
    return (
        (2.0 * h3 - 3.0 * h2 + 1.0) * table[k]
        + (h3 - 2.0 * h2 + h) * dtable[k]
        + (3.0 * h2 - 2.0 * h3) * table[k + 1]
        + (h3 - h2) * dtable[k + 1]
    )


@njit(nogil=True, cache=True)
def _radius(x, is_ball, ball_center, ball_radius, abs_lo, abs_hi, refl_lo, refl_hi,
            target_center, target_radius):  # type: ignore[no-untyped-def]  # fmt: skip
    """Protective radius at ``x``: distance to the nearest absorbing face, ball wall,
    target or (box) mirror image of a target in the reflecting faces (+inf if none)."""
    d = x.shape[0]
    r = math.inf
    if is_ball:
        s2 = 0.0
        for i in range(d):
            s2 += (x[i] - ball_center[i]) ** 2
        r = ball_radius - math.sqrt(s2)
    else:
        for i in range(d):
            r = min(r, x[i] - abs_lo[i], abs_hi[i] - x[i])
    for k in range(target_radius.shape[0]):
        s2 = 0.0
        for i in range(d):
            c = target_center[k, i]
            gap = abs(x[i] - c)
            if not is_ball:
                # Mirror images of the centre in the reflecting faces (infinite
                # faces give +inf).
                gap = min(gap, x[i] + c - 2.0 * refl_lo[i], 2.0 * refl_hi[i] - c - x[i])
            s2 += gap * gap
        r = min(r, math.sqrt(s2) - target_radius[k])
    return r


@njit(nogil=True, cache=True)
def _jumps(  # type: ignore[no-untyped-def]
    dim, x0, x1, x2, t, horizon, handover, diffusivity, is_ball, ball_center,
    ball_radius, abs_lo, abs_hi, refl_lo, refl_hi, target_center, target_radius,
    exit_table, exit_dtable, exit_s0, exit_ds, exit_slope, a, b, c, w,
):  # fmt: skip
    """Jumps of one walker in 1-3 dimensions with the position in scalars (unused axes
    0, without faces), until its protective radius falls to the handover radius or a
    jump passes the horizon. Same rules and draws in the same order as the array code
    of :func:`simulate` (which handles d > 3). The scalars run three times as fast
    (45 vs 130 ns per jump in the bench case, same run).

    Returns (x0, x1, x2, t, censored, jumps, a, b, c, w).
    """
    n_targets = target_radius.shape[0]
    al0, al1, al2 = _axes(abs_lo, -math.inf)
    ah0, ah1, ah2 = _axes(abs_hi, math.inf)
    rl0, rl1, rl2 = _axes(refl_lo, -math.inf)
    rh0, rh1, rh2 = _axes(refl_hi, math.inf)
    bc0, bc1, bc2 = _axes(ball_center, 0.0)
    jumps = 0
    while True:
        # Protective radius (see _radius).
        if is_ball:
            r = ball_radius - math.sqrt(
                (x0 - bc0) ** 2 + (x1 - bc1) ** 2 + (x2 - bc2) ** 2
            )
        else:
            r = min(x0 - al0, ah0 - x0)
            if dim >= 2:
                r = min(r, x1 - al1, ah1 - x1)
            if dim >= 3:
                r = min(r, x2 - al2, ah2 - x2)
        for k in range(n_targets):
            c0 = target_center[k, 0]
            g = abs(x0 - c0)
            if not is_ball:
                g = min(g, x0 + c0 - 2.0 * rl0, 2.0 * rh0 - c0 - x0)
            s2 = g * g
            if dim >= 2:
                c1 = target_center[k, 1]
                g = abs(x1 - c1)
                if not is_ball:
                    g = min(g, x1 + c1 - 2.0 * rl1, 2.0 * rh1 - c1 - x1)
                s2 += g * g
            if dim >= 3:
                c2 = target_center[k, 2]
                g = abs(x2 - c2)
                if not is_ball:
                    g = min(g, x2 + c2 - 2.0 * rl2, 2.0 * rh2 - c2 - x2)
                s2 += g * g
            r = min(r, math.sqrt(s2) - target_radius[k])
        if r <= handover:
            return x0, x1, x2, t, False, jumps, a, b, c, w
        jumps += 1
        u, a, b, c, w = uniform(a, b, c, w)
        tau = _exit_time(
            u + _HALF_ULP, exit_table, exit_dtable, exit_s0, exit_ds, exit_slope
        )
        t += tau * r * r / diffusivity
        if t >= horizon:
            return x0, x1, x2, t, True, jumps, a, b, c, w
        z0, a, b, c, w = normal(a, b, c, w)
        norm2 = z0 * z0
        z1 = 0.0
        z2 = 0.0
        if dim >= 2:
            z1, a, b, c, w = normal(a, b, c, w)
            norm2 += z1 * z1
        if dim >= 3:
            z2, a, b, c, w = normal(a, b, c, w)
            norm2 += z2 * z2
        scale = r / math.sqrt(norm2)
        x0 = x0 + scale * z0
        if not is_ball and (x0 < rl0 or x0 > rh0):
            x0 = _fold(x0, rl0, rh0)
        if dim >= 2:
            x1 = x1 + scale * z1
            if not is_ball and (x1 < rl1 or x1 > rh1):
                x1 = _fold(x1, rl1, rh1)
        if dim >= 3:
            x2 = x2 + scale * z2
            if not is_ball and (x2 < rl2 or x2 > rh2):
                x2 = _fold(x2, rl2, rh2)


@njit(nogil=True, cache=True)
def _axes(v, fill):  # type: ignore[no-untyped-def]
    """The first three entries of ``v``, ``fill`` for those it lacks."""
    n = v.shape[0]
    return v[0], (v[1] if n > 1 else fill), (v[2] if n > 2 else fill)


@njit(nogil=True, cache=True)
def _crossing(d1, d2, diffusivity, h, bridge, a, b, c, w):  # type: ignore[no-untyped-def]
    """Fraction [0, 1] of a step of duration ``h`` at which the surface was first
    touched, or 2.0 if not; ``d1`` and ``d2`` are the start's and end's signed
    distances (negative: beyond). A start within ON_SURFACE sqrt(D h) is a hit at 0.
    An end inside is a crossing with probability exp(-d1 d2 / (D h)); the hitting time is then tau = h U / (h + U), U inverse
    Gaussian(h d1 / |d2|, d1^2 / (2 D)) (Levy when d2 = 0); without the bridge the step
    end. As kernels.walkers._crossing and _hit_fraction."""
    if d1 <= ON_SURFACE * math.sqrt(diffusivity * h):
        # Started on the surface up to rounding: a jump's sphere touches the surface
        # it is limited by (in 1-D one of its two points lies on it), so the walker
        # reached it at the jump's end: a hit at once, with either monitoring. (The
        # bridge's fraction would be of order d1^2 / (D h) < 1e-18, and its inverse-
        # Gaussian draw loses all precision there: mean + x cancels to 0.)
        return 0.0, a, b, c, w
    if d2 > 0.0:
        u, a, b, c, w = uniform(a, b, c, w)
        if u >= math.exp(-d1 * d2 / (diffusivity * h)):
            return 2.0, a, b, c, w
    if not bridge:
        return 1.0, a, b, c, w
    shape = d1 * d1 / (2.0 * diffusivity)
    g = abs(d2)
    if g > 0.0:
        v, a, b, c, w = wald(h * d1 / g, shape, a, b, c, w)
    else:
        z, a, b, c, w = normal(a, b, c, w)
        v = shape / (z * z) if z != 0.0 else math.inf
    return v / (h + v), a, b, c, w


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
def _radial(y, xo, center, radius):  # type: ignore[no-untyped-def]
    """Move ``y`` along its radius from ``center`` to distance ``radius`` (the step's
    start ``xo`` gives the direction if ``y`` is the center itself), as the step
    template's ``radial`` (kernels/step_surfaces.py)."""
    d = y.shape[0]
    r2 = 0.0
    for i in range(d):
        r2 += (y[i] - center[i]) ** 2
    if r2 == 0.0:
        for i in range(d):
            y[i] = xo[i]
            r2 += (y[i] - center[i]) ** 2
        if r2 == 0.0:
            for i in range(d):
                y[i] = center[i] + (radius if i == 0 else 0.0)
            return
    scale = radius / math.sqrt(r2)
    for i in range(d):
        y[i] = center[i] + (y[i] - center[i]) * scale


@njit(nogil=True, cache=True, inline="always")
def _near_reactive(  # type: ignore[no-untyped-def]
    xo, x, is_ball, react_lo, react_hi, target_center, target_radius,
    target_reactivity, ball_center, ball_radius, ball_reactive, reach, cut,
):  # fmt: skip
    """Whether the step ``xo`` -> ``x`` comes near a reactive surface, so that
    :func:`_react_step` may do anything: a face product within ``cut``, or an end
    within ``reach`` of a reactive target or the reactive ball wall (``reach`` =
    REACH sqrt(2 D h): farther, d1 d2 exceeds the cut). Inlined: most layer steps of
    a domain with a reactive surface are near another surface, and skip the call."""
    d = x.shape[0]
    if not is_ball:
        for i in range(d):
            lo = react_lo[i]
            hi = react_hi[i]
            if (xo[i] - lo) * (x[i] - lo) <= cut or (xo[i] - hi) * (x[i] - hi) <= cut:
                return True
    for k in range(target_radius.shape[0]):
        if math.isnan(target_reactivity[k]):
            continue
        far2 = (target_radius[k] + reach) ** 2
        r1 = 0.0
        r2 = 0.0
        for i in range(d):
            r1 += (xo[i] - target_center[k, i]) ** 2
            r2 += (x[i] - target_center[k, i]) ** 2
        if r1 <= far2 or r2 <= far2:
            return True
    if ball_reactive:
        near2 = max(ball_radius - reach, 0.0) ** 2
        r1 = 0.0
        r2 = 0.0
        for i in range(d):
            r1 += (xo[i] - ball_center[i]) ** 2
            r2 += (x[i] - ball_center[i]) ** 2
        if r1 >= near2 or r2 >= near2:
            return True
    return False


@njit(nogil=True, cache=True)
def _react_step(  # type: ignore[no-untyped-def]
    xo, x, is_ball, react_lo, react_hi, q_lo, q_hi, target_center, target_radius,
    target_reactivity, ball_center, ball_radius, ball_reactivity, n_box_walls,
    diffusivity, h, frac, hit_wall, a, b, c, w,
):  # fmt: skip
    """Reactive surfaces for the step ``xo`` -> ``x`` of duration ``h`` (``x`` after
    the fold; pushed back in place): faces axis by axis (lower first), then reactive
    targets in index order, then a reactive ball wall, each resolved by the step
    kernel's :func:`kernels.walkers._react` (Skorokhod push by the bridge's minimum,
    reaction when the push passes an exponential threshold of rate kappa / D, drawn
    afresh each step: memoryless, so no state carries between steps or across jumps,
    which touch no surface). Curved surfaces use the distance along the radius and
    push radially, as ``reactive_spheres`` in kernels/step_surfaces.py. Surfaces with
    d1 d2 above the bridge cut (20 D h) are skipped, as there. Returns (frac, hit_wall,
    a, b, c, w)."""
    d = x.shape[0]
    cut = BRIDGE_CUTOFF * diffusivity * h
    kill_scale = 1.0 / (diffusivity * h)
    # Targets farther than REACH sqrt(2 D h) from both ends are skipped before any
    # square root: there d1 d2 > REACH^2 2 D h > cut (as in the step template).
    reach = REACH * math.sqrt(2.0 * diffusivity * h)
    rs = _stream(a, b, c, w)
    if not is_ball:
        for i in range(d):
            lo = react_lo[i]
            if (xo[i] - lo) * (x[i] - lo) <= cut:
                f, push, rs = _react(
                    rs, xo[i] - lo, x[i] - lo, q_lo[i], kill_scale, diffusivity, h
                )
                x[i] = x[i] + push
                if f < frac:
                    frac = f
                    hit_wall = 2 * i
            hi = react_hi[i]
            if (xo[i] - hi) * (x[i] - hi) <= cut:
                f, push, rs = _react(
                    rs, hi - xo[i], hi - x[i], q_hi[i], kill_scale, diffusivity, h
                )
                x[i] = x[i] - push
                if f < frac:
                    frac = f
                    hit_wall = 2 * i + 1
    n_targets = target_radius.shape[0]
    for k in range(n_targets):
        kappa = target_reactivity[k]
        if math.isnan(kappa):
            continue
        r1 = 0.0
        r2 = 0.0
        for i in range(d):
            r1 += (xo[i] - target_center[k, i]) ** 2
            r2 += (x[i] - target_center[k, i]) ** 2
        far2 = (target_radius[k] + reach) ** 2
        if r1 > far2 and r2 > far2:
            continue
        d1 = math.sqrt(r1) - target_radius[k]
        d2 = math.sqrt(r2) - target_radius[k]
        if d1 * d2 <= cut:
            f, push, rs = _react(
                rs, d1, d2, kappa / diffusivity, kill_scale, diffusivity, h
            )
            if push > 0.0:
                _radial(x, xo, target_center[k], target_radius[k] + d2 + push)
            if f < frac:
                frac = f
                hit_wall = n_box_walls + k
    if is_ball and not math.isnan(ball_reactivity):
        r1 = 0.0
        r2 = 0.0
        for i in range(d):
            r1 += (xo[i] - ball_center[i]) ** 2
            r2 += (x[i] - ball_center[i]) ** 2
        d1 = ball_radius - math.sqrt(r1)
        d2 = ball_radius - math.sqrt(r2)
        if d1 * d2 <= cut:
            f, push, rs = _react(
                rs, d1, d2, ball_reactivity / diffusivity, kill_scale, diffusivity, h
            )
            if push > 0.0:
                _radial(x, xo, ball_center, max(ball_radius - d2 - push, 0.0))
            if f < frac:
                frac = f
                hit_wall = n_targets
    a, b, c, w = _words(rs)
    return frac, hit_wall, a, b, c, w


@njit(nogil=True, cache=True)
def _leave_obstacles(y, obstacle_center, obstacle_radius):  # type: ignore[no-untyped-def]
    """Mirror ``y`` radially out of every reflecting obstacle it ends inside
    (distance r -> 2 a - r from the centre), as the step template's
    ``obstacle_mirror`` (kernels/step_surfaces.py)."""
    d = y.shape[0]
    for k in range(obstacle_radius.shape[0]):
        a = obstacle_radius[k]
        r2 = 0.0
        for i in range(d):
            r2 += (y[i] - obstacle_center[k, i]) ** 2
        if r2 < a * a:
            r = math.sqrt(r2)
            if r == 0.0:
                for i in range(d):
                    y[i] = obstacle_center[k, i] + (2.0 * a if i == 0 else 0.0)
            else:
                scale = (2.0 * a - r) / r
                for i in range(d):
                    y[i] = (
                        obstacle_center[k, i] + (y[i] - obstacle_center[k, i]) * scale
                    )


@njit(nogil=True, cache=True)
def simulate(  # type: ignore[no-untyped-def]
    state, n_walkers, start, uniform_start, lower, upper, absorbing_low, absorbing_high,
    ball_center, ball_radius, ball_absorbing, target_center, target_radius,
    reactivity_lower, reactivity_upper, ball_reactivity, target_reactivity,
    obstacle_center, obstacle_radius, diffusivity, dt, n_steps, bridge, handover,
    exit_table, exit_dtable, exit_s0, exit_ds, exit_slope, survival_times, out_time,
    out_wall, out_position, out_survival, fpt_bin_width, out_fpt_hist, out_moves,
):  # fmt: skip
    """Simulate ``n_walkers`` walkers with sphere jumps to absorption or the horizon.

    Parameters
    ----------
    state : uint64 (4,)
        The task's SFC64 state ``(a, b, c, w)``; overwritten with the final state.
    n_walkers : int
    start : float64 (d,)
        Start point (ignored when ``uniform_start``).
    uniform_start : bool
        Start uniformly over the domain outside targets (bounded domains only).
    lower, upper : float64 (d,)
        Box extent per axis (+-inf allowed); for a ball, its bounding box.
    absorbing_low, absorbing_high : bool (d,)
        Kind of each box face (ignored for a ball).
    ball_center : float64 (d,), ball_radius : float
        The ball domain; ``ball_radius = inf`` means a box.
    ball_absorbing : bool
    target_center : float64 (k, d), target_radius : float64 (k,)
        Absorbing (or reactive) balls inside the domain.
    reactivity_lower, reactivity_upper : float64 (d,)
        Reactivity kappa (length / time, 0 to inf) of each reactive box face; NaN for
        faces that follow ``absorbing_low`` / ``absorbing_high`` (ignored for a ball).
    ball_reactivity : float
        Reactivity of the ball wall; NaN when it is absorbing or reflecting.
    target_reactivity : float64 (k,)
        Reactivity of each target; NaN for absorbing targets.
    obstacle_center : float64 (m, d), obstacle_radius : float64 (m,)
        Reflecting balls inside the domain.
    diffusivity : float
        D, length^2 / time (no drift: jumps assume free motion).
    dt : float
        Step inside the handover layer, time units.
    n_steps : int
        The horizon is ``n_steps * dt`` (the step scheme's, snapped to its grid).
    bridge : bool
        Brownian-bridge monitoring of the steps.
    handover : float
        Jumps only while the protective radius exceeds this, length units.
    exit_table, exit_dtable : float64 (n,)
        The centre-exit inverse CDF and its slopes times ``exit_ds``
        (``sweep.analytic.centre_exit_table`` for this dimension).
    exit_s0, exit_ds, exit_slope : float
        The table's first knot, spacing and tail slope.
    survival_times : float64 (m,)
        Ascending times at which survivors are counted.
    out_time : float64 (n_walkers,)
        First-passage time; NaN when censored.
    out_wall : int16 (n_walkers,)
        Index of the absorbing or reactive wall (box faces, then targets, then the
        ball surface); -1 when censored.
    out_position : float64 (n_walkers, d)
        Position at absorption; NaN when censored.
    out_survival : int64 (m,)
        Incremented by the number of walkers with first-passage time > t_k.
    fpt_bin_width : float
        Width of the first-passage-time histogram's bins.
    out_fpt_hist : int64 (n_walls, n_bins)
        Incremented per absorbed walker; shape (0, 0) to skip.
    out_moves : int64 (2,)
        Incremented by the jumps and the steps taken.
    """
    d = start.shape[0]
    n_targets = target_radius.shape[0]
    is_ball = ball_radius < math.inf
    n_box_walls = 0 if is_ball else 2 * d
    horizon = n_steps * dt
    n_survival = survival_times.shape[0]
    n_fpt_bins = out_fpt_hist.shape[1] if out_fpt_hist.shape[0] > 0 else 0
    hist = np.zeros(n_survival + 1, np.int64)
    a = state[0]
    b = state[1]
    c = state[2]
    w = state[3]
    abs_lo = np.full(d, -math.inf)
    abs_hi = np.full(d, math.inf)
    refl_lo = np.full(d, -math.inf)
    refl_hi = np.full(d, math.inf)
    # Reactive faces (kl, kh at -+inf when absent, q = kappa / D): never folded; like
    # absorbing faces they limit the protective radius (lim_lo, lim_hi).
    react_lo = np.full(d, -math.inf)
    react_hi = np.full(d, math.inf)
    q_lo = np.zeros(d)
    q_hi = np.zeros(d)
    if not is_ball:
        for i in range(d):
            if absorbing_low[i]:
                abs_lo[i] = lower[i]
            elif not math.isnan(reactivity_lower[i]):
                react_lo[i] = lower[i]
                q_lo[i] = reactivity_lower[i] / diffusivity
            else:
                refl_lo[i] = lower[i]
            if absorbing_high[i]:
                abs_hi[i] = upper[i]
            elif not math.isnan(reactivity_upper[i]):
                react_hi[i] = upper[i]
                q_hi[i] = reactivity_upper[i] / diffusivity
            else:
                refl_hi[i] = upper[i]
    lim_lo = np.maximum(abs_lo, react_lo)
    lim_hi = np.minimum(abs_hi, react_hi)
    # Balls that limit the protective radius: targets (absorbing or reactive), then
    # obstacles (without obstacles, copies of the targets' arrays: the same arithmetic).
    n_obstacles = obstacle_radius.shape[0]
    lim_center = np.concatenate((target_center, obstacle_center))
    lim_radius = np.concatenate((target_radius, obstacle_radius))
    reactive = False
    for i in range(d):
        reactive = reactive or react_lo[i] > -math.inf or react_hi[i] < math.inf
    for k in range(n_targets):
        reactive = reactive or not math.isnan(target_reactivity[k])
    ball_reactive = is_ball and not math.isnan(ball_reactivity)
    reactive = reactive or ball_reactive
    ball_r2 = ball_radius * ball_radius
    x = np.empty(d)
    xo = np.empty(d)
    z = np.empty(d)
    jumps = 0
    steps = 0
    for walker in range(n_walkers):
        # 1. Start point: given, or uniform over the domain outside targets.
        if uniform_start:
            while True:
                for i in range(d):
                    u, a, b, c, w = uniform(a, b, c, w)
                    x[i] = lower[i] + (upper[i] - lower[i]) * u
                free = True
                if is_ball:
                    s2 = 0.0
                    for i in range(d):
                        s2 += (x[i] - ball_center[i]) ** 2
                    free = s2 < ball_r2
                # Outside every target and obstacle (the balls of lim_center).
                for k in range(lim_radius.shape[0]):
                    s2 = 0.0
                    for i in range(d):
                        s2 += (x[i] - lim_center[k, i]) ** 2
                    if s2 <= lim_radius[k] ** 2:
                        free = False
                if free:
                    break
        else:
            for i in range(d):
                x[i] = start[i]
        t = 0.0
        hit_wall = -1
        while True:
            if d <= 3:
                x0, x1, x2, t, censored, n_jumps, a, b, c, w = _jumps(
                    d, x[0], x[1] if d > 1 else 0.0, x[2] if d > 2 else 0.0, t,
                    horizon, handover, diffusivity, is_ball, ball_center,
                    ball_radius, lim_lo, lim_hi, refl_lo, refl_hi, lim_center,
                    lim_radius, exit_table, exit_dtable, exit_s0, exit_ds,
                    exit_slope, a, b, c, w,
                )  # fmt: skip
                jumps += n_jumps
                if censored:
                    break
                x[0] = x0
                if d > 1:
                    x[1] = x1
                if d > 2:
                    x[2] = x2
                r = 0.0  # inside the handover layer: step
            else:
                r = _radius(
                    x, is_ball, ball_center, ball_radius, lim_lo, lim_hi, refl_lo,
                    refl_hi, lim_center, lim_radius,
                )  # fmt: skip
            if r > handover:
                # 2. Jump to a uniform point of the sphere of radius r.
                jumps += 1
                u, a, b, c, w = uniform(a, b, c, w)
                tau = _exit_time(
                    u + _HALF_ULP, exit_table, exit_dtable, exit_s0, exit_ds, exit_slope
                )
                t += tau * r * r / diffusivity
                if t >= horizon:
                    break  # censored inside the sphere (r = inf: never absorbed)
                norm2 = 0.0
                for i in range(d):
                    zi, a, b, c, w = normal(a, b, c, w)
                    z[i] = zi
                    norm2 += zi * zi
                scale = r / math.sqrt(norm2)
                for i in range(d):
                    yi = x[i] + scale * z[i]
                    if not is_ball and (yi < refl_lo[i] or yi > refl_hi[i]):
                        yi = _fold(yi, refl_lo[i], refl_hi[i])
                    x[i] = yi
                continue
            # 3. A bridge-monitored step inside the handover layer.
            if t >= horizon * (1.0 - 1e-15):
                break
            h = min(dt, horizon - t)
            steps += 1
            sigma = math.sqrt(2.0 * diffusivity * h)
            cut = BRIDGE_CUTOFF * diffusivity * h if bridge else 0.0
            # A step starting on a surface is examined whatever the monitoring.
            on = ON_SURFACE * math.sqrt(diffusivity * h)
            for i in range(d):
                zi, a, b, c, w = normal(a, b, c, w)
                xo[i] = x[i]
                yi = x[i] + sigma * zi
                if not is_ball and (yi < refl_lo[i] or yi > refl_hi[i]):
                    yi = _fold(yi, refl_lo[i], refl_hi[i])
                x[i] = yi
            frac = 2.0
            if reactive and _near_reactive(
                xo, x, is_ball, react_lo, react_hi, target_center, target_radius,
                target_reactivity, ball_center, ball_radius, ball_reactive,
                REACH * sigma, BRIDGE_CUTOFF * diffusivity * h,
            ):  # fmt: skip
                # Reactive surfaces, then obstacles: the step kernel's blocks 2b and
                # 2c (kernels/step.py), in its order and with its helper _react.
                frac, hit_wall, a, b, c, w = _react_step(
                    xo, x, is_ball, react_lo, react_hi, q_lo, q_hi, target_center,
                    target_radius, target_reactivity, ball_center, ball_radius,
                    ball_reactivity, n_box_walls, diffusivity, h, frac, hit_wall,
                    a, b, c, w,
                )  # fmt: skip
            if n_obstacles > 0:
                _leave_obstacles(x, obstacle_center, obstacle_radius)
            if not is_ball:
                # Absorbing faces, axis by axis, lower first; the earliest wins.
                for i in range(d):
                    for side in range(2):
                        face = abs_lo[i] if side == 0 else abs_hi[i]
                        if not math.isfinite(face):
                            continue
                        d1 = xo[i] - face if side == 0 else face - xo[i]
                        d2 = x[i] - face if side == 0 else face - x[i]
                        if d1 <= on or d1 * d2 <= cut:
                            f, a, b, c, w = _crossing(
                                d1, d2, diffusivity, h, bridge, a, b, c, w
                            )
                            if f < frac:
                                frac = f
                                hit_wall = 2 * i + side
            elif not ball_reactive:
                if not ball_absorbing:
                    _reflect_ball(x, ball_center, ball_radius)
                else:
                    r1 = 0.0
                    r2 = 0.0
                    for i in range(d):
                        r1 += (xo[i] - ball_center[i]) ** 2
                        r2 += (x[i] - ball_center[i]) ** 2
                    d1 = ball_radius - math.sqrt(r1)
                    d2 = ball_radius - math.sqrt(r2)
                    if d1 <= on or d1 * d2 <= cut:
                        f, a, b, c, w = _crossing(
                            d1, d2, diffusivity, h, bridge, a, b, c, w
                        )
                        if f < frac:
                            frac = f
                            hit_wall = n_targets
            for k in range(n_targets):
                if not math.isnan(target_reactivity[k]):
                    continue  # reactive: resolved above
                r1 = 0.0
                r2 = 0.0
                for i in range(d):
                    r1 += (xo[i] - target_center[k, i]) ** 2
                    r2 += (x[i] - target_center[k, i]) ** 2
                d1 = math.sqrt(r1) - target_radius[k]
                d2 = math.sqrt(r2) - target_radius[k]
                if d1 <= on or d1 * d2 <= cut:
                    f, a, b, c, w = _crossing(
                        d1, d2, diffusivity, h, bridge, a, b, c, w
                    )
                    if f < frac:
                        frac = f
                        hit_wall = n_box_walls + k
            if hit_wall >= 0:
                # 4. Exit point: the bridge's position at the hitting fraction, put on
                #    the surface hit (as kernels.walkers._exit_point).
                spread = sigma * math.sqrt(max(frac * (1.0 - frac), 0.0))
                for i in range(d):
                    zi, a, b, c, w = normal(a, b, c, w)
                    x[i] = xo[i] + (x[i] - xo[i]) * frac + spread * zi
                if hit_wall < n_box_walls:
                    axis = hit_wall // 2
                    for i in range(d):
                        x[i] = min(max(x[i], lower[i]), upper[i])
                    x[axis] = lower[axis] if hit_wall % 2 == 0 else upper[axis]
                else:
                    k = hit_wall - n_box_walls
                    if k < n_targets:
                        _project(x, target_center[k], target_radius[k])
                    else:
                        _project(x, ball_center, ball_radius)
                    if not is_ball:
                        for i in range(d):
                            x[i] = min(max(x[i], lower[i]), upper[i])
                t += frac * h
                break
            t += h

        out_wall[walker] = hit_wall
        if hit_wall >= 0:
            out_time[walker] = t
            for i in range(d):
                out_position[walker, i] = x[i]
            if n_fpt_bins > 0:
                bin_ = int(t / fpt_bin_width)
                out_fpt_hist[hit_wall, min(bin_, n_fpt_bins - 1)] += 1
            # 5. Survival: counted at every grid time before the absorption.
            hist[np.searchsorted(survival_times, t, side="left")] += 1
        else:
            out_time[walker] = math.nan
            for i in range(d):
                out_position[walker, i] = math.nan
            hist[n_survival] += 1

    above = 0
    for k in range(n_survival - 1, -1, -1):
        above += hist[k + 1]
        out_survival[k] += above
    out_moves[0] += jumps
    out_moves[1] += steps
    state[0] = a
    state[1] = b
    state[2] = c
    state[3] = w
