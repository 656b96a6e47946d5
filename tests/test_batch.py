"""The Slurm recipe on a real Slurm: a single-node controller and node daemon on this
machine (tests/slurm.py), jobs submitted with ``sbatch``, ended by ``scancel`` and by
their time limit, and resumed by resubmission; results bit-identical to a local run.

Needs Debian's ``slurm-wlm`` and ``munge`` and root (``.ci/run`` installs them); the
tests are skipped, with the reason, elsewhere. Run them alone with
``python -m pytest -m batch``.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest

from sweep import store
from sweep.execute import RunOptions, run
from tests import slurm
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical

pytestmark = [
    pytest.mark.batch,
    pytest.mark.skipif(slurm.missing() is not None, reason=str(slurm.missing())),
]

ROOT = Path(__file__).resolve().parent.parent
SCRIPT = ROOT / "sweeps" / "hpc" / "slurm-job.sh"
VENV = Path(sys.executable).parent.parent

#: 2 points x 8 tasks of 1-4 s each on one core (about 2 10^9 walker-steps in all):
#: long enough to be stopped mid-sweep, short enough to redo.
BATCH_SPEC = (
    SMALL_SPEC.replace("dt = 1e-3", "dt = 2.5e-6")
    .replace("walkers = 3000", "walkers = 16000")
    .replace("chunk = 500", "chunk = 2000")
)

#: Seconds a job may take from submission to its end (a time-limited job: its minute,
#: Slurm's check of limits every 30 s, KillWait, and a loaded machine).
JOB_PATIENCE = 240.0


@pytest.fixture(scope="session")
def cluster(tmp_path_factory: pytest.TempPathFactory) -> Iterator[slurm.LocalSlurm]:
    """munged, slurmctld and slurmd on this machine for the whole session."""
    with slurm.local_slurm(tmp_path_factory.mktemp("slurm")) as local:
        yield local


@pytest.fixture(scope="module")
def batch_spec(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("batch-spec") / "batch.toml"
    path.write_text(BATCH_SPEC)
    return path


@pytest.fixture(scope="module")
def batch_reference(batch_spec: Path) -> Path:
    """The batch sweep run locally on threads, for bit-for-bit comparisons."""
    out = batch_spec.parent / "threads.zarr"
    assert run(batch_spec, out, RunOptions(threads=2, progress=False)).complete
    return out


@dataclass
class TimedOutJob:
    job: str
    out: Path
    workdir: Path


@pytest.fixture(scope="module", autouse=True)
def time_limited_job(
    cluster: slurm.LocalSlurm,
    batch_spec: Path,
    tmp_path_factory: pytest.TempPathFactory,
) -> TimedOutJob:
    """A job that Slurm's own time limit will end mid-task, submitted before the other
    tests so that its minute passes while they run (test_time_limit_then_resubmit).

    Slurm's shortest limit is one minute, checked every 30 s. Rather than compute for
    that long, the job's workers are frozen (SIGSTOP) once some tasks are stored: their
    tasks in flight stand still, as long tasks would, while the job runs into its
    limit. Slurm then sends SIGCONT and SIGTERM to every process of the job, and
    SIGKILL after KillWait.
    """
    root = tmp_path_factory.mktemp("time-limit")
    out, workdir = root / "slurm.zarr", root / "job"
    job = submit(
        cluster, batch_spec, out, workdir, "--cpus-per-task=1", "--time=1",
        env={"SWEEP_WORKER_LIFETIME": "10m"},  # beyond the limit: no retirement
    )  # fmt: skip
    wait_for_markers(out, 2, job, cluster)
    frozen = _worker_processes(cluster, job)
    assert frozen
    for pid in frozen:
        os.kill(pid, signal.SIGSTOP)
    return TimedOutJob(job, out, workdir)


def submit(
    cluster: slurm.LocalSlurm,
    spec: Path,
    out: Path,
    workdir: Path,
    *options: str,
    env: dict[str, str] | None = None,
) -> str:
    """``sbatch`` the job script with one node and this machine's cores."""
    workdir.mkdir(exist_ok=True)
    return cluster.sbatch(
        "--nodes=1",
        f"--output={workdir}/job-%j.log",
        f"--chdir={workdir}",
        *options,
        str(SCRIPT),
        str(spec),
        str(out),
        env={**cluster.env, "VENV": str(VENV), **(env or {})},
        cwd=workdir,
    )


