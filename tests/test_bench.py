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
    BenchRow,
    busy_note,
    run_bench,
    verdicts,
)
from sweep.cli import build_parser


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
        assert 0.0 <= row.spread < 1.0
    assert math.isfinite(speedup) and speedup > 0
    names = [name for name, *_ in verdicts(rows, speedup)]
    assert len(names) == 5 and "two threads / one thread" in names


def test_busy_note_only_when_repetitions_disagree() -> None:
    quiet = BenchRow("interval 1-D", "bridge", 1.0, 1.0, 1.0, 1.0, 1.0, BUSY_SPREAD)
    busy = BenchRow("ball 3-D", "endpoint", 1.0, 1.0, 1.0, 1.0, 1.0, 0.25)
    assert busy_note([quiet]) is None
    note = busy_note([quiet, busy])
    assert note is not None and "25%" in note and "ball 3-D, endpoint" in note


def test_quick_bench_keeps_no_rates(tmp_path: Path) -> None:
    # A bench with few walkers per call mostly measures per-call overhead; its rates
    # must not reach `sweep plan`'s estimates. The CLI's default is the full size.
    assert build_parser().parse_args(["bench"]).walkers == DEFAULT_WALKERS
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
        ],
        capture_output=True,
        text=True,
        timeout=600,
        env={**os.environ, "SWEEP_CACHE_DIR": str(tmp_path)},
    )
    assert result.returncode == 0, result.stderr
    assert "rates not kept" in result.stdout
    assert not (tmp_path / "rates.json").exists()
