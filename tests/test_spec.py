"""Tests of ``sweep.spec``: the TOML sweep definition parser.

Three parts: a table of bad definitions with the message each must give, positive tests
of what a valid definition turns into, and Hypothesis fuzzing (the parser never raises
anything but :class:`SpecError`). Known parser bugs are ``xfail(strict=True)`` tests at
the end of the file.
"""

from __future__ import annotations

import copy
import datetime
import math
import re
import tomllib
import warnings
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sweep.errors import SpecError, SweepWarning
from sweep.spec import (
    DEFAULT_SURVIVAL_POINTS,
    Sweep,
    Timing,
    auto_chunk,
    load_spec,
    parse_spec,
)

QUICKSTART = Path(__file__).resolve().parent.parent / "sweeps" / "quickstart.toml"
SOURCE = "bad.toml"

# --------------------------------------------------------------------------- helpers

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+\Z")


def _toml_string(text: str) -> str:
    """A TOML basic string; everything outside printable ASCII is \\U-escaped."""
    out = ['"']
    for char in text:
        if char in '"\\':
            out.append("\\" + char)
        elif 0x20 <= ord(char) < 0x7F:
            out.append(char)
        else:
            out.append(f"\\U{ord(char):08X}")
    out.append('"')
    return "".join(out)


def _toml_key(key: str) -> str:
    return key if _BARE_KEY.match(key) else _toml_string(key)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(
            f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()
        )
        return "{ " + items + " }" if items else "{}"
    if isinstance(value, datetime.date | datetime.time):  # datetime is a date
        return value.isoformat()
    raise TypeError(f"not TOML-able: {value!r}")


def _is_table_array(value: Any) -> bool:
    return (
        isinstance(value, list)
        and bool(value)
        and all(isinstance(v, dict) for v in value)
    )


def dumps(doc: dict[str, Any]) -> str:
    """Minimal TOML writer: top-level tables become [headers], the rest is inline."""
    lines: list[str] = []
    for key, value in doc.items():
        if not isinstance(value, dict) and not _is_table_array(value):
            lines.append(f"{_toml_key(key)} = {_toml_value(value)}")
    for key, value in doc.items():
        if isinstance(value, dict):
            lines.append(f"[{_toml_key(key)}]")
            lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()]
        elif _is_table_array(value):
            for table in value:
                lines.append(f"[[{_toml_key(key)}]]")
                lines += [
                    f"{_toml_key(k)} = {_toml_value(v)}" for k, v in table.items()
                ]
    return "\n".join(lines) + "\n"


DELETE = object()


def edited(base: dict[str, Any], changes: dict[Any, Any]) -> dict[str, Any]:
    """A deep copy of ``base`` with ``changes`` applied.

    Keys of ``changes`` are dotted strings or tuples of parts (use a tuple when a part
    itself contains dots, e.g. ``("grid", "motion.diffusivity")``); missing tables are
    created; the value ``DELETE`` removes the key.
    """
    doc = copy.deepcopy(base)
    for path, value in changes.items():
        parts = path if isinstance(path, tuple) else tuple(path.split("."))
        node: Any = doc
        for part in parts[:-1]:
            node = node[part] if isinstance(node, list) else node.setdefault(part, {})
        if value is DELETE:
            del node[parts[-1]]
        else:
            node[parts[-1]] = value
    return doc


def spec(base: dict[str, Any], **changes: Any) -> str:
    """TOML text of ``base`` with ``changes`` (``__`` in a keyword stands for ``.``)."""
    return dumps(edited(base, {k.replace("__", "."): v for k, v in changes.items()}))


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
HALF_LINE: dict[str, Any] = edited(
    LINE, {"domain.upper": ["inf"], "domain.walls": {"x_lower": "absorbing"}}
)

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


def parse(text: str) -> Sweep:
    return parse_spec(text, source=SOURCE)


# --------------------------------------------------------------------------- bad inputs


def bad(case_id: str, text: str, *fragments: str) -> Any:
    return pytest.param(text, fragments, id=case_id)


