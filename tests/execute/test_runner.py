"""sweep.execute's run on the real stack (definition -> threads -> numba -> zarr):
determinism and resume bit for bit, the store's lock and leftovers, failing tasks.
"""

from __future__ import annotations

import json
import os
import random
import signal
import subprocess
import time
from pathlib import Path

import numpy as np
import pytest

import sweep
from kernels import STREAM_VERSION
from sweep import store
from sweep.errors import StoreError, StoreLockedError, StoreMismatchError
from sweep.execute import RunOptions, run, run_task
from sweep.plan import make_plan
from sweep.spec import load_spec
from tests.cli_cases import reseal
from tests.conftest import (
    PATIENCE,
    SMALL_SPEC,
    assert_stores_identical,
    build_store,
    run_cli,
    sweep_command,
)


def test_run_is_identical_for_any_thread_count(
    small_spec: Path, tmp_path: Path
) -> None:
    build_store(small_spec, tmp_path / "one.zarr", threads=1)
    build_store(small_spec, tmp_path / "two.zarr", threads=2)
    assert_stores_identical(tmp_path / "one.zarr", tmp_path / "two.zarr")


def test_run_is_identical_for_any_task_order(small_spec: Path, tmp_path: Path) -> None:
    build_store(small_spec, tmp_path / "ordered.zarr", threads=2)
    plan = make_plan(load_spec(small_spec))
    path = store.prepare(tmp_path / "shuffled.zarr", plan)
    tasks = list(plan.tasks)
    random.Random(3).shuffle(tasks)
    for task in tasks:
        assert "error" not in run_task(
            str(path), task, store.read_attrs(path)["store_id"]
        )
    assert_stores_identical(tmp_path / "ordered.zarr", path)


def test_task_stream_does_not_depend_on_other_points(
    small_spec: Path, tmp_path: Path
) -> None:
    """Dropping a grid value leaves the other point's data unchanged."""
    build_store(small_spec, tmp_path / "both.zarr", threads=2)
    single = tmp_path / "single.toml"
    single.write_text(SMALL_SPEC.replace("[0.5, 1.0]", "[1.0]"))
    build_store(single, tmp_path / "single.zarr", threads=2)
    both = sweep.open(tmp_path / "both.zarr")
    one = sweep.open(tmp_path / "single.zarr")
    np.testing.assert_array_equal(
        both.first_passage_time.sel(point=1).values,
        one.first_passage_time.sel(point=0).values,
    )


def test_rerun_of_complete_store_does_nothing(small_spec: Path, tmp_path: Path) -> None:
    out = tmp_path / "s.zarr"
    build_store(small_spec, out, threads=2)
    before = {
        p: p.stat().st_mtime_ns
        for p in out.rglob("*")
        if p.is_file() and "_runs" not in p.name
    }
    summary = run(small_spec, out, RunOptions(threads=2, progress=False))
    assert summary.completed == 0 and summary.already_done == summary.n_tasks
    after = {
        p: p.stat().st_mtime_ns
        for p in out.rglob("*")
        if p.is_file() and "_runs" not in p.name
    }
    assert before == after


def assert_resume_redoes_forgotten_tasks(
    definition: Path, out: Path, full: Path, every: int
) -> None:
    """Forget every ``every``-th task of the complete store ``out`` (remove its marker;
    its chunks may stay: they are redone), resume: only those tasks run, and ``out``
    equals ``full`` bit for bit."""
    markers = sorted((out / "_tasks").iterdir())
    for marker in markers[::every]:
        marker.unlink()
    summary = run(definition, out, RunOptions(threads=2, progress=False))
    assert summary.completed == len(markers[::every])
    assert_stores_identical(full, out)


def test_resume_recomputes_only_missing_tasks(small_spec: Path, tmp_path: Path) -> None:
    build_store(small_spec, tmp_path / "full.zarr", threads=2)
    out = tmp_path / "partial.zarr"
    build_store(small_spec, out, threads=2)
    assert_resume_redoes_forgotten_tasks(small_spec, out, tmp_path / "full.zarr", 4)


def test_resume_across_library_versions_of_one_stream(
    small_spec: Path, tmp_path: Path
) -> None:
    # Compatibility follows the random streams: a store recorded with other numpy and
    # numba versions but this stream version resumes (the golden test,
    # tests/kernels/test_golden.py, notices an update that changes the numbers).
    build_store(small_spec, tmp_path / "full.zarr", threads=2)
    out = tmp_path / "partial.zarr"
    build_store(small_spec, out, threads=2)
    meta = out / "zarr.json"
    doc = json.loads(meta.read_text())
    attrs = doc["attributes"][store.ATTRS_KEY]
    assert attrs["stream_version"] == STREAM_VERSION
    attrs["provenance"].update(numpy="1.0.0", numba="0.1.0")
    meta.write_text(json.dumps(doc))
    reseal(out)  # as the tool that made it would have (not damage, another version)
    assert_resume_redoes_forgotten_tasks(small_spec, out, tmp_path / "full.zarr", 3)


