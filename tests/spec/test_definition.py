"""Tests of ``sweep.spec.definition``: a whole definition read, its defaults, the common
survival grid, and the canonical form and hash that decide whether a store resumes.
"""

from __future__ import annotations

import math
import re
import tomllib
from typing import Any

import pytest

from sweep.spec import (
    DEFAULT_SURVIVAL_POINTS,
    Sweep,
    load_spec,
    parse_spec,
)
from tests.spec.bases import DISK, HALF_LINE, LINE, PLANE, QUICKSTART
from tests.spec.edit import DELETE, assert_rejected, bad, dumps, edited, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad("grid-list", spec(LINE, grid=[1.0]), "[grid] must be a table; got [1.0]."),
    bad(
        "unknown-top-level",
        spec(LINE, grids={}),
        "unknown key 'grids' at the top level. Allowed keys: sweep, motion, time, domain, "
        "record, grid, zip.",
        "Did you mean 'grid'?",
    ),
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
    assert_rejected(text, fragments)


def test_bad_inputs_table_bases_are_valid() -> None:
    for base in (LINE, PLANE, DISK, HALF_LINE):
        assert isinstance(parse(dumps(base)), Sweep)


def test_domain_inf_string_and_toml_inf_hash_equal() -> None:
    a = parse(spec(LINE, domain__upper=["inf"], domain__walls={"x_lower": "absorbing"}))
    b = parse(
        spec(LINE, domain__upper=[math.inf], domain__walls={"x_lower": "absorbing"})
    )
    assert a.spec_hash == b.spec_hash


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


#: The hash of sweeps/quickstart.toml as computed before sweep/spec.py became a
#: package: a refactoring of the reader must not change it (stores made before
#: resume after). A deliberate change of the canonical form updates it and says so in
#: CHANGELOG.md.
QUICKSTART_HASH = "be9c2b8e77dcb5cb0b4b2b5d12bd4df6b113644e9bc11d1ee1e32af3c099c2d6"


def test_spec_hash_of_quickstart_is_pinned() -> None:
    assert load_spec(QUICKSTART).spec_hash == QUICKSTART_HASH
