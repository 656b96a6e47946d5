"""The ``[domain]`` table: a box (``lower``, ``upper``, ``walls``) or a ball
(``center``, ``radius``, ``wall``), with absorbing or reactive ``targets`` and
reflecting ``obstacles`` inside.

A wall's kind is read by :func:`sweep.spec.sections.surfaces.wall_kind` alone, for box
faces and the ball's surface alike: a new kind of surface is added there.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, Literal

from sweep.spec.context import Context, toml_text
from sweep.spec.model import MAX_DIMENSION, Domain, Target, axis_names, distance
from sweep.spec.sections import surfaces
from sweep.spec.sections.section import Section
from sweep.spec.values import balls, choice, number, vector

SECTION = Section(
    "domain",
    (
        "shape", "lower", "upper", "walls", "center", "radius", "wall", "targets",
        "obstacles",
    ),
    required=True,
    per_point=True,
    sweepable=True,
    fixed_keys=("shape",),
    deep_keys=(
        "walls.<wall>", "walls.<wall>.reactivity", "targets.<i>.center",
        "targets.<i>.radius", "targets.<i>.reactivity", "obstacles.<i>.center",
        "obstacles.<i>.radius",
    ),
    deep_hint="domain.targets.<i>.center / domain.targets.<i>.radius / "
    "domain.targets.<i>.reactivity, domain.walls.<wall>, "
    "domain.walls.<wall>.reactivity, domain.obstacles.<i>.center|radius",
    deep_only="domain.walls.<wall>, domain.walls.<wall>.reactivity, "
    "domain.targets.<i>.center|radius|reactivity and "
    "domain.obstacles.<i>.center|radius",
)  # fmt: skip
SHAPES: tuple[str, ...] = ("box", "ball")
WallKind = Literal["absorbing", "reflecting"]
WALL_KINDS: tuple[str, ...] = ("absorbing", "reflecting")
#: Box-wall suffixes of earlier versions, refused with a message naming the new one.
_OLD_SIDES: dict[str, str] = {"low": "lower", "high": "upper"}
TARGET_KEYS = ("center", "radius", "reactivity")


def read_domain(ctx: Context, table: dict[str, Any], dimension: int) -> Domain:
    """Read one point's ``[domain]`` in ``dimension`` dimensions (length units)."""
    ctx.keys(table, SECTION.keys, "domain")
    shape = choice(ctx, table.get("shape", "box"), "domain.shape", SHAPES)
    if shape == "box":
        domain = _box(ctx, table, dimension)
    else:
        domain = _ball(ctx, table, dimension)
    targets = _targets(ctx, table, dimension, domain)
    if targets:
        domain = Domain(**{**domain.__dict__, "targets": targets})
    obstacles = surfaces.obstacles(ctx, table, domain)
    if obstacles:
        domain = Domain(**{**domain.__dict__, "obstacles": obstacles})
    return domain


def _box(ctx: Context, table: dict[str, Any], dimension: int) -> Domain:
    axes = axis_names(dimension)
    for key in ("center", "radius", "wall"):
        if key in table:
            raise ctx.fail(
                f"domain.{key}",
                "belongs to a ball domain; a box takes lower, upper and walls.",
            )
    lower, upper = (
        vector(
            ctx,
            ctx.required(table, key, "domain"),
            f"domain.{key}",
            dimension,
            allow_inf=True,
        )
        for key in ("lower", "upper")
    )
    for axis, lo, hi in zip(axes, lower, upper):
        if not lo < hi or lo == math.inf or hi == -math.inf:
            raise ctx.fail(
                "domain.lower",
                f"must be below domain.upper on every axis; got {toml_text(lo)} >= {hi!r} "
                f"on axis {axis}.",
            )
    low, high, react_low, react_high, periodic = _box_walls(
        ctx, ctx.table(table, "walls", "domain"), lower, upper
    )
    reactive = any(k is not None for k in react_low + react_high)
    return Domain(
        shape="box",
        lower=lower,
        upper=upper,
        absorbing_low=low,
        absorbing_high=high,
        # Empty unless used: the canonical form (hash, seeds) leaves them out.
        reactivity_low=react_low if reactive else (),
        reactivity_high=react_high if reactive else (),
        periodic=periodic if any(periodic) else (),
    )