BAD_INPUTS = [
    # --- TOML syntax
    bad("toml-unclosed-header", "[sweep\nname = 'x'\n", "not valid TOML"),
    bad(
        "toml-duplicate-key",
        "[sweep]\nseed = 1\nseed = 2\n",
        "not valid TOML",
        "line 3",
    ),
    bad("toml-missing-value", "[sweep]\nseed =\n", "not valid TOML"),
    bad("toml-unterminated-string", '[sweep]\nname = "abc\n', "not valid TOML"),
    bad("toml-python-none", "[sweep]\nseed = None\n", "not valid TOML"),
    # --- wrong types
    bad(
        "seed-string",
        spec(LINE, sweep__seed="1"),
        "[sweep.seed] must be a whole number",
    ),
    bad(
        "walkers-bool",
        spec(LINE, sweep__walkers=True),
        "[sweep.walkers] must be a whole number; got true.",
    ),
    bad(
        "walkers-float",
        spec(LINE, sweep__walkers=1e5),
        "[sweep.walkers] must be a whole number; got 100000.0.",
    ),
    bad(
        "dimension-bool",
        spec(LINE, motion__dimension=True),
        "[motion.dimension] must be a whole number; got true.",
    ),
    bad(
        "dimension-float",
        spec(LINE, motion__dimension=1.0),
        "[motion.dimension] must be a whole number; got 1.0.",
    ),
    bad(
        "diffusivity-string",
        spec(LINE, motion__diffusivity="0.5"),
        '[motion.diffusivity] must be a number; got "0.5".',
    ),
    bad(
        "diffusivity-bool",
        spec(LINE, motion__diffusivity=True),
        "[motion.diffusivity] must be a number; got true.",
    ),
    bad(
        "dt-bool",
        spec(LINE, time__dt=False),
        "[time.dt] must be a number; got false.",
    ),
    bad(
        "horizon-list",
        spec(LINE, time__horizon=[4.0]),
        "[time.horizon] must be a number; got [4.0].",
    ),
    bad(
        "start-bool-in-list",
        spec(LINE, motion__start=[True]),
        "[motion.start] must be a number; got true.",
    ),
    bad(
        "name-number",
        spec(LINE, sweep__name=3),
        "[sweep.name] must be a non-empty string; got 3.",
    ),
    bad(
        "name-blank",
        spec(LINE, sweep__name="  "),
        '[sweep.name] must be a non-empty string; got "  ".',
    ),
    bad(
        "description-number",
        spec(LINE, sweep__description=1),
        "[sweep.description] must be a string; got 1.",
    ),
    bad(
        "per-walker-string",
        spec(LINE, record={"per_walker": "yes"}),
        '[record.per_walker] must be true or false; got "yes".',
    ),
    bad(
        "monitoring-unknown",
        spec(LINE, time__monitoring="midpoint"),
        "[time.monitoring] must be 'bridge' or 'endpoint'; got \"midpoint\".",
    ),
    bad(
        "shape-unknown",
        spec(LINE, domain__shape="sphere"),
        "[domain.shape] must be 'box' or 'ball'; got \"sphere\".",
    ),
    bad(
        "start-unknown-word",
        spec(PLANE, motion__start="center"),
        '[motion.start] must be a point (list of 2 numbers) or "uniform"; '
        'got "center".',
    ),
    # --- list (or scalar) where a table belongs
    bad(
        "motion-list",
        spec(LINE, motion=[1, 2]),
        "[motion] must be a table; got [1, 2].",
    ),
    bad(
        "sweep-array-of-tables",
        spec(LINE, sweep=[{"seed": 1}]),
        "[sweep] must be a table; got [{ seed = 1 }].",
    ),
    bad("record-number", spec(LINE, record=1), "[record] must be a table; got 1."),
    bad("grid-list", spec(LINE, grid=[1.0]), "[grid] must be a table; got [1.0]."),
    bad(
        "walls-list",
        spec(LINE, domain__walls=["absorbing", "absorbing"]),
        '[domain.walls] must be a table; got ["absorbing", "absorbing"].',
    ),
    bad(
        "survival-list",
        spec(LINE, record={"survival": [1.0, 11]}),
        "[record.survival] must be a table { stop, points }; got [1.0, 11].",
    ),
    bad(
        "occupancy-number",
        spec(LINE, record={"occupancy": 3}),
        "[record.occupancy] must be a table { times, bins }; got 3.",
    ),
    bad(
        "targets-table",
        spec(PLANE, domain__targets={"center": [0.5, 0.5], "radius": 0.1}),
        "[domain.targets] must be a list of tables; "
        "got { center = [0.5, 0.5], radius = 0.1 }.",
    ),
    bad(
        "description-table",
        spec(LINE, sweep__description={"text": "x", "ok": False}),
        '[sweep.description] must be a string; got { text = "x", ok = false }.',
    ),
    bad(
        "per-walker-list-of-bools",
        spec(LINE, record={"per_walker": [True, False]}),
        "[record.per_walker] must be true or false; got [true, false].",
    ),
    bad(
        "zip-value-table",
        spec(LINE, zip=[{"time.dt": {"a": [True, "b", math.inf]}}]),
        '[zip #1.time.dt] must be a non-empty list of values; got { a = [true, "b", '
        "inf] }.",
    ),
    bad(
        "target-number",
        spec(PLANE, domain__targets=[0.5]),
        "[domain.targets.0] must be a table { center = [...], radius = ... }; got 0.5.",
    ),
    bad(
        "zip-number",
        spec(LINE, zip=3),
        "[zip] must be written as [[zip]] tables of lists of equal length.",
    ),
    # --- unknown keys at every level, with the nearest valid key suggested
    bad(
        "unknown-top-level",
        spec(LINE, grids={}),
        "unknown key 'grids' at the top level. Allowed keys: sweep, motion, time, domain, "
        "record, force, grid, zip.",
        "Did you mean 'grid'?",
    ),
    bad(
        "unknown-sweep-key",
        spec(LINE, sweep__seeds=1),
        "unknown key 'seeds' in [sweep]",
        "Did you mean 'seed'?",
    ),
    bad(
        "unknown-motion-key",
        spec(LINE, motion__difusivity=0.5),
        "unknown key 'difusivity' in [motion]",
        "Did you mean 'diffusivity'?",
    ),
    bad(
        "unknown-time-key",
        spec(LINE, time__horizn=4.0),
        "unknown key 'horizn' in [time]",
        "Did you mean 'horizon'?",
    ),
    bad(
        "unknown-domain-key",
        spec(LINE, domain__uper=[1.0]),
        "unknown key 'uper' in [domain]",
        "Did you mean 'upper'?",
    ),
    bad(
        "unknown-wall-name",
        spec(LINE, domain__walls={"x_lo": "absorbing", "x_upper": "absorbing"}),
        "unknown key 'x_lo' in [domain.walls]",
        "Did you mean 'x_lower'?",
    ),
    bad(
        "unknown-record-key",
        spec(LINE, record={"survivl": {}}),
        "unknown key 'survivl' in [record]",
        "Did you mean 'survival'?",
    ),
    bad(
        "unknown-survival-key",
        spec(LINE, record={"survival": {"point": 11}}),
        "unknown key 'point' in [record.survival]",
        "Did you mean 'points'?",
    ),
    bad(
        "unknown-occupancy-key",
        spec(LINE, record={"occupancy": {"times": [1.0], "bin": 8}}),
        "unknown key 'bin' in [record.occupancy]",
        "Did you mean 'bins'?",
    ),
    bad(
        "unknown-target-key",
        spec(PLANE, domain__targets=[{"centre": [0.75, 0.5], "radius": 0.1}]),
        "unknown key 'centre' in [domain.targets.0]",
        "Did you mean 'center'?",
    ),
    bad(
        "unknown-key-no-suggestion",
        spec(LINE, motion__colour="red"),
        "unknown key 'colour' in [motion]. Allowed keys: dimension, diffusivity, "
        "drift, start.",
    ),
    # --- missing tables and keys
    bad(
        "missing-sweep-table",
        spec(LINE, sweep=DELETE),
        "the table [sweep] is missing",
    ),
    bad(
        "missing-motion-table",
        spec(LINE, motion=DELETE),
        "the table [motion] is missing",
    ),
    bad("missing-time-table", spec(LINE, time=DELETE), "the table [time] is missing"),
    bad(
        "missing-domain-table",
        spec(LINE, domain=DELETE),
        "the table [domain] is missing",
    ),
    bad(
        "missing-seed",
        spec(LINE, sweep__seed=DELETE),
        "[sweep] is missing the required key 'seed'.",
    ),
    bad(
        "missing-walkers",
        spec(LINE, sweep__walkers=DELETE),
        "[sweep] is missing the required key 'walkers'.",
    ),
    bad(
        "missing-dimension",
        spec(LINE, motion__dimension=DELETE),
        "[motion] is missing the required key 'dimension'.",
    ),
    bad(
        "missing-diffusivity",
        spec(LINE, motion__diffusivity=DELETE),
        "[motion] is missing the required key 'diffusivity'.",
    ),
    bad(
        "missing-start",
        spec(LINE, motion__start=DELETE),
        "[motion] is missing the required key 'start'.",
    ),
    bad(
        "missing-dt",
        spec(LINE, time__dt=DELETE),
        "[time] is missing the required key 'dt'.",
    ),
    bad(
        "missing-horizon",
        spec(LINE, time__horizon=DELETE),
        "[time] is missing the required key 'horizon'.",
    ),
    bad(
        "missing-lower",
        spec(LINE, domain__lower=DELETE),
        "[domain] is missing the required key 'lower'.",
    ),
    bad(
        "missing-ball-radius",
        spec(DISK, domain__radius=DELETE),
        "[domain] is missing the required key 'radius'.",
    ),
    bad(
        "missing-ball-wall",
        spec(DISK, domain__wall=DELETE),
        "[domain] is missing the required key 'wall'.",
    ),
    bad(
        "missing-target-radius",
        spec(PLANE, domain__targets=[{"center": [0.75, 0.5]}]),
        "[domain.targets.0] is missing the required key 'radius'.",
    ),
    bad(
        "occupancy-without-times",
        spec(LINE, record={"occupancy": {"bins": 8}}),
        "[record.occupancy] is missing the required key 'times'.",
    ),
    bad(
        "occupancy-without-bins",
        spec(LINE, record={"occupancy": {"times": [1.0]}}),
        "[record.occupancy] is missing the required key 'bins'.",
    ),
    # --- out of range: zero, negative, nan, inf
    bad(
        "diffusivity-zero",
        spec(LINE, motion__diffusivity=0.0),
        "[motion.diffusivity] must be > 0; got 0.0.",
    ),
    bad(
        "diffusivity-negative",
        spec(LINE, motion__diffusivity=-0.5),
        "[motion.diffusivity] must be > 0; got -0.5.",
    ),
    bad(
        "diffusivity-nan",
        spec(LINE, motion__diffusivity=math.nan),
        "[motion.diffusivity] must be a finite number; got nan.",
    ),
    bad(
        "diffusivity-inf",
        spec(LINE, motion__diffusivity=math.inf),
        "[motion.diffusivity] must be finite; got inf.",
    ),
    bad("dt-zero", spec(LINE, time__dt=0.0), "[time.dt] must be > 0; got 0.0."),
    bad(
        "dt-negative", spec(LINE, time__dt=-1e-3), "[time.dt] must be > 0; got -0.001."
    ),
    bad(
        "dt-nan",
        spec(LINE, time__dt=math.nan),
        "[time.dt] must be a finite number; got nan.",
    ),
    bad(
        "horizon-zero",
        spec(LINE, time__horizon=0),
        "[time.horizon] must be > 0; got 0.0.",
    ),
    bad(
        "horizon-negative",
        spec(LINE, time__horizon=-4.0),
        "[time.horizon] must be > 0; got -4.0.",
    ),
    bad(
        "horizon-inf",
        spec(LINE, time__horizon=math.inf),
        "[time.horizon] must be finite; got inf.",
    ),
    bad(
        "horizon-inf-string",
        spec(LINE, time__horizon="inf"),
        "[time.horizon] must be finite; got inf.",
    ),
    bad(
        "horizon-minus-inf",
        spec(LINE, time__horizon=-math.inf),
        "[time.horizon] must be finite; got -inf.",
    ),
    bad(
        "dt-huge-integer",
        spec(LINE, time__dt=10**400),
        "[time.dt] must be a number within +-1.8e308; got 100000...(401 digits).",
    ),
    bad(
        "drift-huge-negative-integer",
        spec(PLANE, motion__drift=[0, -(10**309)]),
        "[motion.drift] must be a number within +-1.8e308; got -10000...(311 digits).",
    ),
    bad(
        "drift-nan",
        spec(PLANE, motion__drift=[0.0, math.nan]),
        "[motion.drift] must be a finite number; got nan.",
    ),
    bad(
        "start-inf",
        spec(HALF_LINE, motion__start=["inf"]),
        "[motion.start] must be finite; got inf.",
    ),
    bad(
        "dt-equals-horizon",
        spec(LINE, time__dt=4.0),
        "[time.dt] must be smaller than time.horizon = 4.0; got 4.0.",
    ),
    bad(
        "dt-above-horizon",
        spec(LINE, time__dt=5.0),
        "[time.dt] must be smaller than time.horizon = 4.0; got 5.0.",
    ),
    bad(
        "too-many-steps",
        spec(LINE, time__dt=1e-300, time__horizon=1.0),
        "[time.horizon] needs more than 2^62 steps of dt = 1e-300.",
    ),
    bad(
        "seed-negative",
        spec(LINE, sweep__seed=-1),
        "[sweep.seed] must be >= 0; got -1.",
    ),
    bad(
        "walkers-zero",
        spec(LINE, sweep__walkers=0),
        "[sweep.walkers] must be >= 1; got 0.",
    ),
    bad(
        "chunk-above-walkers",
        spec(LINE, sweep__chunk=2000),
        "[sweep.chunk] must be from 1 to 1000; got 2000.",
    ),
    bad(
        "dimension-zero",
        spec(LINE, motion__dimension=0),
        "[motion.dimension] must be from 1 to 8; got 0.",
    ),
    bad(
        "dimension-too-large",
        spec(LINE, motion__dimension=9),
        "[motion.dimension] must be from 1 to 8; got 9.",
    ),
    # --- the start point and the targets
    bad(
        "start-outside",
        spec(LINE, motion__start=[1.5]),
        "[motion.start] must lie strictly inside the domain; got [1.5].",
    ),
    bad(
        "start-on-wall",
        spec(LINE, motion__start=[0.0]),
        "[motion.start] must lie strictly inside the domain; got [0.0].",
    ),
    bad(
        "start-outside-ball",
        spec(DISK, motion__start=[0.8, 0.8]),
        "[motion.start] must lie strictly inside the domain; got [0.8, 0.8].",
    ),
    bad(
        "start-on-ball-surface",
        spec(DISK, motion__start=[1.0, 0.0]),
        "[motion.start] must lie strictly inside the domain; got [1.0, 0.0].",
    ),
    bad(
        "start-inside-target",
        spec(PLANE, motion__start=[0.8, 0.5]),
        "[motion.start] lies inside target 0 (center [0.75, 0.5], radius 0.1); "
        "got [0.8, 0.5]. Start outside every target.",
    ),
    bad(
        "start-on-target-surface",
        spec(
            PLANE,
            motion__start=[0.5, 0.5],
            domain__targets=[{"center": [0.75, 0.5], "radius": 0.25}],
        ),
        "[motion.start] lies inside target 0",
    ),
    bad(
        "start-far-outside-ball",
        spec(DISK, motion__start=[1e200, 0.0]),
        "[motion.start] must lie strictly inside the domain; got [1e+200, 0.0].",
    ),
    bad(
        "start-far-outside-ball-negative",
        spec(DISK, motion__start=[-1e300, 1e300]),
        "[motion.start] must lie strictly inside the domain; got [-1e+300, 1e+300].",
    ),
    bad(
        "target-center-far-outside-ball",
        spec(DISK, domain__targets=[{"center": [1e200, 1e200], "radius": 0.1}]),
        "[domain.targets.0.center] must lie inside the domain; got [1e+200, 1e+200].",
    ),
    bad(
        "target-center-outside",
        spec(PLANE, domain__targets=[{"center": [1.5, 0.5], "radius": 0.1}]),
        "[domain.targets.0.center] must lie inside the domain; got [1.5, 0.5].",
    ),
    bad(
        "target-center-outside-ball",
        spec(DISK, domain__targets=[{"center": [0.9, 0.9], "radius": 0.1}]),
        "[domain.targets.0.center] must lie inside the domain; got [0.9, 0.9].",
    ),
    bad(
        "target-radius-zero",
        spec(PLANE, domain__targets=[{"center": [0.75, 0.5], "radius": 0}]),
        "[domain.targets.0.radius] must be > 0; got 0.0.",
    ),
    # --- walls
    bad(
        "wall-for-missing-axis",
        spec(PLANE, domain__walls__z_lower="absorbing"),
        "[domain.walls.z_lower] names axis 'z', but this 2-dimensional domain has only "
        "the axes x, y; remove it or raise motion.dimension.",
    ),
    bad(
        "wall-for-missing-axis-1d",
        spec(LINE, domain__walls__y_upper="reflecting"),
        "[domain.walls.y_upper] names axis 'y', but this 1-dimensional domain has only "
        "the axes x; remove it or raise motion.dimension.",
    ),
    bad(
        "wall-for-missing-axis-x3",
        spec(PLANE, domain__walls__x3_upper="absorbing"),
        "[domain.walls.x3_upper] names axis 'x3', but this 2-dimensional domain has "
        "only the axes x, y;",
    ),
    bad(
        "wall-for-axis-beyond-max-dimension",
        spec(PLANE, domain__walls__x9_lower="absorbing"),
        "unknown key 'x9_lower' in [domain.walls]. Allowed keys: x_lower, x_upper, y_lower, "
        "y_upper.",
    ),
    bad(
        "wall-old-spelling",
        spec(LINE, domain__walls={"x_low": "absorbing", "x_upper": "absorbing"}),
        "[domain.walls.x_low] is the old spelling; walls are named after the lower and "
        "upper keys that place them: write x_lower.",
    ),
    bad(
        "wall-name-without-side",
        spec(PLANE, domain__walls__z="absorbing"),
        "unknown key 'z' in [domain.walls]. Allowed keys: x_lower, x_upper, y_lower, y_upper.",
    ),
    bad(
        "wall-at-infinite-side",
        spec(HALF_LINE, domain__walls__x_upper="absorbing"),
        "[domain.walls.x_upper] is at infinity (domain.upper is inf); remove it.",
    ),
    bad(
        "wall-at-minus-infinity",
        spec(LINE, domain__lower=["-inf"]),
        "[domain.walls.x_lower] is at infinity (domain.lower is -inf); remove it.",
    ),
    bad(
        "wall-kind-missing",
        spec(PLANE, domain__walls__y_upper=DELETE),
        "[domain.walls] must give the kind of wall 'y_upper' "
        '("absorbing" or "reflecting"); got',
    ),
    bad(
        "walls-missing",
        spec(LINE, domain__walls=DELETE),
        "[domain.walls] must give the kind of wall 'x_lower'",
    ),
    bad(
        "wall-kind-unknown",
        spec(LINE, domain__walls__x_lower="sticky"),
        "[domain.walls.x_lower] must be 'absorbing' or 'reflecting'; got \"sticky\".",
    ),
    bad(
        "ball-wall-kind-unknown",
        spec(DISK, domain__wall=True),
        "[domain.wall] must be 'absorbing' or 'reflecting'; got true.",
    ),
    # --- vectors and box/ball geometry
    bad(
        "lower-too-long",
        spec(LINE, domain__lower=[0.0, 0.0]),
        "[domain.lower] must be a list of 1 number (one per axis of a "
        "1-dimensional domain); got [0.0, 0.0].",
    ),
    bad(
        "drift-too-short",
        spec(PLANE, motion__drift=[0.0]),
        "[motion.drift] must be a list of 2 numbers",
    ),
    bad(
        "start-too-long",
        spec(PLANE, motion__start=[0.2, 0.2, 0.2]),
        "[motion.start] must be a list of 2 numbers",
    ),
    bad(
        "upper-scalar-in-2d",
        spec(PLANE, domain__upper=1.0),
        "[domain.upper] must be a list of 2 numbers",
    ),
    bad(
        "target-center-wrong-length",
        spec(PLANE, domain__targets=[{"center": [0.5], "radius": 0.1}]),
        "[domain.targets.0.center] must be a list of 2 numbers",
    ),
    bad(
        "lower-above-upper",
        spec(LINE, domain__lower=[1.0], domain__upper=[0.0]),
        "[domain.lower] must be below domain.upper on every axis; got 1.0 >= 0.0 "
        "on axis x.",
    ),
    bad(
        "lower-equals-upper-y",
        spec(PLANE, domain__upper=[1.0, 0.0]),
        "got 0.0 >= 0.0 on axis y.",
    ),
    bad(
        "ball-in-1d",
        spec(DISK, motion__dimension=1, motion__start=[0.5], domain__center=[0.0]),
        '[domain.shape] "ball" needs motion.dimension >= 2',
    ),
    bad(
        "ball-key-in-box",
        spec(LINE, domain__radius=1.0),
        "[domain.radius] belongs to a ball domain; a box takes lower, upper and walls.",
    ),
    bad(
        "box-key-in-ball",
        spec(DISK, domain__walls={"x_lower": "absorbing"}),
        "[domain.walls] belongs to a box domain; a ball takes center, radius and wall.",
    ),
    bad(
        "ball-radius-negative",
        spec(DISK, domain__radius=-1.0),
        "[domain.radius] must be > 0; got -1.0.",
    ),
    bad(
        "ball-radius-inf",
        spec(DISK, domain__radius=math.inf),
        "[domain.radius] must be finite; got inf.",
    ),
    bad(
        "uniform-start-unbounded",
        spec(HALF_LINE, motion__start="uniform"),
        '[motion.start] "uniform" needs a bounded domain (every side finite)',
    ),
    bad(
        "uniform-start-ball-covered-by-target",
        spec(
            DISK,
            motion__start="uniform",
            domain__targets=[{"center": [0.0, 0.0], "radius": 2.0}],
        ),
        '[motion.start] "uniform" needs free space, but the targets cover (nearly) the '
        "whole domain: none of 4096 evenly scattered sample points is free. Make them "
        "smaller or give a start point.",
    ),
    bad(
        "uniform-start-box-covered-by-target",
        spec(
            PLANE,
            motion__start="uniform",
            domain__targets=[{"center": [0.5, 0.5], "radius": 0.75}],
        ),
        '[motion.start] "uniform" needs free space, but the targets cover (nearly) the '
        "whole domain",
    ),
    bad(
        "uniform-start-interval-covered-by-two-targets",
        spec(
            LINE,
            motion__start="uniform",
            domain__targets=[
                {"center": [0.25], "radius": 0.25},
                {"center": [0.75], "radius": 0.25},
            ],
        ),
        '[motion.start] "uniform" needs free space, but the targets cover (nearly) the '
        "whole domain",
    ),
    bad(
        "uniform-start-covered-at-grid-point",
        spec(
            DISK,
            motion__start="uniform",
            domain__targets=[{"center": [0.0, 0.0], "radius": 0.5}],
            grid={"domain.targets.0.radius": [0.5, 1.5]},
        ),
        '[motion.start] "uniform" needs free space, but the targets cover (nearly) the '
        "whole domain: none of 4096 evenly scattered sample points is free. Make them "
        "smaller or give a start point. (at point 1: domain.targets.0.radius = 1.5)",
    ),
    # --- record
    bad(
        "survival-stop-beyond-horizon",
        spec(LINE, record={"survival": {"stop": 5.0}}),
        "[record.survival.stop] must not exceed time.horizon = 4.0; got 5.0.",
    ),
    bad(
        "survival-stop-beyond-swept-horizon",
        spec(
            LINE,
            record={"survival": {"stop": 3.0}},
            grid={"time.horizon": [4.0, 2.0]},
        ),
        "[record.survival.stop] must not exceed time.horizon = 2.0; got 3.0. "
        "(at point 1: time.horizon = 2.0)",
    ),
    bad(
        "survival-stop-zero",
        spec(LINE, record={"survival": {"stop": 0.0}}),
        "[record.survival.stop] must be > 0; got 0.0.",
    ),
    bad(
        "survival-points-one",
        spec(LINE, record={"survival": {"points": 1}}),
        "[record.survival.points] must be from 2 to 1000000; got 1.",
    ),
    bad(
        "occupancy-time-beyond-horizon",
        spec(LINE, record={"occupancy": {"times": [1.0, 5.0], "bins": 8}}),
        "[record.occupancy.times] must lie within [0, time.horizon = 4.0]; got 5.0.",
    ),
    bad(
        "occupancy-time-negative",
        spec(LINE, record={"occupancy": {"times": [-0.5], "bins": 8}}),
        "[record.occupancy.times] must be >= 0; got -0.5.",
    ),
    bad(
        "occupancy-times-empty",
        spec(LINE, record={"occupancy": {"times": [], "bins": 8}}),
        "[record.occupancy.times] must be a non-empty list; got [].",
    ),
    bad(
        "occupancy-bins-zero",
        spec(LINE, record={"occupancy": {"times": [1.0], "bins": 0}}),
        "[record.occupancy.bins] must be from 1 to 10000000; got 0.",
    ),
    bad(
        "occupancy-too-many-bins-2d",
        spec(PLANE, record={"occupancy": {"times": [1.0], "bins": 5000}}),
        "[record.occupancy.bins] gives more than 10,000,000 bins in all (bins per axis, "
        "to the power 2 of the dimension); at most 10,000,000 are allowed. Got 5000.",
    ),
    bad(
        "occupancy-too-many-bins-1d",
        spec(LINE, record={"occupancy": {"times": [1.0], "bins": 10**7 + 1}}),
        "[record.occupancy.bins] gives more than 10,000,000 bins in all",
        "to the power 1 of the dimension",
    ),
    bad(
        "occupancy-too-many-bins-3d",
        spec(CUBE, record={"occupancy": {"times": [1.0], "bins": 216}}),
        "[record.occupancy.bins] gives more than 10,000,000 bins in all (bins per axis, "
        "to the power 3 of the dimension)",
    ),
    bad(
        "occupancy-bins-zero-2d",
        spec(PLANE, record={"occupancy": {"times": [1.0], "bins": 0}}),
        "[record.occupancy.bins] must be from 1 to 3162; got 0.",
    ),
    bad(
        "occupancy-bins-float",
        spec(PLANE, record={"occupancy": {"times": [1.0], "bins": 8.0}}),
        "[record.occupancy.bins] must be a whole number; got 8.0.",
    ),
    bad(
        "occupancy-unbounded-without-range",
        spec(HALF_LINE, record={"occupancy": OCCUPANCY}),
        "[record.occupancy] needs finite bin ranges; the domain is unbounded, so give "
        "record.occupancy.lower and record.occupancy.upper.",
    ),
    bad(
        "occupancy-unbounded-only-lower",
        spec(HALF_LINE, record={"occupancy": {**OCCUPANCY, "lower": [0.0]}}),
        "[record.occupancy] needs finite bin ranges",
    ),
    bad(
        "occupancy-lower-above-upper",
        spec(LINE, record={"occupancy": {**OCCUPANCY, "lower": [1.0], "upper": [0.0]}}),
        "[record.occupancy.lower] must be below record.occupancy.upper on every axis",
    ),
    # --- [grid] and [[zip]]
    bad(
        "grid-value-not-list",
        spec(LINE, grid={"motion.diffusivity": 0.5}),
        "[grid.motion.diffusivity] must be a non-empty list of values; got 0.5.",
    ),
    bad(
        "grid-value-empty-list",
        spec(LINE, grid={"motion.diffusivity": []}),
        "[grid.motion.diffusivity] must be a non-empty list of values; got [].",
    ),
    bad(
        "grid-sweep-seed",
        spec(LINE, grid={"sweep.seed": [1, 2]}),
        "[grid.sweep.seed] is not a sweepable key.",
    ),
    bad(
        "grid-record-per-walker",
        spec(LINE, grid={"record.per_walker": [True, False]}),
        "[grid.record.per_walker] is not a sweepable key.",
    ),
    bad(
        "grid-section-only",
        spec(LINE, grid={"motion": [1]}),
        "[grid.motion] is not a sweepable key.",
    ),
    bad(
        "grid-unquoted-dotted-key",
        dumps(LINE) + "[grid]\nmotion.diffusivity = [0.5, 1.0]\n",
        "[grid.motion] is a table, not a list: write dotted keys in quotes, e.g. "
        '"motion.diffusivity" = [0.5, 1.0] (without quotes TOML reads the dots as '
        "nested tables).",
    ),
    bad(
        "grid-unquoted-dotted-key-time",
        dumps(LINE) + "[grid]\ntime.dt = [0.1, 0.2]\n",
        "[grid.time] is a table, not a list: write dotted keys in quotes",
    ),
    bad(
        "grid-unquoted-deep-key",
        dumps(PLANE) + "[grid]\ndomain.targets.0.radius = [0.1, 0.2]\n",
        "[grid.domain] is a table, not a list: write dotted keys in quotes",
    ),
    bad(
        "grid-inline-table-value",
        spec(LINE, grid={"motion.diffusivity": {"values": [0.5]}}),
        "[grid.motion.diffusivity] must be a non-empty list of values; got { values = [0.5] }.",
    ),
    bad(
        "grid-key-typo",
        spec(LINE, grid={"motion.difusivity": [0.5, 1.0]}),
        "[grid.motion.difusivity] names no key of [motion]",
        "Did you mean 'motion.diffusivity'?",
    ),
    bad(
        "grid-motion-dimension",
        spec(LINE, grid={"motion.dimension": [1, 2]}),
        "[grid.motion.dimension] cannot be swept: it changes array shapes",
    ),
    bad(
        "grid-domain-shape",
        spec(LINE, grid={"domain.shape": ["box", "ball"]}),
        "[grid.domain.shape] cannot be swept: it changes array shapes",
    ),
    bad(
        "grid-too-deep",
        spec(PLANE, grid={"motion.drift.0": [0.0, 1.0]}),
        "[grid.motion.drift.0] is too deep",
    ),
    bad(
        "grid-wall-key-into-walls-string",
        spec(LINE, domain__walls="none", grid={"domain.walls.x_lower": ["absorbing"]}),
        '[grid.domain.walls.x_lower] reaches into domain.walls, which is "none" and '
        "not a table or list.",
    ),
    bad(
        "grid-target-key-into-number-target",
        spec(PLANE, domain__targets=[5], grid={"domain.targets.0.radius": [0.1]}),
        "[grid.domain.targets.0.radius] reaches into domain.targets.0, which is 5 and "
        "not a table or list.",
    ),
    bad(
        "grid-target-key-into-targets-string",
        spec(PLANE, domain__targets="all", grid={"domain.targets.0.radius": [0.1]}),
        "[grid.domain.targets.0.radius] reaches into domain.targets, which is "
        '"all" and not a table or list.',
    ),
    bad(
        "grid-target-index-beyond-end",
        spec(PLANE, grid={"domain.targets.1.radius": [0.1, 0.2]}),
        "[grid.domain.targets.1.radius] reaches entry 1 of domain.targets, which has "
        "1 entry.",
    ),
    bad(
        "grid-target-index-without-targets",
        spec(LINE, grid={"domain.targets.0.center": [[0.5]]}),
        "[grid.domain.targets.0.center] reaches entry 0 of domain.targets, which has "
        "0 entries.",
    ),
    bad(
        "grid-target-index-superscript-digit",
        spec(PLANE, grid={"domain.targets.\u00b2.radius": [0.1]}),
        "[grid.domain.targets.\u00b2.radius] ",
    ),
    bad(
        "grid-target-index-fullwidth-digit",
        spec(PLANE, grid={"domain.targets.\uff10.radius": [0.1]}),
        "[grid.domain.targets.\uff10.radius] ",
    ),
    bad(
        "grid-date-value",
        dumps(LINE) + '[grid]\n"motion.diffusivity" = [1979-05-27]\n',
        "[motion.diffusivity] must be a number; got 1979-05-27. "
        "(at point 0: motion.diffusivity = 1979-05-27)",
    ),
    bad(
        "swept-twice-grid-and-zip",
        spec(
            LINE,
            grid={"motion.diffusivity": [0.5, 1.0]},
            zip=[{"motion.diffusivity": [0.5, 1.0]}],
        ),
        "[zip #1.motion.diffusivity] is swept twice (also as 'motion.diffusivity')",
    ),
    bad(
        "swept-twice-nested",
        spec(
            LINE,
            grid={
                "domain.walls": [{"x_lower": "absorbing", "x_upper": "absorbing"}],
                "domain.walls.x_lower": ["reflecting"],
            },
        ),
        "[grid.domain.walls.x_lower] is swept twice (also as 'domain.walls')",
    ),
    bad(
        "zip-unequal-lengths",
        spec(
            LINE,
            zip=[{"motion.diffusivity": [0.5, 1.0], "time.dt": [1e-3, 2e-3, 3e-3]}],
        ),
        "[zip #1] lists must all have the same length; got motion.diffusivity: 2, "
        "time.dt: 3.",
    ),
    bad(
        "zip-second-group-unequal",
        spec(
            LINE,
            zip=[
                {"motion.diffusivity": [0.5, 1.0]},
                {"time.dt": [1e-3], "time.horizon": [2.0, 4.0]},
            ],
        ),
        "[zip #2] lists must all have the same length",
    ),
    bad(
        "zip-empty-group",
        dumps(LINE) + "[[zip]]\n",
        "[zip #1] is empty; give it at least one key.",
    ),
    bad(
        "zip-value-not-list",
        spec(LINE, zip=[{"time.dt": 1e-3}]),
        "[zip #1.time.dt] must be a non-empty list of values; got 0.001.",
    ),
    bad(
        "grid-point-invalid",
        spec(LINE, grid={"motion.diffusivity": [1.0, -1.0]}),
        "[motion.diffusivity] must be > 0; got -1.0. "
        "(at point 1: motion.diffusivity = -1.0)",
    ),
    bad(
        "grid-product-point-invalid",
        spec(LINE, grid={"time.horizon": [4.0, 0.5], "time.dt": [0.1, 1.0]}),
        "[time.dt] must be smaller than time.horizon = 0.5; got 1.0. "
        "(at point 3: time.horizon = 0.5, time.dt = 1.0)",
    ),
    bad(
        "zip-point-invalid",
        spec(LINE, zip=[{"motion.start": [[0.5], [1.5]], "time.dt": [1e-3, 2e-3]}]),
        "[motion.start] must lie strictly inside the domain; got [1.5]. "
        "(at point 1: motion.start = [1.5], time.dt = 0.002)",
    ),
    bad(
        "grid-wall-invalid",
        spec(LINE, grid={"domain.walls.x_lower": ["absorbing", "open"]}),
        "[domain.walls.x_lower] must be 'absorbing' or 'reflecting'; got \"open\". "
        '(at point 1: domain.walls.x_lower = "open")',
    ),
    bad(
        "grid-target-count-changes",
        spec(
            PLANE,
            grid={
                "domain.targets": [
                    [{"center": [0.75, 0.5], "radius": 0.1}],
                    [
                        {"center": [0.75, 0.5], "radius": 0.1},
                        {"center": [0.5, 0.75], "radius": 0.1},
                    ],
                ]
            },
        ),
        "point 1 (domain.targets = ",
        "has 2 targets but point 0 has 1; the number of targets fixes wall indices "
        "and cannot change within one store.",
    ),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    with pytest.raises(SpecError, match=re.escape(fragments[0])) as info:
        parse_spec(text, source=SOURCE)
    message = str(info.value)
    assert SOURCE in message
    for fragment in fragments[1:]:
        assert fragment in message


def test_bad_inputs_table_is_large_and_ids_are_unique() -> None:
    ids = [case.id for case in BAD_INPUTS]
    assert len(ids) >= 45
    assert len(set(ids)) == len(ids)


def test_bad_inputs_table_bases_are_valid() -> None:
    for base in (LINE, PLANE, DISK, HALF_LINE):
        assert isinstance(parse(dumps(base)), Sweep)


@pytest.mark.parametrize(
    ("value", "shown"),
    [
        pytest.param(True, "true", id="true"),
        pytest.param(False, "false", id="false"),
        pytest.param(0, "0", id="int"),
        pytest.param(-(2**63), str(-(2**63)), id="int-min"),
        pytest.param(0.5, "0.5", id="float"),
        pytest.param(1e300, "1e+300", id="float-exponent"),
        pytest.param(math.inf, "inf", id="inf"),
        pytest.param(-math.inf, "-inf", id="minus-inf"),
        pytest.param(math.nan, "nan", id="nan"),
        pytest.param([], "[]", id="empty-list"),
        pytest.param([1.0, 2.0], "[1.0, 2.0]", id="list"),
        pytest.param([True, [1, "a"]], '[true, [1, "a"]]', id="nested-list"),
        pytest.param({}, "{}", id="empty-table"),
        pytest.param({"k": "v"}, '{ k = "v" }', id="table"),
        pytest.param(
            {"a": [False], "b": {"c": 1}}, "{ a = [false], b = { c = 1 } }", id="nested"
        ),
    ],
)
def test_got_values_are_shown_as_toml(value: Any, shown: str) -> None:
    text = spec(LINE, sweep__description=value)
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value) == (
        f"{SOURCE}: [sweep.description] must be a string; got {shown}."
    )


