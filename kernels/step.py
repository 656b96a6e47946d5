# ruff: noqa: F821, B007
"""THE STEP LOOP, WRITTEN ONCE: the template of every compiled walker loop.

This file is read, never imported: ``kernels/generate.py`` specialises it into
``kernels/_loops.py`` (checked in, do not edit) once per kind of domain (``KIND``: a
box, a box with targets, a ball) and number of axes (``DIM``, 1 to 8), and
``tests/kernels/test_generated.py`` regenerates it and fails on any difference. It is
Python with three mechanical rules, so it reads top to bottom as the algorithm:

* ``for i in AXES:`` is unrolled, one copy of its body per axis; in it ``name_i`` is
  the scalar ``name0``, ``name1``, ... and a bare ``i`` the axis number. Outside such
  a loop, ``sum(E for i in AXES)``, ``min(E for i in AXES)``,
  ``all(E for i in AXES)`` and ``tuple(E for i in AXES)`` are written out axis by axis
  (sums from the first axis on, in order; ``all`` joins booleans with ``&``, one
  branch on the whole).
* ``if static(COND):`` (with an optional ``else:``) is decided when generating, from
  ``KIND`` (``BOX``, ``BOX_TARGETS``, ``BALL``), ``DIM``, ``FORCE`` (0: no force,
  1: a potential, ``kernels.inputs.Force``), ``SURFACES`` (0: no reactive,
  periodic or obstacle surface; 1: any) and ``DRIFT`` (0: no drift on any axis; 1:
  drift): each loop holds only the code of its own kind of domain, the loops
  without a force hold none of its code, the loops without surfaces none of theirs
  (their flags are constants there), and the drift-free loops do not add a zero drift.
* Every function here is emitted once per (kind, dimension) under a suffixed name, and
  calls between them are renamed to match.

Why generated, not numba-level specialisation: the position must live in scalar
registers, because the generator is called through a function pointer, after which
numba reloads every array element (docs/kernels.md). Numba's own means of
writing the step once for any dimension keep it in a tuple (``tuple_setitem`` in a
loop over a literal dimension): measured on a 3-D reflecting box (same run, fastest of
7), 58 M steps/s against 78 M for scalars and 68 M for arrays. Unrolled text costs
nothing at run time, gives registers for every dimension up to 8 (the array loop
for d > 3 is gone), and leaves one readable loop per case to step through with
``NUMBA_DISABLE_JIT=1`` or ``py_func``.

Draws: every draw goes through the generator seam of ``kernels/walkers.py``
(``draw_normal``, ``draw_uniform``; ``_crossing`` draws the bridge's), with the random
state ``rs`` (SFC64's four words, kernels/rng.py) threaded through explicitly and
written back into ``state`` at the end. The order of draws and the arithmetic are
those of the kernel before this template (``benchmarks/bit_identity.py`` checks it).

Adding a kind of surface: its parameters go into ``Geometry`` (``kernels/inputs.py``);
here, one block in section 3 ("surfaces near the step") that computes the signed
distances d1, d2 of the step's start and end and calls ``_earliest``, one placement
in section 5 ("exit point"), and a wall index after the existing ones. Surfaces that
move the step's end come before section 3, each in one block: 2b reactive surfaces
(faces inline, spheres in ``reactive_spheres``; ``_react`` gives the push and the
reaction), 2c obstacles (``obstacle_mirror``); periodic faces wrap the new position
after the step, and the bookkeeping adds the widths crossed to the displacement.
Each new kind also has one setup line per axis (its face positions) and a flag that
skips its block, so definitions without it run the same instructions and draws as
before (``benchmarks/bit_identity.py``). Two shortcuts of a box with targets skip
tests that are known to fail, and a new kind must switch both off when present: the
quiet step (``plain``: one absorbing target and nothing else near) and mirror-only
steps (``short_mirror``: reflecting faces only, no step half as long as the box).
And it lives in the surface loops only: its flag is a constant under
``static(SURFACES == 0)``, and ``kernels.walkers.loop_table`` sends a geometry that
has it to ``SURFACE_LOOPS``.
"""


