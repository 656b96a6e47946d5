"""`sweep bench` at the command line: a quick bench keeps no rates; a bad option gets
one clear message (the case machinery: :mod:`tests.cli_cases`)."""

from __future__ import annotations

from pathlib import Path

from sweep.bench import (
    DEFAULT_WALKERS,
    REMEASURE,
)
from sweep.cli import build_parser
from tests.cli_cases import (
    Case,
    case_test,
)
from tests.conftest import run_cli

#: The message argparse prints for bad options of `sweep bench`, whose range checks
#: are argparse types.
ARGPARSE_BENCH_ERROR = "sweep bench: error:"

CASES: list[Case] = [
    Case(
        id="bench-no-repeats",
        argv=("bench", "--repeats", "0"),
        expect=("--repeats", "at least 1", "got 0"),
        prefix=ARGPARSE_BENCH_ERROR,
    ),
    Case(
        id="bench-negative-remeasure",
        argv=("bench", "--remeasure", "-1"),
        expect=("--remeasure", "at least 0", "got -1"),
        prefix=ARGPARSE_BENCH_ERROR,
    ),
]

test_bad_bench_option_gets_one_clear_message = case_test(
    CASES, "A bad option of `sweep bench` gets one clear message and exit code 2."
)


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
