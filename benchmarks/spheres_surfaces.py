"""The spheres scheme against steps on reactive targets: walkers per CPU-second of
each, measured in the same run, and both schemes' mean reaction times.

    PYTHONPATH=. python benchmarks/spheres_surfaces.py [--walkers N] [--rounds R]

Cases (definitions below; D = 1):

* ``pellet``: the catalytic-pellet geometry (sweeps/catalytic-pellet.toml at κ = 10):
  a reactive target a = 0.5 at the centre of a reflecting 3-D ball R = 2, start
  r0 = 1.2, dt = 5e-4. Closed form: analytic reference J3
  (``sweep.analytic.centre_target_reactive_mean``). A reflecting *ball* wall keeps
  sphere walkers stepping in a shell along it (docs/kernels.md): the scheme's worst
  case.
* ``cube``: a reactive target a = 0.1 (κ = 10) at the centre of a reflecting cube of
  side 2, uniform start, dt = a²/200 (the geometry of benchmarks/spheres_speedup.py).
  No closed form: the two schemes' means are compared (z of the difference).

Each scheme runs its task ``--rounds`` times after a warm-up (compilation); the rate
is the fastest round's, CPU time of this process (single thread).
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np

from sweep import analytic
from sweep.execute import simulate_task
from sweep.plan import make_plan
from sweep.spec import parse_spec

PELLET = """
[sweep]
seed = 7
walkers = {n}
chunk = {n}
[motion]
dimension = 3
diffusivity = 1.0
start = [1.2, 0.0, 0.0]
[time]
dt = 5e-4
horizon = 400.0
scheme = "{scheme}"
[domain]
shape = "ball"
center = [0.0, 0.0, 0.0]
radius = 2.0
wall = "reflecting"
targets = [{{ center = [0.0, 0.0, 0.0], radius = 0.5, reactivity = 10.0 }}]
"""

CUBE = """
[sweep]
seed = 8
walkers = {n}
chunk = {n}
[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"
[time]
dt = 5e-5
horizon = 2000.0
scheme = "{scheme}"
[domain]
lower = [-1.0, -1.0, -1.0]
upper = [1.0, 1.0, 1.0]
walls = {{ x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }}
targets = [{{ center = [0.0, 0.0, 0.0], radius = 0.1, reactivity = 10.0 }}]
"""


def measure(text: str, scheme: str, n: int, rounds: int) -> tuple[float, np.ndarray]:
    """(walkers per CPU-second, first-passage times) of one scheme."""
    task = make_plan(parse_spec(text.format(n=n, scheme=scheme), "bench")).tasks[0]
    simulate_task(task)  # compile (or load numba's cache)
    best = math.inf
    times = np.empty(0)
    for _ in range(rounds):
        start = time.process_time()
        output, _ = simulate_task(task)
        best = min(best, time.process_time() - start)
        times = output.time
    return n / best, times


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--walkers", type=int, default=4000)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    exact = {
        "pellet": analytic.centre_target_reactive_mean(1.2, 0.5, 2.0, 1.0, 10.0),
        "cube": math.nan,
    }
    for name, text in (("pellet", PELLET), ("cube", CUBE)):
        n = args.walkers if name == "pellet" else max(args.walkers // 20, 50)
        rates, means = {}, {}
        for scheme in ("steps", "spheres"):
            walkers = n if scheme == "steps" else args.walkers
            rate, t = measure(text, scheme, walkers, args.rounds)
            censored = int(np.isnan(t).sum())
            mean = float(np.nanmean(t))
            se = float(np.nanstd(t, ddof=1)) / math.sqrt(np.count_nonzero(~np.isnan(t)))
            rates[scheme], means[scheme] = rate, (mean, se)
            z = (mean - exact[name]) / se
            print(
                f"{name:6s} {scheme:7s} {walkers:6d} walkers  {rate:9.4g} walkers/CPU-s  "
                f"mean {mean:.4f} +- {se:.4f}  exact {exact[name]:.4f}  z {z:+.2f}  "
                f"censored {censored}",
                flush=True,
            )
        (m0, s0), (m1, s1) = means["steps"], means["spheres"]
        print(
            f"{name:6s} spheres/steps {rates['spheres'] / rates['steps']:.3g}x, "
            f"z(spheres - steps) {(m1 - m0) / math.hypot(s0, s1):+.2f}",
            flush=True,
        )


if __name__ == "__main__":
    main()
