"""`sweep bench` at the command line: a quick bench keeps no rates."""

from __future__ import annotations

from pathlib import Path

from sweep.bench import (
    DEFAULT_WALKERS,
    REMEASURE,
)
from sweep.cli import build_parser
from tests.conftest import run_cli


def test_quick_bench_keeps_no_rates(tmp_path: Path) -> None:
    # A bench with few walkers per call mostly measures per-call overhead; its rates
    # must not reach `sweep plan`'s estimates. The CLI's default is the full size.
    assert build_parser().parse_args(["bench"]).walkers == DEFAULT_WALKERS
    assert build_parser().parse_args(["bench"]).remeasure == REMEASURE
    result = run_cli(
        "bench",
        "--repeats",
        "1",
        "--walkers",
        "50",
        "--remeasure",
        "0",
        "--no-compile-times",
        "--no-spheres",
        timeout=600,
        SWEEP_CACHE_DIR=str(tmp_path),
    )
    assert result.returncode == 0, result.stderr
    assert "rates not kept" in result.stdout
    assert "of limit" in result.stdout and "end to end" in result.stdout
    assert "first call per kernel variant" not in result.stdout
    assert "spheres scheme over steps" not in result.stdout
    assert not (tmp_path / "rates.json").exists()
