"""The tables of a definition, one module each, and the registry that lists them.

Each section module holds its :class:`Section` (name, keys, how it may be used) beside
the function that reads it: ``head`` (``[sweep]``), ``motion``, ``timing`` (``[time]``),
``domain``, ``record``. :data:`REGISTRY` orders them as messages list them; the tables
derived from it (:data:`SECTIONS`, :data:`SWEEPABLE_SECTIONS`, ...) are what the rest of
the package reads, so a section registered here is known everywhere.
"""

from __future__ import annotations

from sweep.spec.sections import domain, head, motion, record, timing
from sweep.spec.sections.section import Section

#: Every top-level table, in the order "Allowed keys" messages list them.
REGISTRY: tuple[Section, ...] = (
    head.SECTION,
    motion.SECTION,
    timing.SECTION,
    domain.SECTION,
    record.SECTION,
    Section("grid", ()),
    Section("zip", (), array=True),
)
#: Each table's allowed keys.
SECTIONS: dict[str, tuple[str, ...]] = {s.name: s.keys for s in REGISTRY}
#: Tables whose keys may be swept by [grid] and [[zip]].
SWEEPABLE_SECTIONS: tuple[str, ...] = tuple(s.name for s in REGISTRY if s.sweepable)
#: Keys that change array shapes or the meaning of stored indices: one store, one value.
SHAPE_KEYS: tuple[str, ...] = tuple(
    f"{s.name}.{k}" for s in REGISTRY for k in s.fixed_keys
)
#: Tables every definition must have.
REQUIRED: tuple[str, ...] = tuple(s.name for s in REGISTRY if s.required)
#: Tables each grid point gets its own copy of.
PER_POINT: tuple[str, ...] = tuple(s.name for s in REGISTRY if s.per_point)
#: Tables written as ``[name]`` (not ``[[name]]``): they must be tables when present.
TABLES: tuple[str, ...] = tuple(s.name for s in REGISTRY if not s.array)


def by_name(name: str) -> Section:
    """The registered section called ``name``."""
    return next(s for s in REGISTRY if s.name == name)