def simulate_loop(state, n_walkers, geometry, motion, recording, out):
    """Simulate ``n_walkers`` walkers to absorption or the horizon; see
    ``kernels.walkers.simulate``. Returns the walker-steps simulated."""
    lower, upper = geometry.lower, geometry.upper
    ball_center, ball_radius = geometry.ball_center, geometry.ball_radius
    target_center, target_radius = geometry.target_center, geometry.target_radius
    dt, bridge = motion.dt, motion.bridge
    diffusivity, n_steps = motion.diffusivity, motion.n_steps
    occupancy_steps, bins = recording.occupancy_steps, recording.occupancy_bins
    survival_times = recording.survival_times
    record_final = out.final.shape[0] > 0
    n_targets = target_radius.shape[0]
    n_snapshots = occupancy_steps.shape[0]
    rs = _random_state(state)  # threaded through every draw below
    if static(FORCE == 1):  # a potential's parameters, in registers (inputs.Force)
        force = motion.force
        force_axis, force_scale = force.axis, force.scale
        fk, ftable, flower, fspacing = (
            force.kind, force.table, force.table_lower, force.table_spacing
        )  # fmt: skip
        fp0, fp1, fp2 = force.params[0], force.params[1], force.params[2]
    if static(KIND == BALL):
        n_box_walls = 0
    else:
        n_box_walls = 2 * DIM
    sigma = math.sqrt(2.0 * diffusivity * dt)
    # One test per surface and step: d1 d2 <= cut holds when the step ends on or
    # beyond it, or (bridge) ends near it; d1, d2 are signed distances (positive
    # inside the domain) of the step's start and end.
    cut = BRIDGE_CUTOFF * diffusivity * dt if bridge else 0.0
    kill_scale = 1.0 / (diffusivity * dt)
    n_survival = survival_times.shape[0]
    n_fpt_bins = out.fpt_hist.shape[1] if out.fpt_hist.shape[0] > 0 else 0
    hist = np.zeros(n_survival + 1, np.int64)
    x = np.empty(DIM)  # start and end point of a walker
    # Per axis: drift per step, reflecting faces (rl, rh) and absorbing faces (al,
    # ah), absent ones at -+inf (where every product test is +inf); box; histogram;
    # reactive faces (kl, kh, with q = kappa / D) and periodic width pw (0: none).
    absorbing_faces = False
    reactive = False
    periodic = False
    for i in AXES:
        s_i = motion.drift[i] * dt
        lo_i = lower[i]
        hi_i = upper[i]
        rl_i = -math.inf
        rh_i = math.inf
        al_i = -math.inf
        ah_i = math.inf
        kl_i = -math.inf
        kh_i = math.inf
        ql_i = 0.0
        qh_i = 0.0
        pw_i = 0.0
        if static(KIND != BALL):
            # Reactive and periodic faces: see the blocks "2b" and "periodic" below.
            if not math.isnan(geometry.reactivity_lower[i]):
                kl_i = lower[i]
                ql_i = geometry.reactivity_lower[i] / diffusivity
            if not math.isnan(geometry.reactivity_upper[i]):
                kh_i = upper[i]
                qh_i = geometry.reactivity_upper[i] / diffusivity
            if geometry.periodic[i]:
                pw_i = upper[i] - lower[i]
            special_lower = kl_i > -math.inf or pw_i > 0.0
            special_upper = kh_i < math.inf or pw_i > 0.0
            if geometry.absorbing_lower[i]:
                al_i = lower[i]
            elif not special_lower:
                rl_i = lower[i]
            if geometry.absorbing_upper[i]:
                ah_i = upper[i]
            elif not special_upper:
                rh_i = upper[i]
        reactive = reactive or kl_i > -math.inf or kh_i < math.inf
        periodic = periodic or pw_i > 0.0
        absorbing_faces = absorbing_faces or al_i > -math.inf or ah_i < math.inf
        # The band of the axis: a step that starts and ends inside it crosses no
        # reflecting face and comes near no absorbing one (see _band).
        blo_i, bhi_i = _band(rl_i, rh_i, al_i, ah_i, cut)
        ol_i = recording.occupancy_lower[i]
        oh_i = recording.occupancy_upper[i]
        bc_i = ball_center[i]
        tc_i = target_center[0, i] if n_targets > 0 else 0.0
        if static(FORCE == 1):  # the force's update per axis (kernels.inputs.Force)
            fo_i, ff_i, fs_i = force.offset[i], force.factor[i], force.spread[i]
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
        if not math.isnan(geometry.target_reactivity[k]):
            # A reactive target is resolved in block 2b, never as an absorbing one:
            # a negative reach keeps the absorbing tests below from examining it.
            reach2[k] = -1.0
            reactive = True
    if static(KIND == BALL):
        reactive = reactive or not math.isnan(geometry.ball_reactivity)
        reflecting_ball = not geometry.ball_absorbing and math.isnan(
            geometry.ball_reactivity
        )
    # Reactive surfaces always use the bridge (their reflection needs its minimum).
    # Helpers get arrays, not the whole geometry: passing the NamedTuple of arrays
    # costs reference counting of every array at every call.
    target_reactivity = geometry.target_reactivity
    ball_reactivity = geometry.ball_reactivity
    react_cut = BRIDGE_CUTOFF * diffusivity * dt
    # Squared reach of each reactive target (-1: not reactive) and, for a reactive
    # ball wall, the squared radius inside which steps are clear of it (inf: none).
    react_reach2 = np.empty(n_targets)
    for k in range(n_targets):
        if math.isnan(target_reactivity[k]):
            react_reach2[k] = -1.0
        else:
            react_reach2[k] = (target_radius[k] + REACH * sigma) ** 2
    react_inner2 = math.inf
    if static(KIND == BALL):
        if not math.isnan(ball_reactivity):
            react_inner2 = max(ball_radius - REACH * sigma, 0.0) ** 2
    obstacle_center, obstacle_radius = (
        geometry.obstacle_center,
        geometry.obstacle_radius,
    )
    n_obstacles = obstacle_radius.shape[0]
    record_displacement = out.displacement.shape[0] > 0
    if static(SURFACES == 0):
        # The loops for geometries without reactive, periodic or obstacle surfaces
        # and without displacement output (kernels.walkers.simulate picks them): the
        # flags are constants, so the compiler drops those blocks from the step. Their
        # tests, though never taken, cost the 1-D interval 13-17 % (paired A/B).
        reactive = False
        periodic = False
        n_obstacles = 0
        record_displacement = False
    reach_0 = reach2[0] if n_targets > 0 else -1.0
    ball_r2 = ball_radius * ball_radius
    if bridge:
        inner = ball_radius - REACH * sigma
    else:
        inner = ball_radius * (1.0 - SURFACE_MARGIN)
    inner2 = inner * inner if inner > 0.0 else -1.0
    if static(KIND == BALL):
        if not math.isnan(geometry.ball_reactivity):
            inner2 = math.inf  # resolved in block 2b, never as an absorbing wall
    if static(KIND == BOX_TARGETS):
        has_targets = True
    else:
        has_targets = n_targets > 0
    # Quiet steps (KIND == BOX_TARGETS, below) need one target and none of the
    # surfaces that move a step's end or wrap it.
    plain = n_targets == 1 and not reactive and n_obstacles == 0 and not periodic
    # Without absorbing faces a folded step is quiet too (its end is in the box).
    fold_ok = plain and not absorbing_faces
    # A box whose faces all reflect (or are absent), with steps shorter than half its
    # width on every axis: |z| <= NORMAL_BOUND for every normal the generator draws.
    short_mirror = not (absorbing_faces or reactive or periodic or n_obstacles > 0)
    for i in AXES:
        step_bound = abs(s_i) + sigma * NORMAL_BOUND
        short_mirror = short_mirror and 2.0 * step_bound < rh_i - rl_i
    if static(FORCE == 1):
        short_mirror = False  # a force's steps have no such bound
    steps_done = 0

    for w in range(n_walkers):
        # 1. Start point: given, or uniform over the domain outside targets (rejection).
        if motion.uniform_start:
            while True:
                for i in range(DIM):
                    u, rs = draw_uniform(rs)
                    x[i] = lower[i] + (upper[i] - lower[i]) * u
                if _free(
                    x, static(KIND == BALL), ball_center, ball_radius, target_center,
                    target_radius,
                ) and _outside(x, obstacle_center, obstacle_radius):  # fmt: skip
                    break
        else:
            for i in range(DIM):
                x[i] = motion.start[i]
        for i in AXES:
            x_i = x[i]
            wrap_i = 0.0  # periodic widths crossed, for the unwrapped displacement
        x_inside = all((blo_i <= x_i) & (x_i <= bhi_i) for i in AXES)
        # Mirror-only steps need a start in the box; their ends stay in it.
        mirror_only = short_mirror and all((rl_i <= x_i) & (x_i <= rh_i) for i in AXES)
        hit_wall = -1
        frac = 2.0
        step = 0
        o = 0  # next snapshot; one at step 0 is binned by the snapshot code below
        next_snapshot = occupancy_steps[0] if n_snapshots > 0 else -1
        # Squared distances of the step's start from the ball's center and target 0,
        # carried from step to step; bit k of ``far`` marks a start beyond the reach
        # of target k > 0 (see other_targets).
        rb1 = sum((x_i - bc_i) ** 2 for i in AXES)
        r1_0 = sum((x_i - tc_i) ** 2 for i in AXES) if n_targets > 0 else math.inf
        far = np.int64(0)
        for k in range(1, min(n_targets, 63)):
            if sum((x_i - target_center[k, i]) ** 2 for i in AXES) > reach2[k]:
                far |= np.int64(1) << k
        while True:
            # Steps up to the next snapshot (or the horizon) in an inner loop, so the
            # common step does not test for a snapshot (8 % in 1-D).
            limit = n_steps
            if 0 <= next_snapshot <= n_steps:
                limit = next_snapshot
            while step < limit:
                step += 1
                # 2. Free increment, mirrored at reflecting faces (2a - y, folded
                #    only when that overshoots the opposite face).
                for i in AXES:
                    z, rs = draw_normal(rs)
                    if static(FORCE == 1):
                        # A potential (kernels.inputs.Force): OU update, or Euler-
                        # Maruyama in -D U'(x); walls below treat it as constant.
                        y_i = fo_i + ff_i * x_i + fs_i * z
                        if i == force_axis:
                            y_i += force_scale * _slope(
                                x_i, fk, fp0, fp1, fp2, ftable, flower, fspacing
                            )
                    elif static(DRIFT == 1):
                        y_i = x_i + s_i + sigma * z
                    else:
                        # No drift (kernels.walkers.loop_table): x + 0.0 is x, but the
                        # add costs the 3-D box with a target 7 % (a longer chain
                        # from one position to the next). Same value always; the
                        # bits differ only in the sign of an exact zero (-0.0 + 0.0).
                        y_i = x_i + sigma * z
                if static(KIND != BALL):
                    mirror = False  # a box without targets: the band (one branch less)
                    if static(KIND == BOX_TARGETS):
                        mirror = mirror_only
                    if mirror:
                        # Only reflecting faces, no step half as long as the box:
                        # the mirror image below cannot overshoot the opposite
                        # face, so it is _fold's, taken on every step without a
                        # branch (a walker near a face folds at random steps:
                        # branches mispredict) and without the band's tests.
                        for i in AXES:
                            c_i = 2.0 * rl_i - y_i if y_i < rl_i else y_i
                            y_i = 2.0 * rh_i - y_i if y_i > rh_i else c_i
                        near = False
                    else:
                        # Box faces matter only to a step that starts or ends
                        # outside the band; the common step skips the folds and
                        # face products, whose outcome (nothing) is known there.
                        # x_inside: the next step's start (this step's end, after
                        # any fold).
                        y_inside = all((blo_i <= y_i) & (y_i <= bhi_i) for i in AXES)
                        near = not (x_inside & y_inside)
                        x_inside = y_inside
                    if near:
                        # The mirror image in the face crossed, as _fold makes it,
                        # chosen without a branch per axis (a walker near a face
                        # folds at random steps: branches mispredict); _fold itself
                        # only for a step whose image overshoots the opposite face.
                        for i in AXES:
                            c_i = 2.0 * rl_i - y_i if y_i < rl_i else y_i
                            c_i = 2.0 * rh_i - y_i if y_i > rh_i else c_i
                        if not all((rl_i <= c_i) & (c_i <= rh_i) for i in AXES):
                            for i in AXES:
                                if y_i < rl_i or y_i > rh_i:
                                    c_i = _fold(y_i, rl_i, rh_i)
                        for i in AXES:
                            y_i = c_i
                        x_inside = all((blo_i <= y_i) & (y_i <= bhi_i) for i in AXES)
                if static(KIND == BOX_TARGETS):
                    # A quiet step: inside the band (or folded, in a box without
                    # absorbing faces), start and end beyond the reach of the only
                    # target, and no reactive, obstacle or periodic surface. Every
                    # test below is then known to fail, so the step skips them on
                    # one branch (the common step otherwise passes eight).
                    r2 = sum((y_i - tc_i) ** 2 for i in AXES)
                    if (
                        ((not near) | fold_ok)
                        & plain
                        & (r2 > reach_0)
                        & (r1_0 > reach_0)
                    ):
                        for i in AXES:
                            x_i = y_i
                        r1_0 = r2
                        continue
                # 2b. Reactive surfaces (faces, targets, the ball's wall): reflected
                #     by the Skorokhod push, reacting when the push (local time)
                #     passes an exponential threshold (_react); a reaction is a
                #     crossing like any other in section 3.
                if reactive:
                    if static(KIND != BALL):
                        for i in AXES:
                            if (x_i - kl_i) * (y_i - kl_i) <= react_cut:
                                f, push, rs = _react(
                                    rs, x_i - kl_i, y_i - kl_i, ql_i, kill_scale,
                                    diffusivity, dt,
                                )  # fmt: skip
                                y_i = y_i + push
                                if f < frac:
                                    frac = f
                                    hit_wall = 2 * i
                            if (x_i - kh_i) * (y_i - kh_i) <= react_cut:
                                f, push, rs = _react(
                                    rs, kh_i - x_i, kh_i - y_i, qh_i, kill_scale,
                                    diffusivity, dt,
                                )  # fmt: skip
                                y_i = y_i - push
                                if f < frac:
                                    frac = f
                                    hit_wall = 2 * i + 1
                    if static(KIND != BOX):
                        # Only steps near a reactive sphere call the helper (a
                        # call passes arrays, whose reference counts cost ~50 ns).
                        near_sphere = False
                        for k in range(n_targets):
                            if (
                                sum((y_i - target_center[k, i]) ** 2 for i in AXES)
                                <= react_reach2[k]
                                or sum((x_i - target_center[k, i]) ** 2 for i in AXES)
                                <= react_reach2[k]
                            ):
                                near_sphere = True
                        if static(KIND == BALL):
                            if (
                                rb1 >= react_inner2
                                or sum((y_i - bc_i) ** 2 for i in AXES) >= react_inner2
                            ):
                                near_sphere = True
                        if near_sphere:
                            frac, hit_wall, ys, rs = reactive_spheres(
                                rs, tuple(x_i for i in AXES),
                                tuple(y_i for i in AXES), target_center,
                                target_radius, target_reactivity, ball_center,
                                ball_radius, ball_reactivity, frac, hit_wall,
                                n_box_walls, react_cut, REACH * sigma, kill_scale,
                                diffusivity, dt,
                            )  # fmt: skip
                            for i in AXES:
                                y_i = ys[i]
                # 2c. Reflecting obstacles: radial mirror image out of the ball.
                if n_obstacles > 0:
                    ys = obstacle_mirror(
                        tuple(y_i for i in AXES), obstacle_center, obstacle_radius
                    )
                    for i in AXES:
                        y_i = ys[i]
                if static(KIND != BALL):
                    if reactive or n_obstacles > 0:
                        # A push or mirror may move the end out of the band: then
                        # the faces are examined after all (conservative).
                        x_inside = all((blo_i <= y_i) & (y_i <= bhi_i) for i in AXES)
                        near = near or not x_inside
                # 3. Surfaces near the step: each resolved by _earliest (crossed at
                #    the end, or with the bridge's probability in between); the
                #    earliest crossing wins, ties to the lowest wall index.
                if static(KIND != BALL):
                    # Absorbing box faces: one branch per step on the smallest
                    # product, then each face, axis by axis, lower first.
                    if static(KIND == BOX):
                        faces = near
                    else:
                        faces = near and absorbing_faces
                    if faces:
                        p = min(
                            min(
                                (x_i - al_i) * (y_i - al_i), (x_i - ah_i) * (y_i - ah_i)
                            )
                            for i in AXES
                        )
                        if p <= cut:
                            for i in AXES:
                                if (x_i - al_i) * (y_i - al_i) <= cut:
                                    frac, hit_wall, rs = _earliest(
                                        rs, x_i - al_i, y_i - al_i, 2 * i, frac,
                                        hit_wall, kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                                if (x_i - ah_i) * (y_i - ah_i) <= cut:
                                    frac, hit_wall, rs = _earliest(
                                        rs, ah_i - x_i, ah_i - y_i, 2 * i + 1, frac,
                                        hit_wall, kill_scale, diffusivity, dt, bridge,
                                    )  # fmt: skip
                if static(KIND == BALL):
                    # The ball's surface: radial mirror image, or distances along
                    # the radius (to the tangent plane) within REACH sigma of it.
                    rb2 = sum((y_i - bc_i) ** 2 for i in AXES)
                    if reflecting_ball:
                        if rb2 > ball_r2:
                            ys = mirror(
                                tuple(y_i for i in AXES), ball_center, ball_radius
                            )
                            for i in AXES:
                                y_i = ys[i]
                            rb2 = sum((y_i - bc_i) ** 2 for i in AXES)
                    elif rb1 >= inner2 or rb2 >= inner2:
                        d1 = ball_radius - math.sqrt(rb1)
                        d2 = ball_radius - math.sqrt(rb2)
                        if d1 * d2 <= cut:
                            f, rs = _crossing(
                                rs, d1, d2, kill_scale, diffusivity, dt, bridge
                            )
                            if f < frac:
                                frac = f
                                hit_wall = n_targets
                    rb1 = rb2
                if static(KIND != BOX):
                    # Targets: target 0 (most set-ups have one) with its start
                    # distance carried from the last step, the others in a helper.
                    if has_targets:
                        r2 = sum((y_i - tc_i) ** 2 for i in AXES)
                        if r2 <= reach_0 or r1_0 <= reach_0:
                            d1 = math.sqrt(r1_0) - target_radius[0]
                            d2 = math.sqrt(r2) - target_radius[0]
                            if d1 * d2 <= cut:
                                f, rs = _crossing(
                                    rs, d1, d2, kill_scale, diffusivity, dt, bridge
                                )
                                if f < frac:
                                    frac = f
                                    hit_wall = n_box_walls
                        r1_0 = r2
                    if n_targets > 1:
                        frac, hit_wall, far, rs = other_targets(
                            rs, tuple(x_i for i in AXES), tuple(y_i for i in AXES),
                            far, target_center, target_radius, reach2, cut, frac,
                            hit_wall, n_box_walls, kill_scale, diffusivity, dt, bridge,
                        )  # fmt: skip
                # 4. Absorbed: the Brownian bridge's position at the crossing time
                #    (mean x + (y - x) frac, variance sigma^2 frac (1 - frac)).
                if hit_wall >= 0:
                    spread = sigma * math.sqrt(max(frac * (1.0 - frac), 0.0))
                    for i in AXES:
                        z, rs = draw_normal(rs)
                        x_i = x_i + (y_i - x_i) * frac + spread * z
                    break
                for i in AXES:
                    x_i = y_i
                if periodic:
                    # Periodic faces: back into the primary cell, counting the
                    # widths crossed; carried target distances are recomputed.
                    wrapped = False
                    for i in AXES:
                        if pw_i > 0.0 and (x_i < lo_i or x_i >= hi_i):
                            n_wrap = math.floor((x_i - lo_i) / pw_i)
                            x_i = x_i - n_wrap * pw_i
                            if x_i < lo_i or x_i >= hi_i:  # rounding at a face
                                x_i = lo_i
                            wrap_i = wrap_i + n_wrap
                            wrapped = True
                    if wrapped and n_targets > 0:
                        r1_0 = sum((x_i - tc_i) ** 2 for i in AXES)
                        far = np.int64(0)
            if hit_wall >= 0:
                break
            if step == next_snapshot:
                # Occupancy: the free walker's cell in every snapshot due now.
                cell = 0
                for i in AXES:
                    cell = _cell_next(cell, x_i, ol_i, oh_i, bins)
                while o < n_snapshots and occupancy_steps[o] == step:
                    if cell >= 0:
                        out.occupancy[o, cell] += 1
                    o += 1
                next_snapshot = occupancy_steps[o] if o < n_snapshots else -1
            if step >= n_steps:
                break
        # 5. Exit point: the bridge's position put on the surface hit (a face: its
        #    coordinate, the others clamped into the box; a sphere: the radial
        #    projection, clamped into the box unless the domain is a ball).
        if hit_wall >= 0:
            if hit_wall < n_box_walls:
                for i in AXES:
                    x_i = min(max(x_i, lo_i), hi_i)
                    if hit_wall == 2 * i:
                        x_i = lo_i
                    elif hit_wall == 2 * i + 1:
                        x_i = hi_i
            else:
                k = hit_wall - n_box_walls
                if k < n_targets:
                    radius = target_radius[k]
                    for i in AXES:
                        c_i = target_center[k, i]
                else:
                    radius = ball_radius
                    for i in AXES:
                        c_i = bc_i
                r = math.sqrt(sum((x_i - c_i) ** 2 for i in AXES))
                if r == 0.0:  # the center: any point of the sphere will do
                    for i in AXES:
                        x_i = c_i + radius if i == 0 else c_i
                else:
                    scale = radius / r
                    for i in AXES:
                        x_i = c_i + (x_i - c_i) * scale
                if static(KIND != BALL):
                    for i in AXES:
                        x_i = min(max(x_i, lo_i), hi_i)
        # 6. Bookkeeping: time, wall, position, histograms, survival counts.
        steps_done += step
        out.wall[w] = hit_wall
        if record_displacement:
            for i in AXES:
                out.displacement[w, i] = x_i + wrap_i * pw_i - x[i]
        if hit_wall >= 0:
            hit_time = (step - 1 + frac) * dt
            out.time[w] = hit_time
            for i in AXES:
                out.position[w, i] = x_i
                if record_final:
                    out.final[w, i] = math.nan
            if n_fpt_bins > 0:
                b = int(hit_time / recording.fpt_bin_width)
                out.fpt_hist[hit_wall, min(b, n_fpt_bins - 1)] += 1
            # Counted at every grid time before the absorption.
            hist[np.searchsorted(survival_times, hit_time, side="left")] += 1
        else:
            out.time[w] = math.nan
            for i in AXES:
                out.position[w, i] = math.nan
                if record_final:
                    out.final[w, i] = x_i
            hist[n_survival] += 1

    above = 0
    for k in range(n_survival - 1, -1, -1):
        above += hist[k + 1]
        out.survival[k] += above
    _store_state(state, rs)
    return steps_done
