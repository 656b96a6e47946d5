"""How ``sweep bench`` words its results: the row layout, notes on a busy machine,
and the verdict of each target."""

from __future__ import annotations

from typing import TYPE_CHECKING

from sweep.bench import rows as targets
from sweep.bench.rows import (
    BenchRow,
    bulk_target_of,
    is_plain,
)
from sweep.bench.threads import THREADS, ThreadRuns

if TYPE_CHECKING:
    from sweep.bench.end_to_end import EndToEnd

HEADER = (
    f"{'case':26} {'options':22} {'kernel':>8} {'limit':>8} {'bulk':>7} "
    f"{'of limit':>9} {'x bulk':>7} {'spread':>7}  "
    f"{'former: ceiling':>16} {'of ceil.':>9} {'x numpy walk':>13}"
)

#: Printed under :data:`HEADER`: the units of its columns.
UNITS = (
    "kernel: M walker-steps/s; limit, bulk: M normals/s; 'of limit', 'x bulk': in "
    "normals (walker-steps x d);\nformer (for one release): ceiling through numpy's "
    "bit generator and a numpy walk, in walker-steps."
)

#: Above this spread between runs the machine was busy enough that the ratios
#: are uncertain by about as much (rates move 3-5 % between quiet runs here).
BUSY_SPREAD = 0.10


def _format_row(row: BenchRow) -> str:
    return (
        f"{row.case:26} {row.options:22} {row.kernel_rate / 1e6:7.1f}M "
        f"{row.limit_rate / 1e6:7.1f}M {row.bulk_rate / 1e6:6.1f}M "
        f"{row.of_limit:9.0%} {row.over_bulk:6.1f}x {row.spread:7.0%}  "
        f"{row.ceiling_rate / 1e6:15.1f}M {row.of_ceiling:9.0%} "
        f"{row.over_numpy:12.1f}x"
    )


def busy_note(rows: list[BenchRow]) -> str | None:
    """A warning when runs disagreed by more than :data:`BUSY_SPREAD`."""
    worst = max(rows, key=lambda r: r.spread)
    if worst.spread <= BUSY_SPREAD:
        return None
    return (
        f"note: runs disagreed by up to {worst.spread:.0%} ({worst.case}, "
        f"{worst.options}): this machine was busy,\nso the ratios are uncertain by "
        "about as much. Rerun with more --repeats when it is quieter."
    )


def thread_note(measured: float) -> str | None:
    """A warning when :data:`THREADS` threads measured more than that many times one
    thread's rate, which they cannot give: other jobs slowed every one-thread run, so
    the speed-up is overstated."""
    if measured <= THREADS:
        return None
    return (
        f"note: {measured:.2f}x is more than two threads can give: other jobs slowed "
        "the one-thread runs, so it overstates the speed-up."
    )


def machine_note(threads: ThreadRuns) -> str | None:
    """A note when the kernel's two-thread speed-up misses :data:`TARGET_THREADS` and
    drawing the normals alone, measured in turn with it, misses it too: the machine
    then holds back even the work that limits the kernel."""
    kernel, draws = threads.kernel(), threads.draws()
    if kernel >= targets.TARGET_THREADS or draws >= targets.TARGET_THREADS:
        return None
    return (
        f"note: drawing the normals alone, with no kernel code, gave {draws:.2f}x on "
        f"two threads in the same run (the kernel {kernel:.2f}x): on this machine "
        f"even that misses {targets.TARGET_THREADS}x (other jobs on its cores, shared "
        "hyperthreads, or lower clocks with both cores busy)."
    )


def verdicts(
    rows: list[BenchRow], speedup: float, e2e: list[EndToEnd] | None = None
) -> list[tuple[str, float, float, bool]]:
    """(target, measured, wanted, met) for each of the issue's throughput targets
    (the end-to-end one when ``e2e`` is given)."""
    plain = [r.of_limit for r in rows if is_plain(r)]
    every = [r.of_limit for r in rows]
    one_d = [r.over_bulk for r in rows if bulk_target_of(r) == targets.TARGET_BULK_1D]
    three_d = [r.over_bulk for r in rows if bulk_target_of(r) == targets.TARGET_BULK_3D]
    out = [
        _verdict(
            "plain (endpoint, no occupancy) / limit, worst", plain, targets.TARGET_PLAIN
        ),
        _verdict(
            "every option combination / limit, worst", every, targets.TARGET_OPTIONS
        ),
        _verdict("1-D interval, bridge / numpy bulk", one_d, targets.TARGET_BULK_1D),
        _verdict(
            "3-D / numpy bulk (in normals), worst", three_d, targets.TARGET_BULK_3D
        ),
        _verdict("two threads / one thread", [speedup], targets.TARGET_THREADS),
    ]
    if e2e:
        out.append(
            _verdict(
                "sweep run --threads 1 / bench (CPU time), worst",
                [e.kept for e in e2e],
                targets.TARGET_END_TO_END,
            )
        )
    return out


def _verdict(
    name: str, measured: list[float], wanted: float
) -> tuple[str, float, float, bool]:
    worst = min(measured)
    return name, worst, wanted, worst >= wanted
