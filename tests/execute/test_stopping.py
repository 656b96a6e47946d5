"""Stopping a run (SIGKILL, Ctrl-C once and twice) and resuming it bit for bit; the
status of a store while another process runs into it.
"""

from __future__ import annotations

import signal
import subprocess
import time
from pathlib import Path

from sweep import store
from tests.conftest import (
    PATIENCE,
    SMALL_SPEC,
    assert_stores_identical,
    build_store,
    run_cli,
    sweep_command,
)


def start_run(
    definition: Path,
    out: Path,
    env: dict[str, str],
    threads: int,
    *,
    quiet: bool = True,
    output: int = subprocess.PIPE,
) -> subprocess.Popen[str]:
    """Start ``sweep run DEFINITION --store OUT --threads THREADS [--quiet]`` in a
    subprocess; ``output`` is where its stdout and stderr go (text)."""
    argv = [*sweep_command(), "run", str(definition), "--store", str(out)]
    argv += ["--threads", str(threads), *(["--quiet"] if quiet else [])]
    return subprocess.Popen(argv, env=env, stdout=output, stderr=output, text=True)


def test_sigkilled_run_resumes_bit_identical(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    # Tasks of some 30 ms (dt 1e-5), so that three kills, each after a few more tasks
    # have finished, leave some of the twelve undone: with the small sweep's tasks of
    # a millisecond, a loaded machine finished the run between check and kill.
    spec = slow_spec(tmp_path, dt=1e-5, walkers=3000, chunk=500)
    reference = tmp_path / "reference.zarr"
    build_store(spec, reference, threads=2)
    out = tmp_path / "killed.zarr"
    for attempt in range(3):
        proc = start_run(spec, out, cli_env, 2, output=subprocess.DEVNULL)
        deadline = time.monotonic() + PATIENCE
        target = 2 + 3 * attempt
        while time.monotonic() < deadline and proc.poll() is None:
            if len(store.done_tasks(out)) >= target:
                break
            time.sleep(0.01)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
    killed_done = len(store.done_tasks(out))
    assert killed_done < 12, (
        "the run finished before it could be killed; make tasks longer"
    )
    # The killed runner's lock is stale: the rerun takes it over and completes.
    result = run_cli("run", str(spec), "--store", str(out), "--quiet")
    assert result.returncode == 0, result.stderr
    assert_stores_identical(reference, out)


def test_ctrl_c_stops_cleanly_and_resumes(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    spec = slow_spec(tmp_path, dt=1e-5, walkers=3000, chunk=500)  # tasks of ~30 ms
    reference = tmp_path / "reference.zarr"
    build_store(spec, reference, threads=2)
    out = tmp_path / "interrupted.zarr"
    proc = start_run(spec, out, cli_env, 1)
    deadline = time.monotonic() + PATIENCE
    while (
        time.monotonic() < deadline
        and len(store.done_tasks(out)) < 2
        and proc.poll() is None
    ):
        time.sleep(0.01)
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=PATIENCE)
    assert proc.returncode == 130, stderr
    assert "Traceback" not in stderr
    assert "rerun" in (stdout + stderr).lower()
    assert len(store.done_tasks(out)) < 12
    assert not (out / store.LOCK_FILE).exists()
    build_store(spec, out, threads=2)
    assert_stores_identical(reference, out)


def slow_spec(tmp_path: Path, dt: float, walkers: int, chunk: int = 5000) -> Path:
    """The small sweep with a finer step and more walkers, in tasks of ``chunk``
    walkers."""
    path = tmp_path / "slow.toml"
    path.write_text(
        SMALL_SPEC.replace("dt = 1e-3", f"dt = {dt!r}")
        .replace("walkers = 3000", f"walkers = {walkers}")
        .replace("chunk = 500", f"chunk = {chunk}")
    )
    return path


def test_second_ctrl_c_stops_at_once(tmp_path: Path, cli_env: dict[str, str]) -> None:
    """The first Ctrl-C waits for running tasks; a second leaves them (their threads
    cannot be stopped) and exits at once, with the lock released."""
    # One task of some 1e9 walker-steps: seconds to minutes, far beyond the signals.
    spec = slow_spec(tmp_path, dt=1e-6, walkers=5000)
    out = tmp_path / "s.zarr"
    proc = start_run(spec, out, cli_env, 1, quiet=False)
    deadline = time.monotonic() + PATIENCE
    # The lock is taken just before the kernel's warm-up and the first task.
    while time.monotonic() < deadline and not (out / store.LOCK_FILE).exists():
        time.sleep(0.01)
    time.sleep(1.0)
    proc.send_signal(signal.SIGINT)
    time.sleep(0.5)
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=PATIENCE)
    assert proc.returncode == 130, stderr
    assert "Traceback" not in stderr and "Exception ignored" not in stderr, stderr
    assert "Ctrl-C again stops at once" in stderr, stderr
    assert "rerun" in stdout.lower(), stdout
    assert len(store.done_tasks(out)) == 0
    assert not (out / store.LOCK_FILE).exists()


def test_status_while_another_process_runs(
    small_spec: Path, tmp_path: Path, cli_env: dict[str, str]
) -> None:
    slow = slow_spec(tmp_path, dt=2e-5, walkers=60000)
    out = tmp_path / "s.zarr"
    proc = start_run(slow, out, cli_env, 1, output=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + PATIENCE
        while time.monotonic() < deadline and len(store.done_tasks(out)) < 1:
            time.sleep(0.02)
        status = run_cli("status", str(out))
        assert status.returncode == 0, status.stderr
        assert f"running now: pid {proc.pid}" in status.stdout
        assert "/24 tasks done" in status.stdout and "24/24" not in status.stdout
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait()
