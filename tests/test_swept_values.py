"""Swept values of every kind reach the store's coordinates, or are refused at load.

A sweep may vary any sweepable key with values of mixed kinds (``"uniform"`` beside
points, a wall kind beside ``{ reactivity = 2.0 }``) or whole tables
(``"domain.walls"``, ``"domain.targets"``). Each such definition must either be
refused at load with one message (a ``SpecError`` naming the file), or give
coordinates every reader takes (one float or text value per point) and run end to
end. Never a traceback.
"""

from __future__ import annotations

import concurrent.futures
import copy
import json
import math
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import pytest

import sweep
from sweep.check.labels import describe, point_labels
from sweep.errors import SpecError, SweepWarning
from sweep.plan import coordinate_columns
from sweep.spec import SECTIONS, SHAPE_KEYS, SWEEPABLE_SECTIONS, parse_spec
from sweep.spec.sections import by_name
from sweep.store.layout import ARRAYS
from tests.conftest import run_cli
from tests.spec.edit import dumps

SOURCE = "mixed.toml"

#: A small 2-D box with one target, one obstacle and a harmonic force: every
#: sweepable key has something to reach.
BASE: dict[str, Any] = {
    "sweep": {"name": "mixed", "seed": 3, "walkers": 40, "chunk": 20},
    "motion": {"dimension": 2, "diffusivity": 0.5, "start": [0.25, 0.5]},
    "time": {"dt": 2e-3, "horizon": 0.5},
    "domain": {
        "shape": "box",
        "lower": [0.0, 0.0],
        "upper": [1.0, 1.0],
        "walls": {
            "x_lower": "absorbing",
            "x_upper": {"reactivity": 2.0},
            "y_lower": "reflecting",
            "y_upper": "reflecting",
        },
        "targets": [{"center": [0.75, 0.5], "radius": 0.1}],
        "obstacles": [{"center": [0.5, 0.2], "radius": 0.05}],
    },
    "force": {"potential": "harmonic", "center": [0.5, 0.5], "stiffness": [1.0, 1.0]},
    "record": {"survival": {"points": 5}},
}
#: The unit disk with a reactive surface: the ball's keys.
BALL: dict[str, Any] = copy.deepcopy(BASE) | {
    "domain": {
        "shape": "ball",
        "center": [0.0, 0.0],
        "radius": 1.0,
        "wall": {"reactivity": 2.0},
        "targets": [{"center": [0.5, 0.0], "radius": 0.1}],
    },
    "motion": {"dimension": 2, "diffusivity": 0.5, "start": [-0.25, 0.0]},
    "force": {"potential": "harmonic", "center": [0.0, 0.0], "stiffness": [1.0, 1.0]},
}
#: The box with a tabulated potential along y: the [force] keys of the other families.
TABLE: dict[str, Any] = copy.deepcopy(BASE) | {
    "force": {
        "potential": "table",
        "axis": "y",
        "lower": 0.0,
        "upper": 1.0,
        "values": [0.0, 0.5, 0.0],
    }
}
BASES = {"box": BASE, "ball": BALL, "table": TABLE}

#: Values of every kind a definition may hold, each swept beside a key's own value.
ODD_VALUES: list[Any] = [
    0.5,
    0.05,
    2,
    "inf",
    "uniform",
    "absorbing",
    "periodic",
    "spheres",
    "steps",
    "endpoint",
    "double_well",
    "x",
    "y",
    True,
    {"reactivity": 2.0},
    {},
    [],
    [0.3, 0.6],
    [0.5],
    [0.0, 1.0, 0.5, 0.0],
    [-1.0, 0.0],
    [2.0, "inf"],
    ["uniform", 0.5],
    [{"center": [0.75, 0.5], "radius": 0.12, "reactivity": 1.0}],
    [{"center": [0.5, 0.2], "radius": 0.05}, {"center": [0.5, 0.8], "radius": 0.05}],
    {
        "x_lower": "absorbing",
        "x_upper": "absorbing",
        "y_lower": "periodic",
        "y_upper": "periodic",
    },
    {
        "x_lower": {"reactivity": 1.0},
        "x_upper": "absorbing",
        "y_lower": "reflecting",
        "y_upper": "absorbing",
    },
]


