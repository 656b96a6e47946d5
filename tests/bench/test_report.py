"""sweep.bench's wording: targets of each row, notes on a busy machine."""

from __future__ import annotations

from sweep.bench import (
    BUSY_SPREAD,
    CASES,
    BenchRow,
    EndToEnd,
    ThreadRuns,
    _task,
    bulk_target_of,
    busy_note,
    end_to_end_line,
    machine_note,
    target_of,
    thread_line,
    thread_note,
    verdicts,
)
from sweep.bench import rows as targets


def _row(case: str, options: str, spread: float = 0.0) -> BenchRow:
    d = 1 if case.startswith("interval") else 3
    return BenchRow(case, options, d, 1.0, 1.0, 1.0, 1.0, 1.0, spread)


def test_busy_note_only_when_repetitions_disagree() -> None:
    quiet = _row("interval 1-D", "bridge", BUSY_SPREAD)
    busy = _row("ball 3-D", "endpoint", 0.25)
    assert busy_note([quiet]) is None
    note = busy_note([quiet, busy])
    assert note is not None and "25%" in note and "ball 3-D, endpoint" in note


def test_plain_rows_have_the_plain_target() -> None:
    # "Plain" is endpoint monitoring without occupancy; the bridge test and occupancy
    # are options (docs/performance.md, "How `sweep bench` measures").
    assert target_of(_row("ball 3-D", "endpoint")) == targets.TARGET_PLAIN
    for options in ("bridge", "bridge + occupancy", "endpoint + occupancy"):
        assert target_of(_row("ball 3-D", options)) == targets.TARGET_OPTIONS


def test_bulk_targets_cover_the_1d_bridge_and_every_3d_case() -> None:
    # The numpy-bulk targets: the 1-D interval with the bridge, and every
    # 3-D case (docs/performance.md, "How `sweep bench` measures").
    assert bulk_target_of(_row("interval 1-D", "bridge")) == targets.TARGET_BULK_1D
    assert bulk_target_of(_row("interval 1-D", "endpoint")) is None
    for case in CASES:
        if "3-D" in case:
            for options in ("bridge", "endpoint + occupancy"):
                assert bulk_target_of(_row(case, options)) == targets.TARGET_BULK_3D


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
    below = targets.TARGET_THREADS - 0.1
    assert machine_note(_threads(targets.TARGET_THREADS, below)) is None
    assert machine_note(_threads(below, targets.TARGET_THREADS)) is None
    note = machine_note(_threads(below, below - 0.05))
    assert note is not None and f"{below - 0.05:.2f}x" in note and "machine" in note
    line = thread_line(_threads(1.7, 1.75))
    assert line.startswith("two threads / one thread: 1.70x") and "1.75x" in line


def test_end_to_end_keeps_a_share_of_the_bench_rate() -> None:
    # The target is the run's rate over its own kernel calls' (both in one run); the
    # bench rate, from another stretch of the machine's load, is shown beside it.
    e = EndToEnd(
        "interval 1-D", "bridge", run_rate=150e6, bench_rate=250e6, wall_rate=125e6,
        kernel_rate=200e6,
    )  # fmt: skip
    assert (e.kept, e.kept_of_bench, e.kept_wall) == (0.75, 0.6, 0.5)
    rows = [_row("interval 1-D", o) for o in ("bridge", "endpoint")]
    (*_, (name, kept, wanted, met)) = verdicts(
        [*rows, _row("ball 3-D", "bridge")], 2.0, [e]
    )
    assert (kept, wanted, met) == (0.75, targets.TARGET_END_TO_END, False)
    line = end_to_end_line(e)
    assert "keeps 75% (loses 25% to zarr, Dask and bookkeeping)" in line, line
    assert "bench 250.0M: 60% of it" in line, line
