#!/usr/bin/env bash
# Run a sweep on a Slurm allocation: one Dask scheduler, one worker process per core on
# every node, and the `sweep run` driver, all meeting through a scheduler file on the
# shared filesystem. Resubmit the same command when the allocation ends: `sweep run`
# resumes the store and recomputes only unfinished tasks (bit-identical to an
# uninterrupted run).
#
#   sbatch sweeps/hpc/slurm-job.sh sweeps/receptor-search.toml /shared/results/receptor.zarr
#
# Adapt the #SBATCH lines to your site (options given to sbatch override them, e.g.
# `sbatch --nodes=2 --time=2:00:00 ...`). The virtual environment and the store must be
# on a filesystem every node sees.
#
# Environment (all optional):
#   VENV                   virtual environment with brownian-sweep (default ./.venv)
#   SWEEP_WORKDIR          scheduler file, TLS credentials, logs (default ./dask-JOBID)
#   SWEEP_WORKER_LIFETIME  when workers retire, e.g. 5h or 3600s (default: the job's
#                          time limit minus SWEEP_RETIRE_MARGIN)
#   SWEEP_RETIRE_MARGIN    seconds before the limit (default 600, at most a quarter of
#                          the job's time)
#   SWEEP_TLS              "off" for plain TCP (default: TLS with fresh credentials)
#   SWEEP_SCHEDULER_ARGS, SWEEP_WORKER_ARGS   extra options, e.g. "--interface ib0"
#SBATCH --job-name=brownian-sweep
#SBATCH --nodes=4
#SBATCH --ntasks-per-node=1
#SBATCH --cpus-per-task=32
#SBATCH --time=12:00:00
#SBATCH --output=sweep-%j.log

set -euo pipefail

SPEC=${1:?usage: slurm-job.sh SPEC STORE}
STORE=${2:?usage: slurm-job.sh SPEC STORE}
VENV=${VENV:-$PWD/.venv}
WORKDIR=${SWEEP_WORKDIR:-$PWD/dask-$SLURM_JOB_ID}
mkdir -p "$WORKDIR"
chmod 700 "$WORKDIR"
SCHEDULER_FILE="$WORKDIR/scheduler.json"

