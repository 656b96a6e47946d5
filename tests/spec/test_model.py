"""Tests of ``sweep.spec.model``: the dataclasses' derived values (steps, wall names and
kinds, containment, chunk sizes, the survival grid).
"""

from __future__ import annotations

import pytest

from sweep.spec import (
    Timing,
)
from tests.spec.bases import DISK, HALF_LINE, LINE, PLANE
from tests.spec.edit import DELETE, dumps, parse, spec


def test_record_survival_times_grid() -> None:
    sweep = parse(spec(LINE, record={"survival": {"stop": 2.0, "points": 5}}))
    assert sweep.points[0].record.survival_times == (0.0, 0.5, 1.0, 1.5, 2.0)


def test_chunk_walkers_last_chunk_smaller() -> None:
    sweep = parse(spec(LINE, sweep__walkers=1000, sweep__chunk=300))
    assert sweep.n_chunks == 4
    assert [sweep.chunk_walkers(i) for i in range(4)] == [300, 300, 300, 100]


def test_domain_contains_excludes_targets() -> None:
    domain = parse(dumps(PLANE)).points[0].domain
    assert domain.contains((0.25, 0.5))
    assert not domain.contains((0.75, 0.5))
    assert not domain.contains((0.0, 0.5))


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
