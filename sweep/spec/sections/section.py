"""What one table of a definition declares: its name, its keys and how it may be used.

Each section module (``head``, ``motion``, ``timing``, ``domain``, ``record``) holds one
:class:`Section` beside its reader, so a key is added where it is read; the registry
(:mod:`sweep.spec.sections`) lists them in the order messages show them.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Section:
    """One top-level table of a definition.

    Attributes
    ----------
    name : str
        The table's name, ``[name]`` in the file.
    keys : tuple of str
        Every key it allows, in the order "Allowed keys" messages list them.
    required : bool
        Whether a definition must have the table.
    per_point : bool
        Whether each grid point gets its own copy (the point's parameters).
    sweepable : bool
        Whether ``[grid]`` and ``[[zip]]`` may vary its keys.
    fixed_keys : tuple of str
        Keys that may not be swept (they change array shapes within one store).
    deep_keys : tuple of str
        Paths below a key that ``[grid]`` may reach, e.g. ``"targets.<i>.radius"``:
        ``<i>`` stands for a list index, any other ``<...>`` for any one name.
    array : bool
        Whether it is written as an array of tables, ``[[name]]``.
    deep_hint, deep_only : str
        How messages list ``deep_keys`` ("Sweepable keys are ... (and <deep_hint>)",
        "is too deep; only <deep_only> reach inside a key.").
    """

    name: str
    keys: tuple[str, ...]
    required: bool = False
    per_point: bool = False
    sweepable: bool = False
    fixed_keys: tuple[str, ...] = ()
    deep_keys: tuple[str, ...] = ()
    array: bool = False
    deep_hint: str = ""
    deep_only: str = ""
