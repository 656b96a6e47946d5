"""`sweep bench` runs and reports every case (a smoke test; speed is never asserted)."""

from __future__ import annotations

import math
import os
import subprocess
import sys
from pathlib import Path

from sweep.bench import (
    BUSY_SPREAD,
    CASES,
    DEFAULT_WALKERS,
    REMEASURE,
    REMEASURE_HEADER,
    TARGET_BULK_1D,
    TARGET_BULK_3D,
    TARGET_END_TO_END,
    TARGET_OPTIONS,
    TARGET_PLAIN,
    TARGET_THREADS,
    BenchRow,
    EndToEnd,
    ThreadRuns,
    _format_row,
    _task,
    bulk_target_of,
    busy_note,
    compile_times,
    end_to_end,
    machine_note,
    run_bench,
    target_of,
    thread_line,
    thread_note,
    verdicts,
)
from sweep.cli import build_parser


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
    assert all(math.isfinite(e.kept) and e.kept > 0 for e in e2e)
    names = [name for name, *_ in verdicts(rows, speedup, e2e)]
    assert len(names) == 6 and names[-1].startswith("sweep run --threads 1")


def test_end_to_end_keeps_a_share_of_the_bench_rate() -> None:
    e = EndToEnd(
        "interval 1-D", "bridge", run_rate=150e6, bench_rate=200e6, wall_rate=1e8
    )
    assert e.kept == 0.75 and e.kept_wall == 0.5
    rows = [_row("interval 1-D", o) for o in ("bridge", "endpoint")]
    (*_, (name, kept, wanted, met)) = verdicts(
        [*rows, _row("ball 3-D", "bridge")], 2.0, [e]
    )
    assert (kept, wanted, met) == (0.75, TARGET_END_TO_END, False)


def test_compile_times_in_a_fresh_process_with_an_empty_cache() -> None:
    # One variant: compiling it from nothing takes tens of seconds; the second start,
    # with the cache the first left, only loads it.
    ((case, cold, cached),) = compile_times(["interval 1-D"])
    assert case == "interval 1-D"
    assert math.isfinite(cold) and math.isfinite(cached)
    assert 0 < cached < cold


def _row(case: str, options: str, spread: float = 0.0) -> BenchRow:
    d = 1 if case.startswith("interval") else 3
    return BenchRow(case, options, d, 1.0, 1.0, 1.0, 1.0, 1.0, spread)


def test_busy_note_only_when_repetitions_disagree() -> None:
    quiet = _row("interval 1-D", "bridge", BUSY_SPREAD)
    busy = _row("ball 3-D", "endpoint", 0.25)
    assert busy_note([quiet]) is None
    note = busy_note([quiet, busy])
    assert note is not None and "25%" in note and "ball 3-D, endpoint" in note


def test_quick_bench_keeps_no_rates(tmp_path: Path) -> None:
    # A bench with few walkers per call mostly measures per-call overhead; its rates
    # must not reach `sweep plan`'s estimates. The CLI's default is the full size.
    assert build_parser().parse_args(["bench"]).walkers == DEFAULT_WALKERS
    assert build_parser().parse_args(["bench"]).remeasure == REMEASURE
    result = subprocess.run(
        [
            sys.executable,
            "-m",
            "sweep.cli",
            "bench",
            "--repeats",
            "1",
            "--walkers",
            "50",
            "--remeasure",
            "0",
            "--no-compile-times",
            "--no-spheres",
        ],
        capture_output=True,
        text=True,
        timeout=600,
        env={**os.environ, "SWEEP_CACHE_DIR": str(tmp_path)},
    )
    assert result.returncode == 0, result.stderr
    assert "rates not kept" in result.stdout
    assert "of limit" in result.stdout and "end to end" in result.stdout
    assert "first call per kernel variant" not in result.stdout
    assert "spheres scheme over steps" not in result.stdout
    assert not (tmp_path / "rates.json").exists()


def test_plain_rows_have_the_plain_target() -> None:
    # "Plain" is endpoint monitoring without occupancy; the bridge test and occupancy
    # are options (DEVELOPERS.md, "Benchmarks").
    assert target_of(_row("ball 3-D", "endpoint")) == TARGET_PLAIN
    for options in ("bridge", "bridge + occupancy", "endpoint + occupancy"):
        assert target_of(_row("ball 3-D", options)) == TARGET_OPTIONS


def test_bulk_targets_cover_the_1d_bridge_and_every_3d_case() -> None:
    # The numpy-bulk targets: the 1-D interval with the bridge, and every
    # 3-D case (DEVELOPERS.md, "Benchmarks").
    assert bulk_target_of(_row("interval 1-D", "bridge")) == TARGET_BULK_1D
    assert bulk_target_of(_row("interval 1-D", "endpoint")) is None
    for case in CASES:
        if "3-D" in case:
            for options in ("bridge", "endpoint + occupancy"):
                assert bulk_target_of(_row(case, options)) == TARGET_BULK_3D


def test_thread_note_only_above_two() -> None:
    # Two threads on two cores give at most twice one thread's rate; more means the
    # one-thread runs were slowed by other jobs.
    assert thread_note(1.91) is None and thread_note(2.0) is None
    note = thread_note(2.45)
    assert note is not None and "2.45x" in note and "overstates" in note


def _threads(kernel: float, draws: float) -> ThreadRuns:
    # Wall times whose fastest ratios are the given speed-ups.
    task = _task("interval 1-D", False, True, 10, 1e-3)
    return ThreadRuns(task, [kernel, 9.0], [1.0, 5.0], [draws, 9.0], [1.0, 5.0])


def test_machine_note_only_when_the_generator_loop_also_misses() -> None:
    # The kernel is blamed (no note) unless drawing the normals alone, measured in
    # the same run, also falls short of the target.
    below = TARGET_THREADS - 0.1
    assert machine_note(_threads(TARGET_THREADS, below)) is None
    assert machine_note(_threads(below, TARGET_THREADS)) is None
    note = machine_note(_threads(below, below - 0.05))
    assert note is not None and f"{below - 0.05:.2f}x" in note and "machine" in note
    line = thread_line(_threads(1.7, 1.75))
    assert line.startswith("two threads / one thread: 1.70x") and "1.75x" in line


def test_spheres_bench_rows() -> None:
    # A smoke test of `sweep bench --spheres` with few walkers (speed is not asserted).
    from sweep.bench.spheres import RADII, format_row, run_spheres_bench

    lines: list[str] = []
    rows = run_spheres_bench(lines.append, sphere_walkers=50, step_walkers=2)
    assert [r.radius for r in rows] == list(RADII)
    assert lines == [format_row(r) for r in rows]
    for row in rows:
        assert row.jumps > 1 and row.ratio > 0 and math.isfinite(row.sphere_mean)
    parsed = build_parser().parse_args(["bench", "--spheres"])
    assert parsed.spheres
