"""The ``sweep`` command line: parses arguments and calls the public API, nothing more.

Exit codes: 0 success; 1 a check failed (or tasks failed); 2 bad input, with one message
naming the file, the key, the value and what is allowed; 130 interrupted; 141 the reader
of the output closed it early.
"""

from __future__ import annotations

import argparse
import logging
import math
import os
import signal
import sys
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from sweep.errors import SweepError, SweepWarning

MAX_TABLE_POINTS = 20
STORE_HELP = "zarr store directory made by `sweep run`"


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("brownian-sweep")
    except PackageNotFoundError:  # a source tree without install
        return "0+unknown"


def build_parser() -> argparse.ArgumentParser:
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

    status = sub.add_parser("status", help="progress of a store, per point")
    status.add_argument("store", help=STORE_HELP)

    verify = sub.add_parser(
        "verify",
        help="compare every finished task's data with the checksums in its marker",
    )
    verify.add_argument("store", help=STORE_HELP)

    summary = sub.add_parser(
        "summary",
        help="headline numbers per point: censoring, mean first-passage time, "
        "splitting, with 95 %% intervals",
    )
    summary.add_argument("store", help=STORE_HELP)

    check = sub.add_parser("check", help="compare a store with analytic results")
    check.add_argument("store", help=STORE_HELP)
    check.add_argument("--json", action="store_true", help="machine-readable output")

    plan = sub.add_parser(
        "plan", help="show the points, tasks and work of a definition"
    )
    plan.add_argument("definition", help="sweep definition file (TOML)")
    plan.add_argument(
        "--cores",
        type=int,
        help="cores for the run-time estimate (default: this machine)",
    )

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
        "--points", help="point indices to export, e.g. 0,3,5-9 (default: all)"
    )
    export.add_argument(
        "--variables", help="comma-separated variable names (default: all)"
    )

    report = sub.add_parser("report", help="figures and an HTML page for a store")
    report.add_argument("store", help=STORE_HELP)
    report.add_argument("--out", required=True, help="directory for the report")

    bench = sub.add_parser(
        "bench", help="kernel throughput as ratios to this machine's limits"
    )
    bench.add_argument(
        "--repeats", type=int, default=5, help="repetitions per case (fastest kept)"
    )
    bench.add_argument(
        "--walkers",
        type=int,
        default=20_000,  # sweep.bench.DEFAULT_WALKERS (not imported: keeps startup fast)
        help="walkers per kernel call",
    )
    bench.add_argument(
        "--remeasure",
        type=int,
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
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``sweep`` console script."""
    args = build_parser().parse_args(argv)
    logging.basicConfig(
        level=logging.WARNING, format="sweep: %(message)s", stream=sys.stderr
    )
    warnings.showwarning = _show_warning
    try:
        code = _dispatch(args)
        sys.stdout.flush()  # a closed pipe shows here, not at the interpreter's exit
        return code
    except SweepError as err:
        if args.traceback:
            raise
        print(f"sweep: error: {err}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("\nsweep: interrupted.", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader left early (`sweep summary STORE | head`): the rest of the output
        # is unwanted. stdout goes to /dev/null so the interpreter's last flush does
        # not fail again; 141 is the shell's code for a writer stopped by SIGPIPE.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141


_python_show_warning = warnings.showwarning


def _show_warning(message: Warning | str, category: type[Warning], *rest: Any) -> None:
    """The tool's own warnings as one line ``sweep: warning: ...``, others as Python's."""
    if issubclass(category, SweepWarning):
        print(f"sweep: warning: {message}", file=sys.stderr)
    else:
        _python_show_warning(message, category, *rest)


def _dispatch(args: argparse.Namespace) -> int:
    if args.command == "run":
        return _run(args)
    if args.command == "status":
        return _status(args)
    if args.command == "summary":
        return _summary(args)
    if args.command == "verify":
        return _verify(args)
    if args.command == "check":
        return _check(args)
    if args.command == "plan":
        return _plan(args)
    if args.command == "bench":
        return _bench(args)
    if args.command == "export":
        return _export(args)
    if args.command == "compare":
        return _compare(args)
    if args.command == "report":
        from sweep.report import write_report

        page = write_report(args.store, args.out)
        print(f"wrote {page}")
        return 0
    raise AssertionError(args.command)  # argparse rejects unknown commands


def _compare(args: argparse.Namespace) -> int:
    import dataclasses
    import json
    import math

    from sweep.compare import compare_stores, format_comparison

    result = compare_stores(args.store_a, args.store_b, args.alpha)
    if args.json:
        rows = [
            {
                k: (None if isinstance(v, float) and not math.isfinite(v) else v)
                for k, v in dataclasses.asdict(r).items()
            }
            for r in result.rows
        ]
        print(
            json.dumps(
                {
                    "store_a": result.store_a,
                    "store_b": result.store_b,
                    "changed": result.changed,
                    "alpha": result.alpha,
                    "z_crit": result.z_crit,
                    "compared": len(result.rows),
                    "differ": len(result.flagged),
                    "unmatched_a": result.unmatched_a,
                    "unmatched_b": result.unmatched_b,
                    "rows": rows,
                },
                indent=2,
            )
        )
    else:
        print(format_comparison(result, every=args.all))
    return 1 if result.flagged else 0


def _stop_on_sigterm() -> None:
    """Take SIGTERM like Ctrl-C: finished tasks are kept and the store's lock released.

    Batch systems end a job (time limit, ``scancel``) with SIGTERM and, some seconds
    later, SIGKILL. Left to Python's default, SIGTERM kills the driver at once and its
    lock stays behind; a resubmitted job on another node could not take it. Later
    SIGTERMs are ignored so that the stop in progress is not cut short.
    """

    def stop(signum: int, frame: object) -> None:
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
        raise KeyboardInterrupt

    signal.signal(signal.SIGTERM, stop)


def _run(args: argparse.Namespace) -> int:
    from sweep.spec import load_spec

    # Validate before importing dask, numba and xarray: bad input answers in a blink.
    sweep = load_spec(args.definition)
    from sweep.execute import RunOptions, run

    # The options next, before the checks' imports (xarray): a bad scheduler option
    # answers in about half the time.
    options = RunOptions(
        threads=args.threads,
        processes=args.processes,
        scheduler=args.scheduler,
        scheduler_file=args.scheduler_file,
        progress=not args.quiet,
    )
    from sweep.check import check_dataset, format_table
    from sweep.store import open_dataset

    # Absolute from the start: a relative default silently starts a new store when
    # run from another directory, so say where the store is.
    store_path = (
        Path(args.store or f"{Path(sweep.source).stem}.zarr").expanduser().absolute()
    )
    from sweep.check import describe
    from sweep.report import units_note

    print(f"store: {store_path}")
    print(describe(sweep))
    print(units_note(sweep))
    _warn_plan(sweep)
    sys.stdout.flush()
    _stop_on_sigterm()
    summary = run(sweep, store_path, options)
    if summary.interrupted:
        print(
            f"sweep: stopped; {summary.store} keeps every finished task. Rerun to resume."
        )
        if summary.abandoned:
            # Their threads cannot be stopped and would hold up the interpreter's exit.
            # Leaving now is safe: a task without its completion marker is simply run
            # again by the next run, and the store's lock is already released.
            sys.stdout.flush()
            sys.stderr.flush()
            os._exit(130)
        return 130
    done = summary.already_done + summary.completed
    print(
        f"store: {summary.store}: {done}/{summary.n_tasks} tasks done "
        f"({summary.completed} now, {summary.already_done} before); "
        f"{summary.walker_steps / 1e6:.1f} M walker-steps in {summary.seconds:.1f} s."
    )
    if not summary.complete:
        return 1
    if sweep.n_points > MAX_TABLE_POINTS:
        print(
            f"{sweep.n_points} points: run `sweep check {summary.store}` for the analytic comparison."
        )
        return 0
    ds = open_dataset(summary.store)
    report = check_dataset(ds, sweep, str(summary.store))
    from sweep.report import headline_table

    # The numbers the study is about (censored fraction, mean, splitting per wall),
    # then the comparison with closed forms where they exist.
    print()
    print(headline_table(ds, sweep))
    print()
    print(format_table(report, sweep))
    print(f"\nstore: {summary.store}")
    return report.exit_code


def _warn_plan(sweep: object) -> None:
    """`sweep plan`'s warnings on the definition's choices (coarse dt, short horizon),
    repeated before a run starts."""
    from sweep.sizing import point_warnings

    for i, point in enumerate(sweep.points):  # type: ignore[attr-defined]
        for warning in point_warnings(i, point):
            print(f"warning: {warning}")


def _status(args: argparse.Namespace) -> int:
    from sweep import store

    path = Path(args.store)
    attrs = store.read_attrs(path)
    sweep = store.load_sweep(path)
    markers = store.read_markers(path)
    n_c = attrs["n_chunks"]
    per_point: dict[int, list[dict[str, object]]] = {}
    # Markers carry store indices; rows follow the definition (grown stores differ).
    order = store.point_order(attrs)
    for m in markers:
        p = order[int(m["point"])]  # type: ignore[call-overload]
        per_point.setdefault(p, []).append(m)
    holder = store.lock_holder(path)
    print(
        f"store {path}: sweep {sweep.name!r}, {sweep.n_points} points x {n_c} tasks, definition hash {attrs['spec_hash'][:12]}"
    )
    if holder:
        print(
            f"running now: pid {holder.get('pid')} on {holder.get('host')} since {holder.get('started')}"
        )
    from sweep.check import parameter_header, parameters, show_value

    columns = parameters(sweep)
    header = [
        "point",
        *(parameter_header(name, sweep) for name in columns),
        "tasks",
        "walkers",
        "censored",
    ]
    target = sweep.precision
    if target is not None:
        header.append("precision (95 %)")
        print(
            f"precision target: {target.describe()}, at most "
            f"{target.max_walkers:,} walkers per point"
        )
    rows = [header]
    total = 0
    planned_total = 0
    censored_points = 0
    for p in range(sweep.n_points):
        ms = per_point.get(p, [])
        total += len(ms)
        walkers = sum(int(m["walkers"]) for m in ms)  # type: ignore[call-overload]
        censored = sum(int(m["censored"]) for m in ms)  # type: ignore[call-overload]
        frac = f"{censored / walkers:.3%}" if walkers else "-"
        planned = f"{len(ms)}/{n_c}"
        extra = []
        if target is not None:
            from sweep.execute import target_wall_index
            from sweep.precision import describe_estimate, planned_chunks

            chunks, final, last = planned_chunks(
                target,
                target_wall_index(sweep),
                sweep.chunk,
                n_c,
                {int(m["chunk"]): m for m in ms},  # type: ignore[call-overload]
            )
            planned_total += chunks
            planned = f"{len(ms)}/{chunks}" + ("" if final else "+")
            state = describe_estimate(target, last)
            if final and last is not None and not last.met:
                state += " (ceiling reached)"
            censored_points += bool(last is not None and last.censored)
            extra.append(state)
        rows.append(
            [
                str(p),
                *(show_value(values[p]) for values in columns.values()),
                planned,
                str(walkers),
                frac,
                *extra,
            ]
        )
    widths = [max(len(r[i]) for r in rows) for i in range(len(header))]
    for r in rows:
        print("  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
    if target is None:
        print(f"{total}/{sweep.n_points * n_c} tasks done")
        return 0
    print(
        f"{total}/{planned_total} tasks done so far (a '+': the point is not decided "
        f"yet and gets more tasks; at most {n_c} per point)"
    )
    if censored_points and target.statistic == "mean_first_passage_time":
        print(
            f"{censored_points} point(s) have censored walkers: a mean's target is "
            f"not met while any walker is still free at the horizon; raise "
            f"time.horizon (in a new store) to reach it."
        )
    return 0


def _verify(args: argparse.Namespace) -> int:
    from sweep import store

    path = Path(args.store)
    attrs, done = store.verified_markers(path, digests=True)
    files = sum(
        1 for m in done.values() for state in m["chunks"].values() if state != "absent"
    )
    total = attrs["n_points"] * attrs["n_chunks"]
    print(
        f"{path}: intact: the files made at creation, and {len(done)}/{total} finished "
        f"tasks ({files} chunk files) match their checksums."
    )
    return 0


def _summary(args: argparse.Namespace) -> int:
    from sweep.report import headline_table
    from sweep.store import load_sweep, open_dataset

    sweep = load_sweep(args.store)
    print(headline_table(open_dataset(args.store, verify=True), sweep))
    return 0


def _check(args: argparse.Namespace) -> int:
    from sweep.check import check_store, format_table
    from sweep.store import load_sweep

    report = check_store(args.store)
    if args.json:
        print(report.to_json())
    else:
        sweep = load_sweep(args.store)
        print(format_table(report, sweep))
    return report.exit_code


def _plan(args: argparse.Namespace) -> int:
    from sweep.plan import make_plan
    from sweep.sizing import human_bytes, human_seconds, memory_limit, size
    from sweep.spec import load_spec

    sweep = load_spec(args.definition)
    plan = make_plan(sweep)
    sizing = size(plan)
    cores = args.cores or os.cpu_count() or 1
    print(f"sweep {sweep.name!r} ({sweep.source})")
    print(f"  points:          {sweep.n_points}")
    print(
        f"  walkers/point:   {sweep.walkers:,}  (tasks of {sweep.chunk:,} walkers, "
        f"{sweep.n_chunks} per point)"
    )
    print(f"  tasks:           {plan.n_tasks:,}")
    if sweep.precision is not None:
        _plan_precision(plan)
    if sweep.swept:
        from sweep.plan import coordinate_columns

        # The definition's key, then the name tables, plots and the store use.
        names = list(coordinate_columns(sweep))
        print(f"  swept:           {', '.join(sweep.swept)}")
        print(f"  named:           {', '.join(names)} (in tables, plots and the store)")
    print(
        f"  walker-steps:    about {sizing.walker_steps_expected:.3g} expected, at most "
        f"{sizing.walker_steps_bound:.3g} (no walker absorbed before the horizon)"
    )
    spheres = [i for i, p in enumerate(sweep.points) if p.timing.scheme == "spheres"]
    if spheres:
        from sweep.sizing import JUMP_STEPS, PILOT_POINTS, PILOT_WALKERS, sphere_moves

        stride = max(1, -(-len(spheres) // PILOT_POINTS))
        moves = [sphere_moves(sweep.points[i]) for i in spheres[::stride]]
        jumps = sum(m[0] for m in moves) / len(moves)
        steps = sum(m[1] for m in moves) / len(moves)
        print(
            f"  spheres scheme:  {len(spheres)} point(s), about {jumps:.3g} jumps and "
            f"{steps:.3g} steps per walker (pilot of {PILOT_WALKERS} walkers per "
            f"point); a jump counts as {JUMP_STEPS:g} walker-steps above"
        )
    print(f"                   ({sizing.estimate_note})")
    print(f"  disk:            at most {human_bytes(sizing.disk_bytes)} (uncompressed)")
    limit, where = memory_limit()
    allowed = f" ({where} allows {human_bytes(limit)})" if limit else ""
    print(f"  memory per task: about {human_bytes(sizing.task_memory_bytes)}{allowed}")
    print(
        f"  run time:        about {human_seconds(sizing.run_seconds(cores))} on {cores} "
        f"cores at {sizing.rate_per_core / 1e6:.0f} M walker-steps/s per core "
        f"(measured on this machine)"
    )
    for warning in sizing.warnings:
        print(f"  warning: {warning}")
    return 0


def _plan_precision(plan: Any) -> None:
    """``sweep plan``'s lines for a precision target: walkers needed per point."""
    from sweep.precision_plan import walkers_needed

    target = plan.sweep.precision
    print(
        f"  precision:       {target.describe()} (95 %); first round "
        f"{target.first_walkers:,} walkers, then doubling, at most "
        f"{target.max_walkers:,} per point (the tasks and walker-steps below are "
        f"that ceiling's)"
    )
    for need in walkers_needed(plan):
        wanted = (
            f"about {need.walkers:,.0f}"
            if math.isfinite(need.walkers)
            else "never met (walkers censored: raise time.horizon)"
        )
        print(
            f"    point {need.point}: needs {wanted} walkers ({need.how}); the run "
            f"gives it {need.planned:,}"
        )


def _bench_spheres() -> int:
    from sweep.bench_spheres import HEADER, NOTE, TARGETS, run_spheres_bench

    print(NOTE)
    print(HEADER)
    rows = run_spheres_bench(lambda line: print(line, flush=True))
    print("\ntargets:")
    for row in rows:
        target = TARGETS.get(row.radius, 0.0)
        if target:
            met = "met" if row.ratio >= target else "NOT met"
            print(
                f"  spheres / steps, a = {row.radius:g}: {row.ratio:,.0f}x "
                f"(target >= {target:,.0f}x)  {met}"
            )
    return 0


def _export(args: argparse.Namespace) -> int:
    from sweep.export import export_hdf5

    points = _index_list(args.points, "--points") if args.points else None
    variables = (
        [v.strip() for v in args.variables.split(",")] if args.variables else None
    )
    out = export_hdf5(
        args.store, args.out, points=points, variables=variables, replace=args.replace
    )
    print(f"wrote {out}")
    return 0


def _index_list(text: str, option: str) -> list[int]:
    """Parse "0,3,5-9" into [0, 3, 5, 6, 7, 8, 9]."""
    out: list[int] = []
    for part in text.split(","):
        a, dash, b = part.strip().partition("-")
        if not a.isdigit() or (dash and not b.isdigit()):
            raise SweepError(f"{option}: expected indices like 0,3,5-9; got {text!r}.")
        if dash and int(b) < int(a):
            raise SweepError(
                f"{option}: the range {part.strip()!r} runs backwards; write it as "
                f"{b}-{a}. Got {text!r}."
            )
        out += list(range(int(a), int(b) + 1)) if dash else [int(a)]
    return out


def _bench(args: argparse.Namespace) -> int:
    if args.spheres:
        return _bench_spheres()
    for option, value, least in (
        ("--repeats", args.repeats, 1),
        ("--walkers", args.walkers, 1),
        ("--remeasure", args.remeasure, 0),
    ):
        if value < least:
            raise SweepError(
                f"{option}: expected a whole number of at least {least}; got {value}."
            )
    from sweep.bench import (
        DEFAULT_WALKERS,
        HEADER,
        PAIRS,
        UNITS,
        busy_note,
        compile_times,
        end_to_end,
        end_to_end_line,
        machine_note,
        run_bench,
        thread_line,
        thread_note,
        verdicts,
    )

    print(
        f"rates on one core in the measuring thread's CPU time, the fastest run (other "
        f"jobs only slow a run down) of {args.repeats} repetitions;"
    )
    print(
        f"each repetition runs kernel, limit and ceiling in turn {PAIRS} times, then "
        "numpy's bulk sampler and the numpy walk once;"
    )
    print(
        "limit: SFC64 kept in registers with the ziggurat, d normals per walker-step, "
        "summed;\nbulk: numpy's Generator(SFC64).standard_normal(out=...); "
        "spread: how far the median run fell short of the fastest."
    )
    print(UNITS)
    print(HEADER)
    rows, threads = run_bench(
        repeats=args.repeats,
        walkers=args.walkers,
        report=lambda line: print(line, flush=True),
        remeasure=args.remeasure,
    )
    speedup = threads.kernel()
    print(f"\n3-D box, bridge: {thread_line(threads)}")
    for note in (thread_note(speedup), machine_note(threads)):
        if note:
            print(note)
    from sweep.sizing import record_rates

    # Bridge monitoring is the default, so its rates size runs in `sweep plan`. A quick
    # bench with few walkers per call measures mostly per-call overhead: its rates
    # would understate real runs, so only full-size benches are kept.
    if args.walkers >= DEFAULT_WALKERS:
        record_rates(
            {
                1: next(
                    r.kernel_rate
                    for r in rows
                    if r.case.startswith("interval") and r.options == "bridge"
                ),
                3: next(
                    r.kernel_rate
                    for r in rows
                    if r.case.startswith("box") and r.options == "bridge"
                ),
            }
        )
    else:
        print(
            f"(rates not kept for `sweep plan`: fewer than {DEFAULT_WALKERS} walkers "
            "per call)"
        )
    print("\nend to end (start-up and compilation excluded):")
    e2e = end_to_end(rows, walkers=args.walkers)
    for e in e2e:
        print(f"  {end_to_end_line(e)}", flush=True)
    if not args.no_compile_times:
        print(
            "\nfirst call per kernel variant, s (a fresh process; cold: empty numba "
            "cache, i.e. compiling; cached: its second start):"
        )
        for case, cold, cached in compile_times():
            print(f"  {case:26} cold {cold:6.1f}   cached {cached:5.2f}")
    print("\ntargets:")
    for name, measured, wanted, met in verdicts(rows, speedup, e2e):
        # One decimal: a ratio of 69.6 % must not print as a "70 %" that is not met.
        shown = f"{measured:.1%}" if wanted < 1 else f"{measured:.2f}x"
        want = f"{wanted:.0%}" if wanted < 1 else f"{wanted:.1f}x"
        print(
            f"  {name:50} {shown:>8}  (target >= {want})  {'met' if met else 'NOT met'}"
        )
    note = busy_note(rows)
    if note:
        print(f"\n{note}")
    if not args.no_spheres:
        print("\nspheres scheme over steps (time.scheme = spheres):")
        _bench_spheres()
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