@pytest.mark.parametrize(
    ("text", "shown"),
    [
        pytest.param("text", '"text"', id="plain"),
        pytest.param("", '""', id="empty"),
        pytest.param('say "hi"', '"say \\"hi\\""', id="double-quotes"),
        pytest.param("it's", '"it\'s"', id="single-quote"),
        pytest.param("a\\b", '"a\\\\b"', id="backslash"),
        pytest.param("tab\there", '"tab\\there"', id="tab"),
    ],
)
def test_got_strings_are_shown_as_toml_basic_strings(text: str, shown: str) -> None:
    with pytest.raises(SpecError) as info:
        parse(spec(LINE, motion__diffusivity=text))
    message = str(info.value)
    assert message == f"{SOURCE}: [motion.diffusivity] must be a number; got {shown}."
    got = message.removeprefix(f"{SOURCE}: [motion.diffusivity] must be a number; got ")
    assert tomllib.loads(f"v = {got[:-1]}")["v"] == text


def test_got_values_in_point_context_are_shown_as_toml() -> None:
    text = spec(
        LINE,
        grid={"time.monitoring": ["bridge", "end"], "domain.upper": [[1.0]]},
    )
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).endswith(
        '(at point 1: time.monitoring = "end", domain.upper = [1.0])'
    )