def test_store_of_another_definition_is_refused(
    small_spec: Path, tmp_path: Path
) -> None:
    out = tmp_path / "s.zarr"
    build_store(small_spec, out, threads=2)
    before = {
        p: p.read_bytes()
        for p in out.rglob("*")
        if p.is_file() and "_runs" not in p.name
    }
    other = tmp_path / "other.toml"
    # Fewer walkers: a store only grows (tests/test_growth.py grows one).
    other.write_text(SMALL_SPEC.replace("walkers = 3000", "walkers = 2000"))
    with pytest.raises(
        StoreMismatchError,
        match=r"sweep\.walkers \(fewer walkers\): stored 3000, now 2000",
    ):
        run(other, out, RunOptions(threads=1, progress=False))
    after = {
        p: p.read_bytes()
        for p in out.rglob("*")
        if p.is_file() and "_runs" not in p.name
    }
    assert before == after


def test_path_that_is_not_a_store_is_refused(small_spec: Path, tmp_path: Path) -> None:
    unrelated = tmp_path / "data"
    unrelated.mkdir()
    (unrelated / "notes.txt").write_text("keep me")
    with pytest.raises(StoreError, match="is not a brownian-sweep store"):
        run(small_spec, unrelated, RunOptions(threads=1, progress=False))
    assert (unrelated / "notes.txt").read_text() == "keep me"


def test_live_lock_refuses_second_runner(small_spec: Path, tmp_path: Path) -> None:
    out = tmp_path / "s.zarr"
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    with store.runner_lock(path):
        with pytest.raises(
            StoreLockedError, match="another `sweep run` is using this store"
        ):
            run(small_spec, out, RunOptions(threads=1, progress=False))
    # Released on exit: a run now goes through.
    build_store(small_spec, out, threads=2)


