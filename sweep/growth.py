"""Growing a finished store: which definition changes extend a store, and how.

A store made by one definition may be rerun with another that only *adds* work: more
walkers per point (the walkers per task, ``sweep.chunk``, unchanged), extra values on
a grid axis, or extra rows of a ``[[zip]]`` table. Every other change (the physics of a
point, what is recorded, the seed, the chunk size, fewer walkers, removed points) is
refused with the differences listed.

Points are identified by their swept values, never by their position: a task's random
stream depends only on the point's parameters and the chunk index (``sweep.plan``), so
a point's walkers are the same whichever index it has. The store keeps the indices it
gave its points: old points stay where they are and new points are appended, in the
new definition's order. The store records that order (``point_order``: store index →
index of the point in the definition's own product order) and every reader gets the
sweep's points in store order through :func:`in_store_order`.

Pure bookkeeping: no I/O. ``sweep.store`` applies a :class:`Growth` to the files.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sweep.spec import Sweep


@dataclass(frozen=True)
class Growth:
    """How a store made by one definition becomes the store of another.

    Attributes
    ----------
    order : tuple of int, shape (new points,)
        Store index → index of the point in the new definition's ``points``: the old
        points keep their store indices, the new ones follow.
    old_points, new_points : int
        Points before and after.
    old_walkers, new_walkers : int
        Walkers per point before and after (the store's walker dimension).
    changes : tuple of str
        What changed, in words (for the provenance record and the run's notice).
    """

    order: tuple[int, ...]
    old_points: int
    new_points: int
    old_walkers: int
    new_walkers: int
    changes: tuple[str, ...]

    @property
    def adds_work(self) -> bool:
        return self.new_points > self.old_points or self.new_walkers > self.old_walkers


class Refused(Exception):
    """The new definition does not only add work; ``differences`` says where.

    Each difference is ``(key, stored value, new value)``; the store turns them into
    one message (``StoreMismatchError``) with the hint to use another store.
    """

    def __init__(self, differences: list[tuple[str, Any, Any]]) -> None:
        super().__init__(differences)
        self.differences = differences


def in_store_order(sweep: Sweep, order: Sequence[int] | None) -> Sweep:
    """``sweep`` with its points (and their swept values) in the store's order.

    ``order`` is the store's ``point_order`` (store index → definition index), or
    None for a store whose points follow the definition.
    """
    if order is None or list(order) == list(range(sweep.n_points)):
        return sweep
    if sorted(order) != list(range(sweep.n_points)):
        raise ValueError(
            f"point_order is not a permutation of the {sweep.n_points} points"
        )
    return dataclasses.replace(
        sweep,
        points=tuple(sweep.points[j] for j in order),
        values=tuple(sweep.values[j] for j in order),
    )


def _rows(sweep: Sweep) -> list[str]:
    """Each point's swept values as canonical text (1 and 1.0 are one value), in
    definition order."""
    return [json.dumps(v, sort_keys=True) for v in sweep.canonical["values"]]


def plan_growth(
    stored: Sweep, stored_order: Sequence[int] | None, new: Sweep
) -> Growth:
    """Match the stored sweep's points to the new definition's and check the rest.

    Parameters
    ----------
    stored : Sweep
        The definition the store holds, in its own (definition) order.
    stored_order : sequence of int or None
        The store's ``point_order`` (None: the definition's order).
    new : Sweep
        The definition being run now.

    Returns
    -------
    Growth
        With ``adds_work`` False when the two only list the same points in another
        order (nothing to run; the definition text is still replaced).

    Raises
    ------
    Refused
        Anything but added walkers, grid values or zip rows differs.
    """
    refused: list[tuple[str, Any, Any]] = []
    old_head = dict(stored.canonical["sweep"])
    new_head = dict(new.canonical["sweep"])
    old_walkers, new_walkers = old_head.pop("walkers"), new_head.pop("walkers")
    old_precision = old_head.pop("precision", None)
    new_precision = new_head.pop("precision", None)
    refused += differences(old_head, new_head, "sweep.")
    if old_precision != new_precision:
        refused.append(("sweep.precision", old_precision, new_precision))
    if new_walkers < old_walkers:
        refused.append(("sweep.walkers (fewer walkers)", old_walkers, new_walkers))
    elif (
        new_walkers > old_walkers
        and old_walkers % stored.chunk != 0
        and old_head.get("chunk") == new_head.get("chunk")
    ):
        refused.append(
            (
                f"sweep.walkers (the stored last task holds "
                f"{old_walkers % stored.chunk} walkers, not a whole chunk of "
                f"{stored.chunk}, so it cannot be extended)",
                old_walkers,
                new_walkers,
            )
        )
    if stored.canonical["swept"] != new.canonical["swept"]:
        refused.append(
            ("swept keys", stored.canonical["swept"], new.canonical["swept"])
        )
        raise Refused(refused)

    order_old = (
        list(range(stored.n_points)) if stored_order is None else list(stored_order)
    )
    old_rows, new_rows = _rows(stored), _rows(new)
    free: dict[str, list[int]] = {}
    for j, row in enumerate(new_rows):
        free.setdefault(row, []).append(j)
    order: list[int] = []
    removed: list[Any] = []
    seen: set[tuple[str, Any, Any]] = set()
    for def_index in order_old:
        row = old_rows[def_index]
        if not free.get(row):
            removed.append(stored.canonical["values"][def_index])
            continue
        j = free[row].pop(0)
        order.append(j)
        # The same swept values, so any other difference is in a key not swept.
        old_point = stored.points[def_index].canonical()
        new_point = new.points[j].canonical()
        for diff in differences(old_point, new_point):
            key = (diff[0], json.dumps(diff[1]), json.dumps(diff[2]))
            if key not in seen:
                seen.add(key)
                refused.append(diff)
    if removed:
        shown = ", ".join(json.dumps(v) for v in removed[:5])
        more = f" and {len(removed) - 5} more" if len(removed) > 5 else ""
        refused.append(
            (
                f"points removed ({len(removed)}; their values of "
                f"{', '.join(stored.swept)}: {shown}{more})",
                "stored",
                "absent",
            )
        )
    if refused:
        raise Refused(refused)
    added = sorted(j for rows in free.values() for j in rows)
    order += added
    changes = []
    if added:
        changes.append(
            f"{len(added)} point(s) added ({stored.n_points} → {len(order)})"
        )
    if new_walkers > old_walkers:
        changes.append(f"walkers per point {old_walkers:,} → {new_walkers:,}")
    if not changes:
        changes.append("the same points, listed in another order")
    return Growth(
        order=tuple(order),
        old_points=stored.n_points,
        new_points=len(order),
        old_walkers=old_walkers,
        new_walkers=new_walkers,
        changes=tuple(changes),
    )


def differences(a: Any, b: Any, prefix: str = "") -> list[tuple[str, Any, Any]]:
    """Where two canonical forms (nested mappings) differ: ``(dotted key, a's value,
    b's value)`` in sorted key order, ``"<absent>"`` for a key one of them lacks;
    ``prefix`` starts every key (e.g. ``"sweep."``). Also the store's provenance
    check's list of differences."""
    return list(_walk(a, b, prefix))


def _walk(a: Any, b: Any, prefix: str) -> Iterator[tuple[str, Any, Any]]:
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        for key in sorted(set(a) | set(b)):
            yield from _walk(
                a.get(key, "<absent>"), b.get(key, "<absent>"), f"{prefix}{key}."
            )
    elif a != b:
        yield prefix.rstrip("."), a, b
