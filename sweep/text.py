"""Plain-text formatting shared by every stage: tables, durations, byte sizes.

One table layout and one duration formatter for the whole tool, so that ``sweep
status``, ``sweep plan``, the progress line and ``sweep bench`` read alike. Nothing
here knows about sweeps: cells come in as strings, numbers as floats.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Literal


def format_table(rows: Sequence[Sequence[str]]) -> str:
    """Rows of text cells as left-aligned columns two spaces apart.

    Parameters
    ----------
    rows : sequence of sequences of str
        The first row is the header; every row has the header's number of cells.

    Returns
    -------
    str
        One line per row, trailing blanks removed, no final newline.
    """
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    return "\n".join(
        "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows
    )


def format_duration(seconds: float, style: Literal["words", "clock"] = "words") -> str:
    """A duration for people to read.

    Parameters
    ----------
    seconds : float
        The duration, s; not finite gives ``"?"``.
    style : {"words", "clock"}
        ``"words"``: the largest fitting unit, e.g. ``"45 s"``, ``"12 min"``,
        ``"3.5 h"``, ``"2.1 days"`` (estimates); ``"clock"``: ``"mm:ss"`` or
        ``"h:mm:ss"`` (a running count, the progress line).
    """
    if not math.isfinite(seconds):
        return "?"
    if style == "clock":
        s = int(round(seconds))
        h, rem = divmod(s, 3600)
        m, sec = divmod(rem, 60)
        return f"{h}:{m:02d}:{sec:02d}" if h else f"{m:02d}:{sec:02d}"
    if seconds < 120:
        return f"{seconds:.0f} s"
    if seconds < 7200:
        return f"{seconds / 60:.0f} min"
    if seconds < 172800:
        return f"{seconds / 3600:.1f} h"
    return f"{seconds / 86400:.1f} days"


def format_bytes(n: float) -> str:
    """A byte count in binary units, three significant digits (``"1.5 MiB"``)."""
    for unit in ("B", "KiB", "MiB", "GiB", "TiB"):
        if n < 1024 or unit == "TiB":
            return f"{n:.3g} {unit}"
        n /= 1024
    return f"{n:.3g} PiB"
