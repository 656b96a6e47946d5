"""dt ladder in a force field: the observed order of the mean escape time's bias.

A walker escapes from the left well of the double well ``U = h ((x/b)^2 - 1)^2``
(h = 2 kT, b = 1, D = 1): reflecting at -2.5, absorbing at the right minimum +1, start
at the left minimum. The exact mean escape time is the quadrature of
``sweep.analytic.force.mean_exit_time`` (Gardiner §5.2.7 [memory]); the kernel steps
the force by Euler–Maruyama and monitors the absorbing wall with the Brownian bridge,
so the bias should shrink like dt (order 1). Each rung runs WALKERS walkers; the order
is the least-squares slope of log|bias| against log dt, printed with each rung's
bias in standard errors. Also the harmonic well's stationary variance under Euler (a
table of the harmonic U), whose exact bias (1/k) (1/(1 - q/2) - 1), q = D k dt, is
order 1, and under the exact Ornstein–Uhlenbeck update (no bias at any dt).

    PYTHONPATH=. python benchmarks/force_order.py [--walkers N]
"""

from __future__ import annotations

import argparse
import math

import numpy as np

from sweep.analytic import force as analytic_force
from sweep.potentials import Force, kernel_force, max_curvature
from tests.kernels.runner import Domain, run

DTS = (0.02, 0.01, 0.005, 0.0025)


def escape(dt: float, walkers: int, seed: int) -> tuple[float, float]:
    force = Force(
        "double_well", axis=0, center=(0.0,), barrier=2.0, half_separation=1.0
    )
    dom = Domain(
        start=(-1.0,), lower=(-2.5,), upper=(1.0,), absorbing_lower=(False,),
        absorbing_upper=(True,), diffusivity=1.0, dt=dt, n_steps=int(200 / dt),
        drift=(0.0,), force=kernel_force(force, 1, 1.0, dt, (0.0,)),
    )  # fmt: skip
    t = run(dom, walkers, seed).time
    return float(np.mean(t)), float(np.std(t, ddof=1) / math.sqrt(t.size))


def order(dts: tuple[float, ...], biases: list[float]) -> float:
    return float(np.polyfit(np.log(dts), np.log(np.abs(biases)), 1)[0])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--walkers", type=int, default=200_000)
    args = parser.parse_args()
    force = Force(
        "double_well", axis=0, center=(0.0,), barrier=2.0, half_separation=1.0
    )
    u = analytic_force.effective_profile(force, 0, 1.0)
    exact = analytic_force.mean_exit_time(
        u, -2.5, 1.0, -1.0, 1.0, ("reflecting", "absorbing")
    ).value
    print(f"double well h = 2 kT: exact mean escape time {exact:.6f} (quadrature)")
    # The definition's dt bound (sweep.spec.sections.force): D dt max|U''| <= 0.05 warned.
    curvature = max_curvature(force, 0, -2.5, 1.0)
    biases = []
    for k, dt in enumerate(DTS):
        mean, se = escape(dt, args.walkers, 100 + k)
        biases.append(mean - exact)
        print(
            f"  dt = {dt:<7g} D dt max|U''| = {dt * curvature:.3g}"
            f"  mean {mean:.5f} ± {se:.5f}  bias {mean - exact:+.5f}"
            f" ({(mean - exact) / se:+.1f} SE, {(mean - exact) / exact:+.2%})"
        )
    print(f"  observed order of the bias: {order(DTS, biases):.2f} (expected 1)")
    local = [math.log(abs(a / b)) / math.log(2.0) for a, b in zip(biases, biases[1:])]
    print("  between rungs: " + ", ".join(f"{o:.2f}" for o in local))

    k = 2.0
    grid = np.linspace(-6, 6, 481)
    table = Force(
        "table", axis=0, lower=-6.0, upper=6.0, values=tuple(0.5 * k * grid**2)
    )
    harmonic = Force("harmonic", center=(0.0,), stiffness=(k,))
    print(f"harmonic k = {k}: stationary variance 1/k = {1 / k} (exact)")
    for name, f in (("Euler (table)", table), ("exact OU update", harmonic)):
        biases = []
        for i, dt in enumerate((0.2, 0.1, 0.05, 0.025)):
            dom = Domain(
                start=(0.0,), lower=(-6.0,), upper=(6.0,), absorbing_lower=(False,),
                absorbing_upper=(False,), diffusivity=1.0, dt=dt,
                n_steps=int(6.0 / dt), drift=(0.0,),
                force=kernel_force(f, 1, 1.0, dt, (0.0,)),
            )  # fmt: skip
            x = run(dom, args.walkers, 200 + i).final[:, 0]
            var = float(np.var(x, ddof=1))
            se = var * math.sqrt(2.0 / x.size)
            biases.append(var - 1 / k)
            print(
                f"  {name}: dt = {dt:<6g} variance {var:.5f} ± {se:.5f}"
                f"  bias {var - 1 / k:+.5f} ({(var - 1 / k) / se:+.1f} SE)"
            )
        if name.startswith("Euler"):  # exact: (1/k) (1 / (1 - q/2) - 1), q = D k dt
            print(
                f"  observed order: {order((0.2, 0.1, 0.05, 0.025), biases):.2f} (expected 1)"
            )


if __name__ == "__main__":
    main()
