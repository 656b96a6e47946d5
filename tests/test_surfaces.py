"""Reactive walls and targets, periodic faces and obstacles end to end: the definition
(keys, sweeping, refusals with one message each), run, resume, check, export.

Kernel accuracy is tested in ``tests/kernels/test_surfaces.py``, the closed forms in
``tests/analytic/test_reactive.py``; here the surfaces go through the real stack
(definition -> plan -> Dask threads -> numba -> zarr -> check).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

import sweep
from sweep.errors import SpecError
from sweep.spec import parse_spec
from tests.conftest import assert_stores_identical, build_store, run_cli

HALF_LINE_REACTIVE = """
[sweep]
name = "reactive-half-line"
seed = 21
walkers = 6000
chunk = 2000
[motion]
dimension = 1
diffusivity = 0.5
start = 0.5
[time]
dt = 0.02
horizon = 6.0
[domain]
lower = 0.0
upper = "inf"
walls = { x_lower = { reactivity = 1.0 } }
[grid]
"domain.walls.x_lower.reactivity" = [0.3, 3.0, "inf"]
"""

PERIODIC_BOX = """
[sweep]
name = "periodic-square"
seed = 22
walkers = 4000
chunk = 1000
[motion]
dimension = 2
diffusivity = 0.5
drift = [0.2, 0.0]
start = [0.3, 0.6]
[time]
dt = 0.01
horizon = 1.0
[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "periodic", x_upper = "periodic", y_lower = "periodic", y_upper = "periodic" }
[record]
occupancy = { times = [1.0], bins = 4 }
"""

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
        "[domain.targets.0] comes within 0.03 of a periodic face on axis 1",
        id="target-near-periodic-face",
    ),
    pytest.param(
        definition(
            PERIODIC_Y,
            extra="obstacles = [{ center = [0.5, 0.5], radius = 0.1 }]",
            scheme='scheme = "spheres"',
        ),
        '[time.scheme] "spheres" supports absorbing and reflecting walls and absorbing '
        "targets only; this point has reactive walls, periodic faces, obstacles",
        id="spheres-with-surfaces",
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


def test_reactive_sweep_runs_checks_and_resumes_bit_identical(tmp_path: Path) -> None:
    """Three reactivities (one inf) on the half-line: `sweep check` compares survival
    with the closed form (J1) and passes; a run that lost half its tasks resumes to
    the same bits."""
    full = build_store(HALF_LINE_REACTIVE, tmp_path / "full.zarr", threads=2)
    result = run_cli("check", full)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "all 9 checks passed" in result.stdout, result.stdout
    partial = build_store(HALF_LINE_REACTIVE, tmp_path / "partial.zarr")
    markers = sorted((partial / "_tasks").iterdir())
    for marker in markers[1::2]:
        marker.unlink()
    build_store(HALF_LINE_REACTIVE, partial, threads=2)
    assert_stores_identical(full, partial)
    ds = sweep.open(full)
    assert list(ds["x_lower_reactivity"].values) == [0.3, 3.0, math.inf]
    walls = ds["absorbing_wall"].values
    assert set(np.unique(walls)) == {-1, 0}  # reactions carry the wall's index


def test_periodic_sweep_displacement_check_resume_export(tmp_path: Path) -> None:
    """A periodic square: displacements stored per walker, `sweep check` compares the
    mean-square displacement with 2dDt + |mu t|^2, occupancy stays in the cell, a
    resumed run is bit-identical and the HDF5 export carries the displacements."""
    full = build_store(PERIODIC_BOX, tmp_path / "full.zarr", threads=2)
    ds = sweep.open(full)
    assert ds["displacement"].dims == ("point", "walker", "axis")
    assert int(ds["occupancy"].sum()) == 4000
    result = run_cli("check", full, "--json")
    assert result.returncode == 0, result.stdout + result.stderr
    report = json.loads(result.stdout)
    (row,) = report["rows"]
    assert row["statistic"].startswith("mean-square displacement")
    assert row["exact"] == pytest.approx(2 * 2 * 0.5 * 1.0 + 0.2**2)
    partial = build_store(PERIODIC_BOX, tmp_path / "partial.zarr")
    for marker in sorted((partial / "_tasks").iterdir())[::2]:
        marker.unlink()
    build_store(PERIODIC_BOX, partial)
    assert_stores_identical(full, partial)
    out = tmp_path / "out.h5"
    assert run_cli("export", full, out).returncode == 0
    import h5py

    with h5py.File(out) as f:
        assert f["displacement"].shape == (1, 4000, 2)


def test_plan_sizes_reactive_points_with_their_closed_form() -> None:
    """`sweep plan` prices a reactive target in a reflecting ball with the reactive
    mean (J3), not the absorbing one, and a geometry without a form by its pilot."""
    from sweep import sizing
    from sweep.analytic import reactive

    text = (
        Path(__file__).parent.parent / "sweeps" / "catalytic-pellet.toml"
    ).read_text()
    point = parse_spec(text, "pellet.toml").points[0]
    exact = reactive.centre_target_reactive_mean(1.2, 0.5, 2.0, 1.0, 0.1)
    assert sizing.expected_steps(point) == pytest.approx(exact / point.timing.dt)
    periodic = parse_spec(PERIODIC_BOX, "p.toml").points[0]
    assert sizing.expected_steps(periodic) is None
