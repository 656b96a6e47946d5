"""`sweep report`: figures and an HTML page, for 1-D and 2-D stores."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

import sweep
from sweep import stats, store
from sweep.report import _plus_minus, headline_table, write_report
from tests.conftest import PATIENCE, SMALL_SPEC, build_store, run_cli, sweep_command

PLANE = """
[sweep]
name = "plane"
seed = 3
walkers = 2000
[motion]
dimension = 2
diffusivity = 0.5
start = [0.3, 0.5]
[time]
dt = 2e-3
horizon = 2.0
[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing", y_lower = "reflecting", y_upper = "reflecting" }
[record]
occupancy = { times = [0.05, 0.3], bins = 12 }
[grid]
"domain.upper" = [[1.0, 1.0], [2.0, 1.0]]
"""


def _report(tmp_path: Path, path: Path) -> str:
    page = write_report(path, tmp_path / "report")
    for name in ("survival.png", "fpt_density.png", "splitting.png", "occupancy.png"):
        png = tmp_path / "report" / name
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", name
    return page.read_text()


def test_report_1d_has_figures_and_check_table(
    tmp_path: Path, small_store: Path
) -> None:
    text = _report(tmp_path, small_store)
    assert re.search(r"all \d+ checks passed", text)
    assert "Headline numbers" in text and "mean first-passage time" in text
    assert "survival S(t=" in text and "need convergence checks" in text


def test_report_2d_has_heat_maps_and_checks(tmp_path: Path) -> None:
    text = _report(tmp_path, build_store(PLANE, tmp_path / "s.zarr", threads=2))
    assert re.search(r"all \d+ checks passed", text)
    assert "occupancy.png" in text


# Uniform starts have no closed form here, and a short horizon leaves walkers free.
UNCHECKED = (
    SMALL_SPEC.replace("start = [0.3]", 'start = "uniform"')
    .replace("horizon = 3.0", "horizon = 0.4")
    .replace("stop = 1.0", "stop = 0.4")
)


def test_headline_numbers_without_closed_form(tmp_path: Path) -> None:
    spec = tmp_path / "u.toml"
    spec.write_text(UNCHECKED)
    out = tmp_path / "u.zarr"
    ran = run_cli("run", spec, "--store", out, "--threads", "2", "--quiet")
    assert ran.returncode == 0, ran.stderr
    # Nothing to compare is said as such, not as a pass, by run, check and report.
    assert "nothing compared" in ran.stdout and "passed" not in ran.stdout
    checked = run_cli("check", out)
    assert checked.returncode == 0, checked.stderr
    assert (
        "nothing compared" in checked.stdout
        and "point  statistic" not in checked.stdout
    )
    page = write_report(out, tmp_path / "report").read_text()
    assert "nothing compared" in page

    shown = run_cli("summary", out)
    assert shown.returncode == 0, shown.stderr
    assert shown.stdout in ran.stdout  # run prints the same table
    lines = shown.stdout.splitlines()
    assert "P(x_lower)" in lines[0] and "P(x_upper)" in lines[0], lines[0]
    # Every cell is the value of sweep.stats.summary, as formatted.
    numbers = stats.summary(sweep.open(out))
    for p in range(2):
        row = lines[1 + p]
        at = numbers.isel(point=p)
        assert row.startswith(f"{p}  "), row
        assert f"  {int(at['walkers'])}  " in row
        assert f"{float(at['censored']):.3%}" in row
        half = 0.5 * float(at["mean_fpt_upper"] - at["mean_fpt_lower"])
        assert _plus_minus(float(at["mean_fpt"]), half) + " *" in row
        for name in ("x_lower", "x_upper"):
            split = at.sel(wall=name)
            assert (
                f"{float(split['splitting']):.4f} "
                f"[{float(split['splitting_lower']):.4f}, "
                f"{float(split['splitting_upper']):.4f}]"
            ) in row
    assert float(numbers["censored"].min()) > 0, "horizon too long for the footnote"
    assert "lower bound of the full mean" in shown.stdout, shown.stdout


def test_plus_minus_rounds_to_the_interval() -> None:
    assert _plus_minus(7.0622, 0.18) == "7.06 ± 0.18"
    assert _plus_minus(0.41858, 0.004) == "0.4186 ± 0.0040"
    assert _plus_minus(1234.5, 25.0) == "1234 ± 25"
    assert _plus_minus(0.5, 0.0) == "0.5 ± 0"


def test_closed_output_pipe_ends_quietly(
    small_store: Path, cli_env: dict[str, str]
) -> None:
    """`sweep summary STORE | head -1`: the reader leaves early; no traceback. (Not
    run_cli: stdout must be a pipe whose reader is gone.)"""
    out = small_store
    read, write = os.pipe()
    os.close(read)  # the reader is gone before the first line
    try:
        result = subprocess.run(
            [*sweep_command(), "summary", str(out)],
            env=cli_env,
            stdout=write,
            stderr=subprocess.PIPE,
            text=True,
            timeout=PATIENCE,
        )
    finally:
        os.close(write)
    assert result.returncode == 141, result.stderr
    assert result.stderr == "", result.stderr


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_report_on_edge_case_stores(
    degenerate_stores: dict[str, Path], tmp_path: Path
) -> None:
    """Every walker on one target (the Wilson bound once fell below p-hat = 1 and the
    report died), nothing absorbing, all censored, one walker, one task done: a full
    report each, the summary table too."""
    for name, path in degenerate_stores.items():
        page = write_report(path, tmp_path / name)
        text = page.read_text()
        for png in ("survival.png", "fpt_density.png", "splitting.png"):
            assert (tmp_path / name / png).read_bytes()[:4] == b"\x89PNG", (name, png)
        assert "Headline numbers" in text, name
        assert headline_table(sweep.open(path), store.load_sweep(path))
    partial = write_report(degenerate_stores["one_task"], tmp_path / "p").read_text()
    assert "INCOMPLETE (1 of 8 tasks done)" in partial


def test_headline_table_names_parameters_as_the_store_and_shows_units(
    tmp_path: Path,
) -> None:
    """One name per parameter (the store's coordinate name) and units in headers."""
    text = PLANE.replace("seed = 3", 'seed = 3\nunits = { length = "um", time = "ms" }')
    out = build_store(text, tmp_path / "s.zarr", threads=2)
    ds = sweep.open(out)
    table = headline_table(ds, store.load_sweep(out))
    header = table.splitlines()[0]
    assert "upper_x [um]" in header and "upper_y [um]" in header, header
    assert "mean first-passage time [ms]" in header and "domain.upper" not in header
    assert ds["upper_x"].attrs["units"] == "um" and ds["dt"].attrs["units"] == "ms"
    assert "units: length um, time ms." in table
    bare = build_store(PLANE, tmp_path / "bare.zarr", threads=2)
    plain = headline_table(sweep.open(bare), store.load_sweep(bare))
    assert "[definition units]" in plain.splitlines()[0]


#: Run in a fresh interpreter: the user's backend and pyplot figure before and after
#: importing sweep and writing a report (argv: store, output folder).
KEEPS_BACKEND = """
import json, sys
import matplotlib
matplotlib.use("svg")
import matplotlib.pyplot as plt
mine = plt.figure()
before = [matplotlib.get_backend(), plt.get_fignums()]
import sweep, sweep.report
sweep.report.write_report(sys.argv[1], sys.argv[2])
print(json.dumps([before, [matplotlib.get_backend(), plt.get_fignums()]]))
"""


def test_report_leaves_the_plotting_backend_alone(
    small_store: Path, tmp_path: Path
) -> None:
    """Importing sweep.report in a notebook once switched matplotlib to Agg; figures
    are now Figure objects saved directly, outside pyplot's figure list."""
    done = subprocess.run(
        [sys.executable, "-c", KEEPS_BACKEND, str(small_store), str(tmp_path / "r")],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert done.returncode == 0, done.stderr
    before, after = json.loads(done.stdout)
    assert after == before and before[0] == "svg", (before, after)
    assert (tmp_path / "r" / "survival.png").read_bytes()[:4] == b"\x89PNG"


def test_report_cell_of_a_twin_row_names_the_companion() -> None:
    """The HTML check table shows a consistency row's reference as the companion's
    value with its interval and description (closed forms: the value alone)."""
    from sweep.check import CheckRow
    from sweep.check.twin import twin_row
    from sweep.report import _reference_cell

    row = twin_row(0, "mean", 1.0, 0.03, 1.1, 0.04, "J7", "periodic twin: 400 walkers")
    assert _reference_cell(row) == "1.1 ± 0.078 (periodic twin: 400 walkers)"
    closed = CheckRow(0, "mean", 1.0, 0.03, 1.1, -3.3, True, "C1")
    assert _reference_cell(closed) == "1.1"
