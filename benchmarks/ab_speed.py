"""Same-run A/B of the walker kernel's speed: another git revision's kernel against this
checkout's, on the bench's main cases, alternating the two builds run by run.

    PYTHONPATH=. python benchmarks/ab_speed.py [--ref main] [--rounds 15]

Prints, per case, the fastest rate of each build (walker-steps per second) and their
ratio (this checkout / ref), plus the median of the paired ratios and their spread
(the lowest and highest pair). The first call of
each case and build is timed too: with a cold numba cache (``NUMBA_CACHE_DIR`` pointing
at an empty directory) it is the compile time of that variant. Rates on a shared
machine are noisy: compare ratios from one run, never rates from different runs. Rates
are per second of the measuring thread's CPU time, as in ``sweep bench`` (waiting for a
core, the main noise here, is not counted); first calls by the wall clock.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from typing import Any

from benchmarks.bit_identity import reference_module, run
from kernels import walkers

#: name -> keyword set for benchmarks.bit_identity.run's builders.
CASES: dict[str, dict[str, Any]] = {
    "1-D interval, endpoint": dict(
        lower=[0.0], upper=[1.0], absorbing_lower=[True], absorbing_upper=[True],
        start=[0.5], diffusivity=1.0, dt=1e-4, n_steps=40_000, bridge=False,
    ),
    "1-D interval, bridge": dict(
        lower=[0.0], upper=[1.0], absorbing_lower=[True], absorbing_upper=[True],
        start=[0.5], diffusivity=1.0, dt=1e-4, n_steps=40_000, bridge=True,
    ),
    # The settings of `sweep bench`'s 1-D interval and 3-D box (D = 0.5, dt = 1e-3).
    "bench 1-D interval, endpoint": dict(
        lower=[0.0], upper=[1.0], absorbing_lower=[True], absorbing_upper=[True],
        start=[0.5], diffusivity=0.5, dt=1e-3, n_steps=50_000, bridge=False,
    ),
    "bench 1-D interval, bridge": dict(
        lower=[0.0], upper=[1.0], absorbing_lower=[True], absorbing_upper=[True],
        start=[0.5], diffusivity=0.5, dt=1e-3, n_steps=50_000, bridge=True,
    ),
    "bench 3-D box (2 abs + 4 refl), bridge": dict(
        lower=[0.0] * 3, upper=[1.0] * 3, absorbing_lower=[True, False, False],
        absorbing_upper=[True, False, False], start=[0.5] * 3, diffusivity=0.5,
        dt=1e-3, n_steps=50_000, bridge=True,
    ),
    "3-D box, bridge": dict(
        lower=[0.0] * 3, upper=[1.0] * 3, absorbing_lower=[True] * 3,
        absorbing_upper=[True] * 3, start=[0.5] * 3, diffusivity=1.0, dt=1e-4,
        n_steps=40_000, bridge=True,
    ),
    "3-D ball, bridge": dict(
        lower=[-1.0] * 3, upper=[1.0] * 3, absorbing_lower=[False] * 3,
        absorbing_upper=[False] * 3, ball_center=[0.0] * 3, ball_radius=1.0,
        start=[0.0] * 3, diffusivity=1.0, dt=1e-4, n_steps=40_000, bridge=True,
    ),
    "3-D reflecting box + target, bridge": dict(
        lower=[0.0] * 3, upper=[1.0] * 3, absorbing_lower=[False] * 3,
        absorbing_upper=[False] * 3, target_center=[[0.5, 0.5, 0.5]],
        target_radius=[0.1], start=[0.2] * 3, diffusivity=1.0, dt=1e-4,
        n_steps=40_000, bridge=True,
    ),
    # `sweep bench`'s reflecting box with a target (D = 0.5, dt = 1e-3, radius 0.2).
    "bench refl. box 3-D + target, endpoint": dict(
        lower=[0.0] * 3, upper=[1.0] * 3, absorbing_lower=[False] * 3,
        absorbing_upper=[False] * 3, target_center=[[0.5, 0.5, 0.5]],
        target_radius=[0.2], start=[0.1] * 3, diffusivity=0.5, dt=1e-3,
        n_steps=50_000, bridge=False,
    ),
    "bench refl. box 3-D + target, bridge": dict(
        lower=[0.0] * 3, upper=[1.0] * 3, absorbing_lower=[False] * 3,
        absorbing_upper=[False] * 3, target_center=[[0.5, 0.5, 0.5]],
        target_radius=[0.2], start=[0.1] * 3, diffusivity=0.5, dt=1e-3,
        n_steps=50_000, bridge=True,
    ),
    "4-D box + target, bridge": dict(
        lower=[0.0] * 4, upper=[1.0] * 4, absorbing_lower=[True] * 4,
        absorbing_upper=[False] * 4, target_center=[[0.5] * 4], target_radius=[0.1],
        start=[0.2] * 4, diffusivity=1.0, dt=1e-4, n_steps=40_000, bridge=True,
    ),
    "5-D ball, endpoint": dict(
        lower=[-1.0] * 5, upper=[1.0] * 5, absorbing_lower=[False] * 5,
        absorbing_upper=[False] * 5, ball_center=[0.0] * 5, ball_radius=1.0,
        start=[0.0] * 5, diffusivity=1.0, dt=1e-4, n_steps=40_000, bridge=False,
    ),
}  # fmt: skip


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--ref", default="main")
    parser.add_argument("--rounds", type=int, default=15)
    parser.add_argument("--cases", default="", help="substring of the case names")
    parser.add_argument("--walkers", type=int, default=1000)
    args = parser.parse_args(argv)
    import benchmarks.bit_identity as bi

    bi.N_WALKERS = args.walkers
    builds = {"ref": reference_module(args.ref), "new": walkers}
    print(f"{'case':38s} {'first call ref/new (s)':>24s} {'M steps/s ref':>14s} "
          f"{'new':>7s} {'best new/ref':>13s} {'median pair':>12s} "
          f"{'pairs min-max':>14s}")  # fmt: skip
    for name, config in CASES.items():
        if args.cases not in name:
            continue
        first = {}
        for label, module in builds.items():
            t = time.perf_counter()
            run(module, config, seed=0)
            first[label] = time.perf_counter() - t
        best = {label: 0.0 for label in builds}
        pairs = []
        for k in range(args.rounds):
            rates = {}
            order = list(builds) if k % 2 == 0 else list(reversed(builds))
            for label in order:
                t = time.thread_time()
                steps = run(builds[label], config, seed=k)["steps"]
                rates[label] = steps / (time.thread_time() - t)
                best[label] = max(best[label], rates[label])
            pairs.append(rates["new"] / rates["ref"])
        print(
            f"{name:38s} {first['ref']:11.2f} / {first['new']:<10.2f} "
            f"{best['ref'] / 1e6:14.1f} {best['new'] / 1e6:7.1f} "
            f"{best['new'] / best['ref']:13.3f} {statistics.median(pairs):12.3f} "
            f"{min(pairs):8.3f}-{max(pairs):.3f}"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
