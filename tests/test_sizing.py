"""`sweep plan`: sizes, run-time estimate from the measured speed, warnings; memory."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

import sweep
from sweep.errors import PlanError
from sweep.execute import RunOptions, run
from sweep.plan import make_plan
from sweep.sizing import check_memory, size, slowest_decay_time
from sweep.spec import load_spec, parse_spec
from tests.conftest import SMALL_SPEC

TARGET_SWEEP = """
[sweep]
name = "target-radius"
seed = 11
walkers = 400
chunk = 200
[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"
[time]
dt = 1e-3
horizon = 60.0
[domain]
lower = [0.0, 0.0, 0.0]
upper = [1.0, 1.0, 1.0]
walls = { x_low = "reflecting", x_high = "reflecting", y_low = "reflecting", y_high = "reflecting", z_low = "reflecting", z_high = "reflecting" }
targets = [{ center = [0.5, 0.5, 0.5], radius = 0.1 }]
[grid]
"domain.targets.0.radius" = [0.1, 0.2]
"""


def test_plan_prints_sizes_and_estimate(small_spec: Path) -> None:
    result = subprocess.run(
        [sys.executable, "-m", "sweep.cli", "plan", str(small_spec), "--cores", "4"],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stderr
    for fragment in (
        "points:          2",
        "tasks:           12",
        "walker-steps:",
        "disk:",
        "memory per task:",
        "on 4 cores",
    ):
        assert fragment in result.stdout


def test_plan_warns_about_coarse_dt_and_short_horizon(tmp_path: Path) -> None:
    text = (
        SMALL_SPEC.replace("dt = 1e-3", "dt = 0.02")
        .replace("horizon = 3.0", "horizon = 0.2")
        .replace("stop = 1.0", "stop = 0.2")
        .replace("times = [0.2, 0.05]", "times = [0.1]")
    )
    sizing = size(make_plan(parse_spec(text, source="coarse.toml")))
    joined = "\n".join(sizing.warnings)
    assert "is coarse" in joined and "domain width" in joined
    assert "horizon 0.2 is short" in joined


def test_slowest_decay_time_of_interval() -> None:
    # AA interval [0, 1]: slowest decay rate D pi^2 / L^2 (Redner 2001 ch. 2 [from memory]).
    point = load_spec_text(SMALL_SPEC).points[0]
    assert slowest_decay_time(point) == pytest.approx(1 / (0.5 * 3.141592653589793**2))


def load_spec_text(text: str) -> sweep.Sweep:
    return parse_spec(text, source="t.toml")


def test_memory_beyond_machine_is_refused(tmp_path: Path) -> None:
    text = SMALL_SPEC.replace("walkers = 3000", "walkers = 4_000_000_000").replace(
        "chunk = 500", "chunk = 2_000_000_000"
    )
    spec = tmp_path / "huge.toml"
    spec.write_text(text)
    with pytest.raises(
        PlanError, match=r"\[sweep.chunk\] = 2000000000 walkers per task needs about"
    ):
        check_memory(load_spec(spec), 2)
    with pytest.raises(PlanError):
        run(spec, tmp_path / "huge.zarr", RunOptions(threads=2, progress=False))
    assert not (tmp_path / "huge.zarr").exists()


def test_target_radius_sweep_runs(tmp_path: Path) -> None:
    """A reflecting box with one absorbing target, swept over the target radius."""
    spec = tmp_path / "targets.toml"
    spec.write_text(TARGET_SWEEP)
    out = tmp_path / "t.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    ds = sweep.open(out)
    assert list(ds.target_0_radius.values) == [0.1, 0.2]
    walls = ds.absorbing_wall.values
    # Only the target absorbs (wall index 6 follows the six box faces), and every
    # walker finds it well before the horizon.
    assert set(walls.ravel().tolist()) == {6}
    means = ds.first_passage_time.mean("walker").values
    assert means[1] < means[0]  # a larger target is found sooner
