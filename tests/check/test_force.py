"""`sweep check` and `sweep report` on force sweeps (sweep/check/force.py): a
double-well sweep that resumes bit-identically and agrees with the quadrature, and the
Ornstein-Uhlenbeck occupancy of a harmonic well in free space."""

from __future__ import annotations

from pathlib import Path

from sweep.check import check_store
from sweep.execute import RunOptions, run
from sweep.report import write_report
from tests.conftest import assert_stores_identical, build_store
from tests.spec.sections.test_force import DOUBLE_WELL, spec


def test_force_sweep_resumes_bit_identically_and_checks(tmp_path: Path) -> None:
    # Done-when of issue 22: runs end to end, resumes bit-identically, and `sweep
    # check` agrees with the quadrature within 5 standard errors.
    text = spec(DOUBLE_WELL + '[grid]\n"force.barrier" = [1.0, 2.0]\n')
    full = build_store(text, tmp_path / "full.zarr", threads=2)
    partial = build_store(text, tmp_path / "partial.zarr", threads=2)
    markers = sorted((partial / "_tasks").iterdir())
    for marker in markers[::2]:
        marker.unlink()
    summary = run(
        tmp_path / "partial.toml", partial, RunOptions(threads=2, progress=False)
    )
    assert summary.completed == len(markers[::2])
    assert_stores_identical(full, partial)
    report = check_store(full)
    assert report.passed, report
    assert {r.statistic for r in report.rows} == {"mean first-passage time"}
    assert len({r.point for r in report.rows}) == 2
    # The report's escape-time figure: simulated, exact quadrature and Kramers.
    write_report(full, tmp_path / "report")
    assert (tmp_path / "report" / "escape_time.png").stat().st_size > 0
    assert "Kramers" in (tmp_path / "report" / "index.html").read_text()


OU = """
[sweep]
seed = 5
walkers = 4000
[motion]
dimension = 2
diffusivity = 0.8
drift = [0.5, 0.0]
start = [1.0, 0.0]
[time]
dt = 0.01
horizon = 2.0
[domain]
shape = "box"
lower = ["-inf", "-inf"]
upper = ["inf", "inf"]
[force]
potential = "harmonic"
center = [0.0, 0.0]
stiffness = [3.0, 0.0]
[record]
occupancy = { times = [0.1, 1.0, 2.0], bins = 40, lower = [-3, -3], upper = [3, 3] }
"""


def test_check_compares_ou_occupancy(tmp_path: Path) -> None:
    # A harmonic well in free space: `sweep check` compares each snapshot's occupancy
    # per axis with the exact Gaussian (Uhlenbeck & Ornstein 1930 [memory]); walkers
    # the histogram range leaves out (y spreads freely) enter through the other
    # axes' in-range mass.
    report = check_store(build_store(OU, tmp_path / "ou.zarr"))
    assert report.passed, report
    assert len(report.rows) == 6  # 3 snapshots x 2 axes
    assert all(r.statistic.startswith("P(") for r in report.rows)


TILTED = """
[sweep]
seed = 9
walkers = 1000
[motion]
dimension = 1
diffusivity = 0.8
start = 0.1
[time]
dt = 1e-3
horizon = 100.0
[domain]
shape = "box"
lower = "-inf"
upper = 2.1
walls = { x_upper = "absorbing" }
[force]
potential = "tilted_periodic"
axis = "x"
amplitude = 1.0
period = 0.5
tilt = 2.0
"""


def test_check_compares_tilted_drift_velocity(tmp_path: Path) -> None:
    # Absorbed four periods ahead on the real line: the mean time and the drift
    # velocity (distance / mean time; Stratonovich's formula, Reimann 2002 [memory])
    # are both compared.
    report = check_store(build_store(TILTED, tmp_path / "tilted.zarr"))
    assert report.passed, report
    assert {r.statistic for r in report.rows} == {
        "mean first-passage time",
        "drift velocity",
    }