def job_log(workdir: Path, job_id: str) -> str:
    return (workdir / f"job-{job_id}.log").read_text()


def wait_for_markers(out: Path, n: int, job_id: str, cluster: slurm.LocalSlurm) -> None:
    deadline = time.monotonic() + PATIENCE
    while not (out / "zarr.json").exists() or len(store.done_tasks(out)) < n:
        state = cluster.job(job_id)["JobState"]
        assert state in ("PENDING", "RUNNING"), f"job {job_id} ended early: {state}"
        assert time.monotonic() < deadline, f"job {job_id}: no task done"
        time.sleep(0.2)


def assert_stopped_cleanly(out: Path, n_tasks: int, some_done: bool = True) -> None:
    """The sweep is not finished (some tasks are done, if asked), and the driver let go
    of the store: on a cluster, the resubmitted job usually runs on another node, which
    cannot break a lock left by a process it cannot see."""
    done = len(store.done_tasks(out))
    assert (0 if not some_done else 1) <= done < n_tasks
    assert not (out / store.LOCK_FILE).exists()


def test_job_runs_the_quickstart_sweep(
    cluster: slurm.LocalSlurm, tmp_path: Path
) -> None:
    spec = ROOT / "sweeps" / "quickstart.toml"
    reference = tmp_path / "threads.zarr"
    assert run(spec, reference, RunOptions(threads=2, progress=False)).complete
    out, workdir = tmp_path / "slurm.zarr", tmp_path / "job"
    job = submit(cluster, spec, out, workdir, f"--cpus-per-task={cluster.cpus}")
    info = cluster.wait(job, JOB_PATIENCE)
    log = job_log(workdir, job)
    assert info["JobState"] == "COMPLETED", log
    assert_stores_identical(reference, out)
    # The job's scheduler took TLS with credentials of its own; the driver found it.
    scheduler_log = (workdir / f"dask-{job}" / "scheduler.log").read_text()
    assert "Scheduler at:     tls://" in scheduler_log
    assert "not encrypted" not in log, log


def test_scancel_then_resubmit(
    cluster: slurm.LocalSlurm, batch_spec: Path, batch_reference: Path, tmp_path: Path
) -> None:
    out, workdir = tmp_path / "slurm.zarr", tmp_path / "job"
    first = submit(cluster, batch_spec, out, workdir, "--cpus-per-task=1", "--time=2")
    wait_for_markers(out, 2, first, cluster)
    cluster.command("scancel", first)
    info = cluster.wait(first, JOB_PATIENCE)
    assert info["JobState"] == "CANCELLED", job_log(workdir, first)
    assert_stopped_cleanly(out, 16)
    assert not cluster.pids(first)
    # Without SWEEP_WORKER_LIFETIME the workers retire a quarter of the job's time
    # before its limit (2 min here; the margin is at most 10 min).
    retire = job_log(workdir, first).split("workers retire after ", 1)[1].split("s,")[0]
    assert 60 <= int(retire) <= 90, job_log(workdir, first)

    second = submit(
        cluster, batch_spec, out, workdir, f"--cpus-per-task={cluster.cpus}"
    )
    info = cluster.wait(second, JOB_PATIENCE)
    assert info["JobState"] == "COMPLETED", job_log(workdir, second)
    assert_stores_identical(batch_reference, out)


def test_workers_retire_before_the_limit_then_resubmit(
    cluster: slurm.LocalSlurm, batch_spec: Path, batch_reference: Path, tmp_path: Path
) -> None:
    """Workers leave after SWEEP_WORKER_LIFETIME; the job script then stops the driver
    itself, before Slurm's limit, and the next job finishes the sweep."""
    out, workdir = tmp_path / "slurm.zarr", tmp_path / "job"
    first = submit(
        cluster, batch_spec, out, workdir, "--cpus-per-task=1", "--time=1",
        env={"SWEEP_WORKER_LIFETIME": "4s"},
    )  # fmt: skip
    info = cluster.wait(first, JOB_PATIENCE)
    log = job_log(workdir, first)
    assert info["JobState"] != "TIMEOUT", log
    assert "retired before the time limit" in log, log
    # How many tasks 8 s of a worker's life finish depends on the machine's load.
    assert_stopped_cleanly(out, 16, some_done=False)

    second = submit(
        cluster, batch_spec, out, workdir, f"--cpus-per-task={cluster.cpus}"
    )
    info = cluster.wait(second, JOB_PATIENCE)
    assert info["JobState"] == "COMPLETED", job_log(workdir, second)
    assert_stores_identical(batch_reference, out)