def test_stale_lock_is_taken_over(
    small_spec: Path, tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    out = tmp_path / "s.zarr"
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    dead = subprocess.Popen(["true"])
    dead.wait()
    import socket

    (path / store.LOCK_FILE).write_text(
        json.dumps(
            {
                "pid": dead.pid,
                "host": socket.gethostname(),
                "started": "earlier",
                "token": "x",
            }
        )
    )
    with caplog.at_level("WARNING"):
        build_store(small_spec, out, threads=2)
    assert "stale lock" in caplog.text
    assert not (path / store.LOCK_FILE).exists()


def test_partial_files_are_cleaned_and_never_read(
    small_spec: Path, tmp_path: Path
) -> None:
    out = tmp_path / "s.zarr"
    build_store(small_spec, tmp_path / "ref.zarr", threads=2)
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    chunk_dir = path / "first_passage_time" / "c" / "0"
    chunk_dir.mkdir(parents=True)
    # As zarr's LocalStore names a chunk being written: <key>.<uuid4 hex>.partial.
    leftover = chunk_dir / f"0.{'ab12' * 8}.partial"
    leftover.write_bytes(os.urandom(64))
    marker_tmp = path / store.MARKER_DIR / f"{store.OWN_TMP}p0-c0.json-1-abcdef"
    marker_tmp.write_text("{")
    outside = tmp_path / "victim.partial"
    outside.write_text("not the store's")
    (path / "link.partial").symlink_to(outside)
    build_store(small_spec, out, threads=2)
    assert not leftover.exists() and not marker_tmp.exists()
    assert outside.read_text() == "not the store's"
    (path / "link.partial").unlink()
    assert_stores_identical(tmp_path / "ref.zarr", out)


def test_user_files_in_the_store_folder_are_never_deleted(
    small_spec: Path, tmp_path: Path
) -> None:
    """Only files the tool (or zarr, in the store's array folders) names are cleaned."""
    out = tmp_path / "s.zarr"
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    user_files = [
        path / "analysis.tmp-v2.ipynb",
        path / "notes" / "draft.partial",
        path / "notes" / f"0.{'ab12' * 8}.partial",
        path / "_tasks" / "p0-c0.json.tmp-mine",
        path / "_tasks" / "readme.partial",
    ]
    for f in user_files:
        f.parent.mkdir(exist_ok=True)
        f.write_text("the user's")
    build_store(small_spec, out, threads=2)
    assert all(f.read_text() == "the user's" for f in user_files)
    sweep.open(out, verify=True)


def test_killed_creation_leftovers_of_this_store_are_cleaned(
    small_spec: Path, tmp_path: Path
) -> None:
    """A creation killed midway leaves ``.NAME.creating-<pid>-*``; the next run
    removes those of dead processes, and nothing of other stores or live ones."""
    dead = subprocess.Popen(["true"])
    dead.wait()
    left = tmp_path / f".s.zarr{store.CREATING}{dead.pid}-0badf00d"
    (left / "survival_count").mkdir(parents=True)
    live = tmp_path / f".s.zarr{store.CREATING}{os.getpid()}-0badf00d"
    live.mkdir()
    other = tmp_path / f".t.zarr{store.CREATING}{dead.pid}-0badf00d"
    other.mkdir()
    build_store(small_spec, tmp_path / "s.zarr", threads=2)
    assert not left.exists()
    assert live.exists() and other.exists()


def test_aggregate_only_store_keeps_no_walkers(tmp_path: Path) -> None:
    spec = tmp_path / "agg.toml"
    spec.write_text(
        SMALL_SPEC.replace("[record]", "[record]\nper_walker = false\nfpt_bins = 3000")
    )
    out = tmp_path / "agg.zarr"
    build_store(spec, out, threads=2)
    full = tmp_path / "full.zarr"
    build_store(spec_with_walkers(tmp_path), full, threads=2)
    ds = sweep.open(out)
    assert "first_passage_time" not in ds and "exit_position" not in ds
    assert ds.fpt_histogram.dims == ("point", "wall", "fpt_bin")
    assert not any(p.name.startswith("first_passage_time") for p in out.iterdir())
    # What is recorded does not change the random streams: the histogram equals the
    # per-walker values of the same walkers, binned.
    ref = sweep.open(full)
    width = float(ds.fpt_bin_width[0])
    for p in range(2):
        t = ref.first_passage_time.isel(point=p).values
        w = ref.absorbing_wall.isel(point=p).values
        expected = np.zeros((2, 3000), dtype=np.int64)
        np.add.at(
            expected, (w[w >= 0], np.minimum((t[w >= 0] / width).astype(int), 2999)), 1
        )
        np.testing.assert_array_equal(ds.fpt_histogram.isel(point=p).values, expected)
    from sweep import stats

    mean = stats.mean_first_passage_time(ds)
    ref_mean = stats.mean_first_passage_time(ref)
    # Binned mean vs exact mean: within a bin width.
    assert (abs(mean.estimate - ref_mean.estimate) <= width).all()
    split = stats.splitting_probability(ds)
    np.testing.assert_array_equal(
        split["count"].values, stats.splitting_probability(ref)["count"].values
    )


def spec_with_walkers(tmp_path: Path) -> Path:
    path = tmp_path / "walkers.toml"
    path.write_text(
        SMALL_SPEC.replace("[record]", "[record]\nper_walker = true\nfpt_bins = 3000")
    )
    return path


def test_failing_task_is_named_and_others_are_kept(
    small_spec: Path, tmp_path: Path, cli_env: dict[str, str]
) -> None:
    """A task that raises (here: a file squats where its chunk directory must go)."""
    reference = tmp_path / "reference.zarr"
    build_store(small_spec, reference, threads=2)
    out = tmp_path / "s.zarr"
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    blocker = path / "first_passage_time" / "c" / "1"
    blocker.parent.mkdir(parents=True)
    blocker.write_text("not a directory")
    result = run_cli("run", str(small_spec), "--store", str(out), "--quiet")
    assert result.returncode == 1
    assert "6 of 12 tasks failed" in result.stderr
    assert "point 1, chunk 0:" in result.stderr and "Traceback" not in result.stderr
    assert store.done_tasks(out) == {(0, c) for c in range(6)}
    blocker.unlink()
    build_store(small_spec, out, threads=2)
    assert_stores_identical(reference, out)


def test_empty_lock_is_explained_and_taken_over(
    small_spec: Path, tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    """An empty lock (left by a run that stopped while writing it) names no runner:
    it is taken over with a notice instead of blocking every run."""
    out = tmp_path / "s.zarr"
    path = store.prepare(out, make_plan(load_spec(small_spec)))
    lock = path / store.LOCK_FILE
    lock.write_text("")
    old = time.time() - 60
    os.utime(lock, (old, old))
    with caplog.at_level("WARNING"):
        build_store(small_spec, out, threads=2)
    assert "empty or unreadable" in caplog.text and "taken over" in caplog.text
    assert not lock.exists()


def test_a_million_tasks_start_at_once_on_threads(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    """The threads executor submits a window of tasks: the first of 10^6 tasks ends
    long before a graph of all of them could be built (which took minutes)."""
    spec = tmp_path / "many.toml"
    spec.write_text(
        SMALL_SPEC.replace("walkers = 3000", "walkers = 1_000_000")
        .replace("chunk = 500", "chunk = 1")
        .replace('"motion.diffusivity" = [0.5, 1.0]', '"motion.diffusivity" = [0.5]')
        .replace("occupancy = { times = [0.2, 0.05], bins = 8 }", "")
    )
    out = tmp_path / "many.zarr"
    log = tmp_path / "stderr.txt"
    with log.open("w") as err:
        proc = subprocess.Popen(
            [*sweep_command(), "run", str(spec), "--store", str(out), "--quiet"],
            env=cli_env,
            stdout=subprocess.DEVNULL,
            stderr=err,
        )
    try:
        deadline = time.monotonic() + PATIENCE
        markers = out / store.MARKER_DIR
        while time.monotonic() < deadline and proc.poll() is None:
            if markers.is_dir() and any(markers.glob("p0-c*.json")):
                break
            time.sleep(0.1)
        assert proc.poll() is None, log.read_text()
        assert any(markers.glob("p0-c*.json")), "no task of 10^6 finished in time"
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait()
