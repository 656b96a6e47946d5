"""The report's figure for force fields: mean escape time against barrier height.

For a sweep whose only swept key is ``force.barrier`` of a double well, with the mean
first-passage time compared by ``sweep check`` (``sweep.check.force``): the simulated
mean with its 95 % interval, the exact quadrature (Gardiner §5.2.7 [memory]) and the
Kramers asymptote 1/r (Kramers 1940; Hänggi, Talkner & Borkovec 1990 [memory]; the
time from one minimum across the barrier) side by side, on a log scale. Built on a
``matplotlib.figure.Figure`` (no pyplot state), called by ``sweep.report``.
"""

from __future__ import annotations

from pathlib import Path

from matplotlib.figure import Figure

from sweep.analytic.force import kramers_escape_time
from sweep.check import CheckReport
from sweep.spec import Sweep

FILE = "escape_time.png"
DPI = 110
#: Two-sided 95 % normal quantile (scipy.stats.norm.ppf(0.975)).
Z95 = 1.959963984540054


def escape_time_figure(
    sweep: Sweep, report: CheckReport, out: Path
) -> tuple[str, str] | None:
    """(file name, caption) of ``escape_time.png`` written into ``out``, or None when
    the sweep is not a barrier sweep of a double well with compared means."""
    if sweep.swept != ("force.barrier",):
        return None
    means = {
        r.point: r for r in report.rows if r.statistic == "mean first-passage time"
    }
    points = [
        (p, sweep.points[p])
        for p in sorted(means)
        if sweep.points[p].force is not None
        and sweep.points[p].force.potential == "double_well"
    ]
    if len(points) < 2:
        return None
    barrier = [pt.force.barrier for _, pt in points]
    sim = [means[p].simulated for p, _ in points]
    half = [Z95 * means[p].stderr for p, _ in points]
    exact = [means[p].exact for p, _ in points]
    kramers = [
        kramers_escape_time(
            pt.force.barrier, pt.force.half_separation, pt.motion.diffusivity
        )
        for _, pt in points
    ]
    time_unit = sweep.units.of("time")
    fig = Figure(figsize=(6.0, 4.2))
    ax = fig.add_subplot()
    ax.errorbar(
        barrier, sim, yerr=half, fmt="o", capsize=3, label="simulated (95 % CI)"
    )
    ax.plot(barrier, exact, "-", label="exact (quadrature)")
    ax.plot(barrier, kramers, "--", label="Kramers asymptote")
    ax.set_yscale("log")
    ax.set_xlabel("barrier [kT]")
    ax.set_ylabel(f"mean escape time [{time_unit}]")
    ax.legend()
    fig.tight_layout()
    fig.savefig(out / FILE, dpi=DPI)
    ratio = ", ".join(f"{e / k:.2f}" for e, k in zip(exact, kramers))
    caption = (
        "Mean escape time against barrier height: simulated (95 % interval), the exact "
        "one-dimensional quadrature (the pass/fail reference) and Kramers' high-barrier "
        f"asymptote, an approximation only (exact / Kramers: {ratio})."
    )
    return FILE, caption
