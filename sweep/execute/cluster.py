"""Dask clusters: connecting to an existing one, and starting a local one that only
this process can use (TLS with a certificate of its own, 127.0.0.1, no HTTP server);
warns when an existing scheduler is open to others."""

from __future__ import annotations

import ipaddress
import json
import logging
import os
import socket
import sys
from pathlib import Path
from typing import Any

from sweep.errors import SweepError
from sweep.execute.options import RunOptions

log = logging.getLogger("sweep.execute")

#: Seconds to wait for an existing Dask scheduler before giving up (the environment
#: variable SWEEP_CONNECT_TIMEOUT overrides it).
CONNECT_TIMEOUT = 30.0


def connect_timeout() -> float:
    """Seconds to wait for an existing scheduler (``$SWEEP_CONNECT_TIMEOUT``, else
    :data:`CONNECT_TIMEOUT`)."""
    try:
        return float(os.environ.get("SWEEP_CONNECT_TIMEOUT", CONNECT_TIMEOUT))
    except ValueError:
        return CONNECT_TIMEOUT


def connect(options: RunOptions) -> Any:
    """A ``distributed.Client`` of the existing cluster ``options`` names; says
    where it connects (stderr) and fails with one message after
    :func:`connect_timeout` seconds."""
    from distributed import Client

    where = options.scheduler_file or options.scheduler
    _warn_if_open(options)
    timeout = connect_timeout()
    sys.stderr.write(f"connecting to the Dask scheduler {where} …\n")
    sys.stderr.flush()
    try:
        if options.scheduler_file is not None:
            return Client(scheduler_file=options.scheduler_file, timeout=timeout)
        return Client(options.scheduler, timeout=timeout)
    except (OSError, TimeoutError, ValueError) as err:
        raise SweepError(
            f"cannot connect to the Dask scheduler {where} within {timeout:g} s: "
            f"{err}. Check that it runs and that this machine can reach it (or set "
            f"SWEEP_CONNECT_TIMEOUT for a slow one); nothing was created or changed."
        ) from None


def _local_cluster(n_workers: int) -> Any:
    """A ``LocalCluster`` that only this process can use.

    Without credentials, anyone on the machine who finds the scheduler's port (it is in
    Dask's log) could connect and run code in the workers as the user of the run. So:
    TLS with a certificate made for this run alone (kept in memory, handed to the
    worker processes by their nannies), every socket on 127.0.0.1, and no HTTP server.
    Dask opens one on the scheduler (port 8787) and on each worker even without a
    dashboard: it serves no routes here and is closed once the cluster is up.
    """
    import dask
    from distributed import LocalCluster
    from distributed.security import Security

    # Tasks that kill their worker are retried a few times, then reported.
    with dask.config.set(
        {
            "distributed.scheduler.allowed-failures": 3,
            "distributed.scheduler.http.routes": [],
            "distributed.worker.http.routes": [],
        }
    ):
        cluster = LocalCluster(
            n_workers=n_workers,
            threads_per_worker=1,
            processes=True,
            host="127.0.0.1",
            protocol="tls://",
            security=Security.temporary(),
            dashboard_address="127.0.0.1:0",  # None would mean port 8787
            scheduler_kwargs={"dashboard": False},
            silence_logs=logging.WARNING,
        )
    cluster.sync(_stop_http_server, cluster.scheduler)
    return cluster


async def _stop_http_server(server: Any) -> None:
    server.http_server.stop()


def _no_http_server() -> Any:
    """A worker plugin closing each worker's HTTP port as it joins (a worker restarted
    after a crash opens a new one). Made here: distributed is imported only when used."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class NoHttpServer(WorkerPlugin):
        async def setup(self, worker: Any) -> None:
            worker.http_server.stop()

    return NoHttpServer()


def _warn_if_open(options: RunOptions) -> None:
    """Warn when an existing cluster's scheduler is open to others (plain TCP, not on
    this machine)."""
    where = options.scheduler_file or options.scheduler
    address = options.scheduler
    if options.scheduler_file is not None:
        try:
            address = json.loads(Path(options.scheduler_file).read_text())["address"]
        except (OSError, ValueError, KeyError, TypeError):
            address = None  # the connection says what is wrong
    if address is not None and not _private_address(address):
        log.warning(
            "the Dask scheduler %s (from %s) is not encrypted and not on this "
            "machine: anyone who can reach it can run code in its workers as you. "
            'Start it with TLS (README, "Clusters and batch systems"; '
            "sweeps/hpc/slurm-job.sh does).",
            address,
            where,
        )


def _private_address(address: str) -> bool:
    """True for a ``tls://`` address (it authenticates) or one on the loopback."""
    from distributed.comm.addressing import get_address_host, parse_address

    try:
        scheme, _ = parse_address(address)
        if scheme in ("tls", "inproc"):
            return True
        host = get_address_host(address)
    except (ValueError, TypeError):
        return False
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        pass
    try:
        infos = socket.getaddrinfo(host, None)
    except OSError:
        return False
    return bool(infos) and all(
        ipaddress.ip_address(info[4][0]).is_loopback for info in infos
    )
