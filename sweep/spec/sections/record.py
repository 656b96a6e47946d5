"""The ``[record]`` table: what each task keeps besides the walkers' fates.

Per-walker values (or a first-passage-time histogram instead), the survival curve's time
grid, and occupancy snapshots (histograms of positions at given times).
"""

from __future__ import annotations

import math
from typing import Any

from sweep.spec.context import Context, short_int, toml_text
from sweep.spec.model import Domain, Record, Timing
from sweep.spec.sections.section import Section
from sweep.spec.values import boolean, integer, number, vector

SECTION = Section(
    "record", ("per_walker", "survival", "occupancy", "fpt_bins"), per_point=True
)
#: At most this many occupancy bins in all (bins ** dimension), so each task's histogram
#: stays below 80 MB per snapshot.
MAX_OCCUPANCY_BINS = 10**7
#: First-passage-time histogram bins per wall when per-walker values are not kept.
DEFAULT_FPT_BINS = 2000
MAX_FPT_BINS = 1_000_000
#: Default number of points of the survival curve's uniform time grid.
DEFAULT_SURVIVAL_POINTS = 101


def read_record(
    ctx: Context, table: dict[str, Any], timing: Timing, domain: Domain
) -> Record:
    """Read one point's ``[record]`` once its time and domain are known."""
    ctx.keys(table, SECTION.keys, "record")
    per_walker = boolean(ctx, table.get("per_walker", True), "record.per_walker")
    # Without per-walker values the histogram is the only record of absorption
    # times and walls, so it is on by default then.
    fpt_bins = integer(
        ctx,
        table.get("fpt_bins", 0 if per_walker else DEFAULT_FPT_BINS),
        "record.fpt_bins",
        minimum=0 if per_walker else 1,
        maximum=MAX_FPT_BINS,
    )
    stop, points = _survival(ctx, table.get("survival", {}), timing)
    occupancy = table.get("occupancy")
    if occupancy is None:
        return Record(per_walker, stop, points, fpt_bins=fpt_bins)
    times, bins, lower, upper = _occupancy(ctx, occupancy, timing, domain)
    return Record(per_walker, stop, points, times, bins, lower, upper, fpt_bins)


def _survival(ctx: Context, survival: Any, timing: Timing) -> tuple[float, int]:
    """``record.survival``: the curve's last time and number of points."""
    if not isinstance(survival, dict):
        raise ctx.fail(
            "record.survival",
            f"must be a table {{ stop, points }}; got {toml_text(survival)}.",
        )
    ctx.keys(survival, ("stop", "points"), "record.survival")
    stop = number(
        ctx, survival.get("stop", timing.horizon), "record.survival.stop", positive=True
    )
    if stop > timing.horizon * (1 + 1e-12):
        raise ctx.fail(
            "record.survival.stop",
            f"must not exceed time.horizon = {timing.horizon!r}; got {toml_text(stop)}.",
        )
    points = integer(
        ctx,
        survival.get("points", DEFAULT_SURVIVAL_POINTS),
        "record.survival.points",
        minimum=2,
        maximum=1_000_000,
    )
    return stop, points


def _occupancy(
    ctx: Context, occupancy: Any, timing: Timing, domain: Domain
) -> tuple[tuple[float, ...], int, tuple[float, ...], tuple[float, ...]]:
    """``record.occupancy``: snapshot times, bins per axis, and the binned range."""
    if not isinstance(occupancy, dict):
        raise ctx.fail(
            "record.occupancy",
            f"must be a table {{ times, bins }}; got {toml_text(occupancy)}.",
        )
    ctx.keys(occupancy, ("times", "bins", "lower", "upper"), "record.occupancy")
    times_raw = ctx.required(occupancy, "times", "record.occupancy")
    if not isinstance(times_raw, list) or not times_raw:
        raise ctx.fail(
            "record.occupancy.times",
            f"must be a non-empty list; got {toml_text(times_raw)}.",
        )
    times = tuple(
        number(ctx, t, "record.occupancy.times", nonnegative=True) for t in times_raw
    )
    for t in times:
        if t > timing.horizon:
            raise ctx.fail(
                "record.occupancy.times",
                f"must lie within [0, time.horizon = {timing.horizon!r}]; got {toml_text(t)}.",
            )
    d = domain.dimension
    bins_raw = ctx.required(occupancy, "bins", "record.occupancy")
    if isinstance(bins_raw, int) and not isinstance(bins_raw, bool) and bins_raw > 0:
        if bins_raw**d > MAX_OCCUPANCY_BINS:
            raise ctx.fail(
                "record.occupancy.bins",
                f"gives more than {MAX_OCCUPANCY_BINS:,} bins in all (bins per axis, "
                f"to the power {d} of the dimension); at most {MAX_OCCUPANCY_BINS:,} "
                f"are allowed. Got {short_int(bins_raw)}.",
            )
    bins = integer(
        ctx,
        ctx.required(occupancy, "bins", "record.occupancy"),
        "record.occupancy.bins",
        minimum=1,
        maximum=max(1, int((MAX_OCCUPANCY_BINS * (1 + 1e-12)) ** (1 / d))),
    )
    lower = domain.lower
    upper = domain.upper
    if "lower" in occupancy:
        lower = vector(ctx, occupancy["lower"], "record.occupancy.lower", d)
    if "upper" in occupancy:
        upper = vector(ctx, occupancy["upper"], "record.occupancy.upper", d)
    if not all(math.isfinite(v) for v in lower + upper):
        raise ctx.fail(
            "record.occupancy",
            "needs finite bin ranges; the domain is unbounded, so give "
            "record.occupancy.lower and record.occupancy.upper.",
        )
    if not all(lo < hi for lo, hi in zip(lower, upper)):
        raise ctx.fail(
            "record.occupancy.lower",
            f"must be below record.occupancy.upper on every axis; got {toml_text(list(lower))} "
            f"and {list(upper)!r}.",
        )
    return times, bins, lower, upper
