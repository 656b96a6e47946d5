"""The `sweep` command's own surface: version, help, where the store is, what a run
warns about and shows, an unreachable scheduler, the test session's speed cache."""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

from sweep.cli import build_parser
from tests.conftest import PATIENCE, SMALL_SPEC, sweep_command


def _cli(
    *args: str, cwd: Path | None = None, **env: str
) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [*sweep_command(), *args],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
        cwd=cwd,
        env={**os.environ, "PYTHONUNBUFFERED": "1", **env},
    )


def test_version() -> None:
    result = _cli("--version")
    assert result.returncode == 0 and result.stdout.startswith("sweep "), result


def test_every_positional_has_help_and_definitions_are_called_so() -> None:
    parser = build_parser()
    commands = next(a for a in parser._actions if a.dest == "command")
    for name, sub in commands.choices.items():  # type: ignore[union-attr]
        for action in sub._actions:
            if not action.option_strings:
                assert action.help, (name, action.dest)
                assert action.dest != "spec", name  # the README says "definition"


def test_status_of_a_definition_file_says_what_to_pass(tmp_path: Path) -> None:
    spec = tmp_path / "base.toml"
    spec.write_text(SMALL_SPEC)
    result = _cli("status", str(spec))
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
    result = _cli("run", str(spec), "--threads", "2", "--quiet", cwd=elsewhere)
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
    result = _cli(
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
    result = _cli(
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
    assert _cli("run", str(spec), "--store", str(out), "--quiet").returncode == 0
    for marker in sorted((out / store.MARKER_DIR).iterdir())[:5]:
        marker.unlink()
    assert _cli("run", str(spec), "--store", str(out), "--quiet").returncode == 0
    end = (out / "_runs.log").read_text().splitlines()[-1]
    assert "end: 12 of 12 tasks done (5 in this run)" in end, end
