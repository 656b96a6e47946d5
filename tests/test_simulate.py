"""sweep.simulate: a task in, its kernel outputs and work out, the same every time;
the warm-up compiles on one walker. (The stored numbers themselves are pinned by
tests/kernels/test_golden.py.)"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from sweep.plan import make_plan
from sweep.simulate import simulate_spheres_moves, simulate_task, tiny_task, warm_up
from sweep.spec import parse_spec
from tests.conftest import SMALL_SPEC


def test_a_task_gives_the_same_outputs_every_time() -> None:
    task = make_plan(parse_spec(SMALL_SPEC, source="s.toml")).tasks[3]
    (a, steps_a), (b, steps_b) = simulate_task(task), simulate_task(task)
    assert steps_a == steps_b > 0
    for left, right in zip(dataclasses.astuple(a), dataclasses.astuple(b)):
        np.testing.assert_array_equal(left, right, strict=True)
    assert a.time.shape == (task.n_walkers,)
    assert a.occupancy is not None and a.occupancy.shape == (2, 8)


@pytest.mark.parametrize("scheme", ["steps", "spheres"])
def test_warm_up_runs_one_walker(scheme: str) -> None:
    task = tiny_task(scheme)
    assert task.n_walkers == 1 and task.args.scheme == scheme
    warm_up(scheme=scheme)
    warm_up(task, announce=True)


def test_spheres_moves_count_jumps_and_steps() -> None:
    task = tiny_task("spheres")
    n, d = task.n_walkers, task.args.geometry.dimension
    output, moves = simulate_spheres_moves(
        task,
        np.empty(n),
        np.empty(n, dtype=np.int16),
        np.empty((n, d)),
        np.zeros(task.args.recording.survival_times.shape[0], dtype=np.int64),
        np.zeros((0, 0), dtype=np.int64),
    )
    assert moves.shape == (2,) and moves.sum() >= 1
    assert output.wall.shape == (n,)
