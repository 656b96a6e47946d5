"""Tests of ``sweep.spec.grid``: [grid] products, [[zip]] groups, which keys may be swept
and how a swept key reaches into tables and lists.
"""

from __future__ import annotations

import math
import re
from typing import Any

import pytest

from sweep.errors import SpecError
from tests.spec.bases import LINE, PLANE, SOURCE
from tests.spec.edit import DELETE, assert_rejected, bad, dumps, parse, spec, with_grid

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "zip-value-table",
        spec(LINE, zip=[{"time.dt": {"a": [True, "b", math.inf]}}]),
        '[zip #1.time.dt] must be a non-empty list of values; got { a = [true, "b", '
        "inf] }.",
    ),
    bad(
        "zip-number",
        spec(LINE, zip=3),
        "[zip] must be written as [[zip]] tables of lists of equal length.",
    ),
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
        "[domain.walls.x_lower] must be 'absorbing' or 'reflecting' ('periodic', or "
        '{ reactivity = κ }); got "open". '
        '(at point 1: domain.walls.x_lower = "open")',
    ),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


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
    text = with_grid(LINE, "domain.walls.x_lower", ["absorbing"], domain__walls="none")
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
    text = with_grid(PLANE, "domain.targets.0.radius", [0.1], domain__targets=[target])
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
        parse(with_grid(PLANE, key, [0.1]))


def test_grid_target_index_with_leading_zero_is_an_index() -> None:
    sweep = parse(with_grid(PLANE, "domain.targets.00.radius", [0.2]))
    assert sweep.points[0].domain.targets[0].radius == 0.2


def test_grid_target_index_out_of_range_names_file() -> None:
    text = with_grid(PLANE, "domain.targets.1.radius", [0.1, 0.2])
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).startswith(
        f"{SOURCE}: [grid.domain.targets.1.radius] reaches entry 1 of domain.targets, "
        "which has 1 entry."
    )


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
    text = with_grid(PLANE, key, values, **changes)
    with pytest.raises(SpecError, match=re.escape(f"{SOURCE}: {location}")):
        parse(text)


def test_grid_key_reaching_past_list_end_names_point() -> None:
    text = with_grid(PLANE, "domain.targets.1.radius", [0.1, 0.2])
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
