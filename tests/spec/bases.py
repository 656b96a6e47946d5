"""Definitions the tests of ``sweep.spec`` start from and edit (as TOML documents),
the example file, and the file name their messages show.
"""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

QUICKSTART = Path(__file__).resolve().parents[2] / "sweeps" / "quickstart.toml"
#: The file name parse(...) gives a definition: every message must start with it.
SOURCE = "bad.toml"

#: 1-D interval (0, 1), both ends absorbing.
LINE: dict[str, Any] = {
    "sweep": {"name": "line", "seed": 7, "walkers": 1000, "chunk": 500},
    "motion": {"dimension": 1, "diffusivity": 0.5, "start": [0.3]},
    "time": {"dt": 1e-3, "horizon": 4.0},
    "domain": {
        "shape": "box",
        "lower": [0.0],
        "upper": [1.0],
        "walls": {"x_lower": "absorbing", "x_upper": "absorbing"},
    },
}

#: Unit square, absorbing in x, reflecting in y, one absorbing target.
PLANE: dict[str, Any] = {
    "sweep": {"name": "plane", "seed": 11, "walkers": 2000},
    "motion": {
        "dimension": 2,
        "diffusivity": 0.5,
        "drift": [0.0, 0.0],
        "start": [0.25, 0.5],
    },
    "time": {"dt": 1e-3, "horizon": 4.0},
    "domain": {
        "shape": "box",
        "lower": [0.0, 0.0],
        "upper": [1.0, 1.0],
        "walls": {
            "x_lower": "absorbing",
            "x_upper": "absorbing",
            "y_lower": "reflecting",
            "y_upper": "reflecting",
        },
        "targets": [{"center": [0.75, 0.5], "radius": 0.1}],
    },
}

#: Unit disk with an absorbing surface.
DISK: dict[str, Any] = {
    "sweep": {"name": "disk", "seed": 3, "walkers": 500},
    "motion": {"dimension": 2, "diffusivity": 1.0, "start": [0.5, 0.0]},
    "time": {"dt": 1e-3, "horizon": 2.0},
    "domain": {
        "shape": "ball",
        "center": [0.0, 0.0],
        "radius": 1.0,
        "wall": "absorbing",
    },
}

#: Half-line (0, inf) with an absorbing origin.
HALF_LINE: dict[str, Any] = copy.deepcopy(LINE)
HALF_LINE["domain"] |= {"upper": ["inf"], "walls": {"x_lower": "absorbing"}}

#: Unit cube, every face absorbing, no targets.
CUBE: dict[str, Any] = {
    "sweep": {"name": "cube", "seed": 5, "walkers": 100},
    "motion": {"dimension": 3, "diffusivity": 1.0, "start": [0.5, 0.5, 0.5]},
    "time": {"dt": 1e-3, "horizon": 1.0},
    "domain": {
        "lower": [0.0, 0.0, 0.0],
        "upper": [1.0, 1.0, 1.0],
        "walls": {f"{a}_{s}": "absorbing" for a in "xyz" for s in ("lower", "upper")},
    },
}

OCCUPANCY = {"times": [0.5, 2.0], "bins": 10}
