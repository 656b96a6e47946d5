"""Tests of ``sweep.spec.sections.record``: per-walker values, the survival grid and
occupancy snapshots.
"""

from __future__ import annotations

from typing import Any

import pytest

from tests.spec.bases import CUBE, HALF_LINE, LINE, OCCUPANCY, PLANE
from tests.spec.edit import assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
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
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


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
