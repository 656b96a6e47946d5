"""Observed order in dt of the mean first-passage-time error on reactive surfaces.

    PYTHONPATH=. python benchmarks/reactive_convergence.py [--walkers N] [--seed S]

Cases (closed forms of ``sweep/analytic/reactive.py``):

* ``flat``: [0, 1] reactive at 0 (κ = 2), reflecting at 1, D = 0.5, x0 = 0.5
  (analytic reference J2, T = 1.25). At a flat wall the kernel's reactive step (the
  Skorokhod push with a reaction when the boundary local time passes an exponential
  threshold, ``kernels.walkers._react``) is exact in law for any dt, so the error
  should stay at the Monte-Carlo noise: no order to fit.
* ``target``: a reactive target (a = 0.25, κ = 1) at the centre of a reflecting 3-D
  ball (R = 1), D = 1, r0 = 0.6 (J3). Curved surfaces use the distance along the
  radius (the tangent plane) and the reflecting ball mirrors radially (weak order 1,
  Bossy, Gobet & Talay 2004): expected order 1.
* ``disc``: a disc (R = 1) with a reactive wall (κ = 2), D = 0.5, r0 = 0.3.

For comparison, the common scheme of Erban & Chapman (2007, Phys. Biol. 4, 16-28)
and Singer, Schuss, Osipov & Holcman (2008, SIAM J. Appl. Math. 68, 844-868) reacts
with probability P = κ sqrt(π dt / D) on a step that ends beyond the surface, needs
P <= 1 and has an O(sqrt(dt)) boundary layer; the order of that scheme is 1/2.

The order is the slope of log|error| against log dt (least squares), printed with
each error and its standard error. Long statistical study: a benchmark, not a test.
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np

from kernels import inputs
from kernels.rng import initial_state
from kernels.walkers import simulate
from sweep.analytic import reactive as ar

NAN = math.nan


def run_case(
    case: str, dt: float, walkers: int, seed: int
) -> tuple[float, float, float]:
    """(mean first-passage time, its standard error, exact value) for one dt."""
    if case == "flat":
        d, exact = 0.5, ar.interval_reactive_mean(0.5, 1.0, 0.5, 2.0)
        geometry = inputs.geometry(
            [0.0], [1.0], [False], [False], reactivity_lower=[2.0]
        )
        start = [0.5]
    elif case == "target":
        d, exact = 1.0, ar.centre_target_reactive_mean(0.6, 0.25, 1.0, 1.0, 1.0)
        geometry = inputs.geometry(
            [-1.0] * 3, [1.0] * 3, [False] * 3, [False] * 3, ball_center=[0.0] * 3,
            ball_radius=1.0, ball_absorbing=False, target_center=[[0.0] * 3],
            target_radius=[0.25], target_reactivity=[1.0],
        )  # fmt: skip
        start = [0.6, 0.0, 0.0]
    else:
        d, exact = 0.5, ar.ball_reactive_mean(0.3, 1.0, 0.5, 2.0, 2)
        geometry = inputs.geometry(
            [-1.0] * 2, [1.0] * 2, [False] * 2, [False] * 2, ball_center=[0.0] * 2,
            ball_radius=1.0, ball_absorbing=False, ball_reactivity=2.0,
        )  # fmt: skip
        start = [0.3, 0.0]
    dim = len(start)
    motion = inputs.motion(
        start, dimension=dim, diffusivity=d, dt=dt, n_steps=round(200.0 * exact / dt)
    )
    recording = inputs.recording(dim)
    out = inputs.allocate(walkers, geometry, recording)
    state = initial_state(np.random.SeedSequence([seed, round(1 / dt)]))
    simulate(state, walkers, geometry, motion, recording, out)
    t = out.time
    assert np.isfinite(t).all(), "censored walkers: raise the horizon"
    return float(t.mean()), float(t.std(ddof=1) / math.sqrt(t.size)), exact


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--walkers", type=int, default=200_000)
    parser.add_argument("--seed", type=int, default=2026)
    parser.add_argument("--cases", nargs="*", default=["flat", "target", "disc"])
    args = parser.parse_args()
    ladders = {
        "flat": (0.04, 0.02, 0.01, 0.005),
        "target": (0.004, 0.002, 0.001, 0.0005),
        "disc": (0.04, 0.02, 0.01, 0.005),
    }
    for case in args.cases:
        ladder = ladders[case]
        print(f"case {case}")
        dts, errors = [], []
        for dt in ladder:
            t0 = time.process_time()
            mean, se, exact = run_case(case, dt, args.walkers, args.seed)
            err = mean - exact
            print(
                f"  dt {dt:<7g} mean {mean:.5f}  exact {exact:.5f}  error {err:+.5f}"
                f"  SE {se:.5f}  ({err / se:+.1f} SE)  {time.process_time() - t0:.1f} s CPU"
            )
            dts.append(dt)
            errors.append(err)
        errors_a = np.abs(np.array(errors))
        # The error must stand above the noise to have an order.
        if case != "target":
            print("  no fitted order: the errors are within the Monte-Carlo noise")
            continue
        slope = np.polyfit(np.log(dts), np.log(errors_a), 1)[0]
        pairs = [
            math.log(errors_a[k] / errors_a[k + 1]) / math.log(dts[k] / dts[k + 1])
            for k in range(len(dts) - 1)
        ]
        print(
            f"  observed order in dt: {slope:.2f} (least squares); between "
            f"neighbours: {', '.join(f'{o:.2f}' for o in pairs)}"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
