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
    assert {"mean first-passage time", "P(exit at x_upper)"} <= names
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
            args=dataclasses.replace(task.args, diffusivity=2 * task.args.diffusivity),
        )
        assert "error" not in run_task(str(path), wrong)
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