# Seconds left in this allocation (empty when Slurm reports no limit).
seconds_left() {
    local left d=0 h=0 m=0 s=0
    left=$(squeue --noheader --jobs "$SLURM_JOB_ID" --format %L 2>/dev/null) || return 0
    left=${left//[[:space:]]/}
    case $left in *-*) d=${left%%-*}; left=${left#*-} ;; esac
    IFS=: read -r -a f <<<"$left"
    case ${#f[@]} in
        3) h=${f[0]}; m=${f[1]}; s=${f[2]} ;;
        2) m=${f[0]}; s=${f[1]} ;;
        *) return 0 ;;
    esac
    [[ "$d$h$m$s" =~ ^[0-9]+$ ]] || return 0
    echo $(( ((10#$d * 24 + 10#$h) * 60 + 10#$m) * 60 + 10#$s ))
}

# Workers retire before the wall-clock limit: they leave the scheduler cleanly instead
# of dying mid-task, and the driver stops once they are gone (finished tasks are kept;
# a task cut short is redone by the next job, its completion marker being written only
# after its data).
LIFETIME=${SWEEP_WORKER_LIFETIME:-}
if [ -z "$LIFETIME" ]; then
    LEFT=$(seconds_left)
    if [ -n "$LEFT" ]; then
        MARGIN=${SWEEP_RETIRE_MARGIN:-600}
        [ "$MARGIN" -gt $((LEFT / 4)) ] && MARGIN=$((LEFT / 4))
        LIFETIME="$((LEFT - MARGIN))s"
    fi
fi
LIFETIME_ARGS=()
[ -n "$LIFETIME" ] && LIFETIME_ARGS=(--lifetime "$LIFETIME")

# TLS with credentials made for this job only (readable by you alone): nobody else on
# the cluster can connect to the scheduler or run code in the workers.
TLS_ARGS=()
if [ "${SWEEP_TLS:-on}" != "off" ]; then
    "$VENV/bin/python" - "$WORKDIR/tls" <<'EOF'
import os
import sys

from distributed.security import Security

# One self-signed certificate serves as authority, scheduler, worker and client.
credentials = Security.temporary()
folder = sys.argv[1]
os.makedirs(folder, mode=0o700, exist_ok=True)
for name, pem in (
    ("ca.pem", credentials.tls_ca_file),
    ("cert.pem", credentials.tls_scheduler_cert),
    ("key.pem", credentials.tls_scheduler_key),
):
    fd = os.open(os.path.join(folder, name), os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    with os.fdopen(fd, "w") as f:
        f.write(pem)
EOF
    TLS_ARGS=(--tls-ca-file "$WORKDIR/tls/ca.pem" --tls-cert "$WORKDIR/tls/cert.pem"
              --tls-key "$WORKDIR/tls/key.pem")
    export DASK_DISTRIBUTED__COMM__REQUIRE_ENCRYPTION=True
    export DASK_DISTRIBUTED__COMM__TLS__CA_FILE="$WORKDIR/tls/ca.pem"
    export DASK_DISTRIBUTED__COMM__TLS__CLIENT__CERT="$WORKDIR/tls/cert.pem"
    export DASK_DISTRIBUTED__COMM__TLS__CLIENT__KEY="$WORKDIR/tls/key.pem"
    SCHEDULER_PROTOCOL=(--protocol tls)
else
    SCHEDULER_PROTOCOL=()
fi

# shellcheck disable=SC2086
"$VENV/bin/dask" scheduler --scheduler-file "$SCHEDULER_FILE" --port "${SWEEP_SCHEDULER_PORT:-0}" \
    --dashboard-address :0 ${SCHEDULER_PROTOCOL[@]+"${SCHEDULER_PROTOCOL[@]}"} ${TLS_ARGS[@]+"${TLS_ARGS[@]}"} \
    ${SWEEP_SCHEDULER_ARGS:-} > "$WORKDIR/scheduler.log" 2>&1 &
SCHEDULER_PID=$!
WORKERS_PID=
DRIVER_PID=

# Slurm ends a job (time limit, scancel) with SIGTERM to all its processes, then
# SIGKILL. The driver stops on its own SIGTERM (releasing the store's lock); this shell
# waits for it instead of dying first.
ENDING=
trap 'ENDING=1; echo "slurm-job.sh: SIGTERM (time limit or scancel): stopping" >&2' TERM
trap 'kill $DRIVER_PID $WORKERS_PID $SCHEDULER_PID 2>/dev/null || true' EXIT

for _ in $(seq 120); do [ -s "$SCHEDULER_FILE" ] && break; sleep 1; done

# Since Slurm 22.05, srun does not take --cpus-per-task from the batch job: pass it on,
# or a site that binds tasks to cores would confine all workers of a node to one core.
# shellcheck disable=SC2086
srun --ntasks="$SLURM_NNODES" --ntasks-per-node=1 --cpus-per-task="$SLURM_CPUS_PER_TASK" \
    "$VENV/bin/dask" worker --scheduler-file "$SCHEDULER_FILE" \
    --nworkers "$SLURM_CPUS_PER_TASK" --nthreads 1 ${LIFETIME_ARGS[@]+"${LIFETIME_ARGS[@]}"} ${TLS_ARGS[@]+"${TLS_ARGS[@]}"} \
    --local-directory "${TMPDIR:-/tmp}" --no-dashboard ${SWEEP_WORKER_ARGS:-} \
    > "$WORKDIR/workers.log" 2>&1 &
WORKERS_PID=$!

"$VENV/bin/sweep" run "$SPEC" --store "$STORE" --scheduler-file "$SCHEDULER_FILE" &
DRIVER_PID=$!
echo "slurm-job.sh: job $SLURM_JOB_ID, workers retire after ${LIFETIME:-no limit}," \
    "scheduler log $WORKDIR/scheduler.log" >&2

# Until the driver ends, or every worker has retired (or failed to start): then stop
# the driver, which keeps the finished tasks and releases the store.
while kill -0 "$DRIVER_PID" 2>/dev/null && kill -0 "$WORKERS_PID" 2>/dev/null; do
    sleep 2
done
if [ -z "$ENDING" ] && kill -0 "$DRIVER_PID" 2>/dev/null; then
    echo "slurm-job.sh: the workers have stopped (retired before the time limit);" \
        "stopping the driver" >&2
    kill -TERM "$DRIVER_PID" 2>/dev/null || true
fi
STATUS=0
wait "$DRIVER_PID" || STATUS=$?
while kill -0 "$DRIVER_PID" 2>/dev/null; do  # the wait was cut short by a signal
    STATUS=0
    wait "$DRIVER_PID" || STATUS=$?
done
if [ "$STATUS" -ne 0 ]; then
    echo "slurm-job.sh: sweep run ended with status $STATUS; finished tasks are kept." \
        "Resubmit the same command to resume." >&2
fi
exit "$STATUS"
