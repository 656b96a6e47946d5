"""The ``[time]`` table: step, horizon, monitoring between steps, propagation scheme."""

from __future__ import annotations

from typing import Any

from sweep.spec.context import Context, toml_text
from sweep.spec.model import Timing
from sweep.spec.sections.section import Section
from sweep.spec.values import choice, number

KEYS = ("dt", "horizon", "monitoring", "scheme")
SECTION = Section("time", KEYS, required=True, per_point=True, sweepable=True)
MONITORING: tuple[str, ...] = ("bridge", "endpoint")
#: Propagation schemes: fixed steps everywhere, or exact sphere jumps in the bulk with
#: steps only near surfaces (kernels/spheres.py).
SCHEMES: tuple[str, ...] = ("steps", "spheres")


def read_timing(ctx: Context, table: dict[str, Any]) -> Timing:
    """Read one point's ``[time]``: ``0 < dt < horizon`` (time units)."""
    ctx.keys(table, SECTION.keys, "time")
    dt = number(ctx, ctx.required(table, "dt", "time"), "time.dt", positive=True)
    horizon = number(
        ctx, ctx.required(table, "horizon", "time"), "time.horizon", positive=True
    )
    if dt >= horizon:
        raise ctx.fail(
            "time.dt",
            f"must be smaller than time.horizon = {horizon!r}; got {toml_text(dt)}.",
        )
    if horizon / dt > 2**62:
        raise ctx.fail("time.horizon", f"needs more than 2^62 steps of dt = {dt!r}.")
    monitoring = choice(
        ctx, table.get("monitoring", "bridge"), "time.monitoring", MONITORING
    )
    scheme = choice(ctx, table.get("scheme", "steps"), "time.scheme", SCHEMES)
    return Timing(dt=dt, horizon=horizon, monitoring=monitoring, scheme=scheme)  # type: ignore[arg-type]
