"""``sweep bench --spheres``: walkers per CPU-second of the spheres scheme over steps.

The case of the issue that introduced the scheme: a reflecting cube of side 2, an
absorbing target of radius a at its centre, D = 1, uniform start, dt = a^2 / 200,
a in {0.1, 0.05, 0.02}. Both schemes run the real task path (``simulate_task``) on one
thread, timed in CPU seconds (``time.process_time``), back to back in one run.

The steps scheme needs E[T] / dt = 10^5 - 10^7 steps per walker here, so its rate is
measured on a short horizon (:data:`SHORT_STEPS` steps, few walkers absorbed) as
walker-steps per CPU-second and extrapolated per walker with the mean first-passage
time of the spheres run: walkers/s = (walker-steps/s) / (E[T] / dt). With
``full_steps_walkers`` the steps scheme also runs to absorption, and its mean
first-passage time is compared with the spheres scheme's (z-score of the difference).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from sweep.plan import Task, make_plan
from sweep.simulate import simulate_spheres_moves, simulate_task
from sweep.spec import parse_spec

#: Target radii of the benchmark, with the issue's targets for the speed-up
#: (0: none stated).
RADII: tuple[float, ...] = (0.1, 0.05, 0.02)
TARGETS: dict[float, float] = {0.1: 0.0, 0.05: 1_000.0, 0.02: 10_000.0}
#: Steps per walker of the short-horizon steps run.
SHORT_STEPS = 20_000
#: A horizon no walker of the cube reaches (mean search times are 6-32 here).
LONG_HORIZON = 10_000.0

_SPEC = """
[sweep]
seed = 2026
walkers = {walkers}
chunk = {walkers}
[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"
[time]
dt = {dt!r}
horizon = {horizon!r}
scheme = "{scheme}"
[domain]
lower = [-1.0, -1.0, -1.0]
upper = [1.0, 1.0, 1.0]
walls = {{ x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }}
targets = [{{ center = [0.0, 0.0, 0.0], radius = {a!r} }}]
[record]
survival = {{ stop = {horizon!r}, points = 2 }}
"""


def _task(a: float, scheme: str, walkers: int, horizon: float) -> Task:
    text = _SPEC.format(
        walkers=walkers, dt=a * a / 200, horizon=horizon, scheme=scheme, a=a
    )
    return make_plan(parse_spec(text, source="<bench spheres>")).tasks[0]


@dataclass
class SpheresRow:
    """One target radius: both schemes' rates (one thread, CPU seconds)."""

    radius: float
    dt: float
    sphere_walkers_per_s: float
    sphere_mean: float
    sphere_se: float
    jumps: float
    layer_steps: float
    step_rate: float  # walker-steps per CPU-second, short horizon
    steps_mean: float = math.nan  # full steps run, if made
    steps_se: float = math.nan

    @property
    def steps_per_walker(self) -> float:
        return self.sphere_mean / self.dt

    @property
    def step_walkers_per_s(self) -> float:
        return self.step_rate / self.steps_per_walker

    @property
    def ratio(self) -> float:
        return self.sphere_walkers_per_s / self.step_walkers_per_s

    @property
    def z(self) -> float:
        return (self.sphere_mean - self.steps_mean) / math.hypot(
            self.sphere_se, self.steps_se
        )


def measure(
    a: float,
    sphere_walkers: int = 4000,
    step_walkers: int = 100,
    full_steps_walkers: int = 0,
) -> SpheresRow:
    """Both schemes for target radius ``a`` (see the module docstring)."""
    # Compile both kernels first (cached on disk after the first time).
    simulate_task(_task(a, "spheres", 4, LONG_HORIZON))
    simulate_task(_task(a, "steps", 4, 10 * a * a / 200))

    task = _task(a, "spheres", sphere_walkers, LONG_HORIZON)
    n = sphere_walkers
    out_time = np.empty(n)
    start = time.process_time()
    _, moves = simulate_spheres_moves(
        task,
        out_time,
        np.empty(n, dtype=np.int16),
        np.empty((n, 3)),
        np.zeros(task.args.recording.survival_times.shape[0], dtype=np.int64),
        np.zeros((0, 0), dtype=np.int64),
    )
    sphere_cpu = time.process_time() - start

    short = _task(a, "steps", step_walkers, SHORT_STEPS * a * a / 200)
    start = time.process_time()
    _, steps = simulate_task(short)
    step_cpu = time.process_time() - start

    row = SpheresRow(
        radius=a,
        dt=a * a / 200,
        sphere_walkers_per_s=n / sphere_cpu,
        sphere_mean=float(np.mean(out_time)),
        sphere_se=float(np.std(out_time, ddof=1) / math.sqrt(n)),
        jumps=float(moves[0]) / n,
        layer_steps=float(moves[1]) / n,
        step_rate=steps / step_cpu,
    )
    if full_steps_walkers:
        full = _task(a, "steps", full_steps_walkers, LONG_HORIZON)
        output, _ = simulate_task(full)
        row.steps_mean = float(np.mean(output.time))
        row.steps_se = float(np.std(output.time, ddof=1) / math.sqrt(full.n_walkers))
    return row


HEADER = (
    f"{'a':>5} {'dt':>8} {'jumps':>6} {'layer':>6} {'spheres/s':>10} "
    f"{'steps/s':>9} {'ratio':>8} {'target':>8}  mean search time (spheres)"
)


def format_row(row: SpheresRow) -> str:
    target = TARGETS.get(row.radius, 0.0)
    want = f">={target:,.0f}x" if target else "-"
    text = (
        f"{row.radius:5.2f} {row.dt:8.1e} {row.jumps:6.0f} {row.layer_steps:6.1f} "
        f"{row.sphere_walkers_per_s:10.3g} {row.step_walkers_per_s:9.3g} "
        f"{row.ratio:7.0f}x {want:>8}  {row.sphere_mean:.4g} +- "
        f"{1.96 * row.sphere_se:.2g}"
    )
    if math.isfinite(row.steps_mean):
        text += (
            f"; steps {row.steps_mean:.4g} +- {1.96 * row.steps_se:.2g}, z {row.z:+.2f}"
        )
    return text


def run_spheres_bench(
    report: Callable[[str], None],
    sphere_walkers: int = 4000,
    step_walkers: int = 100,
    full_steps_walkers: int = 0,
) -> list[SpheresRow]:
    """Measure every radius of :data:`RADII`, reporting each row as it is done."""
    rows = []
    for a in RADII:
        row = measure(a, sphere_walkers, step_walkers, full_steps_walkers)
        report(format_row(row))
        rows.append(row)
    return rows


NOTE = (
    "walkers per CPU-second on one thread: spheres run to absorption; steps measured "
    f"over {SHORT_STEPS:,} steps per walker and extrapolated per walker-step with the "
    "spheres run's mean search time (E[T] / dt steps per walker). jumps, layer: per "
    "walker."
)
