#!/usr/bin/env bash
# Run a sweep on a SLURM allocation: one Dask scheduler, one worker per node, and the
# `sweep run` driver, all meeting through a scheduler file on the shared filesystem.
# Resubmit the same script when the allocation ends: `sweep run` resumes the store and
# recomputes only unfinished tasks (bit-identical to an uninterrupted run).
#
#   sbatch sweeps/hpc/slurm-job.sh sweeps/receptor-search.toml /shared/results/receptor.zarr
#
# Adapt the #SBATCH lines to your site. The virtual environment and the store must be
# on a filesystem every node sees.
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
# Workers retire this long after they start, before the wall-clock limit kills them:
# they leave the scheduler cleanly instead of dying mid-task. A task cut short is
# simply redone (its completion marker is written only after its data), here or in
# the next allocation.
LIFETIME=${SWEEP_WORKER_LIFETIME:-690m}  # 11.5 h; dask takes one unit only

mkdir -p "$WORKDIR"
SCHEDULER_FILE="$WORKDIR/scheduler.json"

# Extra options, e.g. SWEEP_SCHEDULER_ARGS="--interface ib0" or TLS settings
# (see README, "Clusters").
# shellcheck disable=SC2086
"$VENV/bin/dask" scheduler --scheduler-file "$SCHEDULER_FILE" --port "${SWEEP_SCHEDULER_PORT:-0}" \
    --dashboard-address :0 \
    ${SWEEP_SCHEDULER_ARGS:-} > "$WORKDIR/scheduler.log" 2>&1 &
SCHEDULER_PID=$!

srun --ntasks="$SLURM_NNODES" --ntasks-per-node=1 \
    "$VENV/bin/dask" worker --scheduler-file "$SCHEDULER_FILE" \
    --nworkers "$SLURM_CPUS_PER_TASK" --nthreads 1 \
    --lifetime "$LIFETIME" --lifetime-stagger 5m \
    --local-directory "${TMPDIR:-/tmp}" --no-dashboard ${SWEEP_WORKER_ARGS:-} \
    > "$WORKDIR/workers.log" 2>&1 &
WORKERS_PID=$!

trap 'kill "$WORKERS_PID" "$SCHEDULER_PID" 2>/dev/null || true' EXIT

# The driver waits for the scheduler file, then submits tasks in a bounded window.
for _ in $(seq 120); do [ -s "$SCHEDULER_FILE" ] && break; sleep 1; done
"$VENV/bin/sweep" run "$SPEC" --store "$STORE" --scheduler-file "$SCHEDULER_FILE"