def test_bad_inputs_show_no_python_reprs() -> None:
    for case in BAD_INPUTS:
        text, _ = case.values
        with pytest.raises(SpecError) as info:
            parse(text)
        message = str(info.value)
        assert not re.search(r"got (True|False|None|'|\[')", message), case.id
        assert "{'" not in message, case.id


def test_parse_spec_error_names_grid_point_index() -> None:
    text = spec(LINE, grid={"motion.diffusivity": [1.0, -1.0]})
    with pytest.raises(SpecError) as info:
        parse(text)
    assert "point 1" in str(info.value)
    assert "point 0" not in str(info.value)


def test_parse_spec_default_source_is_named() -> None:
    with pytest.raises(SpecError, match=re.escape("<string>: the table [sweep]")):
        parse_spec("")


def test_load_spec_missing_file_names_path(tmp_path: Path) -> None:
    path = tmp_path / "absent.toml"
    with pytest.raises(SpecError, match=re.escape(f"{path}: no such sweep")):
        load_spec(path)


def test_load_spec_directory_names_path(tmp_path: Path) -> None:
    with pytest.raises(SpecError, match="is a directory"):
        load_spec(tmp_path)


def test_load_spec_not_utf8_names_path(tmp_path: Path) -> None:
    path = tmp_path / "latin1.toml"
    path.write_bytes(dumps(LINE).replace("line", "l\u00efne").encode("latin-1"))
    with pytest.raises(SpecError, match=re.escape(f"{path}: not UTF-8 text")):
        load_spec(path)


def test_load_spec_errors_name_the_file(tmp_path: Path) -> None:
    path = tmp_path / "typo.toml"
    path.write_text(spec(LINE, motion__difusivity=0.5))
    with pytest.raises(SpecError, match=re.escape(f"{path}: unknown key 'difusivity'")):
        load_spec(path)


# --------------------------------------------------------------------------- valid inputs


