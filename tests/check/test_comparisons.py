"""``sweep.check.comparisons``: the check passes on correct sweeps, fails loudly on
mis-specified ones, and compares each geometry's closed forms (sources beside each
check; formulas in ``docs/analytic-reference.md``)."""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

from sweep import store
from sweep.check import check_store
from sweep.execute import run_task
from sweep.plan import make_plan
from sweep.spec import load_spec
from tests.check.stores import ball_store
from tests.conftest import build_store, run_cli
from tests.tolerances import Z_STAT

#: The D-versus-2D slip must be caught by a wide margin, not barely.
MIN_FAILING_Z = 10 * Z_STAT


def test_check_passes_and_writes_json(small_store: Path) -> None:
    result = run_cli("check", small_store, "--json")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert report["passed"] is True
    names = {row["statistic"] for row in report["rows"]}
    assert {"mean first-passage time", "P(absorbed at x_upper)"} <= names
    assert all(row["source"] for row in report["rows"])


def test_check_fails_on_mis_scaled_diffusivity(
    small_spec: Path, tmp_path: Path
) -> None:
    """A kernel fed 2D instead of D (the classic variance slip) is caught."""
    plan = make_plan(load_spec(small_spec))
    path = store.prepare(tmp_path / "wrong.zarr", plan)
    for task in plan.tasks:
        wrong = dataclasses.replace(
            task,
            args=dataclasses.replace(
                task.args,
                motion=task.args.motion._replace(
                    diffusivity=2 * task.args.motion.diffusivity
                ),
            ),
        )
        assert "error" not in run_task(
            str(path), wrong, store.read_attrs(path)["store_id"]
        )
    report = check_store(path)
    assert report.passed is False
    worst = max(abs(r.z) for r in report.rows)
    assert worst > MIN_FAILING_Z
    result = run_cli("check", path)
    assert result.returncode == 1
    assert "FAIL" in result.stdout


def test_check_compares_ball_exit_angle_with_harmonic_measure(tmp_path: Path) -> None:
    # E[cos theta] = r0 / R for the exit point of an absorbing ball, every dimension
    # (harmonic measure: Morters & Peres 2010 ch. 3 [from memory]; sweep.analytic).
    for dimension, start in ((2, [0.85, 0.0]), (3, [0.25, 0.5, 0.3])):
        report = check_store(ball_store(tmp_path, dimension, start))
        rows = [r for r in report.rows if r.statistic == "E[cos exit angle]"]
        assert len(rows) == 1 and rows[0].passed and rows[0].source, report.rows
        center = [0.25] + [0.0] * (dimension - 1)
        assert rows[0].exact == math.dist(start, center)  # R = 1
        assert abs(rows[0].z) <= Z_STAT


def test_check_skips_exit_angle_from_the_centre(tmp_path: Path) -> None:
    # From the centre the start direction is undefined (the exit point is uniform).
    report = check_store(ball_store(tmp_path, 2, [0.25, 0.0]))
    assert report.passed and report.rows
    assert not [r for r in report.rows if r.statistic == "E[cos exit angle]"]


def test_edge_case_stores_check_without_errors(
    degenerate_stores: dict[str, Path],
) -> None:
    """Every edge case gives a report; each point is compared or has a reason; no
    comparison rests on an undefined standard error (one walker: no mean row)."""
    for name, out in degenerate_stores.items():
        report = check_store(out)
        n_points = store.load_sweep(out).n_points
        covered = {r.point for r in report.rows} | {p for p, _ in report.unchecked}
        assert covered == set(range(n_points)), (name, report)
        assert all(math.isfinite(r.z) for r in report.rows), (name, report.rows)
    one = check_store(degenerate_stores["one_walker"])
    assert not [r for r in one.rows if r.statistic == "mean first-passage time"]


#: A 3-D slab: absorbing faces at x = 0 and 1, y and z unbounded, drift along x
#: (and across it, which must not matter).
SLAB = """
[sweep]
seed = 17
walkers = 6000
chunk = 3000
[motion]
dimension = 3
diffusivity = 0.5
drift = [0.8, 0.3, 0.0]
start = [0.4, 0.0, 0.0]
[time]
dt = 1e-3
horizon = 8.0
[domain]
lower = [0.0, "-inf", "-inf"]
upper = [1.0, "inf", "inf"]
walls = { x_lower = "absorbing", x_upper = "absorbing" }
[record]
survival = { stop = 1.0, points = 11 }
"""


def test_splitting_is_checked_in_a_3d_slab_with_drift(tmp_path: Path) -> None:
    out = build_store(SLAB, tmp_path / "slab.zarr", threads=2)
    report = check_store(out)
    rows = [r for r in report.rows if r.statistic == "P(absorbed at x_upper)"]
    assert len(rows) == 1, report.rows
    # The 1-D interval with drift along x (analytic reference C2; Redner 2001 ch. 2):
    # y and z are independent of x in a box (reference D).
    b = 0.8 / 0.5
    exact = math.expm1(-b * 0.4) / math.expm1(-b * 1.0)
    assert math.isclose(rows[0].exact, exact, rel_tol=1e-12)
    assert abs(rows[0].z) <= Z_STAT, rows[0]


#: Concentric absorbing circles: the disk's wall at R = 1 and a target of radius
#: 0.2 at its centre, start at r0 = 0.5.
CONCENTRIC = """
[sweep]
seed = 19
walkers = 4000
chunk = 2000
[motion]
dimension = 2
diffusivity = 1.0
start = [0.5, 0.0]
[time]
dt = 1e-4
horizon = 5.0
[domain]
shape = "ball"
center = [0.0, 0.0]
radius = 1.0
wall = "absorbing"
targets = [{ center = [0.0, 0.0], radius = 0.2 }]
[record]
survival = { stop = 0.5, points = 6 }
"""


def test_splitting_is_checked_between_concentric_spheres(tmp_path: Path) -> None:
    out = build_store(CONCENTRIC, tmp_path / "rings.zarr", threads=2)
    report = check_store(out)
    rows = [r for r in report.rows if r.statistic == "P(absorbed at target_0)"]
    assert len(rows) == 1, report
    # ln(R / r0) / ln(R / a) in 2-D (analytic reference J6; Redner 2001 ch. 6).
    assert math.isclose(rows[0].exact, math.log(2.0) / math.log(5.0), rel_tol=1e-12)
    assert abs(rows[0].z) <= Z_STAT, rows[0]
    # Survival and mean have no closed form with a target: said, not skipped silently.
    assert report.unchecked and "survival and mean" in report.unchecked[0][1]
