"""Tests of ``sweep.spec.sections.motion``: dimension, diffusivity, drift and the start
point (inside the domain, outside every target, or uniform over free space).
"""

from __future__ import annotations

import re

import pytest

from sweep.errors import SpecError
from tests.spec.bases import DISK, HALF_LINE, LINE, PLANE, SOURCE
from tests.spec.edit import assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "start-unknown-word",
        spec(PLANE, motion__start="center"),
        '[motion.start] must be a point (list of 2 numbers) or "uniform"; '
        'got "center".',
    ),
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
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


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
