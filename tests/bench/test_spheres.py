"""sweep.bench.spheres: the spheres-over-steps rows."""

from __future__ import annotations

import math

from sweep.cli import build_parser


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