def test_load_spec_quickstart() -> None:
    # Expectations come from the file itself: the example's numbers may be retuned.
    doc = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))
    sweep = load_spec(QUICKSTART)
    assert sweep.name == doc["sweep"]["name"]
    assert sweep.seed == doc["sweep"]["seed"]
    assert sweep.walkers == doc["sweep"]["walkers"]
    assert sweep.chunk == doc["sweep"].get("chunk", auto_chunk(sweep.walkers))
    assert sweep.n_chunks == -(-sweep.walkers // sweep.chunk)
    assert sweep.source == str(QUICKSTART)
    assert sweep.swept == tuple(doc.get("grid", {}))
    assert sweep.n_points == math.prod(len(v) for v in doc.get("grid", {}).values())
    assert sweep.dimension == doc["motion"]["dimension"] == 1
    point = sweep.points[0]
    assert point.timing.dt == doc["time"]["dt"]
    assert point.timing.horizon == doc["time"]["horizon"]
    assert point.motion.start == tuple(doc["motion"]["start"])
    assert point.domain.lower == tuple(doc["domain"]["lower"])
    assert point.domain.upper == tuple(doc["domain"]["upper"])
    assert point.domain.wall_names() == ("x_lower", "x_upper")
    survival = doc.get("record", {}).get("survival", {})
    assert point.record.survival_stop == survival.get("stop", point.timing.horizon)
    assert point.record.survival_points == survival.get(
        "points", DEFAULT_SURVIVAL_POINTS
    )


def test_load_spec_equals_parse_spec_of_text() -> None:
    text = QUICKSTART.read_text(encoding="utf-8")
    assert load_spec(QUICKSTART) == parse_spec(text, source=str(QUICKSTART))


def test_quickstart_grid_sweeps_diffusivity_in_written_order() -> None:
    doc = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))
    written = doc["grid"]["motion.diffusivity"]
    sweep = load_spec(QUICKSTART)
    assert sweep.values == tuple((d,) for d in written)
    assert [p.motion.diffusivity for p in sweep.points] == written


@pytest.mark.parametrize(
    "path",
    [pytest.param(p, id=p.name) for p in sorted(QUICKSTART.parent.glob("*.toml"))],
)
def test_load_spec_every_example_sweep(path: Path) -> None:
    sweep = load_spec(path)
    assert sweep.n_points >= 1
    assert sweep.source == str(path)


def test_grid_is_cartesian_product_first_key_slowest() -> None:
    sweep = parse(
        spec(
            LINE,
            grid={"motion.diffusivity": [1.0, 2.0], "time.dt": [0.1, 0.01, 0.001]},
        )
    )
    assert sweep.swept == ("motion.diffusivity", "time.dt")
    assert sweep.values == (
        (1.0, 0.1),
        (1.0, 0.01),
        (1.0, 0.001),
        (2.0, 0.1),
        (2.0, 0.01),
        (2.0, 0.001),
    )
    for point, (diffusivity, dt) in zip(sweep.points, sweep.values, strict=True):
        assert point.motion.diffusivity == diffusivity
        assert point.timing.dt == dt
        assert point.timing.horizon == 4.0


def test_grid_order_follows_written_key_order() -> None:
    sweep = parse(
        spec(LINE, grid={"time.dt": [0.1, 0.01], "motion.diffusivity": [1.0, 2.0]})
    )
    assert sweep.swept == ("time.dt", "motion.diffusivity")
    assert sweep.values == ((0.1, 1.0), (0.1, 2.0), (0.01, 1.0), (0.01, 2.0))


def test_zip_varies_keys_together() -> None:
    sweep = parse(
        spec(
            LINE,
            zip=[
                {"motion.diffusivity": [1.0, 2.0, 4.0], "time.dt": [4e-3, 2e-3, 1e-3]}
            ],
        )
    )
    assert sweep.swept == ("motion.diffusivity", "time.dt")
    assert sweep.values == ((1.0, 4e-3), (2.0, 2e-3), (4.0, 1e-3))
    assert [(p.motion.diffusivity, p.timing.dt) for p in sweep.points] == list(
        sweep.values
    )


def test_zip_and_grid_combine_as_product() -> None:
    sweep = parse(
        spec(
            LINE,
            grid={"time.horizon": [4.0, 8.0]},
            zip=[
                {"motion.diffusivity": [1.0, 2.0], "motion.start": [[0.2], [0.4]]},
                {"time.monitoring": ["bridge", "endpoint"]},
            ],
        )
    )
    assert sweep.swept == (
        "time.horizon",
        "motion.diffusivity",
        "motion.start",
        "time.monitoring",
    )
    assert sweep.n_points == 8
    expected = [
        (h, d, s, m)
        for h in (4.0, 8.0)
        for d, s in ((1.0, [0.2]), (2.0, [0.4]))
        for m in ("bridge", "endpoint")
    ]
    assert list(sweep.values) == expected
    for point, (h, d, s, m) in zip(sweep.points, expected, strict=True):
        assert point.timing.horizon == h
        assert point.motion.diffusivity == d
        assert point.motion.start == tuple(s)
        assert point.timing.monitoring == m


def test_grid_vector_key_sets_whole_vector() -> None:
    sweep = parse(spec(PLANE, grid={"domain.upper": [[1.0, 1.0], [2.0, 1.0]]}))
    assert sweep.values == (([1.0, 1.0],), ([2.0, 1.0],))
    assert [p.domain.upper for p in sweep.points] == [(1.0, 1.0), (2.0, 1.0)]
    assert all(p.domain.lower == (0.0, 0.0) for p in sweep.points)


def test_grid_nested_keys_reach_walls_and_targets() -> None:
    sweep = parse(
        spec(
            PLANE,
            grid={
                "domain.walls.y_lower": ["reflecting", "absorbing"],
                "domain.targets.0.radius": [0.1, 0.2],
            },
        )
    )
    assert [p.domain.absorbing_low for p in sweep.points] == [
        (True, False),
        (True, False),
        (True, True),
        (True, True),
    ]
    assert [p.domain.targets[0].radius for p in sweep.points] == [0.1, 0.2, 0.1, 0.2]
    assert all(p.domain.targets[0].center == (0.75, 0.5) for p in sweep.points)


def test_grid_swept_key_need_not_appear_in_its_table() -> None:
    sweep = parse(
        spec(LINE, motion__diffusivity=DELETE, grid={"motion.diffusivity": [1.0, 2.0]})
    )
    assert [p.motion.diffusivity for p in sweep.points] == [1.0, 2.0]


def test_no_grid_gives_one_point() -> None:
    sweep = parse(dumps(LINE))
    assert sweep.n_points == 1
    assert sweep.swept == ()
    assert sweep.values == ((),)


@pytest.mark.parametrize(
    ("upper", "lower"),
    [
        pytest.param(["inf"], [0.0], id="string-inf"),
        pytest.param(["+inf"], [0.0], id="string-plus-inf"),
        pytest.param([math.inf], [0.0], id="toml-inf"),
    ],
)
def test_domain_infinite_upper_side(upper: list[Any], lower: list[Any]) -> None:
    sweep = parse(
        spec(
            LINE,
            domain__lower=lower,
            domain__upper=upper,
            domain__walls={"x_lower": "absorbing"},
        )
    )
    domain = sweep.points[0].domain
    assert domain.upper == (math.inf,)
    assert domain.absorbing_low == (True,)
    assert domain.absorbing_high == (False,)
    assert not domain.bounded


@pytest.mark.parametrize(
    "lower",
    [pytest.param(["-inf"], id="string"), pytest.param([-math.inf], id="toml")],
)
def test_domain_infinite_lower_side(lower: list[Any]) -> None:
    sweep = parse(
        spec(LINE, domain__lower=lower, domain__walls={"x_upper": "reflecting"})
    )
    domain = sweep.points[0].domain
    assert domain.lower == (-math.inf,)
    assert domain.absorbing_low == (False,)
    assert domain.absorbing_high == (False,)


def test_domain_inf_string_and_toml_inf_hash_equal() -> None:
    a = parse(spec(LINE, domain__upper=["inf"], domain__walls={"x_lower": "absorbing"}))
    b = parse(
        spec(LINE, domain__upper=[math.inf], domain__walls={"x_lower": "absorbing"})
    )
    assert a.spec_hash == b.spec_hash


def test_domain_slab_unbounded_in_y() -> None:
    sweep = parse(
        spec(
            PLANE,
            domain__lower=[0.0, "-inf"],
            domain__upper=[1.0, "inf"],
            domain__walls={"x_lower": "absorbing", "x_upper": "reflecting"},
            record={
                "occupancy": {**OCCUPANCY, "lower": [0.0, -2.0], "upper": [1.0, 2.0]}
            },
        )
    )
    point = sweep.points[0]
    assert point.domain.lower == (0.0, -math.inf)
    assert point.domain.upper == (1.0, math.inf)
    assert point.domain.absorbing_low == (True, False)
    assert point.domain.absorbing_high == (False, False)
    assert point.record.occupancy_lower == (0.0, -2.0)
    assert point.record.occupancy_upper == (1.0, 2.0)


def test_defaults_are_filled_in() -> None:
    text = spec(
        LINE,
        sweep__name=DELETE,
        sweep__chunk=DELETE,
        domain__shape=DELETE,
    )
    sweep = parse_spec(text, source="dir/my-study.toml")
    assert sweep.name == "my-study"
    point = sweep.points[0]
    assert point.timing.monitoring == "bridge"
    assert point.record.per_walker is True
    assert point.record.survival_stop == point.timing.horizon == 4.0
    assert point.record.survival_points == DEFAULT_SURVIVAL_POINTS == 101
    assert point.record.occupancy_times == ()
    assert point.record.occupancy_bins == 0
    assert point.domain.shape == "box"
    assert point.domain.targets == ()
    assert point.motion.drift == (0.0,)


def test_record_survival_times_grid() -> None:
    sweep = parse(spec(LINE, record={"survival": {"stop": 2.0, "points": 5}}))
    assert sweep.points[0].record.survival_times == (0.0, 0.5, 1.0, 1.5, 2.0)


def test_survival_grid_common_to_swept_horizons() -> None:
    sweep = parse(spec(LINE, grid={"time.horizon": [4.0, 2.0, 8.0]}))
    assert [p.timing.horizon for p in sweep.points] == [4.0, 2.0, 8.0]
    assert [p.record.survival_stop for p in sweep.points] == [2.0, 2.0, 2.0]
    times = {p.record.survival_times for p in sweep.points}
    assert len(times) == 1
    (grid,) = times
    assert len(grid) == DEFAULT_SURVIVAL_POINTS
    assert grid[0] == 0.0
    assert grid[-1] == 2.0


def test_survival_grid_common_to_zipped_horizons_with_points() -> None:
    sweep = parse(
        spec(
            LINE,
            record={"survival": {"points": 5}},
            zip=[{"time.horizon": [1.0, 0.5], "time.dt": [1e-2, 1e-3]}],
        )
    )
    assert [p.record.survival_times for p in sweep.points] == [
        (0.0, 0.125, 0.25, 0.375, 0.5)
    ] * 2


def test_survival_grid_common_when_horizon_swept_with_other_keys() -> None:
    sweep = parse(
        spec(
            LINE,
            grid={"motion.diffusivity": [0.5, 1.0], "time.horizon": [3.0, 1.5]},
        )
    )
    assert sweep.n_points == 4
    assert {p.record.survival_stop for p in sweep.points} == {1.5}
    assert [p.timing.horizon for p in sweep.points] == [3.0, 1.5, 3.0, 1.5]


