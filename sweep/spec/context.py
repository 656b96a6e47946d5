"""Where a message points: the file, the key path and the grid point being read.

Every reader of the definition receives one :class:`Context`. It builds the one-line
:class:`SpecError` messages (``<file>: [<key>] <what is wrong>`` plus, inside a grid,
`` (at point <i>: <swept values>)``), checks a table's keys against the allowed ones
(with a "Did you mean" hint), and shows values the way they are written in TOML.
"""

from __future__ import annotations

import difflib
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from sweep.errors import SpecError


@dataclass
class Context:
    """The file being read and, while a grid point is read, which point it is.

    Attributes
    ----------
    source : str
        Path of the definition file (or ``"<string>"``), first in every message.
    point : str
        Appended to messages while one grid point is read, e.g.
        ``" (at point 3: motion.diffusivity = -1.0)"``; empty otherwise.
    origin : dict of str to str
        Each swept key's table, ``"grid"`` or ``"zip #<n>"`` (for messages).
    """

    source: str
    point: str = ""
    origin: dict[str, str] = field(default_factory=dict)

    def fail(self, key: str, message: str) -> SpecError:
        """The error for dotted ``key``: ``<file>: [<key>] <message><point>``."""
        return SpecError(f"{self.source}: [{key}] {message}{self.point}")

    def keys(
        self, table: Mapping[str, Any], allowed: Sequence[str], where: str
    ) -> None:
        """Refuse a key of ``table`` (the table at dotted ``where``) not in ``allowed``."""
        for key in table:
            if key not in allowed:
                hint = difflib.get_close_matches(key, allowed, n=1, cutoff=0.5)
                maybe = f" Did you mean {hint[0]!r}?" if hint else ""
                place = "at the top level" if not where else f"in [{where}]"
                raise SpecError(
                    f"{self.source}: unknown key {key!r} {place}."
                    f" Allowed keys: {', '.join(allowed)}.{maybe}{self.point}"
                )

    def table(self, raw: Mapping[str, Any], key: str, where: str) -> dict[str, Any]:
        """``raw[key]``, which must be a table (an empty one when absent)."""
        value = raw.get(key, {})
        if not isinstance(value, dict):
            raise self.fail(
                f"{where}.{key}" if where else key,
                f"must be a table; got {toml_text(value)}.",
            )
        return value

    def required(self, table: Mapping[str, Any], key: str, where: str) -> Any:
        """``table[key]``, refusing its absence (``where`` names the table)."""
        if key not in table:
            raise SpecError(
                f"{self.source}: [{where}] is missing the required key {key!r}.{self.point}"
            )
        return table[key]


def toml_text(value: Any) -> str:
    """A value as it would be written in TOML, for messages."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(toml_text(v) for v in value) + "]"
    if isinstance(value, dict):
        if not value:
            return "{}"
        return (
            "{ " + ", ".join(f"{k} = {toml_text(v)}" for k, v in value.items()) + " }"
        )
    return str(value)


def short_int(value: int) -> str:
    """A whole number for messages, cut short when it has more than 20 digits."""
    text = str(value)
    return text if len(text) <= 20 else f"{text[:6]}...({len(text)} digits)"


def is_index(text: str) -> bool:
    """Whether a part of a dotted key is a list index (ASCII digits only)."""
    return text.isascii() and text.isdigit()


def listed(items: Sequence[str]) -> str:
    """``"a, b and c"``: items joined for a sentence."""
    if len(items) < 2:
        return "".join(items)
    return f"{', '.join(items[:-1])} and {items[-1]}"