def sweepable_keys() -> list[str]:
    """Every key path the spec accepts in [grid], deep ones with index 0 and the
    walls of the base."""
    keys = [
        f"{s}.{k}"
        for s in SWEEPABLE_SECTIONS
        for k in SECTIONS[s]
        if f"{s}.{k}" not in SHAPE_KEYS
    ]
    for section in SWEEPABLE_SECTIONS:
        for pattern in by_name(section).deep_keys:
            for wall in ("x_lower", "x_upper"):
                path = pattern.replace("<i>", "0").replace("<wall>", wall)
                keys.append(f"{section}.{path}")
    return list(dict.fromkeys(keys))


def own_value(base: dict[str, Any], key: str) -> Any:
    """The definition's value at ``key``, or None where it has none."""
    node: Any = base
    for part in key.split("."):
        if isinstance(node, list) and part.isdigit() and int(part) < len(node):
            node = node[int(part)]
        elif isinstance(node, dict) and part in node:
            node = node[part]
        else:
            return None
    return node


def mixtures(base: dict[str, Any], key: str) -> list[list[Any]]:
    """Lists of values for ``key``: its own value beside each odd one (those of
    another kind first)."""
    own = own_value(base, key)
    if own is None:
        return [[a, b] for a, b in zip(ODD_VALUES, ODD_VALUES[1:])]
    odd = [v for v in ODD_VALUES if v != own]
    odd.sort(key=lambda v: type(v) is type(own))  # stable: other kinds first
    return [[copy.deepcopy(own), v] for v in odd]


def definition(
    placement: str, swept: dict[str, list[Any]], base: dict[str, Any] = BASE
) -> str:
    """``base`` with ``swept`` in [grid] or in one [[zip]] table."""
    doc = copy.deepcopy(base)
    if placement == "grid":
        doc["grid"] = swept
    else:
        doc["zip"] = [swept]
    return dumps(doc)