def _box_walls(
    ctx: Context,
    walls: dict[str, Any],
    lower: tuple[float, ...],
    upper: tuple[float, ...],
) -> tuple[
    tuple[bool, ...],
    tuple[bool, ...],
    tuple[float | None, ...],
    tuple[float | None, ...],
    tuple[bool, ...],
]:
    """Per axis: whether the lower and the upper face absorb (an infinite side never
    does), their reactivities (None: not reactive) and whether the axis is periodic."""
    dimension = len(lower)
    axes = axis_names(dimension)
    names = [f"{a}_{side}" for a in axes for side in ("lower", "upper")]
    for name in walls:
        axis, _, side = name.rpartition("_")
        if side in _OLD_SIDES:
            raise ctx.fail(
                f"domain.walls.{name}",
                f"is the old spelling; walls are named after the lower and upper "
                f"keys that place them: write {axis}_{_OLD_SIDES[side]}.",
            )
        if name not in names and name.endswith(("_lower", "_upper")):
            if axis in axis_names(MAX_DIMENSION):
                raise ctx.fail(
                    f"domain.walls.{name}",
                    f"names axis {axis!r}, but this {dimension}-dimensional "
                    f"domain has only the axes {', '.join(axes)}; remove it or "
                    f"raise motion.dimension.",
                )
    ctx.keys(walls, names, "domain.walls")
    low: list[bool] = []
    high: list[bool] = []
    found: dict[str, str] = {}
    kappas: dict[str, float | None] = {}
    for axis, lo, hi in zip(axes, lower, upper):
        for side, bound, kinds in (("lower", lo, low), ("upper", hi, high)):
            name = f"{axis}_{side}"
            if math.isinf(bound):
                if name in walls:
                    why = (
                        ": a reactive wall there would never be reached"
                        if isinstance(walls[name], dict)
                        else ""
                    )
                    raise ctx.fail(
                        f"domain.walls.{name}",
                        f"is at infinity (domain.{side} is {bound!r}){why}; remove it.",
                    )
                kinds.append(False)
                continue
            if name not in walls:
                raise ctx.fail(
                    "domain.walls",
                    f"must give the kind of wall {name!r} "
                    f'("absorbing" or "reflecting"); got {toml_text(sorted(walls))}.',
                )
            kind, kappa = surfaces.wall_kind(
                ctx, walls[name], f"domain.walls.{name}", periodic_allowed=True
            )
            found[name] = kind
            kappas[name] = kappa
            kinds.append(kind == "absorbing")
    surfaces.periodic_pairs(ctx, found, axes)
    return (
        tuple(low),
        tuple(high),
        tuple(kappas.get(f"{a}_lower") for a in axes),
        tuple(kappas.get(f"{a}_upper") for a in axes),
        tuple(found.get(f"{a}_lower") == "periodic" for a in axes),
    )


def _ball(ctx: Context, table: dict[str, Any], dimension: int) -> Domain:
    for key in ("lower", "upper", "walls"):
        if key in table:
            raise ctx.fail(
                f"domain.{key}",
                "belongs to a box domain; a ball takes center, radius and wall.",
            )
    if dimension < 2:
        raise ctx.fail(
            "domain.shape",
            '"ball" needs motion.dimension >= 2; in one dimension use a box '
            "(an interval).",
        )
    center = vector(
        ctx, ctx.required(table, "center", "domain"), "domain.center", dimension
    )
    radius = number(
        ctx, ctx.required(table, "radius", "domain"), "domain.radius", positive=True
    )
    kind, kappa = surfaces.wall_kind(
        ctx,
        ctx.required(table, "wall", "domain"),
        "domain.wall",
        periodic_allowed=False,
    )
    return Domain(
        shape="ball",
        lower=tuple(c - radius for c in center),
        upper=tuple(c + radius for c in center),
        absorbing_low=(False,) * dimension,
        absorbing_high=(False,) * dimension,
        center=center,
        radius=radius,
        surface_absorbing=kind == "absorbing",
        surface_reactivity=kappa,
    )


def _targets(
    ctx: Context, table: dict[str, Any], dimension: int, domain: Domain
) -> tuple[Target, ...]:
    """``domain.targets``: absorbing (or reactive) balls, each centred inside
    ``domain``."""
    parsed: list[Target] = []
    for key, target, center, radius in balls(
        ctx, table, "targets", TARGET_KEYS, dimension
    ):
        if not inside_box_or_ball(domain, center):
            raise ctx.fail(
                f"{key}.center",
                f"must lie inside the domain; got {toml_text(list(center))}.",
            )
        reactivity = None
        if "reactivity" in target:
            reactivity = number(
                ctx,
                target["reactivity"],
                f"{key}.reactivity",
                nonnegative=True,
                allow_inf=True,
            )
        parsed.append(Target(center=center, radius=radius, reactivity=reactivity))
    return tuple(parsed)


def inside_box_or_ball(domain: Domain, point: Sequence[float]) -> bool:
    """Whether ``point`` lies strictly inside the box or ball (targets aside)."""
    if domain.shape == "box":
        return all(lo < p < hi for p, lo, hi in zip(point, domain.lower, domain.upper))
    return distance(point, domain.center) < domain.radius
