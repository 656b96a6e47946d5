"""Walkers per CPU-second of the spheres scheme over steps, with the mean search times
of both schemes compared (full steps runs to absorption).

The reflecting cube of side 2 with an absorbing target of radius a at its centre,
D = 1, uniform start, dt = a^2 / 200, a in {0.1, 0.05, 0.02} (sweep/bench/spheres.py).
``sweep bench --spheres`` prints the same rows without the full steps runs.

Usage: PYTHONPATH=. python benchmarks/spheres_speedup.py [--full-steps-walkers N]
(default 200: about a minute of steps per radius for a = 0.02 on the development
machine; the mean search times then carry 7-10 % intervals).
"""

from __future__ import annotations

import argparse

from sweep.bench.spheres import HEADER, NOTE, run_spheres_bench


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sphere-walkers", type=int, default=20_000)
    parser.add_argument("--step-walkers", type=int, default=200)
    parser.add_argument("--full-steps-walkers", type=int, default=200)
    args = parser.parse_args()
    print(NOTE)
    print(HEADER)
    run_spheres_bench(
        lambda line: print(line, flush=True),
        sphere_walkers=args.sphere_walkers,
        step_walkers=args.step_walkers,
        full_steps_walkers=args.full_steps_walkers,
    )


if __name__ == "__main__":
    main()