def test_survival_grid_explicit_stop_kept_with_swept_horizon() -> None:
    sweep = parse(
        spec(
            LINE,
            record={"survival": {"stop": 1.0}},
            grid={"time.horizon": [4.0, 2.0]},
        )
    )
    assert [p.record.survival_stop for p in sweep.points] == [1.0, 1.0]


def test_survival_grid_hash_changes_with_shortest_horizon() -> None:
    a = parse(spec(LINE, grid={"time.horizon": [4.0, 2.0]}))
    b = parse(spec(LINE, grid={"time.horizon": [4.0, 3.0]}))
    assert a.spec_hash != b.spec_hash
    assert a.points[0].record != b.points[0].record


def test_record_survival_stop_may_equal_horizon() -> None:
    sweep = parse(spec(LINE, record={"survival": {"stop": 4.0}, "per_walker": False}))
    assert sweep.points[0].record.survival_stop == 4.0
    assert sweep.points[0].record.per_walker is False


@pytest.mark.parametrize(
    ("base", "bins"),
    [
        pytest.param(LINE, 10**7, id="1d"),
        pytest.param(PLANE, 3162, id="2d"),
        pytest.param(CUBE, 215, id="3d"),
    ],
)
def test_occupancy_bins_at_limit_accepted(base: dict[str, Any], bins: int) -> None:
    sweep = parse(spec(base, record={"occupancy": {"times": [0.5], "bins": bins}}))
    record = sweep.points[0].record
    assert record.occupancy_bins == bins
    assert bins ** len(record.occupancy_lower) <= 10**7


def test_occupancy_times_at_zero_and_horizon_accepted() -> None:
    sweep = parse(spec(LINE, record={"occupancy": {"times": [0.0, 4.0], "bins": 3}}))
    assert sweep.points[0].record.occupancy_times == (0.0, 4.0)


@pytest.mark.parametrize(
    ("walkers", "chunk", "n_chunks"),
    [
        pytest.param(40_000, 40_000, 1, id="one-chunk"),
        pytest.param(100_000, 100_000, 1, id="exactly-target"),
        pytest.param(250_000, 83_334, 3, id="even-split"),
        pytest.param(1, 1, 1, id="one-walker"),
    ],
)
def test_chunk_automatic_when_absent(walkers: int, chunk: int, n_chunks: int) -> None:
    sweep = parse(spec(LINE, sweep__walkers=walkers, sweep__chunk=DELETE))
    assert sweep.chunk == chunk == auto_chunk(walkers)
    assert sweep.n_chunks == n_chunks
    sizes = [sweep.chunk_walkers(i) for i in range(sweep.n_chunks)]
    assert sum(sizes) == walkers
    assert max(sizes) - min(sizes) <= n_chunks


def test_chunk_walkers_last_chunk_smaller() -> None:
    sweep = parse(spec(LINE, sweep__walkers=1000, sweep__chunk=300))
    assert sweep.n_chunks == 4
    assert [sweep.chunk_walkers(i) for i in range(4)] == [300, 300, 300, 100]


def test_motion_start_scalar_in_1d_and_uniform() -> None:
    assert parse(spec(LINE, motion__start=0.3)).points[0].motion.start == (0.3,)
    assert parse(spec(LINE, motion__start="uniform")).points[0].motion.start is None
    assert parse(spec(DISK, motion__start="uniform")).points[0].motion.start is None


def test_uniform_start_with_targets_leaving_free_space_accepted() -> None:
    assert parse(spec(PLANE, motion__start="uniform")).points[0].motion.start is None
    text = spec(
        DISK,
        motion__start="uniform",
        domain__targets=[{"center": [0.0, 0.0], "radius": 0.9}],
    )
    assert parse(text).points[0].motion.start is None


def test_ball_domain_parsed() -> None:
    sweep = parse(spec(DISK, domain__center=[1.0, 2.0], motion__start=[1.5, 2.0]))
    domain = sweep.points[0].domain
    assert domain.shape == "ball"
    assert domain.center == (1.0, 2.0)
    assert domain.radius == 1.0
    assert domain.surface_absorbing is True
    assert domain.lower == (0.0, 1.0)
    assert domain.upper == (2.0, 3.0)
    assert domain.bounded
    assert domain.contains((1.5, 2.0))
    assert not domain.contains((0.0, 2.0))


def test_domain_contains_excludes_targets() -> None:
    domain = parse(dumps(PLANE)).points[0].domain
    assert domain.contains((0.25, 0.5))
    assert not domain.contains((0.75, 0.5))
    assert not domain.contains((0.0, 0.5))


# ----- spec_hash

#: A rich definition written twice: differently laid out, with the same content.
HASH_TEXT = """
# a study
[sweep]
name = "hash"
seed = 5
walkers = 1_000
chunk = 250

[motion]
dimension = 2
diffusivity = 0.5
drift = [0.0, 0.0]
start = [0.25, 0.5]

[time]
dt = 1e-3
horizon = 4.0

[domain]
shape = "box"
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing", y_lower = "reflecting", y_upper = "reflecting" }
targets = [{ center = [0.75, 0.5], radius = 0.1 }]

[record]
survival = { stop = 2.0, points = 21 }
occupancy = { times = [0.5], bins = 8 }

[grid]
"time.horizon" = [4.0, 8.0]
"""

HASH_TEXT_REWRITTEN = """
[grid]
  "time.horizon" = [ 4.0,   8.0 ]   # comments do not count

[record]
occupancy = {bins = 8, times = [5e-1]}
survival = {points = 21, stop = 2.0}

[domain.walls]
y_upper = "reflecting"
y_lower = "reflecting"
x_upper = "absorbing"
x_lower = "absorbing"

[time]
horizon = 4.0
dt = 0.001

[motion]
start = [0.25, 0.5]
drift = [0.0, 0.0]
diffusivity = 0.50
dimension = 2

[[domain.targets]]
radius = 0.1
center = [0.75, 0.5]

[sweep]
walkers = 1000
chunk = 250
seed = 5
name = "hash"

[domain]
upper = [1.0, 1.0]
lower = [0.0, 0.0]
shape = "box"
"""


def test_spec_hash_stable_for_same_text() -> None:
    a = parse_spec(HASH_TEXT, source="a.toml")
    b = parse_spec(HASH_TEXT, source="elsewhere/b.toml")
    assert a.spec_hash == b.spec_hash
    assert re.fullmatch(r"[0-9a-f]{64}", a.spec_hash)
    assert a.points == b.points
    assert a.values == b.values


def test_spec_hash_ignores_comments_whitespace_and_key_order() -> None:
    assert tomllib.loads(HASH_TEXT_REWRITTEN)["domain"]["shape"] == "box"
    a = parse(HASH_TEXT)
    b = parse(HASH_TEXT_REWRITTEN)
    assert a.spec_hash == b.spec_hash
    assert a.points == b.points


def test_spec_hash_ignores_description() -> None:
    a = parse(HASH_TEXT)
    b = parse(HASH_TEXT.replace('name = "hash"', 'name = "hash"\ndescription = "x"'))
    assert a.spec_hash == b.spec_hash


HASH_BASE = tomllib.loads(HASH_TEXT)

HASH_CHANGES: list[Any] = [
    pytest.param({"sweep.seed": 6}, id="seed"),
    pytest.param({"sweep.walkers": 1001}, id="walkers"),
    pytest.param({"sweep.chunk": 500}, id="chunk"),
    pytest.param({"sweep.chunk": DELETE}, id="chunk-auto"),
    pytest.param({"motion.diffusivity": 0.25}, id="diffusivity"),
    pytest.param({"motion.drift": [0.1, 0.0]}, id="drift"),
    pytest.param({"motion.start": [0.25, 0.4]}, id="start"),
    pytest.param({"motion.start": "uniform"}, id="start-uniform"),
    pytest.param({"time.dt": 2e-3}, id="dt"),
    pytest.param({"time.monitoring": "endpoint"}, id="monitoring"),
    pytest.param({"domain.lower": [-1.0, 0.0]}, id="lower"),
    pytest.param({"domain.upper": [1.0, 2.0]}, id="upper"),
    pytest.param({"domain.walls.x_lower": "reflecting"}, id="wall-kind"),
    pytest.param(
        {"domain.targets": [{"center": [0.7, 0.5], "radius": 0.1}]}, id="target-center"
    ),
    pytest.param(
        {"domain.targets": [{"center": [0.75, 0.5], "radius": 0.2}]}, id="target-radius"
    ),
    pytest.param({"record.per_walker": False}, id="per-walker"),
    pytest.param({"record.survival.stop": 1.0}, id="survival-stop"),
    pytest.param({"record.survival.points": 11}, id="survival-points"),
    pytest.param({"record.occupancy.times": [0.25]}, id="occupancy-times"),
    pytest.param({"record.occupancy.bins": 16}, id="occupancy-bins"),
    pytest.param({"record.occupancy.upper": [1.0, 0.5]}, id="occupancy-upper"),
    pytest.param({"record.occupancy": DELETE}, id="no-occupancy"),
    pytest.param({("grid", "time.horizon"): [4.0, 6.0]}, id="grid-value"),
    pytest.param({("grid", "time.horizon"): [8.0, 4.0]}, id="grid-order"),
    pytest.param({("grid", "time.horizon"): [4.0, 8.0, 16.0]}, id="grid-length"),
    pytest.param({("grid", "motion.diffusivity"): [0.5]}, id="grid-extra-key"),
    pytest.param({"grid": DELETE, "time.horizon": 8.0}, id="no-grid"),
]


@pytest.mark.parametrize("changes", HASH_CHANGES)
def test_spec_hash_changes_with_any_value(changes: dict[Any, Any]) -> None:
    base = parse(dumps(HASH_BASE))
    changed = parse(dumps(edited(HASH_BASE, changes)))
    assert changed.spec_hash != base.spec_hash


def test_spec_hash_changes_are_all_distinct() -> None:
    hashes = {parse(dumps(HASH_BASE)).spec_hash}
    for param in HASH_CHANGES:
        hashes.add(parse(dumps(edited(HASH_BASE, param.values[0]))).spec_hash)
    assert len(hashes) == len(HASH_CHANGES) + 1


def test_spec_hash_ignores_name() -> None:
    base = parse(dumps(HASH_BASE))
    renamed = parse(dumps(edited(HASH_BASE, {"sweep.name": "other"})))
    assert renamed.name == "other"
    assert renamed.spec_hash == base.spec_hash
    assert renamed.points == base.points


def test_spec_hash_ignores_default_name_from_file_name() -> None:
    text = dumps(edited(HASH_BASE, {"sweep.name": DELETE}))
    a = parse_spec(text, source="runs/first.toml")
    b = parse_spec(text, source="elsewhere/renamed.toml")
    assert (a.name, b.name) == ("first", "renamed")
    assert a.spec_hash == b.spec_hash


