"""One grid point: its tables read in dependency order into a :class:`PointSpec`.

The dimension comes first (every vector has that many entries), then ``[time]``,
``[domain]``, the rest of ``[motion]`` (its start must lie in the domain), the
magnitudes, ``[record]`` (its times lie within the horizon), and the checks that span
tables. A new per-point table is read here, after the tables it needs.
"""

from __future__ import annotations

from typing import Any

from sweep.spec.context import Context, toml_text
from sweep.spec.magnitudes import check_scales
from sweep.spec.model import Motion, PointSpec, Record
from sweep.spec.sections.domain import read_domain
from sweep.spec.sections.motion import read_dimension, read_motion
from sweep.spec.sections.record import read_record
from sweep.spec.sections.surfaces import check_point
from sweep.spec.sections.timing import read_timing


def read_point(ctx: Context, raw: dict[str, Any]) -> PointSpec:
    """One point's parameters from its tables (``raw``: the point's copy, swept
    values already written in)."""
    motion_raw = ctx.table(raw, "motion", "")
    dimension = read_dimension(ctx, motion_raw)
    timing = read_timing(ctx, ctx.table(raw, "time", ""))
    domain = read_domain(ctx, ctx.table(raw, "domain", ""), dimension)
    motion = read_motion(ctx, motion_raw, dimension, domain)
    check_scales(ctx, motion, timing, domain)
    check_point(ctx, domain, motion, timing)
    record = read_record(ctx, ctx.table(raw, "record", ""), timing, domain)
    if timing.scheme == "spheres":
        check_spheres(ctx, motion, record)
    return PointSpec(motion=motion, timing=timing, domain=domain, record=record)


def check_spheres(ctx: Context, motion: Motion, record: Record) -> None:
    """Refuse what the sphere jumps cannot do: drift and occupancy snapshots."""
    if any(v != 0.0 for v in motion.drift):
        raise ctx.fail(
            "motion.drift",
            f'must be zero with time.scheme = "spheres": the jumps use the exit '
            f"laws of free Brownian motion. Got {toml_text(list(motion.drift))}; use "
            f'time.scheme = "steps" for motion with drift.',
        )
    if record.occupancy_times:
        raise ctx.fail(
            "record.occupancy",
            'is not available with time.scheme = "spheres": a walker\'s position '
            "at a fixed time falls inside a jump, where only its exit is drawn. "
            'Use time.scheme = "steps" for occupancy snapshots (or a second sweep '
            "with it), or remove record.occupancy.",
        )
