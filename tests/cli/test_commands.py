"""The `sweep` commands end to end: run and status, where the store is, what a run
warns about and shows, an unreachable scheduler, the test session's speed cache.
"""

from __future__ import annotations

import re
from pathlib import Path

from tests.conftest import SMALL_SPEC, run_cli


def test_status_of_a_definition_file_says_what_to_pass(tmp_path: Path) -> None:
    spec = tmp_path / "base.toml"
    spec.write_text(SMALL_SPEC)
    result = run_cli("status", str(spec))
    assert result.returncode == 2
    assert "--store" not in result.stderr, result.stderr
    assert "sweep definition" in result.stderr and "base.zarr" in result.stderr


def test_run_says_where_the_store_is_warns_and_shows_censoring(tmp_path: Path) -> None:
    """A coarse dt and a short horizon are warned about at the start, as `sweep plan`
    does; the store's absolute path is printed at start and end; the final table
    has each point's censored fraction and the splitting probabilities."""
    spec = tmp_path / "coarse.toml"
    spec.write_text(
        SMALL_SPEC.replace("dt = 1e-3", "dt = 2e-2")
        .replace("horizon = 3.0", "horizon = 0.2")
        .replace("stop = 1.0", "stop = 0.2")
        .replace("times = [0.2, 0.05]", "times = [0.1]")
        .replace("walkers = 3000", "walkers = 600")
        .replace("chunk = 500", "chunk = 300")
    )
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    result = run_cli("run", str(spec), "--threads", "2", "--quiet", cwd=elsewhere)
    assert result.returncode == 0, result.stderr
    lines = result.stdout.splitlines()
    store = elsewhere / "coarse.zarr"
    assert lines[0] == f"store: {store}", lines[0]
    assert lines[-1] == f"store: {store}", lines[-1]
    # What is simulated, and in which units (none named here).
    assert lines[1].startswith(
        "small: 2 point(s) x 600 walkers; 1-D box from [0] to [1]"
    )
    assert "units: definition units" in lines[3], lines[3]
    assert "warning: point 0: dt = 0.02 is coarse" in result.stdout
    assert "horizon 0.2 is short" in result.stdout
    header = next(line for line in lines if line.startswith("point  diffusivity"))
    assert "censored" in header and "P(x_upper)" in header, header
    assert "1 - censored" in result.stdout  # splitting labelled unconditional


def test_unreachable_scheduler_creates_nothing(tmp_path: Path) -> None:
    spec = tmp_path / "s.toml"
    spec.write_text(SMALL_SPEC)
    store = tmp_path / "s.zarr"
    result = run_cli(
        "run",
        str(spec),
        "--store",
        str(store),
        "--scheduler",
        "tcp://127.0.0.1:9",  # the discard port: nothing listens there
        SWEEP_CONNECT_TIMEOUT="2",
    )
    assert result.returncode == 2, result
    assert "connecting to the Dask scheduler tcp://127.0.0.1:9" in result.stderr
    assert "within 2 s" in result.stderr and "nothing was created" in result.stderr
    assert not store.exists() and sorted(p.name for p in tmp_path.iterdir()) == [
        "s.toml"
    ]


def test_tests_keep_machine_speeds_out_of_the_users_cache() -> None:
    from sweep import sizing

    assert not sizing.CACHE.is_relative_to(Path.home()), sizing.CACHE


def test_cold_kernel_cache_is_announced_and_elapsed_counts_from_start(
    tmp_path: Path,
) -> None:
    """A run with an empty numba cache compiles for seconds: it says so first, and
    the progress line's elapsed time includes the compilation."""
    spec = tmp_path / "s.toml"
    spec.write_text(SMALL_SPEC.replace("walkers = 3000", "walkers = 1000"))
    result = run_cli(
        "run",
        str(spec),
        "--store",
        str(tmp_path / "s.zarr"),
        "--threads",
        "1",
        NUMBA_CACHE_DIR=str(tmp_path / "numba-cache"),
    )
    assert result.returncode == 0, result.stderr
    err = result.stderr
    assert "compiling kernels (first run only)" in err, err
    compiled = float(err.split("kernels compiled in ")[1].split(" s")[0])
    last = err.strip().splitlines()[-1]
    minutes, seconds = last.split("elapsed ")[1].split()[0].split(":")
    # Whole seconds on the progress line; compilation alone takes more than one.
    assert 60 * int(minutes) + int(seconds) >= int(compiled), err


def test_run_log_counts_completed_tasks_from_the_markers(tmp_path: Path) -> None:
    from sweep import store

    spec = tmp_path / "s.toml"
    spec.write_text(SMALL_SPEC)
    out = tmp_path / "s.zarr"
    assert run_cli("run", str(spec), "--store", str(out), "--quiet").returncode == 0
    for marker in sorted((out / store.MARKER_DIR).iterdir())[:5]:
        marker.unlink()
    assert run_cli("run", str(spec), "--store", str(out), "--quiet").returncode == 0
    end = (out / "_runs.log").read_text().splitlines()[-1]
    assert "end: 12 of 12 tasks done (5 in this run)" in end, end


def test_cli_run_and_status(
    small_spec: Path, tmp_path: Path, cli_env: dict[str, str]
) -> None:
    out = tmp_path / "s.zarr"
    result = run_cli("run", str(small_spec), "--store", str(out), "--threads", "2")
    assert result.returncode == 0, result.stderr
    assert "12/12 tasks done" in result.stdout
    assert re.search(r"all \d+ checks passed", result.stdout), result.stdout
    status = run_cli("status", str(out))
    assert status.returncode == 0, status.stderr
    assert "6/6" in status.stdout and "12/12 tasks done" in status.stdout


def test_cli_bad_definition_exits_2(tmp_path: Path, cli_env: dict[str, str]) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text(SMALL_SPEC.replace("diffusivity = 0.5", "difusivity = 0.5"))
    result = run_cli("run", str(bad), "--store", str(tmp_path / "x.zarr"))
    assert result.returncode == 2
    assert (
        "bad.toml" in result.stderr and "Did you mean 'diffusivity'?" in result.stderr
    )
    assert "Traceback" not in result.stderr
    assert not (tmp_path / "x.zarr").exists()
