"""Tests of ``sweep.spec.values``: numbers, whole numbers, vectors, words and booleans,
and the message each gives for a wrong type or an out-of-range value.
"""

from __future__ import annotations

import math

import pytest

from sweep.errors import SpecError
from tests.spec.bases import HALF_LINE, LINE, PLANE, SOURCE
from tests.spec.edit import assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
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
        "per-walker-string",
        spec(LINE, record={"per_walker": "yes"}),
        '[record.per_walker] must be true or false; got "yes".',
    ),
    bad(
        "per-walker-list-of-bools",
        spec(LINE, record={"per_walker": [True, False]}),
        "[record.per_walker] must be true or false; got [true, false].",
    ),
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
        "dimension-zero",
        spec(LINE, motion__dimension=0),
        "[motion.dimension] must be from 1 to 8; got 0.",
    ),
    bad(
        "dimension-too-large",
        spec(LINE, motion__dimension=9),
        "[motion.dimension] must be from 1 to 8; got 9.",
    ),
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
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


@pytest.mark.parametrize("value", [10**400, -(10**400), 2**1024])
def test_number_huge_integer_raises_spec_error(value: int) -> None:
    with pytest.raises(SpecError) as info:
        parse(spec(LINE, time__dt=value))
    assert str(info.value) == (
        f"{SOURCE}: [time.dt] must be a number within +-1.8e308; got "
        f"{str(value)[:6]}...({len(str(value))} digits)."
    )
