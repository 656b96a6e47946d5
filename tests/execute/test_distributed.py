"""The same definition on a local process cluster and on real scheduler/worker processes.

Schedulers and workers are real processes on 127.0.0.1; results must be bit-identical to
the threaded run, also when a worker is killed with SIGKILL in the middle of a task.
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

from sweep import store
from sweep.execute import RunOptions, run
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical, run_cli

pytestmark = pytest.mark.distributed

BIN = Path(sys.executable).parent


def _spawn(args: list[str], log: Path) -> subprocess.Popen[bytes]:
    with log.open("wb") as out:  # the child keeps its own descriptor
        return subprocess.Popen(
            args,
            stdout=out,
            stderr=subprocess.STDOUT,
            start_new_session=True,
            cwd=log.parent,
        )


def _stop(proc: subprocess.Popen[bytes]) -> None:
    if proc.poll() is None:
        os.killpg(proc.pid, signal.SIGTERM)
        try:
            proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait()


@pytest.fixture
def cluster(tmp_path: Path) -> Iterator[Path]:
    """A real `dask scheduler` and two single-threaded `dask worker` processes."""
    workdir = tmp_path / "cluster"
    workdir.mkdir()
    scheduler_file = workdir / "scheduler.json"
    scheduler = _spawn(
        [
            str(BIN / "dask"),
            "scheduler",
            "--host",
            "127.0.0.1",
            "--port",
            "0",
            "--dashboard-address",
            ":0",
            "--scheduler-file",
            str(scheduler_file),
        ],
        workdir / "scheduler.log",
    )
    deadline = time.monotonic() + PATIENCE
    while not scheduler_file.exists() and time.monotonic() < deadline:
        time.sleep(0.1)
    workers = _spawn(
        [
            str(BIN / "dask"),
            "worker",
            "--scheduler-file",
            str(scheduler_file),
            "--nworkers",
            "2",
            "--nthreads",
            "1",
            "--host",
            "127.0.0.1",
            "--no-dashboard",
        ],
        workdir / "workers.log",
    )
    try:
        from distributed import Client

        with Client(scheduler_file=str(scheduler_file), timeout="60s") as client:
            client.wait_for_workers(2, timeout=PATIENCE)
        yield scheduler_file
    finally:
        _stop(workers)
        _stop(scheduler)


@pytest.fixture
def reference(small_store: Path) -> Path:
    """The small sweep run on threads (the session's store: read only)."""
    return small_store


def test_processes_match_threads(
    small_spec: Path, reference: Path, tmp_path: Path
) -> None:
    out = tmp_path / "processes.zarr"
    summary = run(small_spec, out, RunOptions(processes=2, progress=False))
    assert summary.complete
    assert_stores_identical(reference, out)
    # The markers say which worker process ran each task.
    pids = {m["pid"] for m in store.read_markers(out)}
    assert os.getpid() not in pids


def test_scheduler_file_and_address_match_threads(
    small_spec: Path, reference: Path, tmp_path: Path, cluster: Path
) -> None:
    by_file = tmp_path / "by-file.zarr"
    assert run(
        small_spec, by_file, RunOptions(scheduler_file=str(cluster), progress=False)
    ).complete
    assert_stores_identical(reference, by_file)
    address = json.loads(cluster.read_text())["address"]
    by_address = tmp_path / "by-address.zarr"
    result = run_cli(
        "run",
        str(small_spec),
        "--store",
        str(by_address),
        "--scheduler",
        address,
        "--quiet",
    )
    assert result.returncode == 0, result.stderr
    assert_stores_identical(reference, by_address)
    assert "not encrypted" not in result.stderr  # on the loopback: no warning


@pytest.mark.parametrize(
    ("address", "private"),
    [
        ("tls://10.0.0.5:8786", True),  # TLS authenticates both ends
        ("tcp://127.0.0.1:8786", True),
        ("tcp://[::1]:8786", True),
        ("tcp://localhost:8786", True),
        ("tcp://10.0.0.5:8786", False),
        ("tcp://0.0.0.0:8786", False),
        ("10.0.0.5:8786", False),  # Dask's default scheme is tcp
    ],
)
def test_scheduler_addresses_open_to_others(address: str, private: bool) -> None:
    from sweep.execute import _private_address

    assert _private_address(address) is private


def test_worker_killed_mid_task_loses_nothing(
    small_spec: Path, reference: Path, tmp_path: Path, cluster: Path
) -> None:
    from distributed import Client

    # Longer tasks, so the kill lands while a task runs.
    slow = tmp_path / "slow.toml"
    slow.write_text(SMALL_SPEC.replace("dt = 1e-3", "dt = 2e-4"))
    slow_reference = tmp_path / "slow-threads.zarr"
    assert run(slow, slow_reference, RunOptions(threads=2, progress=False)).complete

    out = tmp_path / "killed-worker.zarr"
    proc = subprocess.Popen(
        [sys.executable, "-m", "sweep.cli", "run", str(slow), "--store", str(out),
         "--scheduler-file", str(cluster), "--quiet"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )  # fmt: skip
    with Client(scheduler_file=str(cluster), timeout="60s") as client:
        deadline = time.monotonic() + PATIENCE
        while time.monotonic() < deadline:
            processing = client.processing()
            busy = [w for w, keys in processing.items() if keys]
            if busy and len(store.done_tasks(out)) >= 1:
                break
            time.sleep(0.05)
        victim = busy[0]
        pid = client.run(os.getpid, workers=[victim])[victim]
    os.kill(pid, signal.SIGKILL)
    stdout, stderr = proc.communicate(timeout=PATIENCE)
    assert proc.returncode == 0, stderr
    assert_stores_identical(slow_reference, out)


def test_slurm_job_script_runs_the_sweep(
    small_spec: Path, reference: Path, tmp_path: Path
) -> None:
    """The HPC recipe end to end on this machine: `srun` is a stand-in that runs its
    command once (one node); scheduler and workers are real processes on 127.0.0.1."""
    script = Path(__file__).resolve().parents[2] / "sweeps" / "hpc" / "slurm-job.sh"
    fake_bin = tmp_path / "bin"
    fake_bin.mkdir()
    srun = fake_bin / "srun"
    srun.write_text(
        '#!/bin/sh\nwhile [ "${1#--}" != "$1" ]; do shift; done\nexec "$@"\n'
    )
    srun.chmod(0o755)
    out = tmp_path / "slurm.zarr"
    env = {
        **os.environ,
        "PATH": f"{fake_bin}:{os.environ['PATH']}",
        "SLURM_JOB_ID": "4242",
        "SLURM_NNODES": "1",
        "SLURM_CPUS_PER_TASK": "2",
        "VENV": str(BIN.parent),
        "SWEEP_WORKDIR": str(tmp_path / "dask"),
        "SWEEP_SCHEDULER_ARGS": "--host 127.0.0.1",
        "SWEEP_WORKER_ARGS": "--host 127.0.0.1",
    }
    job = subprocess.Popen(
        ["bash", str(script), str(small_spec), str(out)],
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        cwd=tmp_path,
        start_new_session=True,
    )
    try:
        output, _ = job.communicate(timeout=PATIENCE)
    finally:
        # Like a batch system ending the allocation: nothing of the job survives.
        with contextlib.suppress(ProcessLookupError):
            os.killpg(job.pid, signal.SIGKILL)
        job.wait()
    assert job.returncode == 0, output
    assert_stores_identical(reference, out)


def _executing(client: object) -> int:
    """Tasks running on the cluster's workers, cancelled ones (orphans) included."""
    counts = client.run(lambda dask_worker: dask_worker.state.executing_count)  # type: ignore[attr-defined]
    return sum(counts.values())


def test_orphaned_tasks_of_a_deleted_store_cannot_write_into_its_successor(
    tmp_path: Path, cluster: Path
) -> None:
    """Driver A killed mid-run, its store deleted, B run into the same path: A's tasks
    still running on the workers must leave nothing B counts as done."""
    from distributed import Client

    # A: tasks of about 5e8 walker-steps (seconds each), so they outlive their driver
    # and the whole of B.
    slow = tmp_path / "a.toml"
    slow.write_text(SMALL_SPEC.replace("dt = 1e-3", "dt = 2e-7"))
    # B differs from A by D and by chunk, so A's tasks would land in B's chunks.
    other = tmp_path / "b.toml"
    other.write_text(
        SMALL_SPEC.replace("chunk = 500", "chunk = 1000").replace(
            '"motion.diffusivity" = [0.5, 1.0]', '"motion.diffusivity" = [0.25, 1.0]'
        )
    )
    clean_b = tmp_path / "clean-b.zarr"
    assert run(other, clean_b, RunOptions(threads=2, progress=False)).complete

    out = tmp_path / "s.zarr"
    driver = subprocess.Popen(
        [sys.executable, "-m", "sweep.cli", "run", str(slow), "--store", str(out),
         "--scheduler-file", str(cluster), "--quiet"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    with Client(scheduler_file=str(cluster), timeout="60s") as client:
        deadline = time.monotonic() + PATIENCE
        while time.monotonic() < deadline and _executing(client) < 2:
            time.sleep(0.05)
        assert _executing(client) == 2, "A's tasks never started"
        driver.send_signal(signal.SIGKILL)
        driver.wait()
        import shutil

        shutil.rmtree(out)
        assert run(other, out, RunOptions(threads=2, progress=False)).complete
        # The case this test is about: A's tasks still run after B is complete.
        assert _executing(client) > 0, "A's tasks ended before B: make them longer"
        deadline = time.monotonic() + PATIENCE
        while time.monotonic() < deadline and _executing(client) > 0:
            time.sleep(0.1)
        assert _executing(client) == 0, "A's orphaned tasks did not end"
    # Every marker is B's, every checksum holds, and the data are a clean B's.
    attrs, done = store.verified_markers(out, digests=True)
    assert len(done) == 6
    assert {m["store_id"] for m in done.values()} == {attrs["store_id"]}
    assert_stores_identical(clean_b, out)


def _family(pid: int) -> list[int]:
    """A process and all its descendants (from /proc)."""
    children: dict[int, list[int]] = {}
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        children.setdefault(int(fields[1]), []).append(int(stat.parent.name))
    family, todo = [], [pid]
    while todo:
        p = todo.pop()
        family.append(p)
        todo.extend(children.get(p, []))
    return family


def _listening(pids: list[int]) -> list[tuple[str, int]]:
    """(host, port) of every listening TCP socket of these processes (from /proc)."""
    inodes = set()
    for pid in pids:
        for fd in Path(f"/proc/{pid}/fd").glob("*"):
            with contextlib.suppress(OSError):
                target = os.readlink(fd)
                if target.startswith("socket:["):
                    inodes.add(target[8:-1])
    found = []
    for table in ("tcp", "tcp6"):
        for line in Path(f"/proc/net/{table}").read_text().splitlines()[1:]:
            fields = line.split()
            if fields[3] == "0A" and fields[9] in inodes:  # 0A: LISTEN
                host, port = fields[1].split(":")
                if table == "tcp":
                    host = socket.inet_ntoa(bytes.fromhex(host)[::-1])
                found.append((host, int(port, 16)))
    return found


@contextlib.contextmanager
def _running_on_processes(
    spec: Path, out: Path, env: dict[str, str]
) -> Iterator[subprocess.Popen[str]]:
    """``sweep run SPEC --store OUT --processes 2 --quiet`` in a subprocess, yielded
    once the store holds its first finished task; killed on the way out if it still
    runs."""
    proc = subprocess.Popen(
        [sys.executable, "-m", "sweep.cli", "run", str(spec), "--store", str(out),
         "--processes", "2", "--quiet"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )  # fmt: skip
    try:
        deadline = time.monotonic() + PATIENCE
        while not (out / "_tasks").is_dir() or not any((out / "_tasks").iterdir()):
            assert proc.poll() is None and time.monotonic() < deadline
            time.sleep(0.1)
        yield proc
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()


def test_local_cluster_admits_nobody_else_and_is_quiet(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    """While `sweep run --processes 2` runs, another process on this machine can
    neither connect to its scheduler, nannies or workers (plain or with TLS credentials
    of its own) nor find an HTTP server; a worker killed mid-run leaves no tracebacks,
    and `--quiet` prints nothing but the results."""
    from distributed import Client
    from distributed.security import Security

    spec = _longer_spec(tmp_path)
    out = tmp_path / "private.zarr"
    with _running_on_processes(spec, out, cli_env) as proc:
        family = _family(proc.pid)
        ports = _listening(family)
        # Scheduler, two nannies, two workers: TLS, on the loopback, no HTTP.
        assert len(ports) == 5, ports
        assert {host for host, _ in ports} == {"127.0.0.1"}, ports
        stranger = Security.temporary()
        for _, port in ports:
            for address, security in (
                (f"tcp://127.0.0.1:{port}", None),
                (f"tls://127.0.0.1:{port}", stranger),
            ):
                with pytest.raises((OSError, TimeoutError)):
                    with Client(address, security=security, timeout="3s") as client:
                        client.run(os.getpid)  # code in the workers: must not run
            with socket.create_connection(("127.0.0.1", port), timeout=5) as s:
                s.sendall(b"GET / HTTP/1.0\r\n\r\n")
                s.settimeout(5)
                with contextlib.suppress(OSError):
                    assert not s.recv(16).startswith(b"HTTP/")
        # A worker dies (its pid is a child of the driver running the worker code).
        assert proc.poll() is None, "the run ended before the checks: make it longer"
        workers = [p for p in family if b"spawn_main" in _cmdline(p)]
        assert len(workers) == 2
        os.kill(workers[0], signal.SIGKILL)
        stdout, stderr = proc.communicate(timeout=PATIENCE)
    assert proc.returncode == 0, stderr
    assert "16/16 tasks done" in stdout
    # Dask's warnings about the strangers' attempts and the restarted worker are all:
    # no INFO chatter, no tracebacks (resource_tracker's included).
    expected = ("TLS handshake failed", "Restarting worker")
    lines = [line for line in stderr.splitlines() if line.strip()]
    assert all(any(e in line for e in expected) for line in lines), stderr


def _cmdline(pid: int) -> bytes:
    try:
        return Path(f"/proc/{pid}/cmdline").read_bytes()
    except OSError:
        return b""


def _longer_spec(tmp_path: Path) -> Path:
    """The small sweep as 16 tasks of 1-2 s on one core."""
    spec = tmp_path / "longer.toml"
    spec.write_text(
        SMALL_SPEC.replace("dt = 1e-3", "dt = 5e-6")
        .replace("walkers = 3000", "walkers = 16000")
        .replace("chunk = 500", "chunk = 2000")
    )
    return spec


def test_sigterm_stops_a_process_cluster_cleanly(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    """SIGTERM (how batch systems end a job) stops `sweep run --processes` like Ctrl-C:
    exit 130, finished tasks kept, the lock released, no worker left, no tracebacks."""
    spec, out = _longer_spec(tmp_path), tmp_path / "terminated.zarr"
    with _running_on_processes(spec, out, cli_env) as proc:
        family = _family(proc.pid)
        proc.send_signal(signal.SIGTERM)
        stdout, stderr = proc.communicate(timeout=PATIENCE)
    assert proc.returncode == 130, stderr
    assert "Rerun to resume" in stdout
    assert [line for line in stderr.splitlines() if line.strip()] == [
        "interrupted: finished tasks are kept; rerun the same command to resume."
    ], stderr
    assert 0 < len(store.done_tasks(out)) < 16
    assert not (out / store.LOCK_FILE).exists()
    time.sleep(1.0)  # the resource tracker leaves just after its parent
    assert not [p for p in family if _alive(p)]


def _alive(pid: int) -> bool:
    """Running (a zombie is dead, waiting for its parent or init to reap it)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"
