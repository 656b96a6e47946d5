"""The surface keys of ``[domain]`` (docs/surfaces.md): reactive walls and targets,
periodic faces, obstacles; sweeping them, keeping old hashes, and refusing
contradictions with one message each (``sweep/spec/sections/surfaces.py``)."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from sweep.errors import SpecError
from sweep.spec import parse_spec
from tests.conftest import run_cli

BASE = """
[sweep]
seed = 1
walkers = 100
[motion]
dimension = 2
diffusivity = 0.5
start = {start}
[time]
dt = {dt}
horizon = 1.0
{scheme}
[domain]
lower = [0.0, 0.0]
upper = {upper}
walls = {walls}
{extra}
"""


def definition(
    walls: str = '{ x_lower = "absorbing", x_upper = "reflecting", '
    'y_lower = "reflecting", y_upper = "reflecting" }',
    *,
    start: str = "[0.2, 0.5]",
    upper: str = "[1.0, 1.0]",
    extra: str = "",
    dt: str = "1e-3",
    scheme: str = "",
) -> str:
    return BASE.format(
        walls=walls, start=start, upper=upper, extra=extra, dt=dt, scheme=scheme
    )


PERIODIC_Y = (
    '{ x_lower = "absorbing", x_upper = { reactivity = 2.0 }, '
    'y_lower = "periodic", y_upper = "periodic" }'
)

REFUSED = [
    pytest.param(
        definition(
            '{ x_lower = "periodic", x_upper = "absorbing", y_lower = "reflecting", '
            'y_upper = "reflecting" }'
        ),
        '[domain.walls.x_lower] is "periodic" but x_upper is "absorbing": periodic '
        "faces come in pairs",
        id="periodic-one-side",
    ),
    pytest.param(
        definition(
            '{ x_lower = { reactivity = 1.0 }, y_lower = "reflecting", '
            'y_upper = "reflecting", x_upper = { reactivity = 1.0 } }',
            upper='["inf", 1.0]',
        ),
        "[domain.walls.x_upper] is at infinity (domain.upper is inf): a reactive wall "
        "there would never be reached; remove it.",
        id="reactive-at-infinity",
    ),
    pytest.param(
        definition(extra="obstacles = [{ center = [0.2, 0.5], radius = 0.1 }]"),
        "[motion.start] lies inside obstacle 0",
        id="start-in-obstacle",
    ),
    pytest.param(
        definition(
            extra="targets = [{ center = [0.6, 0.5], radius = 0.1 }]\n"
            "obstacles = [{ center = [0.7, 0.5], radius = 0.1 }]"
        ),
        "[domain.obstacles.0] (center [0.7, 0.5], radius 0.1) overlaps or touches target 0",
        id="obstacle-overlaps-target",
    ),
    pytest.param(
        definition(extra="obstacles = [{ center = [0.95, 0.5], radius = 0.1 }]"),
        "[domain.obstacles.0] (center [0.95, 0.5], radius 0.1) must lie inside the domain",
        id="obstacle-outside",
    ),
    pytest.param(
        definition(
            extra="obstacles = [{ center = [0.5, 0.5], radius = 0.1 }, "
            "{ center = [0.6, 0.5], radius = 0.1 }]"
        ),
        "[domain.obstacles.1] (center [0.6, 0.5], radius 0.1) overlaps or touches obstacle 0",
        id="obstacles-overlap",
    ),
    pytest.param(
        definition(
            '{ x_lower = { reactivity = -1.0 }, x_upper = "reflecting", '
            'y_lower = "reflecting", y_upper = "reflecting" }'
        ),
        "[domain.walls.x_lower.reactivity] must be >= 0; got -1.0.",
        id="negative-reactivity",
    ),
    pytest.param(
        definition(
            '{ x_lower = { reactivity = 1.0, rate = 2 }, x_upper = "reflecting", '
            'y_lower = "reflecting", y_upper = "reflecting" }'
        ),
        "unknown key 'rate' in [domain.walls.x_lower]. Allowed keys: reactivity.",
        id="reactive-unknown-key",
    ),
    pytest.param(
        definition(
            PERIODIC_Y, extra="targets = [{ center = [0.5, 0.95], radius = 0.02 }]"
        ),
        "[domain.targets.0] comes within 0.03 of a periodic face on axis y",
        id="target-near-periodic-face",
    ),
    pytest.param(
        definition(
            PERIODIC_Y,
            extra="obstacles = [{ center = [0.5, 0.5], radius = 0.1 }]",
            scheme='scheme = "spheres"',
        ),
        '[time.scheme] "spheres" does not support periodic faces (its jumps would '
        "need the periodic images of targets and obstacles); this point has periodic "
        'faces on axes y. Use time.scheme = "steps"',
        id="spheres-with-periodic-faces",
    ),
    pytest.param(
        definition(
            '{ x_lower = "absorbing", x_upper = "reflecting", y_lower = "reflecting", '
            'y_upper = "reflecting" }',
            extra="targets = [{ center = [0.6, 0.5], radius = 0.1, reactivity = "
            '"fast" }]',
        ),
        '[domain.targets.0.reactivity] must be a number; got "fast".',
        id="target-reactivity-not-number",
    ),
]


def test_spheres_accept_reactive_surfaces_and_obstacles() -> None:
    # Reactive walls and targets and obstacles limit the spheres scheme's protective
    # radius (docs/surfaces.md); only periodic faces stay refused (above).
    text = definition(
        '{ x_lower = "absorbing", x_upper = { reactivity = 2.0 }, '
        'y_lower = "reflecting", y_upper = "reflecting" }',
        extra="targets = [{ center = [0.6, 0.5], radius = 0.1, reactivity = 1.0 }]\n"
        "obstacles = [{ center = [0.3, 0.2], radius = 0.1 }]",
        scheme='scheme = "spheres"',
    )
    point = parse_spec(text, "ok.toml").points[0]
    assert point.timing.scheme == "spheres"


@pytest.mark.parametrize(("text", "message"), REFUSED)
def test_contradictions_refused_with_one_message(text: str, message: str) -> None:
    with pytest.raises(SpecError) as info:
        parse_spec(text, "bad.toml")
    assert message in str(info.value), str(info.value)
    assert str(info.value).startswith("bad.toml: ")
    assert str(info.value).count("bad.toml") == 1  # one message


def test_ball_wall_refuses_periodic() -> None:
    text = """
