"""The commands that run a sweep or read a store: ``run``, ``status``, ``verify``,
``summary``, ``check``, ``compare``, ``export``, ``report`` (one function each, taking
the parsed arguments and returning the exit code)."""

from __future__ import annotations

import argparse
import os
import signal
import sys
from pathlib import Path
from typing import Any

from sweep import text

#: Above this many points, ``sweep run`` leaves the per-point tables to ``sweep check``.
MAX_TABLE_POINTS = 20


def compare_command(args: argparse.Namespace) -> int:
    """``sweep compare``: statistics of two stores that differ beyond their intervals."""
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


def run_command(args: argparse.Namespace) -> int:
    """``sweep run``: run or resume, then the headline and check tables."""
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


def status_command(args: argparse.Namespace) -> int:
    """``sweep status``: tasks done per point, and who runs now."""
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
        tasks = f"{len(ms)}/{n_c}"
        extra = []
        if target is not None:
            chunks, final, state, censoring = _precision_state(sweep, ms)
            planned_total += chunks
            tasks = f"{len(ms)}/{chunks}" + ("" if final else "+")
            censored_points += censoring
            extra.append(state)
        rows.append(
            [
                str(p),
                *(show_value(values[p]) for values in columns.values()),
                tasks,
                str(walkers),
                frac,
                *extra,
            ]
        )
    print(text.format_table(rows))
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


def _precision_state(
    sweep: Any, markers: list[dict[str, Any]]
) -> tuple[int, bool, str, bool]:
    """A targeted point's planned chunks, whether final, its precision against the
    target in words, and whether its judged chunks hold censored walkers."""
    from sweep import precision

    target = sweep.precision
    chunks, final, last = precision.planned_chunks(
        target,
        precision.wall_index(sweep),
        sweep.chunk,
        sweep.n_chunks,
        {int(m["chunk"]): m for m in markers},
    )
    state = precision.describe_estimate(target, last)
    if final and last is not None and not last.met:
        state += " (ceiling reached)"
    return chunks, final, state, bool(last is not None and last.censored)


def verify_command(args: argparse.Namespace) -> int:
    """``sweep verify``: every finished task's data against its checksums."""
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


def summary_command(args: argparse.Namespace) -> int:
    """``sweep summary``: the headline table of a store."""
    from sweep.report import headline_table
    from sweep.store import load_sweep, open_dataset

    sweep = load_sweep(args.store)
    print(headline_table(open_dataset(args.store, verify=True), sweep))
    return 0


def check_command(args: argparse.Namespace) -> int:
    """``sweep check``: a store against the analytic results."""
    from sweep.check import check_store, format_table
    from sweep.store import load_sweep

    report = check_store(args.store)
    if args.json:
        print(report.to_json())
    else:
        sweep = load_sweep(args.store)
        print(format_table(report, sweep))
    return report.exit_code


def export_command(args: argparse.Namespace) -> int:
    """``sweep export``: a store (or some of it) to an HDF5 file."""
    from sweep.export import export_hdf5

    points = args.points  # a list of indices (parser.index_list) or None
    variables = (
        [v.strip() for v in args.variables.split(",")] if args.variables else None
    )
    out = export_hdf5(
        args.store, args.out, points=points, variables=variables, replace=args.replace
    )
    print(f"wrote {out}")
    return 0


def report_command(args: argparse.Namespace) -> int:
    """``sweep report``: figures and an HTML page."""
    from sweep.report import write_report

    page = write_report(args.store, args.out)
    print(f"wrote {page}")
    return 0
