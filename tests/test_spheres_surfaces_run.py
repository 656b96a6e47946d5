"""The spheres scheme with reactive walls and targets and reflecting obstacles, end to
end: definition -> plan -> Dask threads -> numba -> zarr -> `sweep check` against the
closed forms of ``sweep/analytic/reactive.py`` (analytic reference J2-J5), the limits
kappa = 0 and inf, and a bit-identical resume.

Kernel accuracy is tested in ``tests/kernels/test_spheres_surfaces.py``.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import sweep
from tests.conftest import assert_stores_identical, build_store, run_cli

#: A reactive end of [0, 1] (reflecting at 1), kappa = 0, 2 and inf (J2; kappa = inf
#: is C3, kappa = 0 never reacts).
REACTIVE_END = """
[sweep]
name = "spheres-reactive-end"
seed = 34
walkers = 4000
chunk = 2000
[motion]
dimension = 1
diffusivity = 0.5
start = 0.5
[time]
dt = 1e-3
horizon = 20.0
scheme = "spheres"
[domain]
lower = 0.0
upper = 1.0
walls = { x_lower = { reactivity = 2.0 }, x_upper = "reflecting" }
[grid]
"domain.walls.x_lower.reactivity" = [0.0, 2.0, "inf"]
"""

#: A reactive target at the centre of a reflecting 3-D ball, kappa = 5 and inf (J3).
REACTIVE_TARGET = """
[sweep]
name = "spheres-reactive-target"
seed = 31
walkers = 4000
chunk = 2000
[motion]
dimension = 3
diffusivity = 1.0
start = [0.6, 0.0, 0.0]
[time]
dt = 3e-4
horizon = 20.0
scheme = "spheres"
[domain]
shape = "ball"
center = [0.0, 0.0, 0.0]
radius = 1.0
wall = "reflecting"
targets = [{ center = [0.0, 0.0, 0.0], radius = 0.25, reactivity = 5.0 }]
[grid]
"domain.targets.0.reactivity" = [5.0, "inf"]
"""

#: A reactive sphere in free 3-D space: survival (J4, Collins & Kimball's capture).
FREE_SPACE_TARGET = """
[sweep]
name = "spheres-collins-kimball"
seed = 32
walkers = 4000
chunk = 2000
[motion]
dimension = 3
diffusivity = 1.0
start = [1.5, 0.0, 0.0]
[time]
dt = 1e-3
horizon = 8.0
scheme = "spheres"
[domain]
lower = ["-inf", "-inf", "-inf"]
upper = ["inf", "inf", "inf"]
targets = [{ center = [0.0, 0.0, 0.0], radius = 1.0, reactivity = 1.0 }]
[record]
survival = { stop = 8.0, points = 5 }
"""

#: An absorbing 3-D ball around a reflecting obstacle at its centre (J5).
OBSTACLE = """
[sweep]
name = "spheres-obstacle"
seed = 33
walkers = 4000
chunk = 2000
[motion]
dimension = 3
diffusivity = 1.0
start = [0.6, 0.0, 0.0]
[time]
dt = 1e-5
horizon = 10.0
scheme = "spheres"
[domain]
shape = "ball"
center = [0.0, 0.0, 0.0]
radius = 1.0
wall = "absorbing"
obstacles = [{ center = [0.0, 0.0, 0.0], radius = 0.3 }]
"""


@pytest.mark.parametrize(
    ("text", "checks"),
    [(REACTIVE_TARGET, 2), (FREE_SPACE_TARGET, 3), (OBSTACLE, 1)],
    ids=["J3 reactive target", "J4 free space", "J5 obstacle"],
)
def test_spheres_pass_the_surface_checks(
    text: str, checks: int, tmp_path: Path
) -> None:
    out = build_store(text, tmp_path / "s.zarr", threads=2)
    result = run_cli("check", out)
    print(result.stdout)
    assert result.returncode == 0, result.stdout + result.stderr
    assert f"all {checks} checks passed" in result.stdout, result.stdout


def test_reactive_end_limits_check_and_resume_bit_identical(tmp_path: Path) -> None:
    """kappa = 2 and inf pass `sweep check` (J2, C3); kappa = 0 reacts never (every
    walker free at the horizon: a reflecting end); a run that lost half its tasks
    resumes to the same bits."""
    full = build_store(REACTIVE_END, tmp_path / "full.zarr", threads=2)
    result = run_cli("check", full)
    print(result.stdout)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "all 2 checks passed" in result.stdout, result.stdout
    ds = sweep.open(full)
    assert list(ds["x_lower_reactivity"].values) == [0.0, 2.0, math.inf]
    walls = ds["absorbing_wall"].values
    assert (walls[0] == -1).all() and (walls[1:] == 0).all()
    np.testing.assert_array_equal(ds["exit_position"].values[1:, :, 0], 0.0)
    partial = build_store(REACTIVE_END, tmp_path / "partial.zarr")
    markers = sorted((partial / "_tasks").iterdir())
    for marker in markers[1::2]:
        marker.unlink()
    build_store(REACTIVE_END, partial, threads=2)
    assert_stores_identical(full, partial)
