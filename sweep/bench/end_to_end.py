"""A real ``sweep run --threads 1`` against its own kernel calls and the bench rate,
and the first call of each compiled variant in a fresh process (compile times)."""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import tempfile
import time
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from sweep.bench.cases import _COMMON, CASES, _task
from sweep.bench.measure import DEFAULT_WALKERS
from sweep.bench.rows import BenchRow
from sweep.execute import RunOptions, run
from sweep.plan import make_plan
from sweep.simulate import simulate_task
from sweep.spec import parse_spec
from sweep.store import prepare

#: The rows compared end to end: (case, options) with the bridge, the default
#: monitoring, whose rates also size runs in ``sweep plan``.
END_TO_END_CASES = (
    ("interval 1-D", "bridge"),
    ("box 3-D (2 abs + 4 refl)", "bridge"),
)

#: Walkers of an end-to-end sweep per walker of a bench kernel call: 50 x 20 000 =
#: 10^6 walkers, ten tasks of the default chunk (10^5 walkers), each run for about as
#: long as a few bench calls.
END_TO_END_SCALE = 50

#: End-to-end runs per case (the fastest kept, as everywhere in the bench).
END_TO_END_RUNS = 3


@dataclass(frozen=True)
class EndToEnd:
    """A ``sweep run --threads 1`` against its own kernel calls and the kernel's bench
    rate (walker-steps/s).

    ``run_rate`` is per second of the process's CPU time (every thread: Dask's, zarr's,
    the kernel's), comparable with the bench's CPU-time rates; ``kernel_rate`` per CPU
    second of the run's kernel calls alone (each task's own thread), measured in the
    same run; ``wall_rate`` per second of the run's own wall clock, which on a quiet
    machine also counts waits (disk flushes, scheduling)."""

    case: str
    options: str
    run_rate: float
    bench_rate: float
    wall_rate: float = math.nan
    kernel_rate: float = math.nan

    @property
    def kept(self) -> float:
        """Share of its kernel's rate that the run keeps: the kernel calls' CPU time
        over the run's, both measured in the same run, so the rest is what zarr,
        Dask and bookkeeping cost (the target). Immune to how busy the machine was,
        which slows kernel and bookkeeping alike."""
        return self.run_rate / self.kernel_rate

    @property
    def kept_of_bench(self) -> float:
        """The run's rate over the bench's fastest kernel run (CPU time): also counts
        the other jobs that slowed the run's kernel calls below the bench rate."""
        return self.run_rate / self.bench_rate

    @property
    def kept_wall(self) -> float:
        """The run's wall-clock rate over the bench rate."""
        return self.wall_rate / self.bench_rate


def end_to_end(
    rows: list[BenchRow], walkers: int = DEFAULT_WALKERS, dt: float = 1e-3
) -> list[EndToEnd]:
    """Run each of :data:`END_TO_END_CASES` as a sweep on one local thread into a
    temporary store, as ``sweep run --threads 1`` does (zarr writes, completion
    markers, Dask's scheduling, the driver's bookkeeping), and compare its walker-steps
    per CPU second with those of its own kernel calls and with the bench rate of the
    same kernel in ``rows``.

    Start-up is left out, as it is paid once per run however long: the store is
    created before the clock starts (the run then finds it empty and runs every task),
    and the kernels are compiled by the bench already. Of :data:`END_TO_END_RUNS`
    runs per case, the fastest is kept."""
    out = []
    for case, options in END_TO_END_CASES:
        text = _COMMON.format(walkers=walkers * END_TO_END_SCALE, dt=dt) + CASES[case]
        sweep = parse_spec(text, source=f"<bench end to end {case}>")
        bench = next(r for r in rows if (r.case, r.options) == (case, options))
        runs = []
        for _ in range(END_TO_END_RUNS):
            with tempfile.TemporaryDirectory(prefix="sweep-bench-") as tmp:
                path = Path(tmp) / "e2e.zarr"
                prepare(path, make_plan(sweep))
                start = time.process_time()
                summary = run(sweep, path, RunOptions(threads=1, progress=False))
                seconds = time.process_time() - start
            steps = summary.walker_steps
            runs.append(
                EndToEnd(
                    case,
                    options,
                    run_rate=steps / seconds,
                    bench_rate=bench.kernel_rate,
                    wall_rate=steps / summary.seconds,
                    kernel_rate=steps / max(summary.kernel_seconds, 1e-9),
                )
            )
        out.append(max(runs, key=lambda e: e.run_rate))
    return out


def end_to_end_line(e: EndToEnd) -> str:
    """One end-to-end comparison as ``sweep bench`` prints it."""
    return (
        f"{e.case}, {e.options}: sweep run --threads 1 {e.run_rate / 1e6:.1f}M "
        f"walker-steps per CPU second, its kernel calls {e.kernel_rate / 1e6:.1f}M: "
        f"keeps {e.kept:.0%} (loses {1 - e.kept:.0%} to zarr, Dask and "
        f"bookkeeping);\n    bench {e.bench_rate / 1e6:.1f}M: {e.kept_of_bench:.0%} of "
        f"it; by the wall clock {e.wall_rate / 1e6:.1f}M, {e.kept_wall:.0%}"
    )


def first_calls(
    cases: Sequence[str] = tuple(CASES), walkers: int = 10, dt: float = 1e-3
) -> dict[str, float]:
    """Seconds of the first kernel call per compiled variant (one per case of
    :data:`CASES`, in the order given), in this process. The first includes compiling
    (or loading) what every variant shares (the generator, the wall tests)."""
    out = {}
    for case in cases:
        task = _task(case, False, True, walkers, dt)
        start = time.perf_counter()
        simulate_task(task)
        out[case] = time.perf_counter() - start
    return out


def compile_times(
    cases: Sequence[str] = tuple(CASES),
) -> list[tuple[str, float, float]]:
    """(case, cold, cached): seconds of each variant's first call in a fresh process
    with an empty numba cache (a new machine: everything compiles), then in another
    with the cache it left (every later ``sweep run``)."""
    with tempfile.TemporaryDirectory(prefix="sweep-bench-cache-") as tmp:
        env = {**os.environ, "NUMBA_CACHE_DIR": tmp}
        runs = []
        for _ in range(2):
            done = subprocess.run(
                [sys.executable, "-m", "sweep.bench", *cases],
                env=env,
                capture_output=True,
                text=True,
                check=True,
            )
            runs.append(json.loads(done.stdout))
    cold, cached = runs
    return [(case, cold[case], cached[case]) for case in cases]
