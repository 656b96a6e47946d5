"""Grid and zip expansion: which keys vary, their values, and each point's tables.

``[grid]`` keys span a Cartesian product (the first key varies slowest); the keys of
one ``[[zip]]`` table vary together, as one axis of that product. A swept key is a
dotted path into a sweepable table (``"motion.diffusivity"``), reaching inside a key
only along the paths its section declares (``Section.deep_keys``); :func:`assign`
writes one value into a point's copy of the tables.
"""

from __future__ import annotations

import difflib
import itertools
import math
from typing import Any

from sweep.spec.context import Context, is_index, listed, toml_text
from sweep.spec.sections import SECTIONS, SHAPE_KEYS, SWEEPABLE_SECTIONS, by_name

#: At most this many points in one store (grid product x zip lengths): each point is
#: validated on its own (about 0.1 ms), so 10^5 points take seconds to check.
MAX_POINTS = 100_000

#: The sweep's axes: each (keys varied together, [their values at each step]).
Axes = list[tuple[tuple[str, ...], list[tuple[Any, ...]]]]


def read_axes(
    ctx: Context, raw: dict[str, Any]
) -> list[tuple[tuple[str, ...], list[tuple[Any, ...]]]]:
    """The sweep's axes: each ([keys], [values per step]); a product over axes."""
    axes: list[tuple[tuple[str, ...], list[tuple[Any, ...]]]] = []
    seen: set[str] = set()
    for key, values in raw.get("grid", {}).items():
        _swept_values(ctx, key, values, "grid", seen)
        axes.append(((key,), [(v,) for v in values]))
    zips = raw.get("zip", [])
    if not isinstance(zips, list) or not all(isinstance(z, dict) for z in zips):
        raise ctx.fail(
            "zip", "must be written as [[zip]] tables of lists of equal length."
        )
    for number, group in enumerate(zips):
        if not group:
            raise ctx.fail(f"zip #{number + 1}", "is empty; give it at least one key.")
        lengths = set()
        for key, values in group.items():
            _swept_values(ctx, key, values, f"zip #{number + 1}", seen)
            lengths.add(len(values))
        if len(lengths) > 1:
            shown = ", ".join(f"{k}: {len(v)}" for k, v in group.items())
            raise ctx.fail(
                f"zip #{number + 1}",
                f"lists must all have the same length; got {shown}.",
            )
        keys = tuple(group)
        axes.append(
            (keys, [tuple(group[k][i] for k in keys) for i in range(lengths.pop())])
        )
    return axes


def count_points(ctx: Context, axes: Axes) -> int:
    """The number of points the axes span, at most :data:`MAX_POINTS`."""
    n_points = math.prod(len(values) for _, values in axes)
    if n_points > MAX_POINTS:
        lengths = " x ".join(f"{len(v)} ({', '.join(k)})" for k, v in axes)
        raise ctx.fail(
            "grid",
            f"gives {n_points:,} points ({lengths}); at most {MAX_POINTS:,} fit in "
            f"one store. Split the sweep into several definitions.",
        )
    return n_points


def combinations(axes: Axes) -> tuple[tuple[str, ...], list[tuple[Any, ...]]]:
    """The swept keys in definition order and each point's values of them, in order."""
    swept = tuple(key for keys, _ in axes for key in keys)
    values = [
        tuple(v for group in combo for v in group)
        for combo in itertools.product(*(values for _, values in axes))
    ]
    return swept, values


def _swept_values(
    ctx: Context, key: str, values: Any, where: str, seen: set[str]
) -> None:
    """Check one swept key of [grid] or a [[zip]] table and its list of values."""
    if isinstance(values, dict) and "." not in key:
        raise ctx.fail(
            f"{where}.{key}",
            "is a table, not a list: write dotted keys in quotes, e.g. "
            '"motion.diffusivity" = [0.5, 1.0] (without quotes TOML reads the '
            "dots as nested tables).",
        )
    _sweep_key(ctx, key, where, seen)
    ctx.origin[key] = where
    if not isinstance(values, list) or not values:
        raise ctx.fail(
            f"{where}.{key}",
            f"must be a non-empty list of values; got {toml_text(values)}.",
        )


