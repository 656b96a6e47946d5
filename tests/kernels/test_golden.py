"""Golden outputs: a few short runs pinned bit for bit, so that a change of the numbers
the same seeds give cannot slip in unnoticed.

Stores resume only with the stream version they were made with
(:data:`kernels.STREAM_VERSION`), so every change that alters the numbers must bump it.
These runs go the whole way from a sweep's seed (plan: SeedSequence per task; the
kernel: SFC64 in registers, every kind of draw) through each compiled loop. When a test
here fails:

* the change was meant to keep every number (a refactor, a speed-up): it does not; find
  why;
* it was meant to change them (a new generator, another order of draws): bump
  ``STREAM_VERSION`` in ``kernels/__init__.py``, say so in CHANGELOG.md, and renew
  :data:`GOLDEN` and :data:`GOLDEN_STREAM_VERSION` from the printed digests
  (``pytest -s``).
"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest

from kernels import STREAM_VERSION
from sweep.execute import simulate_task
from sweep.plan import make_plan
from sweep.spec import parse_spec

#: The stream version the digests below belong to.
GOLDEN_STREAM_VERSION = 2

_HEAD = """
[sweep]
seed = {seed}
walkers = 300
[time]
dt = 0.01
horizon = 1.5
{monitoring}
[record]
survival = {{ stop = 1.5, points = 7 }}
occupancy = {{ times = [0.0, 0.1, 1.0], bins = 4 }}
fpt_bins = 30
"""

#: Short runs through each compiled loop and every kind of draw: step normals,
#: bridge uniforms and hitting times (inverse Gaussian, Levy), exit points, uniform
#: starts; box (1-D, 3-D), box with targets, ball with a target, 4-D (the array loop),
#: and the spheres scheme (kernels/spheres.py: jumps and layer steps; with reactive
#: walls and targets and an obstacle).
RUNS: dict[str, str] = {
    "interval-drift-bridge": _HEAD.format(seed=1, monitoring="")
    + """
[motion]
dimension = 1
diffusivity = 0.5
drift = [0.3]
start = [0.4]
[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }
""",
    "box-3d-mixed-walls-target-uniform-start": _HEAD.format(seed=2, monitoring="")
    + """
[motion]
dimension = 3
diffusivity = 0.5
start = "uniform"
[domain]
lower = [0.0, 0.0, 0.0]
upper = [1.0, 0.8, 0.6]
walls = { x_lower = "absorbing", x_upper = "reflecting", y_lower = "reflecting", y_upper = "absorbing", z_lower = "reflecting", z_upper = "reflecting" }
targets = [{ center = [0.5, 0.4, 0.3], radius = 0.15 }, { center = [0.8, 0.2, 0.3], radius = 0.1 }]
""",
    "disc-absorbing-target": _HEAD.format(seed=3, monitoring="")
    + """
[motion]
dimension = 2
diffusivity = 0.5
start = [0.2, 0.1]
[domain]
shape = "ball"
center = [0.0, 0.0]
radius = 1.0
wall = "absorbing"
targets = [{ center = [-0.4, 0.0], radius = 0.2 }]
""",
    "box-4d-endpoint": _HEAD.format(seed=4, monitoring='monitoring = "endpoint"')
    + """
[motion]
dimension = 4
diffusivity = 0.5
drift = [0.1, 0.0, -0.2, 0.0]
start = [0.5, 0.5, 0.5, 0.5]
[domain]
lower = [0.0, 0.0, 0.0, 0.0]
upper = [1.0, 1.0, 1.0, 1.0]
walls = { x_lower = "absorbing", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "absorbing", z_upper = "absorbing", x3_lower = "reflecting", x3_upper = "reflecting" }
""",
    "spheres-cube-target": """
[sweep]
seed = 5
walkers = 300
[time]
dt = 0.001
horizon = 3.0
scheme = "spheres"
[record]
survival = { stop = 3.0, points = 7 }
fpt_bins = 30
[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"
[domain]
lower = [-1.0, -1.0, -1.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "absorbing", z_upper = "reflecting" }
targets = [{ center = [0.0, 0.0, 0.0], radius = 0.2 }]
""",
    "spheres-reactive-obstacle": """
[sweep]
seed = 6
walkers = 300
[time]
dt = 0.001
horizon = 3.0
scheme = "spheres"
[record]
survival = { stop = 3.0, points = 7 }
fpt_bins = 30
[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"
[domain]
lower = [-1.0, -1.0, -1.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = { reactivity = 0.5 }, y_lower = "reflecting", y_upper = "reflecting", z_lower = "absorbing", z_upper = "reflecting" }
targets = [{ center = [0.0, 0.0, 0.0], radius = 0.2, reactivity = 2.0 }, { center = [0.5, 0.5, 0.5], radius = 0.15 }]
obstacles = [{ center = [-0.5, 0.5, 0.0], radius = 0.2 }]
""",
}

#: sha256 of each run's outputs (first task), in the order of :func:`digest`.
GOLDEN: dict[str, str] = {
    "interval-drift-bridge": (
        "33696c0db2c26f10146d14a87415019c000a59b2f548eb9e5e95c088c1c45243"
    ),
    "box-3d-mixed-walls-target-uniform-start": (
        "f5c82449ab2408d7215355339938b3903065012e3d3caf152920d8b36e11d102"
    ),
    "disc-absorbing-target": (
        "41cdc4fb7f89c82e6527fe5786e4eec772a70b328d065bcf5773bb1a3728481b"
    ),
    "box-4d-endpoint": (
        "c731b89f84a5c641bc861bcedbabd624ab00a90a8dbdf3c94f37ccf66bdc5190"
    ),
    "spheres-cube-target": (
        "c5842c71784e92dc0a708234dd65ab1b141ed77e66866680fd23bbd2b7ad886b"
    ),
    "spheres-reactive-obstacle": (
        "cdaab80c2f2e34f239135aed66a42fff514dca74e464458a680ec0ea029c31a6"
    ),
}


def digest(name: str) -> tuple[str, str]:
    """(sha256 of every output of the run's first task, a readable excerpt)."""
    plan = make_plan(parse_spec(RUNS[name], source=f"<golden {name}>"))
    output, steps = simulate_task(plan.tasks[0])
    h = hashlib.sha256()
    for array in (
        output.time,
        output.wall,
        output.position,
        output.survival,
        output.occupancy if output.occupancy is not None else np.zeros(0),
        output.fpt_histogram,
        np.array([steps], dtype=np.int64),
    ):
        assert array is not None
        h.update(np.ascontiguousarray(array).tobytes())
    excerpt = f"steps {steps}, first times {output.time[:3].tolist()}"
    return h.hexdigest(), excerpt


def test_golden_digests_belong_to_this_stream_version() -> None:
    # A bump of STREAM_VERSION renews the digests (see the module docstring).
    assert STREAM_VERSION == GOLDEN_STREAM_VERSION


@pytest.mark.parametrize("name", list(RUNS))
def test_same_seeds_give_the_pinned_numbers(name: str) -> None:
    found, excerpt = digest(name)
    print(f"{name}: {found} ({excerpt})")
    assert found == GOLDEN[name], (
        f"{name}: the numbers for the same seeds changed ({excerpt}). If that is "
        "intended, bump kernels.STREAM_VERSION and renew GOLDEN (module docstring)."
    )
