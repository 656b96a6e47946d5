"""Tests of ``sweep.spec.sections.domain``: boxes (with infinite sides), balls, walls and
targets.
"""

from __future__ import annotations

import math
from typing import Any

import pytest

from tests.spec.bases import DISK, HALF_LINE, LINE, OCCUPANCY, PLANE
from tests.spec.edit import DELETE, assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "shape-unknown",
        spec(LINE, domain__shape="sphere"),
        "[domain.shape] must be 'box' or 'ball'; got \"sphere\".",
    ),
    bad(
        "targets-table",
        spec(PLANE, domain__targets={"center": [0.5, 0.5], "radius": 0.1}),
        "[domain.targets] must be a list of tables; "
        "got { center = [0.5, 0.5], radius = 0.1 }.",
    ),
    bad(
        "target-number",
        spec(PLANE, domain__targets=[0.5]),
        "[domain.targets.0] must be a table { center = [...], radius = ... }; got 0.5.",
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
        "[domain.walls.x_lower] must be 'absorbing' or 'reflecting' ('periodic', or "
        '{ reactivity = κ }); got "sticky".',
    ),
    bad(
        "ball-wall-kind-unknown",
        spec(DISK, domain__wall=True),
        "[domain.wall] must be 'absorbing' or 'reflecting' ({ reactivity = κ }); got true.",
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
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


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
