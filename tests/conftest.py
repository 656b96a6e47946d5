"""Shared fixtures: small sweep definitions and helpers to compare stores bit for bit."""

from __future__ import annotations

import atexit
import os
import shutil
import signal
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pytest
import zarr

#: The command-line case machinery's fixtures (``workspace``, ``reference_store``,
#: ``outcomes``), found by every test module that lists cases.
pytest_plugins = ("tests.cli_cases",)

# Measured machine speeds (`sweep bench`, `sweep plan`'s calibration) go to a cache
# of this test session, never the user's ~/.cache: set before any sweep module reads
# it, and inherited by every subprocess the tests start.
_CACHE = Path(tempfile.mkdtemp(prefix="sweep-test-cache-"))
os.environ["SWEEP_CACHE_DIR"] = str(_CACHE)
atexit.register(shutil.rmtree, _CACHE, ignore_errors=True)

#: A 1-D interval sweep over two diffusivities: 2 points x 6 tasks, each task well
#: under a second, so runs can be interrupted mid-sweep.
SMALL_SPEC = """
[sweep]
name = "small"
seed = 7
walkers = 3000
chunk = 500

[motion]
dimension = 1
diffusivity = 0.5
start = [0.3]

[time]
dt = 1e-3
horizon = 3.0

[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }

[record]
survival = { stop = 1.0, points = 11 }
occupancy = { times = [0.2, 0.05], bins = 8 }

[grid]
"motion.diffusivity" = [0.5, 1.0]
"""


@pytest.fixture
def small_spec(tmp_path: Path) -> Path:
    path = tmp_path / "small.toml"
    path.write_text(SMALL_SPEC)
    return path


def store_arrays(path: Path) -> dict[str, np.ndarray]:
    """Every array of a zarr store, read fully (for bit-for-bit comparisons)."""
    import warnings

    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Object at _", category=UserWarning)
        group = zarr.open_group(str(path), mode="r")
        return {name: np.asarray(array[...]) for name, array in group.arrays()}


def assert_stores_identical(a: Path, b: Path) -> None:
    """Same arrays, same shapes, same bits (NaN patterns included)."""
    left, right = store_arrays(a), store_arrays(b)
    assert sorted(left) == sorted(right)
    for name in left:
        np.testing.assert_array_equal(
            left[name], right[name], err_msg=name, strict=True
        )


#: Seconds a subprocess (a sweep command, a Dask process) may take to start, reach a
#: state or finish before the test counts it as hanging.
PATIENCE = 120.0


def sweep_command() -> list[str]:
    """The installed console script, run with this interpreter."""
    return [sys.executable, "-m", "sweep.cli"]


#: Runs the command line under an address-space limit (argv[1] bytes), so a command
#: that tries to allocate the machine's memory fails fast instead of swapping it away.
_LIMITED = (
    "import resource, runpy, sys\n"
    "limit = int(sys.argv.pop(1))\n"
    "resource.setrlimit(resource.RLIMIT_AS, (limit, limit))\n"
    "runpy.run_module('sweep.cli', run_name='__main__', alter_sys=True)\n"
)


def run_cli(
    *args: str | Path,
    cwd: Path | None = None,
    timeout: float = PATIENCE,
    memory_limit: int | None = None,
    **env: str,
) -> subprocess.CompletedProcess[str]:
    """Run ``sweep ARGS`` in a subprocess, as a user would (the one CLI runner).

    Output is captured as text; extra keyword arguments are environment variables.
    ``memory_limit`` (bytes) caps the command's address space.
    """
    command = sweep_command()
    if memory_limit is not None:
        command = [sys.executable, "-c", _LIMITED, str(memory_limit)]
    return subprocess.run(
        [*command, *map(str, args)],
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=cwd,
        env={**os.environ, "PYTHONUNBUFFERED": "1", **env},
    )


def kill_run_at(
    definition: Path, store: Path, line: str, what: str, **pause: str
) -> None:
    """Start ``sweep run DEFINITION --store STORE --quiet`` in its own session with
    the environment ``pause`` (a pause hook, e.g. ``SWEEP_ROUND_PAUSE="3"``), wait for
    ``line`` on its stderr and SIGKILL its process group there; fail if the run ends
    first (``what``: where it should have paused, for the message)."""
    proc = subprocess.Popen(
        [*sweep_command(), "run", str(definition), "--store", str(store), "--quiet"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
        env={**os.environ, "PYTHONUNBUFFERED": "1", **pause},
        start_new_session=True,
    )
    try:
        assert proc.stderr is not None
        for text in proc.stderr:
            if line in text:
                break
        else:
            pytest.fail(f"the run ended before {what}: rc {proc.wait()}")
    finally:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(timeout=PATIENCE)
        if proc.stderr is not None:
            proc.stderr.close()


def build_store(
    definition: str | Path, store: Path, threads: int = 1, **options: object
) -> Path:
    """Run a definition (its text, or a file) into ``store`` in this process; the
    store must come out complete. Extra keywords go to :class:`RunOptions`."""
    from sweep.execute import RunOptions, run

    if isinstance(definition, str):
        path = store.parent / f"{store.stem}.toml"
        path.write_text(definition)
        definition = path
    summary = run(
        definition, store, RunOptions(threads=threads, progress=False, **options)
    )
    assert summary.complete, summary
    return store


@pytest.fixture(scope="session")
def small_store(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """:data:`SMALL_SPEC` run once per session (read-only: copy it before changing)."""
    return build_store(SMALL_SPEC, tmp_path_factory.mktemp("small") / "small.zarr")


@pytest.fixture
def cli_env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONUNBUFFERED"] = "1"
    return env


@pytest.fixture(scope="session")
def degenerate_stores(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """The edge-case stores of :mod:`tests.degenerate`, by case name (built once)."""
    from tests.degenerate import build

    return build(tmp_path_factory.mktemp("degenerate"))
