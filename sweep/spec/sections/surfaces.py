"""Reading and checking the surface kinds of ``[domain]``: reactive walls and targets,
periodic faces, reflecting obstacles (helpers of :mod:`sweep.spec.sections.domain`;
:func:`check_point` runs in :func:`sweep.spec.point.read_point`).

Spellings (docs/surfaces.md): a wall is ``"absorbing"``, ``"reflecting"``,
``"periodic"`` (box faces, both faces of an axis together) or ``{ reactivity = κ }``
(partially absorbing, Robin condition D ∂p/∂n = κ p, κ in length/time, 0 ≤ κ ≤ inf:
κ = 0 reflects, κ = inf absorbs); a target takes an optional ``reactivity``;
``obstacles = [{ center, radius }, ...]`` are reflecting balls.

Every refusal names the key, the value and what is allowed (one message each).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from sweep.spec.context import Context, toml_text
from sweep.spec.model import Domain, Motion, Obstacle, Timing, axis_names
from sweep.spec.values import balls, number

#: Keys of a reactive wall's table.
REACTIVE_KEYS: tuple[str, ...] = ("reactivity",)
#: Keys of one obstacle.
OBSTACLE_KEYS: tuple[str, ...] = ("center", "radius")
#: A target or obstacle must stay this many steps sqrt(2 D dt) clear of every
#: periodic face: the kernel examines a surface only for steps that start or end
#: within 3.5 steps of it (kernels.walkers.REACH), and a step through a periodic face
#: is examined in the frame of its start, so an image of a ball across the face
#: must be out of that reach.
PERIODIC_CLEARANCE = 4.0


def wall_kind(
    ctx: Context, value: Any, key: str, *, periodic_allowed: bool
) -> tuple[str, float | None]:
    """One wall's kind: ("absorbing" | "reflecting" | "periodic", None) or
    ("reactive", κ)."""
    kinds = ["absorbing", "reflecting"] + (["periodic"] if periodic_allowed else [])
    more = "'periodic', or " if periodic_allowed else ""
    allowed = f"'absorbing' or 'reflecting' ({more}{{ reactivity = κ }})"
    if isinstance(value, dict):
        ctx.keys(value, REACTIVE_KEYS, key)
        kappa = number(
            ctx,
            ctx.required(value, "reactivity", key),
            f"{key}.reactivity",
            nonnegative=True,
            allow_inf=True,
        )
        return "reactive", kappa
    if value == "periodic" and not periodic_allowed:
        raise ctx.fail(
            key,
            '"periodic" is for the faces of a box (both faces of an axis); a ball\'s '
            f"wall takes {allowed}.",
        )
    if value not in kinds:
        raise ctx.fail(key, f"must be {allowed}; got {toml_text(value)}.")
    return str(value), None


def periodic_pairs(ctx: Context, kinds: dict[str, str], axes: Sequence[str]) -> None:
    """Refuse a periodic face whose opposite face is not periodic."""
    for axis in axes:
        low, high = kinds.get(f"{axis}_lower"), kinds.get(f"{axis}_upper")
        if (low == "periodic") != (high == "periodic"):
            periodic, other = (
                ("lower", "upper") if low == "periodic" else ("upper", "lower")
            )
            got = kinds.get(f"{axis}_{other}")
            raise ctx.fail(
                f"domain.walls.{axis}_{periodic}",
                f'is "periodic" but {axis}_{other} is '
                f"{toml_text(got) if got else 'at infinity'}: periodic faces come in "
                f'pairs. Make both {axis}_lower and {axis}_upper "periodic" (on a '
                "finite axis), or neither.",
            )


def obstacles(
    ctx: Context, table: dict[str, Any], domain: Domain
) -> tuple[Obstacle, ...]:
    """``domain.obstacles``: reflecting balls, each inside the domain, clear of every
    target and of each other."""
    parsed: list[Obstacle] = []
    for key, _, center, radius in balls(
        ctx, table, "obstacles", OBSTACLE_KEYS, domain.dimension
    ):
        if not _ball_inside(domain, center, radius):
            raise ctx.fail(
                key,
                f"(center {list(center)!r}, radius {radius!r}) must lie inside the "
                "domain, clear of its walls: an obstacle that cuts a wall would change "
                "that wall's shape. Move it inward or make it smaller.",
            )
        for j, target in enumerate(domain.targets):
            if math.dist(center, target.center) <= radius + target.radius:
                raise ctx.fail(
                    key,
                    f"(center {list(center)!r}, radius {radius!r}) overlaps or touches "
                    f"target {j} (center {list(target.center)!r}, radius "
                    f"{target.radius!r}); obstacles and targets must be apart.",
                )
        for j, other in enumerate(parsed):
            if math.dist(center, other.center) <= radius + other.radius:
                raise ctx.fail(
                    key,
                    f"(center {list(center)!r}, radius {radius!r}) overlaps or touches "
                    f"obstacle {j}; obstacles must be apart (the radial mirror image "
                    "out of one must not land in another).",
                )
        parsed.append(Obstacle(center=center, radius=radius))
    return tuple(parsed)


def check_point(ctx: Context, domain: Domain, motion: Motion, timing: Timing) -> None:
    """What needs the whole point: a start inside an obstacle, balls too near a
    periodic face for the step, and the schemes that support each surface."""
    if motion.start is not None:
        for i, obstacle in enumerate(domain.obstacles):
            if math.dist(motion.start, obstacle.center) <= obstacle.radius:
                raise ctx.fail(
                    "motion.start",
                    f"lies inside obstacle {i} (center {list(obstacle.center)!r}, "
                    f"radius {obstacle.radius!r}); got {toml_text(list(motion.start))}. "
                    "Start outside every obstacle.",
                )
    if any(domain.periodic):
        step = math.sqrt(2.0 * motion.diffusivity * timing.dt)
        clearance = PERIODIC_CLEARANCE * step
        balls = [
            (f"domain.targets.{i}", t.center, t.radius)
            for i, t in enumerate(domain.targets)
        ]
        balls += [
            (f"domain.obstacles.{i}", o.center, o.radius)
            for i, o in enumerate(domain.obstacles)
        ]
        for key, center, radius in balls:
            for axis, c, lo, hi, periodic in zip(
                axis_names(domain.dimension),
                center,
                domain.lower,
                domain.upper,
                domain.periodic,
            ):
                gap = min(c - lo, hi - c) - radius
                if periodic and gap < clearance:
                    raise ctx.fail(
                        key,
                        f"comes within {gap:.4g} of a periodic face on axis {axis}; it "
                        f"must stay {PERIODIC_CLEARANCE:g} steps sqrt(2 D dt) = "
                        f"{clearance:.4g} clear of periodic faces (surfaces are "
                        "examined in the frame of a step's start). Move it inward, "
                        "make it smaller, or lower time.dt.",
                    )
    if timing.scheme == "spheres" and any(domain.periodic):
        # Reactive walls and targets and obstacles limit the protective radius (see
        # docs/surfaces.md, "The spheres scheme"); periodic faces would need the
        # nearest periodic images of every ball and a wrapped jump, not built.
        raise ctx.fail(
            "time.scheme",
            '"spheres" does not support periodic faces (its jumps would need the '
            "periodic images of targets and obstacles); this point has periodic faces "
            "on axes "
            + ", ".join(
                name
                for name, p in zip(axis_names(domain.dimension), domain.periodic)
                if p
            )
            + '. Use time.scheme = "steps" (the default) for periodic faces, or make '
            "those faces reflecting.",
        )


def _ball_inside(domain: Domain, center: Sequence[float], radius: float) -> bool:
    if domain.shape == "ball":
        return math.dist(center, domain.center) + radius < domain.radius
    return all(
        lo + radius < c < hi - radius
        for c, lo, hi in zip(center, domain.lower, domain.upper)
    )
