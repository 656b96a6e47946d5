"""The ``[sweep]`` table: name, seed, walkers per point, walkers per task, units,
precision target."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sweep import precision as precision_target
from sweep.spec.context import Context, toml_text
from sweep.spec.model import Units
from sweep.spec.sections.section import Section
from sweep.spec.values import integer

SECTION = Section(
    "sweep",
    ("name", "seed", "walkers", "chunk", "description", "units", "precision"),
    required=True,
)
#: At most this many walkers per point (the per-walker arrays' length).
MAX_WALKERS = 10**12


@dataclass(frozen=True)
class Head:
    """The ``[sweep]`` table read: ``chunk`` resolved (walkers per task)."""

    name: str
    description: str
    units: Units
    seed: int
    walkers: int
    chunk: int
    #: ``precision`` read (then ``walkers`` is its ceiling, ``max_walkers``).
    precision: precision_target.Precision | None = None


def read_head(ctx: Context, head: dict[str, Any]) -> Head:
    """Read ``[sweep]``; the name defaults to the file's name without its suffix."""
    ctx.keys(head, SECTION.keys, "sweep")
    name = head.get("name", Path(ctx.source).stem)
    if not isinstance(name, str) or not name.strip():
        raise ctx.fail(
            "sweep.name", f"must be a non-empty string; got {toml_text(name)}."
        )
    description = head.get("description", "")
    if not isinstance(description, str):
        raise ctx.fail(
            "sweep.description", f"must be a string; got {toml_text(description)}."
        )
    units = read_units(ctx, head.get("units", {}))
    seed = integer(ctx, ctx.required(head, "seed", "sweep"), "sweep.seed", minimum=0)
    if "precision" in head:
        return _read_targeted(ctx, head, name, description, units, seed)
    walkers = integer(
        ctx, ctx.required(head, "walkers", "sweep"), "sweep.walkers", minimum=1
    )
    _at_most_max(ctx, walkers)
    if "chunk" in head:
        chunk = integer(ctx, head["chunk"], "sweep.chunk", minimum=1, maximum=walkers)
    else:
        chunk = auto_chunk(walkers)
    return Head(name, description, units, seed, walkers, chunk)


def _at_most_max(ctx: Context, walkers: int) -> None:
    if walkers > MAX_WALKERS:
        # Beyond ~1e300 the size is not a float (an int that large cannot be divided).
        terabytes = walkers * 26 / 1e12 if walkers < 10**300 else float("inf")
        raise ctx.fail(
            "sweep.walkers",
            f"must be at most {MAX_WALKERS:,} per point (the per-walker arrays "
            f"alone would hold {terabytes:.3g} TB); got {walkers:,}.",
        )


def _read_targeted(
    ctx: Context,
    head: dict[str, Any],
    name: str,
    description: str,
    units: Units,
    seed: int,
) -> Head:
    """``[sweep]`` with a precision target: the store holds ``max_walkers`` per point;
    ``walkers`` (optional) is the first round's (sweep.precision)."""
    target = precision_target.parse(head["precision"], ctx.source)
    _at_most_max(ctx, target.max_walkers)
    chunk = None
    if "chunk" in head:
        chunk = integer(ctx, head["chunk"], "sweep.chunk", minimum=1)
        if chunk > target.max_walkers:
            raise ctx.fail(
                "sweep.precision.max_walkers",
                f"must hold at least one chunk of {chunk:,} walkers (sweep.chunk); "
                f"got {target.max_walkers:,}.",
            )
    first = (
        integer(
            ctx, head["walkers"], "sweep.walkers", minimum=1, maximum=target.max_walkers
        )
        if "walkers" in head
        else min(precision_target.DEFAULT_FIRST_WALKERS, target.max_walkers)
    )
    target = dataclasses.replace(target, first_walkers=first)
    if chunk is None:
        chunk = auto_chunk(first)
    return Head(
        name, description, units, seed, target.max_walkers, chunk, precision=target
    )


def read_units(ctx: Context, raw: Any) -> Units:
    """``[sweep] units = { length = "um", time = "s" }``: free text, each optional."""
    if not isinstance(raw, dict):
        raise ctx.fail(
            "sweep.units",
            f'must be a table like {{ length = "um", time = "s" }}; got {toml_text(raw)}.',
        )
    ctx.keys(raw, ("length", "time"), "sweep.units")
    named = {}
    for key, value in raw.items():
        if not isinstance(value, str) or not value.strip() or len(value) > 40:
            raise ctx.fail(
                f"sweep.units.{key}",
                f'must be a short non-empty text such as "um" or "s"; got '
                f"{toml_text(value)}.",
            )
        named[key] = value.strip()
    return Units(**named)


def auto_chunk(walkers: int, target: int = 100_000) -> int:
    """Walkers per task when the definition gives none: about ``target``, evenly split."""
    n_chunks = -(-walkers // target)
    return -(-walkers // n_chunks)
