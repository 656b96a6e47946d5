"""``sweep bench``: kernel throughput as ratios measured in one run.

For each standard case the kernel's walker-steps per second (one core) is measured back
to back with this machine's yardsticks, in turn within each repetition (the short
kernel and limit runs several times, see :data:`PAIRS`):

* the **limit**: the in-register generator and ziggurat of :mod:`kernels.rng` producing
  the d standard normals of as many walker-steps, summed, nothing stored
  (:func:`kernels.ceiling.limit_normals`); no kernel that draws its increments can beat
  it. Ratios to it are in normals: walker-steps/s x d / normals/s;
* **numpy bulk**: ``Generator(SFC64).standard_normal(out=...)`` filling a preallocated
  array (:data:`BULK_SIZE`), the rate a practitioner's vectorised code cannot beat;
* for one release, the former yardsticks: the **ceiling** (the same ziggurat drawn
  through a numpy bit generator, :func:`kernels.ceiling.draw_normals`) and a plain
  vectorised numpy version of the case (:func:`numpy_walk`).

One-core rates are timed in the measuring thread's CPU time (:data:`_cpu`), and each is
the fastest of its runs: on a shared machine other jobs only ever slow a run down, so
the fastest run of each is the least disturbed, and the ratios are taken between those
(the common practice of timing benchmarks by their best run). Two threads are compared with one for the
parallel speed-up the same way, a ``sweep run --threads 1`` with its own kernel calls
in the same run and with the kernel's bench rate (:func:`end_to_end`), and the first call of each compiled variant is timed in a
fresh process with an empty cache (:func:`compile_times`). Rows that miss their target
in the first pass are measured again at the end, in a later stretch of the machine's
load (:data:`REMEASURE`).

Modules: :mod:`~sweep.bench.cases` (the cases and the clock),
:mod:`~sweep.bench.yardsticks`, :mod:`~sweep.bench.rows` (rows and targets),
:mod:`~sweep.bench.measure`, :mod:`~sweep.bench.threads`,
:mod:`~sweep.bench.end_to_end` (a real run, compile times), :mod:`~sweep.bench.report`
(wording), :mod:`~sweep.bench.spheres` (``sweep bench --spheres``).
"""

from __future__ import annotations

from sweep.bench.cases import _COMMON, CASES, OCCUPANCY, _task
from sweep.bench.end_to_end import (
    END_TO_END_CASES,
    END_TO_END_RUNS,
    END_TO_END_SCALE,
    EndToEnd,
    compile_times,
    end_to_end,
    end_to_end_line,
    first_calls,
)
from sweep.bench.measure import (
    DEFAULT_WALKERS,
    PAIRS,
    REMEASURE,
    REMEASURE_HEADER,
    run_bench,
)
from sweep.bench.report import (
    BUSY_SPREAD,
    HEADER,
    UNITS,
    _format_row,
    busy_note,
    machine_note,
    thread_note,
    verdicts,
)
from sweep.bench.rows import (
    TARGET_BULK_1D,
    TARGET_BULK_3D,
    TARGET_END_TO_END,
    TARGET_OPTIONS,
    TARGET_PLAIN,
    TARGET_THREADS,
    BenchRow,
    bulk_target_of,
    is_plain,
    is_short,
    target_of,
)
from sweep.bench.threads import (
    THREAD_TASKS,
    THREADS,
    ThreadRuns,
    thread_line,
    thread_speedup,
)
from sweep.bench.yardsticks import BULK_SIZE, NUMPY_BUDGET, numpy_walk

__all__ = [
    "BULK_SIZE",
    "BUSY_SPREAD",
    "CASES",
    "DEFAULT_WALKERS",
    "END_TO_END_CASES",
    "END_TO_END_RUNS",
    "END_TO_END_SCALE",
    "HEADER",
    "NUMPY_BUDGET",
    "OCCUPANCY",
    "PAIRS",
    "REMEASURE",
    "REMEASURE_HEADER",
    "TARGET_BULK_1D",
    "TARGET_BULK_3D",
    "TARGET_END_TO_END",
    "TARGET_OPTIONS",
    "TARGET_PLAIN",
    "TARGET_THREADS",
    "THREADS",
    "THREAD_TASKS",
    "UNITS",
    "BenchRow",
    "EndToEnd",
    "ThreadRuns",
    "_COMMON",
    "_format_row",
    "_task",
    "bulk_target_of",
    "busy_note",
    "compile_times",
    "end_to_end",
    "end_to_end_line",
    "first_calls",
    "is_plain",
    "is_short",
    "machine_note",
    "numpy_walk",
    "run_bench",
    "target_of",
    "thread_line",
    "thread_note",
    "thread_speedup",
    "verdicts",
]