def _sweep_key(ctx: Context, key: str, where: str, seen: set[str]) -> None:
    """Refuse a key that is not sweepable, or swept twice (``seen``: those so far)."""
    parts = key.split(".")
    section = parts[0]
    if key in SHAPE_KEYS:
        raise ctx.fail(
            f"{where}.{key}",
            "cannot be swept: it changes array shapes within one store. "
            "Write one sweep definition per value instead.",
        )
    sweepable = [by_name(s) for s in SWEEPABLE_SECTIONS]
    if section not in SWEEPABLE_SECTIONS or len(parts) < 2:
        allowed = ", ".join(
            f"{s}.{k}"
            for s in SWEEPABLE_SECTIONS
            for k in SECTIONS[s]
            if f"{s}.{k}" not in SHAPE_KEYS
        )
        tables = listed([f"[{s}]" for s in SWEEPABLE_SECTIONS])
        deep = ", ".join(s.deep_hint for s in sweepable if s.deep_hint)
        raise ctx.fail(
            f"{where}.{key}",
            f"is not a sweepable key. Sweepable keys are dotted paths into "
            f"{tables}: {allowed} (and {deep}).",
        )
    leaf = parts[1]
    if leaf not in SECTIONS[section]:
        hint = difflib.get_close_matches(leaf, SECTIONS[section], n=1, cutoff=0.5)
        maybe = f" Did you mean '{section}.{hint[0]}'?" if hint else ""
        raise ctx.fail(
            f"{where}.{key}",
            f"names no key of [{section}]; allowed: {', '.join(SECTIONS[section])}.{maybe}",
        )
    if len(parts) > 2 and not any(
        _matches(parts[1:], pattern) for pattern in by_name(section).deep_keys
    ):
        only = " and ".join(s.deep_only for s in sweepable if s.deep_only)
        raise ctx.fail(
            f"{where}.{key}", f"is too deep; only {only} reach inside a key."
        )
    for other in seen:
        if key == other or key.startswith(other + ".") or other.startswith(key + "."):
            raise ctx.fail(
                f"{where}.{key}",
                f"is swept twice (also as {other!r}); sweep it once.",
            )
    seen.add(key)


def _matches(parts: list[str], pattern: str) -> bool:
    """Whether key parts fit a ``Section.deep_keys`` pattern (``<i>``: an index)."""
    words = pattern.split(".")
    return len(parts) == len(words) and all(
        is_index(part) if word == "<i>" else word.startswith("<") or part == word
        for part, word in zip(parts, words)
    )


def assign(ctx: Context, raw: dict[str, Any], key: str, value: Any) -> None:
    """Set ``raw[a][b]...`` for a swept dotted ``key``; integer parts index lists."""
    parts = key.split(".")
    node: Any = raw
    for depth, part in enumerate(parts):
        last = depth == len(parts) - 1
        where = ".".join(parts[:depth]) or "the definition"
        if isinstance(node, list):
            if not is_index(part):
                raise ctx.fail(
                    f"{ctx.origin[key]}.{key}",
                    f"reaches into {where}, which is {toml_text(node)}: a list takes an "
                    f"entry number, not {part!r}.",
                )
            index = int(part)
            if index >= len(node):
                entries = "entry" if len(node) == 1 else "entries"
                raise ctx.fail(
                    f"{ctx.origin[key]}.{key}",
                    f"reaches entry {index} of {where}, which has {len(node)} {entries}.",
                )
            if last:
                node[index] = value
            else:
                node = node[index]
        elif isinstance(node, dict):
            if last:
                node[part] = value
            else:
                if part not in node:
                    node[part] = [] if is_index(parts[depth + 1]) else {}
                node = node[part]
        else:
            raise ctx.fail(
                f"{ctx.origin[key]}.{key}",
                f"reaches into {where}, which is {toml_text(node)} and not a table or list.",
            )