def accepted(text: str) -> sweep.Sweep | None:
    """The sweep of ``text``, or None when it is refused with one clean message."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SweepWarning)  # repeated points
            return parse_spec(text, source=SOURCE)
    except SpecError as err:
        message = str(err)
        assert message.startswith(f"{SOURCE}: "), message
        assert "Traceback" not in message
        return None


def assert_readable_columns(result: sweep.Sweep) -> None:
    """One float or text value per point in every column, none named like another
    array or a dimension of the store; words for every point."""
    taken = {spec.name for spec in ARRAYS} | {d for s in ARRAYS for d in s.dims}
    taken -= {"dt", "horizon"}  # stored as parameters when swept
    for name, values in coordinate_columns(result).items():
        assert name.isidentifier(), name
        assert name not in taken, name
        assert len(values) == result.n_points, name
        kinds = {type(v) for v in values}
        assert kinds in ({float}, {str}), (name, values)
        np.asarray(values)  # the store writes each column as one array
    assert len(point_labels(result)) == result.n_points
    assert describe(result)


KEYS = sweepable_keys()


def test_keys_cover_the_reported_ones() -> None:
    for key in ("domain.walls", "motion.start", "domain.targets", "force.values"):
        assert key in KEYS


@pytest.mark.parametrize("base", list(BASES))
@pytest.mark.parametrize("placement", ["grid", "zip"])
@pytest.mark.parametrize("key", KEYS)
def test_mixed_values_are_refused_or_give_coordinates(
    key: str, placement: str, base: str
) -> None:
    for values in mixtures(BASES[base], key):
        result = accepted(definition(placement, {key: values}, BASES[base]))
        if result is not None:
            assert_readable_columns(result)


def end_to_end_definitions() -> list[str]:
    """Few definitions that together sweep one accepted mixture of every key that
    has one: mixtures are gathered into one [[zip]] while the whole still loads."""
    texts = []
    covered: set[str] = set()
    for base in BASES.values():
        groups: list[dict[str, list[Any]]] = []
        for key in KEYS:
            for values in mixtures(base, key) if key not in covered else []:
                if accepted(definition("zip", {key: values}, base)) is None:
                    continue
                for group in groups:
                    merged = group | {key: values}
                    if accepted(definition("zip", merged, base)) is not None:
                        group[key] = values
                        break
                else:
                    groups.append({key: values})
                covered.add(key)
                break
        texts += [definition("zip", group, base) for group in groups]
    return texts


def run_check_summarise(directory: Path, text: str) -> None:
    """``sweep run``, ``check``, ``summary`` of ``text``: no traceback, exit 0 or 1
    (a check may fail on 40 walkers), coordinates stored as planned."""
    directory.mkdir()
    path = directory / "mixed.toml"
    path.write_text(text)
    store = directory / "mixed.zarr"
    for argv in (
        ("run", path, "--store", store, "--threads", "1"),
        ("check", store),
        ("summary", store),
    ):
        result = run_cli(*argv)
        assert "Traceback" not in result.stderr, (text, result.stderr)
        assert result.returncode in (0, 1), (argv, text, result.stderr)
    ds = sweep.open(store)
    for name, values in coordinate_columns(parse_spec(text)).items():
        stored = ds[name].values
        if isinstance(values[0], float):
            assert np.array_equal(stored, values, equal_nan=True), name
        else:
            assert [str(v) for v in stored] == values, name


def test_mixed_values_run_check_and_summarise(tmp_path: Path) -> None:
    texts = end_to_end_definitions()
    swept = {key for text in texts for key in parse_spec(text).swept}
    for key in ("domain.walls", "motion.start", "domain.targets", "force.upper"):
        assert key in swept
    # Independent stores: two at a time (the commands' imports dominate).
    with concurrent.futures.ThreadPoolExecutor(2) as pool:
        done = [
            pool.submit(run_check_summarise, tmp_path / str(n), text)
            for n, text in enumerate(texts)
        ]
        for future in done:
            future.result()


def test_reported_walls_table_and_uniform_start_run(tmp_path: Path) -> None:
    """The two sweeps a reviewer found crashing: coordinates as a user reads them."""
    walls_b = {**BASE["domain"]["walls"], "x_upper": "absorbing"}
    text = definition(
        "zip",
        {
            "domain.walls": [BASE["domain"]["walls"], walls_b],
            "motion.start": ["uniform", [0.2, 0.3]],
        },
    )
    path = tmp_path / "reported.toml"
    path.write_text(text)
    store = tmp_path / "reported.zarr"
    for argv in (
        ("run", path, "--store", store, "--threads", "1"),
        ("status", store),
        ("summary", store),
        ("check", store),
        ("report", store, "--out", tmp_path / "report"),
        ("export", store, tmp_path / "reported.h5"),
    ):
        result = run_cli(*argv)
        assert "Traceback" not in result.stderr, (argv, result.stderr)
        assert result.returncode in (0, 1), (argv, result.stderr)
    ds = sweep.open(store)
    # Each wall its own column, as sweeping "domain.walls.<wall>" would give.
    assert list(ds.wall_x_upper.values) == [
        json.dumps({"reactivity": 2.0}),
        "absorbing",
    ]
    assert list(ds.wall_y_lower.values) == ["reflecting", "reflecting"]
    # "uniform" beside a point: one text column, each value as written.
    assert list(ds.start.values) == ["uniform", "[0.2, 0.3]"]
    assert ds.where(ds.start == "uniform", drop=True).point.values.tolist() == [0]


def test_whole_target_list_splits_per_entry_and_key() -> None:
    text = definition(
        "grid",
        {
            "domain.obstacles": [
                [{"center": [0.5, 0.2], "radius": 0.05}],
                [
                    {"center": [0.5, 0.2], "radius": 0.05},
                    {"center": [0.5, 0.8], "radius": 0.04},
                ],
            ]
        },
    )
    columns = coordinate_columns(parse_spec(text))
    assert columns["obstacle_0_radius"] == [0.05, 0.05]
    # An entry absent at a point is NaN there.
    assert math.isnan(columns["obstacle_1_radius"][0])
    assert columns["obstacle_1_center_y"][1] == 0.8


def test_reserved_names_take_their_table_as_prefix() -> None:
    """A scalar named like a statistic's variable (force.upper: ``upper``) is
    prefixed; a vector split per axis (domain.upper: ``upper_x``) is not."""
    scalar = coordinate_columns(
        parse_spec(definition("grid", {"force.upper": [1.0, 2.0]}, TABLE))
    )
    assert list(scalar) == ["force_upper"]
    vector = coordinate_columns(
        parse_spec(definition("grid", {"domain.upper": [[1.0, 1.0], [2.0, 1.0]]}))
    )
    assert list(vector) == ["upper_x", "upper_y"]
