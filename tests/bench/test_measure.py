"""sweep.bench's measuring runs every case, the threads, a real run end to end and
the compile times (a smoke test; speed is never asserted).
"""

from __future__ import annotations

import math

from sweep.bench import (
    CASES,
    REMEASURE_HEADER,
    _format_row,
    compile_times,
    end_to_end,
    run_bench,
    verdicts,
)


def test_bench_measures_every_case_and_target() -> None:
    lines: list[str] = []
    rows, threads = run_bench(
        repeats=1, walkers=200, numpy_walkers=200, report=lines.append, remeasure=1
    )
    speedup = threads.kernel()
    assert len(rows) == len(CASES) * 4
    # The first pass reports every row; with 200 walkers per call (mostly per-call
    # overhead) some fall short of their target and are reported again after one
    # round of further runs.
    first, later = lines[: len(rows)], lines[len(rows) :]
    assert [line.split()[:2] for line in first] == [
        line.split()[:2] for line in map(_format_row, rows)
    ]
    if later:
        assert later[0] == REMEASURE_HEADER
        again = later[1:]
        assert (
            0 < len(again) <= len(rows) + 1
        )  # each row, and the threads, at most once
        assert all(
            any(line.startswith(r.case) for r in rows)
            or line.startswith("two threads / one thread: ")
            for line in again
        )
    for row in rows:
        for value in (
            row.kernel_rate,
            row.limit_rate,
            row.bulk_rate,
            row.ceiling_rate,
            row.numpy_rate,
            row.of_limit,
            row.over_bulk,
            row.of_ceiling,
        ):
            assert math.isfinite(value) and value > 0
        assert 0.0 <= row.spread < 1.0
        # Ratios to the limit and to numpy's bulk sampler are in normals.
        assert row.of_limit == row.kernel_rate * row.dimension / row.limit_rate
    assert math.isfinite(speedup) and speedup > 0
    assert math.isfinite(threads.draws()) and threads.draws() > 0
    # One timing of each kind per repetition (one here, one more if re-measured).
    counts = {len(t) for t in (threads.kernel_one, threads.kernel_two)}
    counts |= {len(t) for t in (threads.draws_one, threads.draws_two)}
    assert len(counts) == 1 and counts <= {1, 2}
    names = [name for name, *_ in verdicts(rows, speedup)]
    assert len(names) == 5 and "two threads / one thread" in names
    # End to end: a real `sweep run --threads 1` of the same kernels, into a store.
    e2e = end_to_end(rows, walkers=200)
    assert [(e.case, e.options) for e in e2e] == [
        ("interval 1-D", "bridge"),
        ("box 3-D (2 abs + 4 refl)", "bridge"),
    ]
    # The kernel calls' CPU time is part of the run's: the run keeps at most all of it.
    assert all(0 < e.kept <= 1 and e.kept_of_bench > 0 for e in e2e), e2e
    names = [name for name, *_ in verdicts(rows, speedup, e2e)]
    assert len(names) == 6 and names[-1].startswith("sweep run --threads 1")


def test_compile_times_in_a_fresh_process_with_an_empty_cache() -> None:
    # One variant: compiling it from nothing takes tens of seconds; the second start,
    # with the cache the first left, only loads it.
    ((case, cold, cached),) = compile_times(["interval 1-D"])
    assert case == "interval 1-D"
    assert math.isfinite(cold) and math.isfinite(cached)
    assert 0 < cached < cold
