"""Small stores at the edges of what a study can produce, shared by the report,
summary, check, export and stats tests: every walker absorbed by one surface, no
absorbing surface at all, every walker censored, a single walker, and a store with one
task of several done. Each is built once per test session (a few seconds in all)."""

from __future__ import annotations

from pathlib import Path

from sweep import store
from sweep.execute import RunOptions, run

#: A 2-D disk with a reflecting wall and an absorbing target at its centre: with a
#: horizon of many mean capture times every walker ends on the target (p-hat = 1).
ALL_ON_TARGET = """
[sweep]
name = "disk-target"
seed = 5
walkers = 400
chunk = 200
[motion]
dimension = 2
diffusivity = 1.0
start = [0.5, 0.0]
[time]
dt = 1e-3
horizon = 20.0
[domain]
shape = "ball"
center = [0.0, 0.0]
radius = 1.0
wall = "reflecting"
targets = [{ center = [0.0, 0.0], radius = 0.2 }]
[record]
survival = { stop = 1.0, points = 11 }
occupancy = { times = [0.05, 0.2], bins = 8 }
[grid]
"motion.diffusivity" = [0.5, 1.0]
"""

#: Every wall reflecting: nothing can absorb, every walker is censored (p-hat = 0).
NOTHING_ABSORBS = """
[sweep]
name = "closed-box"
seed = 5
walkers = 300
chunk = 150
[motion]
dimension = 2
diffusivity = 1.0
start = [0.5, 0.5]
[time]
dt = 1e-2
horizon = 0.5
[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting" }
[record]
survival = { stop = 0.5, points = 6 }
occupancy = { times = [0.1], bins = 4 }
"""

#: Absorbing walls far beyond a few steps' reach: every walker is still free at the
#: horizon (all censored, although the walls absorb).
ALL_CENSORED = """
[sweep]
name = "short-horizon"
seed = 5
walkers = 300
chunk = 100
[motion]
dimension = 1
diffusivity = 1e-4
start = [0.5]
[time]
dt = 1e-3
horizon = 5e-3
[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }
[record]
survival = { stop = 5e-3, points = 6 }
occupancy = { times = [2e-3], bins = 4 }
"""

#: One walker per point.
ONE_WALKER = """
[sweep]
name = "one-walker"
seed = 5
walkers = 1
[motion]
dimension = 1
diffusivity = 0.5
start = [0.3]
[time]
dt = 1e-3
horizon = 5.0
[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }
[record]
survival = { stop = 1.0, points = 11 }
occupancy = { times = [0.05], bins = 4 }
[grid]
"motion.diffusivity" = [0.5, 1.0]
"""

#: 2 points x 4 tasks, of which only one task will count as done.
ONE_TASK = ONE_WALKER.replace('name = "one-walker"', 'name = "one-task"').replace(
    "walkers = 1\n", "walkers = 400\nchunk = 100\n"
)

CASES = {
    "all_on_target": ALL_ON_TARGET,
    "nothing_absorbs": NOTHING_ABSORBS,
    "all_censored": ALL_CENSORED,
    "one_walker": ONE_WALKER,
    "one_task": ONE_TASK,
}


def build(folder: Path) -> dict[str, Path]:
    """Run every case into ``folder`` and return its store paths by case name.

    The one-task store is a complete run whose completion markers, all but the first,
    are then removed: to the store that is exactly a run stopped after one task (a task
    without its marker counts as not done, whatever its chunks hold).
    """
    paths = {}
    for name, text in CASES.items():
        spec = folder / f"{name}.toml"
        spec.write_text(text)
        out = folder / f"{name}.zarr"
        assert run(spec, out, RunOptions(threads=2, progress=False)).complete
        paths[name] = out
    markers = sorted((paths["one_task"] / store.MARKER_DIR).iterdir())
    for marker in markers[1:]:
        marker.unlink()
    return paths
