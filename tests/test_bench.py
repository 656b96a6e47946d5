"""`sweep bench` runs and reports every case (a smoke test; speed is never asserted)."""

from __future__ import annotations

import math

from sweep.bench import CASES, run_bench, verdicts


def test_bench_measures_every_case_and_target() -> None:
    lines: list[str] = []
    rows, speedup = run_bench(
        repeats=1, walkers=200, numpy_walkers=200, report=lines.append
    )
    assert len(rows) == len(CASES) * 4 == len(lines)
    for row in rows:
        for value in (
            row.kernel_rate,
            row.ceiling_rate,
            row.numpy_rate,
            row.of_ceiling,
        ):
            assert math.isfinite(value) and value > 0
    assert math.isfinite(speedup) and speedup > 0
    names = [name for name, *_ in verdicts(rows, speedup)]
    assert len(names) == 5 and "two threads / one thread" in names
