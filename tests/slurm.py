"""A single-node Slurm on this machine, for the batch tests (tests/test_batch.py).

Debian's ``slurm-wlm`` and ``munge`` packages provide the daemons; everything else lives
in a temporary directory: a munge key and socket, ``slurm.conf`` (this host as the only
node, with its real CPU count, loopback addresses, no cgroups, free ports), state and
spool directories and logs. The daemons run in the foreground as children of the test
process, so stopping them is a matter of their process ids.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import socket
import subprocess
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

#: Seconds the daemons may take to start and show the node idle.
START_PATIENCE = 60.0

#: Slurm's commands and daemons the tests need.
PROGRAMS = ("slurmctld", "slurmd", "sbatch", "squeue", "scontrol", "scancel", "sinfo")
MUNGE = ("munged", "mungekey")


#: Where to look for them: daemons live in /usr/sbin, which a user's PATH may lack.
SEARCH_PATH = os.pathsep.join([os.environ.get("PATH", ""), "/usr/sbin", "/sbin"])


def _which(program: str) -> str:
    found = shutil.which(program, path=SEARCH_PATH)
    if found is None:
        raise FileNotFoundError(program)
    return found


def missing() -> str | None:
    """Why a local Slurm cannot be started here, or None when it can."""
    absent = [p for p in PROGRAMS + MUNGE if shutil.which(p, path=SEARCH_PATH) is None]
    if absent:
        return (
            f"Slurm is not installed ({', '.join(absent)} missing); "
            "apt-get install slurm-wlm munge (.ci/run does)"
        )
    if os.geteuid() != 0:
        return "the single-node Slurm of the tests runs its daemons as root"
    return None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@dataclass
class LocalSlurm:
    """A running controller and node daemon; commands reach them through ``env``."""

    root: Path
    node: str
    cpus: int
    env: dict[str, str]

    def command(self, *args: str, check: bool = True) -> str:
        """Run a Slurm client command against this cluster; returns its stdout."""
        result = subprocess.run(
            [_which(args[0]), *args[1:]],
            env=self.env,
            capture_output=True,
            text=True,
            timeout=60,
        )
        if check and result.returncode != 0:
            raise RuntimeError(f"{' '.join(args)}: {result.stderr.strip()}")
        return result.stdout

    def sbatch(
        self, *args: str, env: dict[str, str] | None = None, cwd: Path | None = None
    ) -> str:
        """Submit a job; returns its id."""
        result = subprocess.run(
            [_which("sbatch"), "--parsable", *args],
            env={**(env or self.env), "SLURM_CONF": self.env["SLURM_CONF"]},
            capture_output=True,
            text=True,
            timeout=60,
            cwd=cwd,
        )
        if result.returncode != 0:
            raise RuntimeError(f"sbatch {' '.join(args)}: {result.stderr.strip()}")
        return result.stdout.strip().split(";")[0]

    def job(self, job_id: str) -> dict[str, str]:
        """``scontrol show job`` as a dictionary (JobState, Reason, ExitCode, ...)."""
        out = self.command("scontrol", "show", "job", "--oneliner", job_id)
        fields = {}
        for item in out.split():
            key, _, value = item.partition("=")
            fields[key] = value
        return fields

    def wait(self, job_id: str, timeout: float) -> dict[str, str]:
        """Wait until the job has ended; returns its final record."""
        deadline = time.monotonic() + timeout
        while True:
            info = self.job(job_id)
            if info["JobState"] not in (
                "PENDING",
                "RUNNING",
                "CONFIGURING",
                "COMPLETING",
                "SUSPENDED",
            ):
                return info
            if time.monotonic() > deadline:
                raise TimeoutError(f"job {job_id} still {info['JobState']}")
            time.sleep(0.5)

    def wait_running(self, job_id: str, timeout: float) -> None:
        deadline = time.monotonic() + timeout
        while self.job(job_id)["JobState"] == "PENDING":
            if time.monotonic() > deadline:
                raise TimeoutError(f"job {job_id} never started")
            time.sleep(0.2)

    def pids(self, job_id: str) -> list[int]:
        """Process ids of a running job (every step, the batch script included)."""
        out = self.command("scontrol", "listpids", job_id, check=False)
        pids = []
        for line in out.splitlines()[1:]:
            field = line.split()[0] if line.split() else ""
            if field.isdigit():
                pids.append(int(field))
        return pids


def _config(root: Path, node: str, cpus: int, munge_socket: Path) -> str:
    ctld_port, slurmd_port = _free_port(), _free_port()
    # Most of the memory in MiB: jobs may ask for memory (dask-jobqueue does).
    memory = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") // 2**20 * 9 // 10
    return f"""\
