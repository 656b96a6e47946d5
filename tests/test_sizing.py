"""sweep.sizing: expected work (closed forms, pilots), decay times, warnings on a
sweep's choices."""

from __future__ import annotations

from pathlib import Path

import pytest

import sweep
from sweep.execute import RunOptions, run
from sweep.plan import make_plan
from sweep.sizing import size, slowest_decay_time
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
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }
targets = [{ center = [0.5, 0.5, 0.5], radius = 0.1 }]
[grid]
"domain.targets.0.radius" = [0.1, 0.2]
"""


def test_slowest_decay_time_of_interval() -> None:
    # AA interval [0, 1]: slowest decay rate D pi^2 / L^2 (Redner 2001 ch. 2 [from memory]).
    point = parse_spec(SMALL_SPEC, source="t.toml").points[0]
    assert slowest_decay_time(point) == pytest.approx(1 / (0.5 * 3.141592653589793**2))


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


#: A pilot estimate of the work must land within this factor of the run's own count
#: (the old horizon-bound estimate was 80x too high for the study below).
ESTIMATE_FACTOR = 1.5


def test_work_without_closed_form_is_estimated_from_a_pilot(tmp_path: Path) -> None:
    """A reflecting disk with a target at its centre (no closed form here): the
    expected walker-steps come from a pilot, not from the horizon."""
    from tests.degenerate import ALL_ON_TARGET

    text = ALL_ON_TARGET.replace("walkers = 400", "walkers = 1000").replace(
        "chunk = 200", "chunk = 500"
    )
    spec = tmp_path / "disk.toml"
    spec.write_text(text)
    sweep_ = load_spec(spec)
    sizing = size(make_plan(sweep_))
    assert "pilot" in sizing.estimate_note, sizing.estimate_note
    done = run(spec, tmp_path / "disk.zarr", RunOptions(threads=2, progress=False))
    ratio = sizing.walker_steps_expected / done.walker_steps
    assert 1 / ESTIMATE_FACTOR < ratio < ESTIMATE_FACTOR, ratio
