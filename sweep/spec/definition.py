"""A whole definition: its tables read, its grid expanded, its points validated.

:func:`read_sweep` takes the TOML document (already parsed) and returns the
:class:`Sweep` with every point resolved and the canonical form whose hash decides
whether a store may be resumed. The canonical form must stay stable: a change to it
changes every existing store's hash (see :meth:`PointSpec.canonical`).
"""

from __future__ import annotations

import copy
import dataclasses
from typing import Any

from sweep import precision as precision_target
from sweep.errors import SpecError
from sweep.spec.context import Context, listed, toml_text
from sweep.spec.grid import assign, combinations, count_points, read_axes
from sweep.spec.model import PointSpec, Sweep, Units, jsonable
from sweep.spec.point import read_point
from sweep.spec.sections import PER_POINT, REQUIRED, SECTIONS, TABLES
from sweep.spec.sections.head import read_head

#: At most this many tasks (points x chunks): one completion marker file each, and a
#: plan of 10^6 tasks takes seconds to build. Larger sweeps need a larger sweep.chunk.
MAX_TASKS = 2_000_000


def read_sweep(ctx: Context, raw: dict[str, Any]) -> Sweep:
    """The validated sweep of the TOML document ``raw`` (``text`` left empty)."""
    ctx.keys(raw, tuple(SECTIONS), "")
    for name in REQUIRED:
        if name not in raw:
            needed = listed([f"[{n}]" for n in REQUIRED])
            raise SpecError(
                f"{ctx.source}: the table [{name}] is missing; a definition needs "
                f"{needed}."
            )
    for name in TABLES:
        ctx.table(raw, name, "")
    head = read_head(ctx, raw["sweep"])
    axes = read_axes(ctx, raw)
    n_points = count_points(ctx, axes)
    walkers, chunk = head.walkers, head.chunk
    n_tasks = n_points * -(-walkers // chunk)
    if n_tasks > MAX_TASKS:
        raise ctx.fail(
            "sweep.chunk",
            f"{walkers:,} walkers per point in tasks of {chunk:,} over {n_points:,} "
            f"point(s) make {n_tasks:,} tasks; at most {MAX_TASKS:,} fit in one "
            f"store (one completion marker each). Raise sweep.chunk to at least "
            f"{-(-walkers * n_points // MAX_TASKS):,}, or split the sweep.",
        )
    base = {k: copy.deepcopy(raw[k]) for k in PER_POINT if k in raw}
    swept, values = combinations(axes)
    points: list[PointSpec] = []
    for index, flat in enumerate(values):
        if swept:
            shown = ", ".join(f"{k} = {toml_text(v)}" for k, v in zip(swept, flat))
            ctx.point = f" (at point {index}: {shown})"
        point_raw = copy.deepcopy(base)
        for key, value in zip(swept, flat):
            assign(ctx, point_raw, key, copy.deepcopy(value))
        points.append(read_point(ctx, point_raw))
    ctx.point = ""
    _same_shapes(ctx, points, swept, values)
    points = _common_survival_grid(points, raw)
    if head.precision is not None:
        precision_target.check_wall(
            head.precision, _absorbing_everywhere(points), ctx.source
        )
    # Point 0 fully resolved plus every point's swept values determine all points:
    # keys not swept are equal everywhere, swept ones are overridden everywhere.
    canonical = jsonable(
        {
            # The name is a label, not part of the hash: renaming the file (its
            # default name) must not block resuming.
            "sweep": {"seed": head.seed, "walkers": walkers, "chunk": chunk}
            # Units enter the hash only when named, so definitions without them
            # keep their hash (and their stores); a store in "um" is not resumed
            # as one in "mm".
            | (
                {"units": dataclasses.asdict(head.units)}
                if head.units != Units()
                else {}
            )
            | (
                {"precision": head.precision.canonical()}
                if head.precision is not None
                else {}
            ),
            "point0": points[0].canonical(),
            "swept": list(swept),
            # Every sweepable number is a float: 1 and 1.0 are the same point.
            "values": [[floats(x) for x in v] for v in values],
        }
    )
    return Sweep(
        name=head.name,
        seed=head.seed,
        walkers=walkers,
        chunk=chunk,
        source=ctx.source,
        swept=swept,
        points=tuple(points),
        values=tuple(values),
        canonical=canonical,
        units=head.units,
        precision=head.precision,
    )


def _absorbing_everywhere(points: list[PointSpec]) -> list[str]:
    """Names of the walls and targets that absorb at every point."""
    names = points[0].domain.wall_names()
    return [
        name
        for i, name in enumerate(names)
        if all(p.domain.wall_absorbing()[i] for p in points)
    ]


def _same_shapes(
    ctx: Context,
    points: list[PointSpec],
    swept: tuple[str, ...],
    values: list[tuple[Any, ...]],
) -> None:
    """Points of one store must share every array shape and wall index."""
    first = points[0]
    for index, p in enumerate(points[1:], start=1):
        if len(p.domain.targets) != len(first.domain.targets):
            shown = ", ".join(
                f"{k} = {toml_text(v)}" for k, v in zip(swept, values[index])
            )
            raise SpecError(
                f"{ctx.source}: point {index} ({shown}) has "
                f"{len(p.domain.targets)} targets but point 0 has "
                f"{len(first.domain.targets)}; the number of targets fixes wall "
                f"indices and cannot change within one store."
            )


def _common_survival_grid(
    points: list[PointSpec], raw: dict[str, Any]
) -> list[PointSpec]:
    """One survival time grid for the whole store.

    Without an explicit ``record.survival.stop`` the grid ends at the shortest
    horizon of all points (the horizon may be swept).
    """
    survival = raw.get("record", {}).get("survival", {})
    if "stop" in survival:
        return points
    stop = min(p.timing.horizon for p in points)
    return [
        dataclasses.replace(p, record=dataclasses.replace(p.record, survival_stop=stop))
        for p in points
    ]


def floats(value: Any) -> Any:
    """Swept values as the hash sees them: whole numbers as floats, "inf" spelled once."""
    if isinstance(value, bool):
        return value
    if isinstance(value, str) and value.strip() in ("inf", "+inf", "-inf"):
        return jsonable(float(value))
    if isinstance(value, int):
        return float(value)
    if isinstance(value, list):
        return [floats(v) for v in value]
    if isinstance(value, dict):
        return {k: floats(v) for k, v in value.items()}
    return value
