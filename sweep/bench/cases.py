"""The bench's standard cases, the task of each, and its clock (CPU time of the
measuring thread)."""

from __future__ import annotations

import time

from sweep.plan import Task, make_plan
from sweep.spec import parse_spec

_COMMON = """
[sweep]
seed = 1
walkers = {walkers}
[time]
dt = {dt}
horizon = 50.0
"""

CASES: dict[str, str] = {
    "interval 1-D": """
[motion]
dimension = 1
diffusivity = 0.5
start = [0.5]
[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }
""",
    "box 3-D (2 abs + 4 refl)": """
[motion]
dimension = 3
diffusivity = 0.5
start = [0.5, 0.5, 0.5]
[domain]
lower = [0.0, 0.0, 0.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }
""",
    "ball 3-D": """
[motion]
dimension = 3
diffusivity = 0.5
start = [0.0, 0.0, 0.0]
[domain]
shape = "ball"
center = [0.0, 0.0, 0.0]
radius = 1.0
wall = "absorbing"
""",
    "refl. box 3-D + target": """
[motion]
dimension = 3
diffusivity = 0.5
start = [0.1, 0.1, 0.1]
[domain]
lower = [0.0, 0.0, 0.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }
targets = [{ center = [0.5, 0.5, 0.5], radius = 0.2 }]
""",
}

OCCUPANCY = """
[record]
occupancy = { times = [0.01, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5, 1.0, 2.0, 5.0], bins = 16 }
"""

#: The clock of one-core rates: CPU time of the measuring thread. This machine's two
#: cores are shared with other jobs, and a thread waiting for a core is what swings
#: wall-clock rates (one 1-D kernel, eight runs in a row: 119-171 M walker-steps/s by
#: the wall clock, 334-344 M by CPU time); its own work is what the ratios compare.
#: Two threads against one, and a sweep end to end, are timed by the wall clock too.
_cpu = time.thread_time


def _per_second(count: float, start: float) -> float:
    """``count`` over the CPU seconds since ``start`` (at least a nanosecond)."""
    return count / max(_cpu() - start, 1e-9)


def _task(case: str, occupancy: bool, bridge: bool, walkers: int, dt: float) -> Task:
    text = _COMMON.format(walkers=walkers, dt=dt) + CASES[case]
    if not bridge:
        text = text.replace("horizon = 50.0", 'horizon = 50.0\nmonitoring = "endpoint"')
    if occupancy:
        text += OCCUPANCY
    return make_plan(parse_spec(text, source=f"<bench {case}>")).tasks[0]