# Written by tests/slurm.py: a throw-away single-node cluster.
ClusterName=sweeptest
SlurmctldHost={node}(127.0.0.1)
SlurmctldPort={ctld_port}
SlurmdPort={slurmd_port}
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket={munge_socket}
StateSaveLocation={root}/state
SlurmdSpoolDir={root}/spool
SlurmctldPidFile={root}/slurmctld.pid
SlurmdPidFile={root}/slurmd.pid
SlurmctldLogFile={root}/log/slurmctld.log
SlurmdLogFile={root}/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
MpiDefault=none
MailProg=/bin/true
ReturnToService=2
# A time limit or scancel sends SIGTERM, then SIGKILL this many seconds later.
KillWait=5
OverTimeLimit=0
InactiveLimit=0
# Ended jobs stay visible to scontrol this long (seconds), for their final state.
MinJobAge=600
NodeName={node} NodeAddr=127.0.0.1 CPUs={cpus} RealMemory={memory} State=UNKNOWN
# Cores may be shared by jobs: a test's job that idles into its time limit (its
# workers stopped) should not hold up the others.
PartitionName=test Nodes={node} Default=YES MaxTime=INFINITE State=UP OverSubscribe=FORCE:4
"""


def _start(args: list[str], log: Path) -> subprocess.Popen[bytes]:
    with log.open("wb") as out:
        return subprocess.Popen(
            args, stdout=out, stderr=subprocess.STDOUT, start_new_session=True
        )


def _stop(proc: subprocess.Popen[bytes]) -> None:
    if proc.poll() is None:
        proc.send_signal(signal.SIGTERM)
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()


@contextlib.contextmanager
def local_slurm(root: Path) -> Iterator[LocalSlurm]:
    """Start munged, slurmctld and slurmd in ``root``; stop them (and every job) after."""
    for sub in ("state", "spool", "log", "munge"):
        (root / sub).mkdir(parents=True, exist_ok=True)
    (root / "munge").chmod(0o700)
    node = socket.gethostname().split(".")[0]
    cpus = os.cpu_count() or 1
    key = root / "munge" / "munge.key"
    # munged wants its socket's folder, and every folder above, open to all (x); the
    # temporary folders of pytest are private, so the socket lives beside them.
    socket_dir = Path(tempfile.mkdtemp(prefix="sweep-munge-"))
    socket_dir.chmod(0o711)
    munge_socket = socket_dir / "socket"
    subprocess.run([_which("mungekey"), "--create", f"--keyfile={key}"], check=True)
    conf = root / "slurm.conf"
    conf.write_text(_config(root, node, cpus, munge_socket))
    env = {
        k: v
        for k, v in os.environ.items()
        if not k.startswith(("SLURM_", "SBATCH_", "SRUN_"))
    }
    env["SLURM_CONF"] = str(conf)
    env["PATH"] = SEARCH_PATH
    daemons: list[subprocess.Popen[bytes]] = []
    cluster = LocalSlurm(root, node, cpus, env)
    try:
        daemons.append(
            _start(
                [_which("munged"), "--foreground", f"--key-file={key}",
                 f"--socket={munge_socket}", f"--pid-file={root}/munge/munged.pid",
                 f"--seed-file={root}/munge/munged.seed",
                 f"--log-file={root}/log/munged.log"],
                root / "log" / "munged.out",
            )
        )  # fmt: skip
        deadline = time.monotonic() + START_PATIENCE
        while not munge_socket.exists():
            if daemons[0].poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"munged did not start; see {root}/log")
            time.sleep(0.05)
        daemons.append(
            _start(
                [_which("slurmctld"), "-D", "-f", str(conf)],
                root / "log" / "slurmctld.out",
            )
        )
        daemons.append(
            _start(
                [_which("slurmd"), "-D", "-f", str(conf)], root / "log" / "slurmd.out"
            )
        )
        while True:
            state = cluster.command("sinfo", "--noheader", "--format=%t", check=False)
            if state.strip() == "idle":
                break
            if (
                any(d.poll() is not None for d in daemons)
                or time.monotonic() > deadline
            ):
                raise RuntimeError(
                    f"Slurm did not come up (sinfo: {state.strip()!r}); see {root}/log"
                )
            time.sleep(0.2)
        yield cluster
    finally:
        # Jobs first (their processes belong to slurmstepd, not to us), then daemons.
        if daemons:
            with contextlib.suppress(Exception):
                cluster.command(
                    "scancel", "--full", f"--user={os.getuid()}", check=False
                )
                deadline = time.monotonic() + 30
                while (
                    cluster.command("squeue", "--noheader", check=False).strip()
                    and time.monotonic() < deadline
                ):
                    time.sleep(0.5)
        for proc in reversed(daemons):
            _stop(proc)
        shutil.rmtree(socket_dir, ignore_errors=True)
