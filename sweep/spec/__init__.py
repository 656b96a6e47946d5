"""Sweep definitions: TOML text in, validated frozen dataclasses out.

This is the only package that reads user-written dictionaries. Everything downstream
receives :class:`Sweep` and :class:`PointSpec` objects and never re-validates. Nothing
read from a file is evaluated: values are taken as TOML data only.

Modules, in the order a definition passes through them:

- :mod:`~sweep.spec.load`: the file and the TOML (``load_spec``, ``parse_spec``);
- :mod:`~sweep.spec.definition`: the whole definition, its canonical form and hash;
- :mod:`~sweep.spec.grid`: ``[grid]`` / ``[[zip]]`` expansion and the sweepable keys;
- :mod:`~sweep.spec.point`: one point's tables in dependency order, cross-table checks;
- :mod:`~sweep.spec.sections`: one module per table (``head`` is ``[sweep]``,
  ``motion``, ``timing`` is ``[time]``, ``domain``, ``record``) and their registry;
- :mod:`~sweep.spec.magnitudes`: numbers must stay inside double precision;
- :mod:`~sweep.spec.values`: value readers (number, integer, vector, choice, boolean);
- :mod:`~sweep.spec.context`: the file, key and grid point every message names;
- :mod:`~sweep.spec.model`: the frozen dataclasses and :class:`Units`.

Every reader takes a :class:`~sweep.spec.context.Context` first and raises through
``ctx.fail("<dotted.key>", "must be ...; got <value>.")``: one message that names the
file, the key, the value and what is allowed.

How to add a key to an existing table (say ``[time] order``):

1. In its section module (``sections/timing.py``) add the name to ``SECTION.keys``:
   that alone makes it allowed, suggested for typos and, in a sweepable table,
   sweepable as ``"time.order"``.
2. Read it in the same module's ``read_*`` function with a value reader and a default,
   and store it in the table's dataclass in ``model.py`` (a field with a default).
3. Keep old hashes: in :meth:`PointSpec.canonical` leave the key out while it has its
   default (as ``time.scheme`` does), so existing stores still resume.
4. A key reached inside another one (``domain.walls.<wall>.reactivity``) is sweepable
   once ``Section.deep_keys`` lists its path (with ``deep_hint``/``deep_only`` for
   messages); a key that changes array shapes goes in ``Section.fixed_keys``.
5. Add its bad values to the table's ``BAD_INPUTS`` in
   ``tests/spec/sections/test_<table>.py`` and a positive test beside them.

How to add a table (say ``[force]``):

1. A module ``sections/force.py`` with ``SECTION = Section("force", (...keys...),
   per_point=True, sweepable=True)`` and ``read_force(ctx, table, ...)``; a frozen
   dataclass for it in ``model.py`` and a field of :class:`PointSpec` (default: none).
2. One line in ``sections/__init__.py``'s ``REGISTRY`` (its place there is its place
   in "Allowed keys" messages); one call in ``point.read_point``, after the tables
   it needs (``dimension``, ``domain``).
3. :meth:`PointSpec.canonical` includes it only when present (old hashes stay).
4. Tests in ``tests/spec/sections/test_<table>.py``; the pinned hash of
   ``tests/spec/test_definition.py`` must not change.
"""

from __future__ import annotations

from sweep.errors import SpecError, SweepWarning
from sweep.spec.definition import MAX_TASKS
from sweep.spec.grid import MAX_POINTS
from sweep.spec.load import MAX_NESTING, load_spec, parse_spec
from sweep.spec.magnitudes import MAGNITUDE, RESOLUTION, TINY
from sweep.spec.model import (
    MAX_DIMENSION,
    NO_UNITS,
    QUANTITIES,
    Domain,
    Motion,
    Obstacle,
    PointSpec,
    Record,
    Sweep,
    Target,
    Timing,
    Units,
    axis_names,
    canonical_hash,
    key_quantity,
)
from sweep.spec.sections import SECTIONS, SHAPE_KEYS, SWEEPABLE_SECTIONS
from sweep.spec.sections.domain import SHAPES, TARGET_KEYS, WALL_KINDS, WallKind
from sweep.spec.sections.head import MAX_WALKERS, auto_chunk
from sweep.spec.sections.record import (
    DEFAULT_FPT_BINS,
    DEFAULT_SURVIVAL_POINTS,
    MAX_FPT_BINS,
    MAX_OCCUPANCY_BINS,
)
from sweep.spec.sections.timing import MONITORING, SCHEMES

__all__ = [
    "DEFAULT_FPT_BINS",
    "DEFAULT_SURVIVAL_POINTS",
    "MAGNITUDE",
    "MAX_DIMENSION",
    "MAX_FPT_BINS",
    "MAX_NESTING",
    "MAX_OCCUPANCY_BINS",
    "MAX_POINTS",
    "MAX_TASKS",
    "MAX_WALKERS",
    "MONITORING",
    "NO_UNITS",
    "QUANTITIES",
    "RESOLUTION",
    "SCHEMES",
    "SECTIONS",
    "SHAPES",
    "SHAPE_KEYS",
    "SWEEPABLE_SECTIONS",
    "TARGET_KEYS",
    "TINY",
    "WALL_KINDS",
    "Domain",
    "Motion",
    "PointSpec",
    "Record",
    "SpecError",
    "Sweep",
    "SweepWarning",
    "Obstacle",
    "Target",
    "Timing",
    "Units",
    "WallKind",
    "auto_chunk",
    "axis_names",
    "canonical_hash",
    "key_quantity",
    "load_spec",
    "parse_spec",
]