def _worker_processes(cluster: slurm.LocalSlurm, job_id: str) -> list[int]:
    """The job's `dask worker` processes (nanny and worker)."""
    found = []
    for pid in cluster.pids(job_id):
        try:
            command = Path(f"/proc/{pid}/cmdline").read_bytes().replace(b"\0", b" ")
        except OSError:
            continue
        if b"dask worker" in command or b"multiprocessing.spawn" in command:
            found.append(pid)
    return found


def test_dask_jobqueue_cluster_runs_a_sweep(
    cluster: slurm.LocalSlurm,
    small_spec: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The README's dask-jobqueue recipe: a SLURMCluster writes a scheduler file and
    `sweep run --scheduler-file` uses it. The scheduler listens on this machine's
    network address without TLS, as on a login node, so the driver warns."""
    pytest.importorskip("dask_jobqueue")
    from dask_jobqueue import SLURMCluster

    host = _network_address()
    if host is None:
        pytest.skip("this machine has no network address besides the loopback")

    for key, value in cluster.env.items():
        if key.startswith("SLURM_") or key == "PATH":
            monkeypatch.setenv(key, value)
    reference = tmp_path / "threads.zarr"
    assert run(small_spec, reference, RunOptions(threads=2, progress=False)).complete
    scheduler_file = tmp_path / "scheduler.json"
    out = tmp_path / "jobqueue.zarr"
    with SLURMCluster(
        cores=1,
        processes=1,
        memory="1GiB",
        walltime="00:05:00",
        python=sys.executable,
        log_directory=str(tmp_path / "logs"),
        local_directory=str(tmp_path),
        scheduler_options={
            "host": host,
            "dashboard_address": None,
            "scheduler_file": str(scheduler_file),
        },
        job_script_prologue=[f"export PYTHONPATH={os.environ.get('PYTHONPATH', '')}"],
    ) as jobs:
        jobs.scale(jobs=1)
        result = subprocess.run(
            [sys.executable, "-m", "sweep.cli", "run", str(small_spec), "--store",
             str(out), "--scheduler-file", str(scheduler_file), "--quiet"],
            capture_output=True,
            text=True,
            timeout=JOB_PATIENCE,
        )  # fmt: skip
    assert result.returncode == 0, result.stderr
    assert_stores_identical(reference, out)
    assert f"scheduler tcp://{host}:" in result.stderr
    assert "is not encrypted and not on this machine" in result.stderr


def _network_address() -> str | None:
    """This machine's address on its default route (no packet is sent), or None."""
    with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as s:
        try:
            s.connect(("192.0.2.1", 9))  # TEST-NET-1 (RFC 5737): never answered
        except OSError:
            return None
        host = s.getsockname()[0]
    return None if host.startswith("127.") else host


def test_time_limit_then_resubmit(
    cluster: slurm.LocalSlurm,
    batch_spec: Path,
    batch_reference: Path,
    time_limited_job: TimedOutJob,
) -> None:
    """Slurm's time limit ended the job mid-task (see time_limited_job); the next job
    finishes the sweep. Last in this file: the limit passes during the other tests."""
    first, out, workdir = (
        time_limited_job.job, time_limited_job.out, time_limited_job.workdir,
    )  # fmt: skip
    info = cluster.wait(first, JOB_PATIENCE)
    log = job_log(workdir, first)
    assert info["JobState"] == "TIMEOUT", log
    assert_stopped_cleanly(out, 16)
    assert not cluster.pids(first)

    second = submit(
        cluster, batch_spec, out, workdir, f"--cpus-per-task={cluster.cpus}"
    )
    info = cluster.wait(second, JOB_PATIENCE)
    assert info["JobState"] == "COMPLETED", job_log(workdir, second)
    assert_stores_identical(batch_reference, out)
