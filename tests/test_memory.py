"""sweep.memory: what a task allocates, the memory this process may use (machine,
cgroup v1/v2), and the refusal of a sweep that would not fit.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sweep.errors import PlanError
from sweep.execute import RunOptions, run
from sweep.sizing import check_memory, memory_limit
from sweep.spec import load_spec
from tests.cli_cases import (
    RUN_LIMIT,
    Case,
    case_test,
    spec_case,
)
from tests.conftest import SMALL_SPEC
from tests.spec.bases import CUBE
from tests.spec.edit import dumps
from tests.spec.edit import spec as definition

#: Definitions whose tasks would not fit in memory, refused by `sweep run` (under an
#: address-space limit, so a regression fails fast instead of taking the machine).
CASES: list[Case] = [
    spec_case(
        "chunk-needs-more-memory-than-the-machine",
        definition(CUBE, sweep__walkers=2_000_000_000, sweep__chunk=2_000_000_000),
        "[sweep.chunk] = 2000000000",
        "GiB per task",
        "Lower sweep.chunk",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
    spec_case(
        "two-threads-need-more-memory-than-the-machine",
        definition(CUBE, sweep__walkers=200_000_000, sweep__chunk=200_000_000),
        "[sweep.chunk] = 200000000",
        "2 tasks at once",
        "run fewer tasks at once",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
    spec_case(
        "occupancy-snapshots-need-more-memory-than-the-machine",
        dumps(CUBE)
        + "\n[record]\noccupancy = { times = ["
        + ", ".join(["0.5"] * 400)
        + "], bins = 215 }\n",
        "[record.occupancy]",
        "GiB per task",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
]

test_too_much_memory_gets_one_clear_message = case_test(
    CASES, "`sweep run` refuses a sweep that would not fit: one message, no store."
)


def test_memory_beyond_machine_is_refused(tmp_path: Path) -> None:
    text = SMALL_SPEC.replace("walkers = 3000", "walkers = 4_000_000_000").replace(
        "chunk = 500", "chunk = 2_000_000_000"
    )
    spec = tmp_path / "huge.toml"
    spec.write_text(text)
    with pytest.raises(
        PlanError, match=r"\[sweep.chunk\] = 2000000000 walkers per task needs about"
    ):
        check_memory(load_spec(spec), 2)
    with pytest.raises(PlanError):
        run(spec, tmp_path / "huge.zarr", RunOptions(threads=2, progress=False))
    assert not (tmp_path / "huge.zarr").exists()


def _cgroup_tree(root: Path, membership: str, limits: dict[str, str]) -> Path:
    """A directory tree shaped like /proc and /sys/fs/cgroup: ``membership`` is
    /proc/self/cgroup's text, ``limits`` maps files under sys/fs/cgroup to contents."""
    (root / "proc/self").mkdir(parents=True)
    (root / "proc/self/cgroup").write_text(membership)
    for name, text in limits.items():
        path = root / "sys/fs/cgroup" / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text + "\n")
    return root


def test_memory_limit_reads_cgroup_v2_and_its_parents(tmp_path: Path) -> None:
    # A Slurm-style job: the limit sits on the job's group, its step says "max".
    root = _cgroup_tree(
        tmp_path,
        "0::/slurm/uid_1/job_7/step_0\n",
        {
            "slurm/uid_1/job_7/step_0/memory.max": "max",
            "slurm/uid_1/job_7/memory.max": str(3 * 2**30),
            "slurm/memory.max": str(64 * 2**30),
        },
    )
    assert memory_limit(root) == (
        3 * 2**30,
        "the cgroup limit (/sys/fs/cgroup/slurm/uid_1/job_7/memory.max)",
    )


def test_memory_limit_reads_cgroup_v1(tmp_path: Path) -> None:
    root = _cgroup_tree(
        tmp_path,
        "5:cpu,cpuacct:/job_9\n4:memory:/job_9\n",
        {
            # cgroup v1's "no limit" is 2^63 rounded down to a page.
            "memory/memory.limit_in_bytes": "9223372036854771712",
            "memory/job_9/memory.limit_in_bytes": str(2**30),
        },
    )
    assert memory_limit(root)[0] == 2**30


def test_memory_limit_without_cgroup_is_the_machine(tmp_path: Path) -> None:
    unlimited = _cgroup_tree(
        tmp_path / "a", "0::/user.slice\n", {"user.slice/memory.max": "max"}
    )
    machine = memory_limit(tmp_path / "nothing-here")
    assert machine[1] == "this machine" and machine[0] > 0
    assert memory_limit(unlimited) == machine


def test_memory_beyond_cgroup_limit_is_refused(tmp_path: Path) -> None:
    # 2 million walkers per task need about 50 MiB; the job may use 16 MiB.
    text = SMALL_SPEC.replace("walkers = 3000", "walkers = 2_000_000").replace(
        "chunk = 500", "chunk = 2_000_000"
    )
    spec = tmp_path / "big.toml"
    spec.write_text(text)
    root = _cgroup_tree(
        tmp_path / "root", "0::/job\n", {"job/memory.max": str(16 * 2**20)}
    )
    with pytest.raises(
        PlanError,
        match=r"of the cgroup limit \(/sys/fs/cgroup/job/memory.max\)'s 16 MiB",
    ):
        check_memory(load_spec(spec), 1, memory_limit(root))
    check_memory(load_spec(spec), 1)  # fits this machine


def test_memory_refusal_names_run_options_in_library_terms(tmp_path: Path) -> None:
    """The library names the options (threads, processes); the CLI words them as
    flags (sweep.cli.FLAGS)."""
    from sweep.cli import FLAGS

    sweep = load_spec(_write(tmp_path, SMALL_SPEC))
    with pytest.raises(ValueError) as caught:
        check_memory(sweep, 4, limit=(1024.0, "a test limit"))
    err = caught.value
    assert isinstance(err, PlanError)
    assert str(err).endswith("run fewer tasks at once (threads / processes).")
    assert err.worded(FLAGS).endswith("at once (--threads / --processes).")
    assert "a test limit's 1 KiB" in str(err)


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "d.toml"
    path.write_text(text)
    return path
