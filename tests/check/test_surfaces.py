"""Reactive walls and targets, periodic faces and obstacles end to end: run, resume,
`sweep check` against the closed forms of ``sweep/analytic/reactive.py``
(``sweep/check/surfaces.py``), export, and `sweep plan`'s sizing.

Kernel accuracy is tested in ``tests/kernels/test_surfaces.py``, the closed forms in
``tests/analytic/test_reactive.py``, the definition in
``tests/spec/sections/test_surfaces.py``; here the surfaces go through the real stack
(definition -> plan -> Dask threads -> numba -> zarr -> check).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

import sweep
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

    text = (Path(__file__).parents[2] / "sweeps" / "catalytic-pellet.toml").read_text()
    point = parse_spec(text, "pellet.toml").points[0]
    exact = reactive.centre_target_reactive_mean(1.2, 0.5, 2.0, 1.0, 0.1)
    assert sizing.expected_steps(point) == pytest.approx(exact / point.timing.dt)
    periodic = parse_spec(PERIODIC_BOX, "p.toml").points[0]
    assert sizing.expected_steps(periodic) is None
