"""``sweep bench``: kernel throughput as ratios to this machine's limits, printed
as measured (the measuring is :mod:`sweep.bench`'s)."""

from __future__ import annotations

import argparse


def _bench_spheres() -> int:
    """``sweep bench --spheres``: the spheres-over-steps rows and their targets."""
    from sweep.bench.spheres import HEADER, NOTE, TARGETS, run_spheres_bench

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


def bench_command(args: argparse.Namespace) -> int:
    """``sweep bench``: measure and print every case, the targets, notes."""
    if args.spheres:
        return _bench_spheres()
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
