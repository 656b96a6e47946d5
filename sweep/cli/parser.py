"""The ``sweep`` argument parser: commands, options, their range checks (``type=``
callables) and the function each command runs (``set_defaults(func=...)``)."""

from __future__ import annotations

import argparse
from collections.abc import Callable

from sweep.cli.bench import bench_command
from sweep.cli.commands import (
    check_command,
    compare_command,
    export_command,
    report_command,
    run_command,
    status_command,
    summary_command,
    verify_command,
)
from sweep.cli.plan import plan_command

STORE_HELP = "zarr store directory made by `sweep run`"


def whole_number(least: int) -> Callable[[str], int]:
    """An argparse ``type``: a whole number of at least ``least``."""

    def parse(text: str) -> int:
        value = int(text)  # a ValueError: argparse says "invalid int value"
        if value < least:
            raise argparse.ArgumentTypeError(
                f"expected a whole number of at least {least}; got {value}."
            )
        return value

    parse.__name__ = "int"  # argparse names the type in "invalid int value: 'x'"
    return parse


def index_list(text: str) -> list[int]:
    """An argparse ``type``: "0,3,5-9" is [0, 3, 5, 6, 7, 8, 9]."""
    out: list[int] = []
    for part in text.split(","):
        a, dash, b = part.strip().partition("-")
        if not a.isdigit() or (dash and not b.isdigit()):
            raise argparse.ArgumentTypeError(
                f"expected indices like 0,3,5-9; got {text!r}."
            )
        if dash and int(b) < int(a):
            raise argparse.ArgumentTypeError(
                f"the range {part.strip()!r} runs backwards; write it as {b}-{a}. "
                f"Got {text!r}."
            )
        out += list(range(int(a), int(b) + 1)) if dash else [int(a)]
    return out


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("brownian-sweep")
    except PackageNotFoundError:  # a source tree without install
        return "0+unknown"


def build_parser() -> argparse.ArgumentParser:
    """The ``sweep`` parser; each command's function is its ``func`` default."""
    parser = argparse.ArgumentParser(
        prog="sweep",
        description="Resumable parameter sweeps of first-passage problems of Brownian walkers.",
    )
    parser.add_argument(
        "--traceback", action="store_true", help="show full tracebacks of errors"
    )
    parser.add_argument("--version", action="version", version=f"sweep {_version()}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    run = sub.add_parser("run", help="run or resume a sweep into a zarr store")
    run.add_argument("definition", help="sweep definition file (TOML)")
    run.add_argument(
        "--store",
        help="zarr store directory (default: <definition file name>.zarr in the "
        "current directory; its absolute path is printed at start and end)",
    )
    where = run.add_mutually_exclusive_group()
    where.add_argument(
        "--threads", type=int, help="local threads (default: one per core)"
    )
    where.add_argument(
        "--processes", type=int, help="worker processes of a local Dask cluster"
    )
    where.add_argument("--scheduler", help="address of an existing Dask scheduler")
    where.add_argument(
        "--scheduler-file", help="scheduler file of an existing Dask cluster"
    )
    run.add_argument("--quiet", action="store_true", help="no progress line")
    run.set_defaults(func=run_command)

    status = sub.add_parser("status", help="progress of a store, per point")
    status.add_argument("store", help=STORE_HELP)
    status.set_defaults(func=status_command)

    verify = sub.add_parser(
        "verify",
        help="compare every finished task's data with the checksums in its marker",
    )
    verify.add_argument("store", help=STORE_HELP)
    verify.set_defaults(func=verify_command)

    summary = sub.add_parser(
        "summary",
        help="headline numbers per point: censoring, mean first-passage time, "
        "splitting, with 95 %% intervals",
    )
    summary.add_argument("store", help=STORE_HELP)
    summary.set_defaults(func=summary_command)

    check = sub.add_parser("check", help="compare a store with analytic results")
    check.add_argument("store", help=STORE_HELP)
    check.add_argument("--json", action="store_true", help="machine-readable output")
    check.set_defaults(func=check_command)

    plan = sub.add_parser(
        "plan", help="show the points, tasks and work of a definition"
    )
    plan.add_argument("definition", help="sweep definition file (TOML)")
    plan.add_argument(
        "--cores",
        type=int,
        help="cores for the run-time estimate (default: this machine)",
    )

    plan.set_defaults(func=plan_command)

    compare = sub.add_parser(
        "compare",
        help="which statistics of two stores of one study (dt and dt/2, N and 4N "
        "walkers) differ beyond their intervals; exit 1 when any does",
    )
    compare.add_argument("store_a", help="store made first (e.g. at dt)")
    compare.add_argument("store_b", help="store made after (e.g. at dt/2)")
    compare.add_argument(
        "--all", action="store_true", help="show every compared statistic"
    )
    compare.add_argument("--json", action="store_true", help="machine-readable output")
    compare.add_argument(
        "--alpha",
        type=float,
        default=0.05,  # sweep.compare.ALPHA (not imported: keeps startup fast)
        help="family-wise false-alarm rate (default 0.05)",
    )
    compare.set_defaults(func=compare_command)

    export = sub.add_parser("export", help="copy a store to an HDF5 file")
    export.add_argument("store", help=STORE_HELP)
    export.add_argument(
        "out", help="HDF5 file to write (an existing file is kept unless --replace)"
    )
    export.add_argument(
        "--replace",
        action="store_true",
        help="replace OUT if it exists (it is replaced only once the export is "
        "complete)",
    )
    export.add_argument(
        "--points",
        type=index_list,
        help="point indices to export, e.g. 0,3,5-9 (default: all)",
    )
    export.add_argument(
        "--variables", help="comma-separated variable names (default: all)"
    )

    export.set_defaults(func=export_command)

    report = sub.add_parser("report", help="figures and an HTML page for a store")
    report.add_argument("store", help=STORE_HELP)
    report.add_argument("--out", required=True, help="directory for the report")
    report.set_defaults(func=report_command)

    bench = sub.add_parser(
        "bench", help="kernel throughput as ratios to this machine's limits"
    )
    bench.add_argument(
        "--repeats",
        type=whole_number(1),
        default=5,
        help="repetitions per case (fastest kept)",
    )
    bench.add_argument(
        "--walkers",
        type=whole_number(1),
        default=20_000,  # sweep.bench.DEFAULT_WALKERS (not imported: keeps startup fast)
        help="walkers per kernel call",
    )
    bench.add_argument(
        "--remeasure",
        type=whole_number(0),
        default=4,  # sweep.bench.REMEASURE
        help="rounds of further runs, at the end, for results below their target "
        "(0: none)",
    )
    bench.add_argument(
        "--spheres",
        action="store_true",
        help="only the rows of time.scheme = spheres: walkers per CPU-second of "
        "spheres over steps (reflecting cube with a small target; about a minute)",
    )
    bench.add_argument(
        "--no-spheres",
        action="store_true",
        help="leave out the spheres-over-steps rows (they are printed last)",
    )
    bench.add_argument(
        "--no-compile-times",
        action="store_true",
        help="skip timing each kernel variant's first call in a fresh process with an "
        "empty cache (about a minute of compiling)",
    )
    bench.set_defaults(func=bench_command)
    return parser
