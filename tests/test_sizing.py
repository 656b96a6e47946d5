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
from sweep.sizing import check_memory, memory_limit, size, slowest_decay_time
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


def _cgroup_tree(root: Path, membership: str, limits: dict[str, str]) -> Path:
    """A directory tree shaped like /proc and /sys/fs/cgroup: ``membership`` is
    /proc/self/cgroup's text, ``limits`` maps files under sys/fs/cgroup to contents."""
    (root / "proc/self").mkdir(parents=True)
    (root / "proc/self/cgroup").write_text(membership)
    for name, text in limits.items():
        path = root / "sys/fs/cgroup" / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text + "\n")
    return root


def test_memory_limit_reads_cgroup_v2_and_its_parents(tmp_path: Path) -> None:
    # A Slurm-style job: the limit sits on the job's group, its step says "max".
    root = _cgroup_tree(
        tmp_path,
        "0::/slurm/uid_1/job_7/step_0\n",
        {
            "slurm/uid_1/job_7/step_0/memory.max": "max",
            "slurm/uid_1/job_7/memory.max": str(3 * 2**30),
            "slurm/memory.max": str(64 * 2**30),
        },
    )
    assert memory_limit(root) == (
        3 * 2**30,
        "the cgroup limit (/sys/fs/cgroup/slurm/uid_1/job_7/memory.max)",
    )


def test_memory_limit_reads_cgroup_v1(tmp_path: Path) -> None:
    root = _cgroup_tree(
        tmp_path,
        "5:cpu,cpuacct:/job_9\n4:memory:/job_9\n",
        {
            # cgroup v1's "no limit" is 2^63 rounded down to a page.
            "memory/memory.limit_in_bytes": "9223372036854771712",
            "memory/job_9/memory.limit_in_bytes": str(2**30),
        },
    )
    assert memory_limit(root)[0] == 2**30


def test_memory_limit_without_cgroup_is_the_machine(tmp_path: Path) -> None:
    unlimited = _cgroup_tree(
        tmp_path / "a", "0::/user.slice\n", {"user.slice/memory.max": "max"}
    )
    machine = memory_limit(tmp_path / "nothing-here")
    assert machine[1] == "this machine" and machine[0] > 0
    assert memory_limit(unlimited) == machine


def test_memory_beyond_cgroup_limit_is_refused(tmp_path: Path) -> None:
    # 2 million walkers per task need about 50 MiB; the job may use 16 MiB.
    text = SMALL_SPEC.replace("walkers = 3000", "walkers = 2_000_000").replace(
        "chunk = 500", "chunk = 2_000_000"
    )
    spec = tmp_path / "big.toml"
    spec.write_text(text)
    root = _cgroup_tree(
        tmp_path / "root", "0::/job\n", {"job/memory.max": str(16 * 2**20)}
    )
    with pytest.raises(
        PlanError,
        match=r"of the cgroup limit \(/sys/fs/cgroup/job/memory.max\)'s 16 MiB",
    ):
        check_memory(load_spec(spec), 1, memory_limit(root))
    check_memory(load_spec(spec), 1)  # fits this machine


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
