"""Loading: a definition file or its text in, a validated :class:`Sweep` out.

Reading the file (missing, a directory, not UTF-8), parsing the TOML (syntax errors
with the offending line, nesting deeper than :data:`MAX_NESTING`), and the warning
for repeated grid points. Nothing read from a file is evaluated: values are TOML data.
"""

from __future__ import annotations

import dataclasses
import json
import re
import tomllib
import warnings
from pathlib import Path
from typing import Any

from sweep.errors import SpecError, SweepWarning
from sweep.spec.context import Context
from sweep.spec.definition import read_sweep
from sweep.spec.model import Sweep

#: Tables and lists nest at most this deep in a definition (the deepest legal use,
#: a list of points in a grid of a vector key, nests 4).
MAX_NESTING = 16


def load_spec(path: str | Path) -> Sweep:
    """Read and validate a sweep definition file.

    Parameters
    ----------
    path : str or Path
        A TOML file laid out as in the design's "Sweep definition".

    Returns
    -------
    Sweep

    Raises
    ------
    SpecError
        With one message naming the file, the key, the value and what is allowed.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise SpecError(f"{path}: no such sweep definition file.") from None
    except IsADirectoryError:
        raise SpecError(f"{path}: is a directory; expected a TOML file.") from None
    except UnicodeDecodeError as err:
        raise SpecError(f"{path}: not UTF-8 text ({err.reason}).") from None
    except OSError as err:
        raise SpecError(f"{path}: cannot be read ({err.strerror}).") from None
    return parse_spec(text, source=str(path))


def parse_spec(text: str, source: str = "<string>") -> Sweep:
    """Validate the TOML ``text`` of a sweep definition (see :func:`load_spec`)."""
    too_deep = SpecError(
        f"{source}: tables or lists are nested too deeply (more than {MAX_NESTING} "
        f"levels); a sweep definition nests at most a few (a list of points inside "
        f"[grid]). Check for runaway brackets or braces."
    )
    try:
        raw = tomllib.loads(text)
    except RecursionError:  # the TOML parser itself recurses per level
        raise too_deep from None
    except tomllib.TOMLDecodeError as err:
        where = ""
        found = re.search(r"line (\d+)", str(err))
        if found:
            lines = text.splitlines()
            number = int(found.group(1))
            if 0 < number <= len(lines):
                where = f"\n  line {number}: {lines[number - 1].strip()}"
        raise SpecError(f"{source}: not valid TOML: {err}.{where}") from None
    if _nesting(raw) > MAX_NESTING:
        raise too_deep
    sweep = read_sweep(Context(source), raw)
    _warn_duplicates(sweep)
    return dataclasses.replace(sweep, text=text)


def _nesting(value: Any) -> int:
    """How deep lists and tables nest in ``value`` (without recursion)."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if depth > MAX_NESTING:
            break
        if isinstance(item, dict):
            stack += [(v, depth + 1) for v in item.values()]
        elif isinstance(item, list):
            stack += [(v, depth + 1) for v in item]
    return deepest


def _warn_duplicates(sweep: Sweep) -> None:
    """Warn when grid points repeat: they simulate bit-identical walkers."""
    first: dict[str, int] = {}
    repeats: list[tuple[int, int]] = []
    for index, values in enumerate(sweep.canonical["values"]):
        key = json.dumps(values)
        if key in first:
            repeats.append((first[key], index))
        else:
            first.setdefault(key, index)
    if not repeats:
        return
    shown = ", ".join(f"{b} repeats {a}" for a, b in repeats[:5])
    more = f" and {len(repeats) - 5} more" if len(repeats) > 5 else ""
    warnings.warn(
        f"{sweep.source}: [grid] {len(repeats)} point(s) repeat an earlier point "
        f"({shown}{more}); a repeated point simulates bit-identical walkers (its "
        f"random stream depends only on its parameters), so it adds no information. "
        f"Remove the repeated values.",
        SweepWarning,
        stacklevel=3,
    )