[sweep]
seed = 1
walkers = 10
[motion]
dimension = 2
diffusivity = 1.0
start = [0.0, 0.0]
[time]
dt = 1e-3
horizon = 1.0
[domain]
shape = "ball"
center = [0.0, 0.0]
radius = 1.0
wall = "periodic"
"""
    with pytest.raises(
        SpecError, match=r"\[domain.wall\] \"periodic\" is for the faces of a box"
    ):
        parse_spec(text, "bad.toml")


def test_bad_surface_exits_2_with_the_message(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(REFUSED[0].values[0])
    result = run_cli("run", path, "--store", tmp_path / "s.zarr")
    assert result.returncode == 2, result.stderr
    assert "periodic faces come in pairs" in result.stderr
    assert not (tmp_path / "s.zarr").exists()


def test_old_definitions_keep_their_hash() -> None:
    """The new domain fields are left out of the canonical form at their defaults, so
    every definition written before them keeps its hash and random streams."""
    text = definition()
    point = parse_spec(text, "a.toml").points[0]
    assert set(point.canonical()["domain"]) == {
        "shape", "lower", "upper", "absorbing_low", "absorbing_high", "center",
        "radius", "surface_absorbing", "targets",
    }  # fmt: skip
    with_target = definition(extra="targets = [{ center = [0.6, 0.5], radius = 0.1 }]")
    canon = parse_spec(with_target, "a.toml").points[0].canonical()["domain"]
    assert canon["targets"] == [{"center": [0.6, 0.5], "radius": 0.1}]


def test_surface_keys_are_sweepable() -> None:
    text = definition(
        PERIODIC_Y,
        extra="targets = [{ center = [0.5, 0.5], radius = 0.1, reactivity = 1.0 }]\n"
        "obstacles = [{ center = [0.25, 0.5], radius = 0.05 }]\n"
        "[grid]\n"
        '"domain.walls.x_upper.reactivity" = [0.1, "inf"]\n'
        '"domain.targets.0.reactivity" = [0.0, 5.0]\n'
        '"domain.obstacles.0.radius" = [0.05, 0.08]\n',
        start="[0.8, 0.5]",
    )
    s = parse_spec(text, "grid.toml")
    assert s.n_points == 8
    kappas = {
        (p.domain.wall_reactivity()[1], p.domain.targets[0].reactivity)
        for p in s.points
    }
    assert kappas == {(0.1, 0.0), (0.1, 5.0), (math.inf, 0.0), (math.inf, 5.0)}
    assert {p.domain.obstacles[0].radius for p in s.points} == {0.05, 0.08}
    assert s.points[0].domain.wall_names() == (
        "x_lower", "x_upper", "y_lower", "y_upper", "target_0",
    )  # fmt: skip
    # A reaction counts as absorption at its wall; kappa = 0 never reacts.
    absorbing = [p.domain.wall_absorbing()[4] for p in s.points]
    assert sorted(set(absorbing)) == [False, True]