@pytest.mark.parametrize(
    ("written", "as_floats"),
    [
        pytest.param(
            {"time.horizon": [4, 8]}, {"time.horizon": [4.0, 8.0]}, id="scalar"
        ),
        pytest.param(
            {"motion.drift": [[0, 1], [1, 0]]},
            {"motion.drift": [[0.0, 1.0], [1.0, 0.0]]},
            id="vector",
        ),
        pytest.param(
            {"domain.targets": [[{"center": [3, 1], "radius": 1}]]},
            {"domain.targets": [[{"center": [3.0, 1.0], "radius": 1.0}]]},
            id="table-in-list",
        ),
        pytest.param(
            {"domain.upper": [[1, 1], [2.0, 1]]},
            {"domain.upper": [[1.0, 1.0], [2.0, 1.0]]},
            id="mixed",
        ),
    ],
)
def test_spec_hash_swept_int_values_hash_like_floats(
    written: dict[str, list[Any]], as_floats: dict[str, list[Any]]
) -> None:
    base = edited(HASH_BASE, {"grid": DELETE, "record.occupancy": DELETE})
    base["domain"]["upper"] = [4.0, 3.0]  # room for a target of radius 1
    a = parse(dumps(edited(base, {"grid": written})))
    b = parse(dumps(edited(base, {"grid": as_floats})))
    assert a.spec_hash == b.spec_hash
    assert a.points == b.points
    # The values stay as written; only the hash normalises them.
    assert a.values == tuple(zip(*written.values(), strict=True))


def test_spec_hash_unswept_int_values_hash_like_floats() -> None:
    a = parse(dumps(edited(HASH_BASE, {"motion.diffusivity": 1, "time.dt": 1e-3})))
    b = parse(dumps(edited(HASH_BASE, {"motion.diffusivity": 1.0})))
    assert a.spec_hash == b.spec_hash


def test_spec_hash_swept_int_and_float_of_different_value_differ() -> None:
    a = parse(dumps(edited(HASH_BASE, {("grid", "time.horizon"): [4, 8]})))
    b = parse(dumps(edited(HASH_BASE, {("grid", "time.horizon"): [4.0, 9.0]})))
    assert a.spec_hash != b.spec_hash


def test_spec_hash_ignores_base_value_of_swept_key() -> None:
    a = parse(dumps(HASH_BASE))
    b = parse(dumps(edited(HASH_BASE, {"time.horizon": 16.0})))
    assert a.spec_hash == b.spec_hash


# ----- Timing and Domain helpers


@pytest.mark.parametrize(
    ("dt", "horizon", "n_steps"),
    [
        pytest.param(1e-3, 4.0, 4000, id="exact"),
        pytest.param(0.1, 0.3, 3, id="float-rounding"),
        pytest.param(0.3, 1.0, 3, id="snapped-down"),
        pytest.param(0.6, 1.0, 2, id="snapped-up"),
        pytest.param(0.9, 1.0, 1, id="at-least-one"),
    ],
)
def test_timing_n_steps(dt: float, horizon: float, n_steps: int) -> None:
    assert Timing(dt=dt, horizon=horizon, monitoring="bridge").n_steps == n_steps


def test_timing_n_steps_of_parsed_definition() -> None:
    sweep = parse(spec(LINE, grid={"time.horizon": [4.0, 2.5, 0.01]}))
    assert [p.timing.n_steps for p in sweep.points] == [4000, 2500, 10]


def test_domain_wall_names_box_then_targets() -> None:
    text = spec(
        PLANE,
        motion__dimension=3,
        motion__drift=DELETE,
        motion__start=[0.25, 0.5, 0.5],
        domain__lower=[0.0, 0.0, 0.0],
        domain__upper=[1.0, 1.0, 1.0],
        domain__walls__z_lower="reflecting",
        domain__walls__z_upper="absorbing",
        domain__targets=[
            {"center": [0.75, 0.5, 0.5], "radius": 0.1},
            {"center": [0.5, 0.75, 0.5], "radius": 0.1},
        ],
    )
    domain = parse(text).points[0].domain
    assert domain.wall_names() == (
        "x_lower",
        "x_upper",
        "y_lower",
        "y_upper",
        "z_lower",
        "z_upper",
        "target_0",
        "target_1",
    )
    assert domain.absorbing_low == (True, False, False)
    assert domain.absorbing_high == (True, False, True)
    assert domain.wall_absorbing() == (
        True,
        True,
        False,
        False,
        False,
        True,
        True,
        True,
    )


def test_domain_wall_names_beyond_three_axes() -> None:
    d = 5
    walls = {
        f"{a}_{s}": "absorbing"
        for a in ("x", "y", "z", "x3", "x4")
        for s in ("lower", "upper")
    }
    text = spec(
        LINE,
        motion__dimension=d,
        motion__start=[0.5] * d,
        domain__lower=[0.0] * d,
        domain__upper=[1.0] * d,
        domain__walls=walls,
    )
    names = parse(text).points[0].domain.wall_names()
    assert names == tuple(walls)
    assert names[6:] == ("x3_lower", "x3_upper", "x4_lower", "x4_upper")


def test_domain_wall_names_keep_infinite_sides() -> None:
    domain = parse(dumps(HALF_LINE)).points[0].domain
    assert domain.wall_names() == ("x_lower", "x_upper")


def test_domain_wall_names_ball_targets_then_wall() -> None:
    text = spec(DISK, domain__targets=[{"center": [-0.5, 0.0], "radius": 0.1}])
    domain = parse(text).points[0].domain
    assert domain.wall_names() == ("target_0", "wall")
    assert domain.wall_absorbing() == (True, domain.surface_absorbing)
    assert parse(dumps(DISK)).points[0].domain.wall_names() == ("wall",)


# --------------------------------------------------------------------------- fuzzing


