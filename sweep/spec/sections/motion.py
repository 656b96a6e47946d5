"""The ``[motion]`` table: dimension, diffusivity, drift and where walkers start.

The dimension is read first (every vector of the point has that many entries); the rest
after the domain, which the start point must lie in.
"""

from __future__ import annotations

import random
from typing import Any

from sweep.spec.context import Context, toml_text
from sweep.spec.model import MAX_DIMENSION, Domain, Motion, distance
from sweep.spec.sections.domain import inside_box_or_ball
from sweep.spec.sections.section import Section
from sweep.spec.values import integer, number, vector

SECTION = Section(
    "motion",
    ("dimension", "diffusivity", "drift", "start"),
    required=True,
    per_point=True,
    sweepable=True,
    fixed_keys=("dimension",),
)


def read_dimension(ctx: Context, table: dict[str, Any]) -> int:
    """Check ``[motion]``'s keys and read its dimension, 1 to :data:`MAX_DIMENSION`."""
    ctx.keys(table, SECTION.keys, "motion")
    return integer(
        ctx,
        ctx.required(table, "dimension", "motion"),
        "motion.dimension",
        minimum=1,
        maximum=MAX_DIMENSION,
    )


def read_motion(
    ctx: Context, table: dict[str, Any], dimension: int, domain: Domain
) -> Motion:
    """Read one point's ``[motion]`` once its ``domain`` is known."""
    diffusivity = number(
        ctx,
        ctx.required(table, "diffusivity", "motion"),
        "motion.diffusivity",
        positive=True,
    )
    drift = vector(
        ctx, table.get("drift", [0.0] * dimension), "motion.drift", dimension
    )
    start_raw = ctx.required(table, "start", "motion")
    if start_raw == "uniform":
        if not domain.bounded:
            raise ctx.fail(
                "motion.start",
                '"uniform" needs a bounded domain (every side finite); give a start '
                "point instead.",
            )
        if (domain.targets or domain.obstacles) and free_fraction(domain) == 0.0:
            raise ctx.fail(
                "motion.start",
                '"uniform" needs free space, but the targets cover (nearly) the whole '
                "domain: none of 4096 evenly scattered sample points is free. Make "
                "them smaller or give a start point.",
            )
        return Motion(dimension, diffusivity, drift, None)
    if isinstance(start_raw, str):
        raise ctx.fail(
            "motion.start",
            f'must be a point (list of {dimension} numbers) or "uniform"; got {toml_text(start_raw)}.',
        )
    start = vector(ctx, start_raw, "motion.start", dimension)
    if not inside_box_or_ball(domain, start):
        raise ctx.fail(
            "motion.start",
            f"must lie strictly inside the domain; got {toml_text(list(start))}.",
        )
    for i, target in enumerate(domain.targets):
        if distance(start, target.center) <= target.radius:
            raise ctx.fail(
                "motion.start",
                f"lies inside target {i} (center {list(target.center)!r}, radius "
                f"{target.radius!r}); got {toml_text(list(start))}. Start outside every target.",
            )
    return Motion(dimension, diffusivity, drift, start)


def free_fraction(domain: Domain, samples: int = 4096) -> float:
    """Fraction of the bounding box that is inside the domain and outside targets."""
    rng = random.Random(0)  # deterministic: validation must not depend on chance
    inside = 0
    for _ in range(samples):
        p = [
            lo + (hi - lo) * rng.random() for lo, hi in zip(domain.lower, domain.upper)
        ]
        inside += domain.contains(p)
    return inside / samples
