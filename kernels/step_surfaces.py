# ruff: noqa: F821, B007
"""THE STEP LOOP'S SURFACE HELPERS: the second part of the template ``kernels/step.py``.

Read, never imported: ``kernels/generate.py`` appends this file's functions to
``kernels/step.py``'s and specialises both under the same rules (see that file's
docstring). Here live the helpers the step calls for curved surfaces: the other
targets, the reflecting ball's mirror, reactive spheres, the radial placement, and
obstacles.
"""


def other_targets(
    rs, xs, ys, far, target_center, target_radius, reach2, cut, frac, hit_wall,
    n_box_walls, kill_scale, diffusivity, dt, bridge,
):  # fmt: skip
    """Targets 1, 2, ... for the step ``xs`` -> ``ys`` (tuples of the axes): the
    earliest crossing, in index order, after target 0's. Returns (frac, hit_wall, far,
    rs); bit k of ``far`` (k < 63) marks a step start beyond reach of target k (the
    last step's end), so its distance need not be computed again. Kept out of the
    step loop: the common one-target case runs 4 % faster."""
    for k in range(1, target_radius.shape[0]):
        r2 = sum((ys[i] - target_center[k, i]) ** 2 for i in AXES)
        bit = np.int64(1) << k if k < 63 else np.int64(0)
        if r2 > reach2[k]:
            if far & bit:
                continue
            far |= bit
        else:
            far &= ~bit
        r1 = sum((xs[i] - target_center[k, i]) ** 2 for i in AXES)
        if r2 > reach2[k] and r1 > reach2[k]:
            continue
        d1 = math.sqrt(r1) - target_radius[k]
        d2 = math.sqrt(r2) - target_radius[k]
        if d1 * d2 <= cut:
            frac, hit_wall, rs = _earliest(
                rs, d1, d2, n_box_walls + k, frac, hit_wall, kill_scale, diffusivity,
                dt, bridge,
            )  # fmt: skip
    return frac, hit_wall, far, rs


def mirror(ys, center, radius):
    """The point ``ys`` (a tuple of the axes), outside the ball of ``radius`` around
    ``center``, mirrored radially into it (repeatedly, for a step that overshoots a
    small ball). Kept out of the step loop, as it is rarely needed."""
    while True:
        d2 = sum((ys[i] - center[i]) ** 2 for i in AXES)
        if d2 <= radius * radius:
            return ys
        r = math.sqrt(d2)
        scale = (2.0 * radius - r) / r
        ys = tuple(center[i] + (ys[i] - center[i]) * scale for i in AXES)


def reactive_spheres(
    rs, xs, ys, target_center, target_radius, target_reactivity, ball_center,
    ball_radius, ball_reactivity, frac, hit_wall, n_box_walls, cut, reach, kill_scale,
    diffusivity, dt,
):  # fmt: skip
    """Reactive targets and (ball) the reactive ball wall for the step ``xs`` ->
    ``ys`` (tuples of the axes): distances along the radius (to the tangent plane,
    as for absorbing spheres), the push applied radially. Returns (frac, hit_wall,
    ys, rs). Steps farther than ``reach`` (REACH sigma) from a surface are skipped
    before any square root, as for absorbing targets."""
    for k in range(target_radius.shape[0]):
        kappa = target_reactivity[k]
        if math.isnan(kappa):
            continue
        far2 = (target_radius[k] + reach) ** 2
        r1 = sum((xs[i] - target_center[k, i]) ** 2 for i in AXES)
        r2 = sum((ys[i] - target_center[k, i]) ** 2 for i in AXES)
        if r1 > far2 and r2 > far2:
            continue
        r1 = math.sqrt(r1)
        r2 = math.sqrt(r2)
        d1 = r1 - target_radius[k]
        d2 = r2 - target_radius[k]
        if d1 * d2 <= cut:
            f, push, rs = _react(
                rs, d1, d2, kappa / diffusivity, kill_scale, diffusivity, dt
            )
            if push > 0.0:
                ys = radial(ys, xs, target_center[k], target_radius[k] + d2 + push)
            if f < frac:
                frac = f
                hit_wall = n_box_walls + k
    if static(KIND == BALL):
        kappa = ball_reactivity
        if not math.isnan(kappa):
            center, radius = ball_center, ball_radius
            near2 = max(radius - reach, 0.0) ** 2
            r1 = sum((xs[i] - center[i]) ** 2 for i in AXES)
            r2 = sum((ys[i] - center[i]) ** 2 for i in AXES)
            if r1 < near2 and r2 < near2:
                return frac, hit_wall, ys, rs
            r1 = math.sqrt(r1)
            r2 = math.sqrt(r2)
            d1 = radius - r1
            d2 = radius - r2
            if d1 * d2 <= cut:
                f, push, rs = _react(
                    rs, d1, d2, kappa / diffusivity, kill_scale, diffusivity, dt
                )
                if push > 0.0:
                    ys = radial(ys, xs, center, max(radius - d2 - push, 0.0))
                if f < frac:
                    frac = f
                    hit_wall = target_radius.shape[0]
    return frac, hit_wall, ys, rs


def radial(ys, xs, center, r):
    """``ys`` moved along its radius from ``center`` to distance ``r`` (the step's
    start ``xs`` gives the direction if ``ys`` is the center itself)."""
    d2 = sum((ys[i] - center[i]) ** 2 for i in AXES)
    if d2 == 0.0:
        ys = xs
        d2 = sum((ys[i] - center[i]) ** 2 for i in AXES)
        if d2 == 0.0:
            return tuple(center[i] + (r if i == 0 else 0.0) for i in AXES)
    scale = r / math.sqrt(d2)
    return tuple(center[i] + (ys[i] - center[i]) * scale for i in AXES)


def obstacle_mirror(ys, obstacle_center, obstacle_radius):
    """The point ``ys`` (a tuple of the axes) mirrored radially out of every
    reflecting obstacle it ends inside (distance r -> 2 a - r from the center)."""
    for k in range(obstacle_radius.shape[0]):
        a = obstacle_radius[k]
        d2 = sum((ys[i] - obstacle_center[k, i]) ** 2 for i in AXES)
        if d2 < a * a:
            r = math.sqrt(d2)
            if r == 0.0:
                ys = tuple(
                    obstacle_center[k, i] + (2.0 * a if i == 0 else 0.0) for i in AXES
                )
            else:
                scale = (2.0 * a - r) / r
                ys = tuple(
                    obstacle_center[k, i] + (ys[i] - obstacle_center[k, i]) * scale
                    for i in AXES
                )
    return ys
