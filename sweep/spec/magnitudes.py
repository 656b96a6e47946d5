"""Magnitudes: refuse numbers whose squares or products leave double precision.

Every finite number of a point (coordinates, lengths, D, drift, dt, horizon) must lie
within +-:data:`MAGNITUDE`, lengths, D and dt at least :data:`TINY`, and one step
sqrt(2 D dt) must stay above the resolution of the largest coordinate.
"""

from __future__ import annotations

import math

from sweep.spec.context import Context
from sweep.spec.model import Domain, Motion, Timing

#: Every finite number of a point (coordinates, lengths, D, drift, dt, horizon) lies
#: within +-MAGNITUDE, and lengths, D and dt are at least TINY: then squares and
#: products of them stay finite and nonzero in double precision.
MAGNITUDE = 1e100
TINY = 1e-100
#: The step sqrt(2 D dt) must exceed this fraction of the largest coordinate, or
#: positions would round the steps away.
RESOLUTION = 1e-12


def check_scales(ctx: Context, motion: Motion, timing: Timing, domain: Domain) -> None:
    """Refuse numbers whose squares or products leave double precision."""
    why = (
        "so that squares and products of lengths, times and rates stay finite "
        "and nonzero in double precision"
    )
    box = domain.shape == "box"
    coordinates: list[tuple[str, float]] = [
        *(
            (f"domain.{'lower' if box else 'center'}", v)
            for v in (domain.lower if box else domain.center)
        ),
        *(("domain.upper", v) for v in (domain.upper if box else ())),
        *(("motion.start", v) for v in (motion.start or ())),
        *(("motion.drift", v) for v in motion.drift),
        *(
            (f"domain.targets.{i}.center", v)
            for i, t in enumerate(domain.targets)
            for v in t.center
        ),
        ("motion.diffusivity", motion.diffusivity),
        ("time.horizon", timing.horizon),
    ]
    for key, value in coordinates:
        if math.isfinite(value) and abs(value) > MAGNITUDE:
            raise ctx.fail(
                key, f"must lie within +-{MAGNITUDE:g} ({why}); got {value!r}."
            )
    lengths: list[tuple[str, float]] = [
        ("motion.diffusivity", motion.diffusivity),
        ("time.dt", timing.dt),
        *(
            (f"domain.targets.{i}.radius", t.radius)
            for i, t in enumerate(domain.targets)
        ),
    ]
    if box:
        lengths += [
            ("domain.upper", hi - lo)
            for lo, hi in zip(domain.lower, domain.upper)
            if math.isfinite(lo) and math.isfinite(hi)
        ]
    else:
        lengths.append(("domain.radius", domain.radius))
    for key, value in lengths:
        if value < TINY or value > MAGNITUDE:
            what = "domain width upper - lower" if key == "domain.upper" else "value"
            raise ctx.fail(
                key,
                f"the {what} must lie within {TINY:g} .. {MAGNITUDE:g} ({why}); "
                f"got {value!r}.",
            )
    step = math.sqrt(2.0 * motion.diffusivity * timing.dt)
    scale = max(
        (
            abs(v)
            for key, v in coordinates
            if key.startswith(("domain", "motion.start")) and math.isfinite(v)
        ),
        default=0.0,
    )
    if not (math.isfinite(step) and step > RESOLUTION * scale):
        raise ctx.fail(
            "time.dt",
            f"the step sqrt(2 D dt) = {step!r} is below the resolution of positions "
            f"as large as {scale!r} (at least {RESOLUTION:g} of them): steps would "
            f"round away. Raise dt or D, or move the domain nearer the origin.",
        )