def _paths(node: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every key path of a parsed TOML document (list elements by index)."""
    found: list[tuple[Any, ...]] = []
    items = node.items() if isinstance(node, dict) else enumerate(node)
    for key, value in items:
        found.append((*prefix, key))
        if isinstance(value, dict | list):
            found += _paths(value, (*prefix, key))
    return found


QUICKSTART_DOC = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))

#: Existing paths of the quickstart plus keys it does not use (valid or not).
FUZZ_PATHS = _paths(QUICKSTART_DOC) + [
    ("bogus",),
    ("zip",),
    ("sweep", "description"),
    ("sweep", "chunk"),
    ("motion", "drift"),
    ("motion", "extra"),
    ("time", "monitoring"),
    ("domain", "targets"),
    ("domain", "center"),
    ("domain", "radius"),
    ("domain", "wall"),
    ("domain", "walls", "y_lower"),
    ("record", "per_walker"),
    ("record", "occupancy", "lower"),
    ("record", "occupancy", "upper"),
    ("grid", "time.dt"),
    ("grid", "motion.start"),
    ("grid", "domain.upper"),
    ("grid", "domain.walls"),
    ("grid", "domain.walls.x_lower"),
    ("grid", "domain.targets"),
    ("grid", "domain.targets.0.center"),
    ("grid", "motion.dimension"),
    ("grid", "record.per_walker"),
]

_KEY_WORDS = sorted(
    {str(p[-1]) for p in FUZZ_PATHS if isinstance(p[-1], str)}
    | {"center", "radius", "x_lower", "x_upper", "stop", "points", "times", "bins"}
)

_scalars = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1),  # TOML integers are 64-bit
    st.floats(),  # nan and +-inf included
    st.booleans(),
    st.text(max_size=8),
    st.sampled_from(
        ["inf", "-inf", "uniform", "box", "ball", "absorbing", "reflecting", "endpoint"]
    ),
    st.sampled_from([0, 1, 2, 0.0, 0.5, 1.0, 1e-300, 1e300, 2**62, -1]),
    st.sampled_from([10**400, -(10**309), "+inf", " -inf", "nan"]),
    st.dates(),
    st.times(),
    st.datetimes(),
    st.datetimes(timezones=st.just(datetime.UTC)),
)
_keys = st.one_of(st.sampled_from(_KEY_WORDS), st.text(max_size=6))
toml_values = st.recursive(
    _scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.dictionaries(_keys, inner, max_size=3)
    ),
    max_leaves=10,
)


def _mutated(doc: dict[str, Any], path: tuple[Any, ...], value: Any) -> dict[str, Any]:
    doc = copy.deepcopy(doc)
    node: Any = doc
    for part in path[:-1]:
        node = node[part]
    if value is DELETE:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    return doc


def _parse_or_spec_error(text: str) -> None:
    try:
        # A mutated grid may repeat a point: that is warned about (SweepWarning),
        # not an error, and is tested on its own.
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SweepWarning)
            result = parse_spec(text, source="fuzz.toml")
    except SpecError as err:
        assert str(err).startswith("fuzz.toml: ")
    else:
        assert isinstance(result, Sweep)
        assert re.fullmatch(r"[0-9a-f]{64}", result.spec_hash)


def test_dumps_round_trips_quickstart() -> None:
    assert tomllib.loads(dumps(QUICKSTART_DOC)) == QUICKSTART_DOC
    rewritten = parse_spec(dumps(QUICKSTART_DOC), source=str(QUICKSTART))
    assert rewritten == load_spec(QUICKSTART)


@settings(max_examples=100, deadline=None)
@given(
    st.dictionaries(_keys, st.dictionaries(_keys, toml_values, max_size=4), max_size=4)
)
def test_dumps_round_trips_random_documents(doc: dict[str, Any]) -> None:
    text = dumps(doc)
    loaded = tomllib.loads(text)
    # nan != nan: compare the serialisations instead of the values.
    assert dumps(loaded) == text


_TOML_ALPHABET = "[]{}=\"'.,#\n \t_-+0123456789abcdefilmnorstuwxyz"


@settings(max_examples=300, deadline=None)
@given(st.one_of(st.text(), st.text(alphabet=_TOML_ALPHABET, max_size=200)))
def test_parse_spec_random_text_only_raises_spec_error(text: str) -> None:
    _parse_or_spec_error(text)


QUICKSTART_TEXT = QUICKSTART.read_text(encoding="utf-8")


@settings(max_examples=300, deadline=None)
@given(
    st.integers(min_value=0, max_value=len(QUICKSTART_TEXT)),
    st.integers(min_value=0, max_value=8),
    st.text(alphabet=_TOML_ALPHABET, max_size=12),
)
def test_parse_spec_edited_quickstart_text_only_raises_spec_error(
    position: int, delete: int, insert: str
) -> None:
    text = QUICKSTART_TEXT[:position] + insert + QUICKSTART_TEXT[position + delete :]
    _parse_or_spec_error(text)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(FUZZ_PATHS), st.one_of(toml_values, st.just(DELETE)))
def test_parse_spec_mutated_quickstart_only_raises_spec_error(
    path: tuple[Any, ...], value: Any
) -> None:
    try:
        doc = _mutated(QUICKSTART_DOC, path, value)
    except (KeyError, IndexError, TypeError):
        return  # the path's parent was not there to mutate
    _parse_or_spec_error(dumps(doc))


#: A definition sweeping nested keys, so mutations reach swept paths through tables,
#: lists, and values of the wrong type.
SWEPT_DOC = edited(
    PLANE,
    {
        "record": {"survival": {"points": 5}, "occupancy": {"times": [0.5], "bins": 4}},
        ("grid", "domain.walls.y_lower"): ["reflecting", "absorbing"],
        ("grid", "time.horizon"): [4.0, 2.0],
        "zip": [
            {
                "domain.targets.0.radius": [0.1, 0.2],
                "motion.start": [[0.25, 0.5], "uniform"],
            }
        ],
    },
)
SWEPT_PATHS = _paths(SWEPT_DOC) + [
    ("grid", "domain.targets.1.center"),
    ("grid", "domain.targets.0"),
    ("grid", "domain.walls.z_lower"),
    ("zip", 0, "time.dt"),
    ("zip", 0, "domain.targets.0.center"),
    ("zip", 1),
]
#: The tables and lists that swept keys pass through: drawn half of the time.
SWEPT_PARENTS = [
    ("domain",),
    ("domain", "walls"),
    ("domain", "targets"),
    ("domain", "targets", 0),
    ("motion",),
    ("time",),
]


def test_swept_fuzz_base_is_valid() -> None:
    sweep = parse(dumps(SWEPT_DOC))
    assert sweep.n_points == 8
    assert sweep.points[1].motion.start is None


def _word_key_into_list(doc: dict[str, Any]) -> bool:
    """Whether a swept word key meets a list: the known bug of
    test_grid_word_key_into_list_raises_spec_error."""
    domain = doc.get("domain")
    if not isinstance(domain, dict):
        return False
    walls, targets = domain.get("walls"), domain.get("targets")
    return isinstance(walls, list) or (
        isinstance(targets, list) and any(isinstance(t, list) for t in targets)
    )


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.one_of(st.sampled_from(SWEPT_PARENTS), st.sampled_from(SWEPT_PATHS)),
    st.one_of(toml_values, st.just(DELETE)),
)
def test_parse_spec_mutated_swept_definition_only_raises_spec_error(
    path: tuple[Any, ...], value: Any
) -> None:
    try:
        doc = _mutated(SWEPT_DOC, path, value)
    except (KeyError, IndexError, TypeError):
        return  # the path's parent was not there to mutate
    if _word_key_into_list(doc):
        return
    _parse_or_spec_error(dumps(doc))


# --------------------------------------------------------------------------- fixed bugs
# Each of these was an xfail(strict=True) test of a parser bug; they now guard against
# regressions.


def _with_grid(
    base: dict[str, Any], key: str, values: list[Any], **changes: Any
) -> str:
    return spec(base, grid={key: values}, **changes)


@pytest.mark.parametrize("value", [10**400, -(10**400), 2**1024])
def test_number_huge_integer_raises_spec_error(value: int) -> None:
    with pytest.raises(SpecError) as info:
        parse(spec(LINE, time__dt=value))
    assert str(info.value) == (
        f"{SOURCE}: [time.dt] must be a number within +-1.8e308; got "
        f"{str(value)[:6]}...({len(str(value))} digits)."
    )


def test_number_largest_float_integer_refused_by_the_magnitude_limit() -> None:
    # 2**1023 converts to a float, but its square would not: the limit is named.
    text = spec(LINE, motion__diffusivity=2**1023)
    with pytest.raises(
        SpecError, match=re.escape("[motion.diffusivity] must lie within +-1e+100")
    ):
        parse(text)


def test_grid_date_value_raises_spec_error() -> None:
    text = dumps(LINE) + '[grid]\n"motion.diffusivity" = [1979-05-27]\n'
    with pytest.raises(SpecError, match=re.escape("[motion.diffusivity]")) as info:
        parse(text)
    assert str(info.value).endswith(
        "got 1979-05-27. (at point 0: motion.diffusivity = 1979-05-27)"
    )


@pytest.mark.parametrize(
    "value",
    [
        pytest.param("1979-05-27T07:32:00", id="datetime"),
        pytest.param("07:32:00", id="time"),
        pytest.param("1979-05-27T07:32:00Z", id="offset-datetime"),
    ],
)
def test_grid_other_date_time_values_raise_spec_error(value: str) -> None:
    text = dumps(LINE) + f'[grid]\n"time.dt" = [{value}]\n'
    with pytest.raises(SpecError, match=re.escape(f"{SOURCE}: [time.dt]")):
        parse(text)


def test_grid_wall_key_into_walls_string_raises_spec_error() -> None:
    text = _with_grid(LINE, "domain.walls.x_lower", ["absorbing"], domain__walls="none")
    with pytest.raises(SpecError) as info:
        parse(text)
    # startswith: the message should also gain the point context (see
    # test_grid_key_reaching_past_list_end_names_point).
    assert str(info.value).startswith(
        f"{SOURCE}: [grid.domain.walls.x_lower] reaches into domain.walls, which is "
        '"none" and not a table or list.'
    )


@pytest.mark.parametrize(
    ("target", "shown"),
    [
        pytest.param(5, "5", id="number"),
        pytest.param("t", '"t"', id="string"),
        pytest.param(True, "true", id="bool"),
    ],
)
def test_grid_target_key_into_non_table_target_raises_spec_error(
    target: Any, shown: str
) -> None:
    text = _with_grid(PLANE, "domain.targets.0.radius", [0.1], domain__targets=[target])
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).startswith(
        f"{SOURCE}: [grid.domain.targets.0.radius] reaches into domain.targets.0, "
        f"which is {shown}"
    )


@pytest.mark.parametrize(
    "index",
    [
        pytest.param("\u00b2", id="superscript-two"),
        pytest.param("\uff11", id="fullwidth-one"),
        pytest.param("\u0661", id="arabic-indic-one"),
        pytest.param("-1", id="negative"),
        pytest.param("+0", id="plus-sign"),
        pytest.param(" 0", id="space"),
        pytest.param("", id="empty"),
    ],
)
def test_grid_target_index_not_ascii_digits_raises_spec_error(index: str) -> None:
    key = f"domain.targets.{index}.radius"
    with pytest.raises(SpecError, match=re.escape(f"{SOURCE}: [grid.{key}] ")):
        parse(_with_grid(PLANE, key, [0.1]))


def test_grid_target_index_with_leading_zero_is_an_index() -> None:
    sweep = parse(_with_grid(PLANE, "domain.targets.00.radius", [0.2]))
    assert sweep.points[0].domain.targets[0].radius == 0.2


def test_grid_target_index_out_of_range_names_file() -> None:
    text = _with_grid(PLANE, "domain.targets.1.radius", [0.1, 0.2])
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).startswith(
        f"{SOURCE}: [grid.domain.targets.1.radius] reaches entry 1 of domain.targets, "
        "which has 1 entry."
    )


@pytest.mark.parametrize(
    "start",
    [
        pytest.param([1e200, 0.0], id="1e200"),
        pytest.param([1e308, 1e308], id="near-max"),
        pytest.param([-1e308, 0.0], id="near-min"),
    ],
)
def test_ball_far_start_raises_spec_error(start: list[float]) -> None:
    with pytest.raises(
        SpecError, match=re.escape("[motion.start] must lie strictly inside the domain")
    ):
        parse(spec(DISK, motion__start=start))


def test_far_start_outside_far_target_raises_spec_error() -> None:
    # Huge coordinates pass the target distance check and the ball check without an
    # overflow, then meet the magnitude limit: one message.
    text = spec(
        PLANE,
        domain__upper=[1e308, 1e308],
        motion__start=[1e307, 1e307],
        domain__targets=[{"center": [9e307, 9e307], "radius": 1e300}],
    )
    with pytest.raises(
        SpecError, match=re.escape("[domain.upper] must lie within +-1e+100")
    ):
        parse(text)


def test_uniform_start_with_domain_covered_by_target_rejected() -> None:
    text = spec(
        DISK,
        motion__start="uniform",
        domain__targets=[{"center": [0.0, 0.0], "radius": 2.0}],
    )
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value) == (
        f'{SOURCE}: [motion.start] "uniform" needs free space, but the targets cover '
        "(nearly) the whole domain: none of 4096 evenly scattered sample points is "
        "free. Make them smaller or give a start point."
    )


# --------------------------------------------------------------------------- fixed bugs
# Each was a strict-xfail test of a parser bug; they now guard against regressions.


@pytest.mark.parametrize(
    ("key", "values", "changes", "location"),
    [
        pytest.param(
            "domain.walls.x_lower",
            ["absorbing"],
            {"domain__walls": []},
            "[grid.domain.walls.x_lower] reaches into domain.walls",
            id="walls-list",
        ),
        pytest.param(
            "domain.targets.0.radius",
            [0.1],
            {"domain__targets": [[0.5, 0.5]]},
            "[grid.domain.targets.0.radius] reaches into domain.targets.0",
            id="target-list",
        ),
    ],
)
def test_grid_word_key_into_list_raises_spec_error(
    key: str, values: list[Any], changes: dict[str, Any], location: str
) -> None:
    text = _with_grid(PLANE, key, values, **changes)
    with pytest.raises(SpecError, match=re.escape(f"{SOURCE}: {location}")):
        parse(text)


def test_grid_key_reaching_past_list_end_names_point() -> None:
    text = _with_grid(PLANE, "domain.targets.1.radius", [0.1, 0.2])
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).endswith("(at point 0: domain.targets.1.radius = 0.1)")


def test_zip_key_reaching_past_list_end_names_zip_table() -> None:
    text = spec(PLANE, zip=[{"domain.targets.1.radius": [0.1, 0.2]}])
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).startswith(
        f"{SOURCE}: [zip #1.domain.targets.1.radius] reaches entry 1"
    )


def test_spec_hash_swept_inf_spellings_hash_equal() -> None:
    unswept = {
        parse(spec(HALF_LINE, domain__upper=[u])).spec_hash
        for u in ("inf", "+inf", " inf", math.inf)
    }
    assert len(unswept) == 1
    swept = {
        parse(spec(HALF_LINE, grid={"domain.upper": [[u]]})).spec_hash
        for u in ("inf", "+inf", " inf", math.inf)
    }
    assert len(swept) == 1


def test_repeated_grid_points_warn() -> None:
    """1, 1.0 and 1.0 are one point three times: two repeats, bit-identical walkers."""
    from sweep.errors import SweepWarning
    from sweep.spec import parse_spec
    from tests.conftest import SMALL_SPEC

    text = SMALL_SPEC.replace("[0.5, 1.0]", "[0.5, 1, 1.0, 1.0]")
    with pytest.warns(SweepWarning, match=r"2 point\(s\) repeat an earlier point"):
        parse_spec(text, source="dup.toml")


# ------------------------------------------------------------------ units


def test_units_are_labels_in_the_hash_only_when_named() -> None:
    plain = parse(spec(LINE))
    named = parse(spec(LINE, sweep__units={"length": "um", "time": "s"}))
    assert plain.units.of("time") == "definition units"
    assert named.units.of("diffusivity") == "um^2/s"
    assert named.units.of("velocity") == "um/s"
    assert named.units.label("x", "length") == "x [um]"
    # A definition without units keeps its hash; naming them makes another study.
    assert plain.spec_hash == parse(spec(LINE, sweep__units={})).spec_hash
    assert plain.spec_hash != named.spec_hash
    assert plain.points == named.points


@pytest.mark.parametrize(
    ("units", "fragment"),
    [
        ("um", "[sweep.units] must be a table"),
        ({"mass": "kg"}, "mass"),
        ({"length": ""}, "[sweep.units.length] must be a short non-empty text"),
        ({"time": 1}, "[sweep.units.time] must be a short non-empty text"),
    ],
)
def test_bad_units_name_the_key(units: Any, fragment: str) -> None:
    with pytest.raises(SpecError, match=re.escape(fragment)):
        parse(spec(LINE, sweep__units=units))
