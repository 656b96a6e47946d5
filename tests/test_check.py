"""`sweep check`: passes on correct sweeps, fails loudly on mis-specified ones."""

from __future__ import annotations

import dataclasses
import json
import math
import subprocess
import sys
from pathlib import Path

from sweep import store
from sweep.check import CheckReport, check_store, format_table
from sweep.execute import RunOptions, run, run_task
from sweep.plan import make_plan
from sweep.spec import load_spec
from tests.conftest import SMALL_SPEC
from tests.tolerances import Z_STAT

#: The D-versus-2D slip must be caught by a wide margin, not barely.
MIN_FAILING_Z = 10 * Z_STAT


def _cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "sweep.cli", *args],
        capture_output=True,
        text=True,
        timeout=300,
    )


def test_check_passes_and_writes_json(small_spec: Path, tmp_path: Path) -> None:
    out = tmp_path / "s.zarr"
    assert run(small_spec, out, RunOptions(threads=2, progress=False)).complete
    result = _cli("check", str(out), "--json")
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
    result = _cli("check", str(path))
    assert result.returncode == 1
    assert "FAIL" in result.stdout


def test_check_reports_endpoint_bias_separately(tmp_path: Path) -> None:
    spec = tmp_path / "endpoint.toml"
    spec.write_text(
        SMALL_SPEC.replace("horizon = 3.0", 'horizon = 3.0\nmonitoring = "endpoint"')
        .replace("walkers = 3000", "walkers = 20000")
        .replace("chunk = 500", "chunk = 5000")
        .replace("dt = 1e-3", "dt = 4e-3")
    )
    out = tmp_path / "e.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    report = check_store(out)
    mean_rows = [r for r in report.rows if r.statistic == "mean first-passage time"]
    assert mean_rows and all(r.allowance > 0 for r in mean_rows)
    # The shifted-wall prediction (Broadie, Glasserman & Kou 1997) explains the bias:
    # simulated minus (exact + allowance) is within Z_STAT standard errors.
    for r in mean_rows:
        assert abs(r.simulated - r.exact - r.allowance) <= Z_STAT * r.stderr
    text = _cli("check", str(out)).stdout
    assert "expected dt bias" in text


BALL_SPEC = """
[sweep]
name = "ball-exit"
seed = 11
walkers = 6000
chunk = 3000

[motion]
dimension = {dimension}
diffusivity = 0.5
start = {start}

[time]
dt = 1e-3
horizon = 10.0
{monitoring}

[domain]
shape = "ball"
center = {center}
radius = 1.0
wall = "absorbing"

[record]
survival = {{ stop = 1.0, points = 11 }}
"""


def _ball_store(tmp_path: Path, dimension: int, start: list[float], **kw: str) -> Path:
    spec = tmp_path / f"ball{dimension}.toml"
    spec.write_text(
        BALL_SPEC.format(
            dimension=dimension,
            start=start,
            center=[0.25] + [0.0] * (dimension - 1),
            monitoring=kw.get("monitoring", ""),
        )
    )
    out = tmp_path / f"ball{dimension}.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    return out


def test_check_compares_ball_exit_angle_with_harmonic_measure(tmp_path: Path) -> None:
    # E[cos theta] = r0 / R for the exit point of an absorbing ball, every dimension
    # (harmonic measure: Morters & Peres 2010 ch. 3 [from memory]; sweep.analytic).
    for dimension, start in ((2, [0.85, 0.0]), (3, [0.25, 0.5, 0.3])):
        report = check_store(_ball_store(tmp_path, dimension, start))
        rows = [r for r in report.rows if r.statistic == "E[cos exit angle]"]
        assert len(rows) == 1 and rows[0].passed and rows[0].source, report.rows
        center = [0.25] + [0.0] * (dimension - 1)
        assert rows[0].exact == math.dist(start, center)  # R = 1
        assert abs(rows[0].z) <= Z_STAT


def test_check_skips_exit_angle_from_the_centre(tmp_path: Path) -> None:
    # From the centre the start direction is undefined (the exit point is uniform).
    report = check_store(_ball_store(tmp_path, 2, [0.25, 0.0]))
    assert report.passed and report.rows
    assert not [r for r in report.rows if r.statistic == "E[cos exit angle]"]


def test_check_exit_angle_endpoint_allowance(tmp_path: Path) -> None:
    # Checking the surface only at step ends acts like a ball enlarged by
    # 0.5826 sqrt(2 D dt) (Broadie, Glasserman & Kou 1997): the angle's mean shrinks.
    out = _ball_store(tmp_path, 2, [0.85, 0.0], monitoring='monitoring = "endpoint"')
    rows = [r for r in check_store(out).rows if r.statistic == "E[cos exit angle]"]
    assert len(rows) == 1 and rows[0].allowance < 0


def test_nothing_compared_is_not_a_pass_and_reasons_are_merged() -> None:
    unchecked = (
        (0, "uniform start"),
        (1, "uniform start"),
        (2, "no tasks"),
        (4, "no tasks"),
    )
    report = CheckReport("s.zarr", (), unchecked)
    text = format_table(report)
    assert "points 0-1: not checked (uniform start)" in text
    assert "point 2: not checked (no tasks)" in text
    assert "point 4: not checked (no tasks)" in text
    assert "point  statistic" not in text and "passed" not in text
    assert report.verdict().startswith("nothing compared")


# ------------------------------------------------------------ edge cases and verdicts


def test_nothing_compared_has_its_own_state_in_json_and_text(
    degenerate_stores: dict[str, Path],
) -> None:
    """A store with no closed form: the JSON says compared 0 and passed null (not
    true), with the text's exit code."""
    out = degenerate_stores["all_on_target"]
    text = _cli("check", str(out))
    as_json = _cli("check", str(out), "--json")
    assert text.returncode == as_json.returncode == 0, (text.stderr, as_json.stderr)
    report = json.loads(as_json.stdout)
    assert report["compared"] == 0 and report["passed"] is None, report
    assert report["verdict"].startswith("nothing compared")
    assert "nothing compared" in text.stdout and "passed" not in text.stdout


def test_incomplete_store_says_so_in_the_verdict(
    degenerate_stores: dict[str, Path],
) -> None:
    out = degenerate_stores["one_task"]
    report = check_store(out)
    assert report.rows and report.passed
    assert not report.complete and (report.tasks_done, report.tasks_total) == (1, 8)
    assert "INCOMPLETE: 1 of 8 tasks done" in report.verdict()
    text = _cli("check", str(out))
    assert "1 of 8 tasks done" in text.stdout and "finished walkers only" in text.stdout
    as_json = json.loads(_cli("check", str(out), "--json").stdout)
    assert as_json["complete"] is False and as_json["tasks_done"] == 1


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
    spec = tmp_path / "slab.toml"
    spec.write_text(SLAB)
    out = tmp_path / "slab.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
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
    spec = tmp_path / "rings.toml"
    spec.write_text(CONCENTRIC)
    out = tmp_path / "rings.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    report = check_store(out)
    rows = [r for r in report.rows if r.statistic == "P(absorbed at target_0)"]
    assert len(rows) == 1, report
    # ln(R / r0) / ln(R / a) in 2-D (analytic reference J6; Redner 2001 ch. 6).
    assert math.isclose(rows[0].exact, math.log(2.0) / math.log(5.0), rel_tol=1e-12)
    assert abs(rows[0].z) <= Z_STAT, rows[0]
    # Survival and mean have no closed form with a target: said, not skipped silently.
    assert report.unchecked and "survival and mean" in report.unchecked[0][1]
