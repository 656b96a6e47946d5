"""Value readers: one TOML value in, one checked Python value out, or a clear message.

Each reader takes the :class:`~sweep.spec.context.Context` (for the file and point in the
message), the raw value and its dotted key, and returns the value converted (numbers to
float, vectors to tuples) or raises :class:`SpecError` saying what is allowed and what
was given. The strings ``"inf"``, ``"+inf"`` and ``"-inf"`` count as infinities where
infinities are allowed (TOML's bare ``inf`` too).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from typing import Any

from sweep.spec.context import Context, short_int, toml_text


def number(
    ctx: Context,
    value: Any,
    key: str,
    *,
    positive: bool = False,
    nonnegative: bool = False,
    allow_inf: bool = False,
) -> float:
    """A finite float (or an infinity with ``allow_inf``), > 0 or >= 0 if asked."""
    if isinstance(value, str) and value.strip() in ("inf", "+inf", "-inf"):
        value = float(value)
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ctx.fail(key, f"must be a number; got {toml_text(value)}.")
    try:
        value = float(value)
    except OverflowError:
        raise ctx.fail(
            key, f"must be a number within +-1.8e308; got {short_int(value)}."
        ) from None
    if math.isnan(value):
        raise ctx.fail(key, "must be a finite number; got nan.")
    if math.isinf(value) and not allow_inf:
        raise ctx.fail(key, f"must be finite; got {toml_text(value)}.")
    if positive and not value > 0:
        raise ctx.fail(key, f"must be > 0; got {toml_text(value)}.")
    if nonnegative and not value >= 0:
        raise ctx.fail(key, f"must be >= 0; got {toml_text(value)}.")
    return value


def integer(
    ctx: Context, value: Any, key: str, *, minimum: int, maximum: int | None = None
) -> int:
    """A whole number (not a bool, not a float) from ``minimum`` to ``maximum``."""
    if isinstance(value, bool) or not isinstance(value, int):
        raise ctx.fail(key, f"must be a whole number; got {toml_text(value)}.")
    if value < minimum or (maximum is not None and value > maximum):
        allowed = f">= {minimum}" if maximum is None else f"from {minimum} to {maximum}"
        raise ctx.fail(key, f"must be {allowed}; got {toml_text(value)}.")
    return value


def vector(
    ctx: Context, value: Any, key: str, dimension: int, *, allow_inf: bool = False
) -> tuple[float, ...]:
    """One number per axis, shape (dimension,); a bare number in one dimension."""
    if dimension == 1 and not isinstance(value, list):
        value = [value]
    if not isinstance(value, list) or len(value) != dimension:
        raise ctx.fail(
            key,
            f"must be a list of {dimension} number{'s' if dimension > 1 else ''} "
            f"(one per axis of a {dimension}-dimensional domain); got {toml_text(value)}.",
        )
    return tuple(number(ctx, v, key, allow_inf=allow_inf) for v in value)


def choice(ctx: Context, value: Any, key: str, allowed: Sequence[str]) -> str:
    """One of the words ``allowed``."""
    if value not in allowed:
        quoted = " or ".join(repr(a) for a in allowed)
        raise ctx.fail(key, f"must be {quoted}; got {toml_text(value)}.")
    return str(value)


def boolean(ctx: Context, value: Any, key: str) -> bool:
    """``true`` or ``false`` (not 0/1, not a string)."""
    if not isinstance(value, bool):
        raise ctx.fail(key, f"must be true or false; got {toml_text(value)}.")
    return value


def balls(
    ctx: Context,
    table: dict[str, Any],
    name: str,
    allowed: Sequence[str],
    dimension: int,
) -> Iterator[tuple[str, dict[str, Any], tuple[float, ...], float]]:
    """``domain.<name>``: a list of tables ``{ center = [...], radius = ... }`` (plus
    the other ``allowed`` keys); per entry its key (``domain.<name>.<i>``), the table,
    the centre (``dimension`` numbers) and the radius (> 0), yielded one entry at a
    time so the caller checks each entry's placement before the next is read (the
    order of the messages)."""
    raw = table.get(name, [])
    if not isinstance(raw, list):
        raise ctx.fail(
            f"domain.{name}", f"must be a list of tables; got {toml_text(raw)}."
        )
    for i, entry in enumerate(raw):
        key = f"domain.{name}.{i}"
        if not isinstance(entry, dict):
            raise ctx.fail(
                key,
                f"must be a table {{ center = [...], radius = ... }}; got {toml_text(entry)}.",
            )
        ctx.keys(entry, allowed, key)
        center = vector(
            ctx, ctx.required(entry, "center", key), f"{key}.center", dimension
        )
        radius = number(
            ctx, ctx.required(entry, "radius", key), f"{key}.radius", positive=True
        )
        yield key, entry, center, radius
