"""sweep.store.markers: what a task writes and how its completion is proven.

The chunk files a task flushes to disk are those zarr wrote, found through zarr's own
chunk-key encoding; one that should exist and does not is an error. A damaged or
stale-written store is never read as numbers without a message: each damage case
damages a copy of a complete store the way a crash, a full disk, a careless copy or an
editor would, and then every reading command says ``store damaged: <file>: <what>``
(exit 2, one message), and a rerun of ``sweep run`` recomputes the tasks whose data no
longer match their markers, saying so, and ends bit-identical to an undamaged run.
Damage to the files made at creation (metadata, coordinates, the marker folder) cannot
be repaired by a rerun; it is refused with the same message. A full disk stops a run
cleanly, keeping every finished task.
"""

from __future__ import annotations

import concurrent.futures
import json
import shutil
import subprocess
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import zarr

import sweep
from sweep import store
from sweep.errors import StoreDamagedError, StoreError
from sweep.execute import RunOptions, run
from sweep.plan import make_plan
from sweep.spec import load_spec
from sweep.store.layout import TASK_ARRAYS
from tests.cli_cases import assert_one_error
from tests.conftest import (
    SMALL_SPEC,
    assert_stores_identical,
    build_store,
    run_cli,
)

HEAD = "sweep: error: store damaged: "


@dataclass(frozen=True)
class Damage:
    id: str
    apply: Callable[[Path], Path]  # damages the store, returns the damaged file
    what: str  # a fragment of the message
    #: "size": caught by every read; "checksum": by reads that verify checksums;
    #: "store": a file made at creation (every read, no repair by a rerun).
    level: str


def _truncate(rel: str, size: int) -> Callable[[Path], Path]:
    def apply(s: Path) -> Path:
        f = s / rel
        f.write_bytes(f.read_bytes()[:size])
        return f

    return apply


def _delete(rel: str) -> Callable[[Path], Path]:
    def apply(s: Path) -> Path:
        (s / rel).unlink()
        return s / rel

    return apply


def _flip(rel: str) -> Callable[[Path], Path]:
    def apply(s: Path) -> Path:
        f = s / rel
        data = bytearray(f.read_bytes())
        data[len(data) // 2] ^= 0x01
        f.write_bytes(bytes(data))
        return f

    return apply


def _copy_same_size(rel: str) -> Callable[[Path], Path]:
    """Put another task's chunk file in place of this one's, of the same size."""

    def apply(s: Path) -> Path:
        f = s / rel
        size = f.stat().st_size
        folder = s / rel.split("/")[0] / "c"
        donors = [
            g
            for g in folder.rglob("*")
            if g.is_file() and g != f and g.stat().st_size == size
        ]
        assert donors, "no chunk file of the same size to copy"
        shutil.copyfile(donors[0], f)
        return f

    return apply


def _write(rel: str, text: str) -> Callable[[Path], Path]:
    def apply(s: Path) -> Path:
        f = s / rel
        if f.is_dir():
            shutil.rmtree(f)
        f.write_text(text)
        return f

    return apply


def _edit_marker(
    rel: str, change: Callable[[dict[str, object]], None]
) -> Callable[[Path], Path]:
    def apply(s: Path) -> Path:
        f = s / rel
        doc = json.loads(f.read_text())
        change(doc)
        f.write_text(json.dumps(doc))
        return f

    return apply


def _edit_attrs(s: Path) -> Path:
    f = s / "zarr.json"
    doc = json.loads(f.read_text())
    doc["attributes"][store.ATTRS_KEY]["walkers"] = 2000
    f.write_text(json.dumps(doc))
    return f


def _remove_tasks(s: Path) -> Path:
    shutil.rmtree(s / store.MARKER_DIR)
    return s / store.MARKER_DIR


FPT = "first_passage_time/c/0/1"
DAMAGES = [
    Damage("truncated-chunk", _truncate(FPT, 100), "100 bytes where", "size"),
    Damage("deleted-chunk", _delete("first_passage_time/c/0/2"), "missing", "size"),
    Damage("deleted-survival-chunk", _delete("survival_count/c/0/2/0"), "missing", "size"),
    Damage("flipped-byte", _flip(FPT), "checksum differs", "checksum"),
    Damage("chunk-of-another-task", _copy_same_size("survival_count/c/1/4/0"), "checksum differs", "checksum"),
    Damage("empty-marker", _write("_tasks/p1-c1.json", ""), "empty", "size"),
    Damage("garbage-marker", _write("_tasks/p1-c1.json", "{'walkers"), "not valid JSON", "size"),
    Damage("marker-of-another-store", _edit_marker("_tasks/p1-c2.json", lambda m: m.update(store_id="0" * 32)), "another store", "size"),
    Damage("marker-counts-edited", _edit_marker("_tasks/p0-c5.json", lambda m: m.update(censored=7)), "counts do not fit", "size"),
    Damage("array-metadata", _truncate("exit_position/zarr.json", 40), "bytes where", "store"),
    Damage("attributes-edited", _edit_attrs, "the store was created", "store"),
    Damage("coordinate-chunk", _flip("diffusivity/c/0"), "content changed", "store"),
    Damage("tasks-folder-is-a-file", _write("_tasks", "markers were here"), "not a folder", "store"),
    Damage("tasks-folder-removed", _remove_tasks, "missing", "store"),
]  # fmt: skip
REPAIRABLE = [d for d in DAMAGES if d.level != "store"]


@pytest.fixture
def reference(small_store: Path) -> Path:
    """The session's complete SMALL_SPEC store (read-only: cases damage copies)."""
    return small_store


def _damaged_copy(reference: Path, where: Path, damage: Damage) -> tuple[Path, Path]:
    out = where / "s.zarr"
    shutil.copytree(reference, out)
    (where / "small.toml").write_text(SMALL_SPEC)
    return out, damage.apply(out)


@pytest.mark.parametrize("damage", DAMAGES, ids=[d.id for d in DAMAGES])
def test_open_names_the_damaged_file(
    reference: Path, tmp_path: Path, damage: Damage
) -> None:
    out, file = _damaged_copy(reference, tmp_path, damage)
    with pytest.raises(StoreDamagedError) as caught:
        sweep.open(out, verify=True)
    message = str(caught.value)
    assert message.startswith(f"store damaged: {file}: "), message
    assert damage.what in message
    if damage.level == "checksum":
        sweep.open(out)  # sizes and counts hold: only the checksums tell
    else:
        with pytest.raises(StoreDamagedError, match=f"store damaged: {file}: "):
            sweep.open(out)
        with pytest.raises(StoreDamagedError, match=f"store damaged: {file}: "):
            store.done_tasks(out)


@pytest.mark.parametrize("damage", REPAIRABLE, ids=[d.id for d in REPAIRABLE])
def test_rerun_recomputes_damaged_tasks_and_says_so(
    reference: Path, tmp_path: Path, damage: Damage, caplog: pytest.LogCaptureFixture
) -> None:
    out, file = _damaged_copy(reference, tmp_path, damage)
    with caplog.at_level("WARNING"):
        summary = run(
            tmp_path / "small.toml", out, RunOptions(threads=2, progress=False)
        )
    assert summary.complete and summary.completed == 1
    assert (
        f"store damaged: {file}: " in caplog.text and "recomputing point" in caplog.text
    )
    assert_stores_identical(reference, out)
    sweep.open(out, verify=True)


@pytest.mark.parametrize("kind", ["truncated-chunk", "array-metadata"])
def test_every_command_gives_the_same_verdict(
    reference: Path, tmp_path: Path, kind: str
) -> None:
    damage = next(d for d in DAMAGES if d.id == kind)
    out, file = _damaged_copy(reference, tmp_path, damage)
    before = {p: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    commands = {
        "status": ("status", out),
        "summary": ("summary", out),
        "check": ("check", out),
        "verify": ("verify", out),
        "export": ("export", out, tmp_path / "out.h5"),
        "report": ("report", out, "--out", tmp_path / "report"),
    }
    if damage.level == "store":
        commands["run"] = ("run", tmp_path / "small.toml", "--store", out, "--quiet")
    with concurrent.futures.ThreadPoolExecutor(max_workers=3) as pool:
        results = {name: pool.submit(run_cli, *argv) for name, argv in commands.items()}
        for name, future in results.items():
            result = future.result()
            assert result.returncode == 2, f"{name}: {result.stderr}"
            assert "Traceback" not in result.stderr, result.stderr
            heads = [
                line
                for line in result.stderr.splitlines()
                if line.startswith("sweep: error:")
            ]
            assert heads == [heads[0]] and heads[0].startswith(f"{HEAD}{file}: "), (
                f"{name}: {result.stderr}"
            )
            assert damage.what in heads[0]
    assert not (tmp_path / "out.h5").exists()
    after = {
        p: p.read_bytes()
        for p in out.rglob("*")
        if p.is_file() and p.name != "_runs.log"
    }
    assert after == {p: b for p, b in before.items() if p.name != "_runs.log"}


STORE_LEVEL = [d for d in DAMAGES if d.level == "store"]


@pytest.mark.parametrize("damage", STORE_LEVEL, ids=[d.id for d in STORE_LEVEL])
def test_rerun_refuses_damage_to_the_files_made_at_creation(
    reference: Path, tmp_path: Path, damage: Damage
) -> None:
    """No result can be trusted without them: refused before any task runs (a missing
    `_tasks` used to make a rerun compute every task, then fail)."""
    out, file = _damaged_copy(reference, tmp_path, damage)
    before = {p: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    with pytest.raises(StoreDamagedError, match=f"store damaged: {file}: "):
        run(tmp_path / "small.toml", out, RunOptions(threads=2, progress=False))
    assert {p: p.read_bytes() for p in out.rglob("*") if p.is_file()} == before


def test_chunks_zarr_did_not_write_are_part_of_the_proof(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    """Every walker still free at a 2-step horizon: zarr writes no per-walker chunk
    (all fill value). The markers say "absent", reads accept it, and a file that
    appears there later (here another store's chunk) is damage."""
    spec = tmp_path / "short.toml"
    spec.write_text(
        SMALL_SPEC.replace("horizon = 3.0", "horizon = 0.002")
        .replace("survival = { stop = 1.0, points = 11 }", "")
        .replace("occupancy = { times = [0.2, 0.05], bins = 8 }", "")
    )
    out = build_store(spec, tmp_path / "short.zarr", threads=2)
    attrs, done = store.verified_markers(out, digests=True)
    key = "first_passage_time/c/0/1"
    assert done[(0, 1)]["chunks"][key] == store.ABSENT
    assert not (out / key).exists()
    reference = tmp_path / "reference.zarr"
    shutil.copytree(out, reference)
    other = build_store(SMALL_SPEC, tmp_path / "other.zarr", threads=2)
    (out / key).parent.mkdir(parents=True, exist_ok=True)
    shutil.copyfile(other / key, out / key)
    with pytest.raises(
        StoreDamagedError, match="exists, but nothing was written there"
    ):
        sweep.open(out)
    with caplog.at_level("WARNING"):
        run(spec, out, RunOptions(threads=2, progress=False))
    assert "recomputing point 0, chunk 1" in caplog.text
    assert not (out / key).exists()
    assert_stores_identical(reference, out)


# --------------------------------------------------------------------------- writing

ALL_CENSORED = (
    SMALL_SPEC.replace("horizon = 3.0", "horizon = 0.002")
    .replace("survival = { stop = 1.0, points = 11 }", "")
    .replace("occupancy = { times = [0.2, 0.05], bins = 8 }", "")
)


@pytest.mark.parametrize(
    "definition", [SMALL_SPEC, ALL_CENSORED], ids=["absorbed", "all-censored"]
)
def test_a_task_flushes_exactly_the_chunk_files_zarr_wrote(
    definition: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The files flushed to disk are the files that appeared; the marker lists every
    chunk key of the task, "absent" exactly where zarr wrote nothing (all fill)."""
    from sweep.simulate import simulate_task

    spec = tmp_path / "def.toml"
    spec.write_text(definition)
    plan = make_plan(load_spec(spec))
    path = store.prepare(tmp_path / "s.zarr", plan)
    task = next(t for t in plan.tasks if (t.point, t.chunk) == (1, 2))
    output, _ = simulate_task(task)
    before = {p for p in path.rglob("*") if p.is_file()}
    flushed: list[Path] = []
    real_fsync = store.files.fsync_file

    def spy(file: Path) -> None:  # flushes for real, then records what it flushed
        real_fsync(file)
        flushed.append(Path(file))

    monkeypatch.setattr(store.files, "fsync_file", spy)
    monkeypatch.setattr(store.markers, "fsync_file", spy)
    store_id = store.read_attrs(path)["store_id"]
    marker = store.write_task(str(path), task, output, {"point": 1}, store_id)
    written = {
        p
        for p in path.rglob("*")
        if p.is_file() and p not in before and p.parent.name != store.MARKER_DIR
    }
    assert written, "the task wrote no chunk file at all"
    assert {f for f in flushed if not f.is_dir()} == written
    keys = store.ChunkKeys(zarr.open_group(str(path), mode="r"))(1, 2)
    assert sorted(marker["chunks"]) == sorted(keys.values())
    assert {
        path / key for key, state in marker["chunks"].items() if state != store.ABSENT
    } == written
    if definition == ALL_CENSORED:
        assert marker["chunks"][keys["first_passage_time"]] == store.ABSENT


def test_a_chunk_file_that_should_exist_and_does_not_is_an_error(
    tmp_path: Path,
) -> None:
    """No silent skip: a chunk zarr must have written (not all fill value) but that
    is missing stops the task before its marker; an all-fill one is "absent"."""
    key = "first_passage_time/c/0/3"
    with pytest.raises(StoreError, match="zarr wrote no chunk file here"):
        store.sync_chunks(tmp_path, {key: True})
    assert store.sync_chunks(tmp_path, {key: False}) == {key: store.ABSENT}
    (tmp_path / key).parent.mkdir(parents=True)
    (tmp_path / key).write_bytes(b"data")
    assert store.sync_chunks(tmp_path, {key: True})[key][0] == 4


def _task_files(path: Path) -> dict[str, bytes]:
    """Every chunk file of a store (not its metadata or markers): key → bytes."""
    return {
        str(f.relative_to(path)): f.read_bytes()
        for f in sorted(path.rglob("*"))
        if f.is_file()
        and f.name != "zarr.json"
        and store.MARKER_DIR not in f.parts
        and not f.name.startswith("_")
    }


@pytest.mark.parametrize(
    "definition", [SMALL_SPEC, ALL_CENSORED], ids=["absorbed", "all-censored"]
)
def test_a_task_writes_the_bytes_of_zarrs_synchronous_api(
    definition: str, tmp_path: Path
) -> None:
    """write_task hands zarr every array of a task in one asynchronous batch; the
    chunk files are byte for byte those of zarr's ordinary ``array[region] = data``,
    written into a second store made from the same plan."""
    from sweep.simulate import simulate_task

    spec = tmp_path / "def.toml"
    spec.write_text(definition)
    plan = make_plan(load_spec(spec))
    batched = store.prepare(tmp_path / "batched.zarr", plan)
    plain = store.prepare(tmp_path / "plain.zarr", plan)
    created = _task_files(plain)
    assert created.keys() == _task_files(batched).keys()  # coordinates only
    store_id = store.read_attrs(batched)["store_id"]
    root = zarr.open_group(str(plain), mode="r+")
    for task in plan.tasks[4:8]:
        output, _ = simulate_task(task)
        store.write_task(str(batched), task, output, {}, store_id)
        walkers = slice(task.first_walker, task.first_walker + task.n_walkers)
        for spec_ in TASK_ARRAYS:
            if spec_.name not in root:
                continue
            array = root[spec_.name]
            assert isinstance(array, zarr.Array)
            region = tuple(
                {"point": task.point, "chunk": task.chunk, "walker": walkers}.get(
                    d, slice(None)
                )
                for d in array.metadata.dimension_names or ()
            )
            array[region] = getattr(output, str(spec_.output))
    written = _task_files(batched)
    assert written.keys() > created.keys(), "no chunk file written"
    assert written == _task_files(plain)


def test_a_store_replaced_at_the_same_path_is_written_in_its_own_layout(
    tmp_path: Path,
) -> None:
    """Tasks reuse the arrays opened for an earlier task of the same store; a store
    made again at that path with other chunks (its zarr.json differs) is opened
    afresh, and its tasks land where its own layout says."""
    from sweep.simulate import simulate_task

    path = tmp_path / "s.zarr"
    for chunk in (500, 250):
        spec = tmp_path / f"def-{chunk}.toml"
        spec.write_text(SMALL_SPEC.replace("chunk = 500", f"chunk = {chunk}"))
        plan = make_plan(load_spec(spec))
        shutil.rmtree(path, ignore_errors=True)
        store.prepare(path, plan)
        store_id = store.read_attrs(path)["store_id"]
        task = next(t for t in plan.tasks if (t.point, t.chunk) == (1, 2))
        output, _ = simulate_task(task)
        store.write_task(str(path), task, output, {"point": 1}, store_id)
        got = zarr.open_group(str(path), mode="r")["first_passage_time"]
        walkers = slice(task.first_walker, task.first_walker + task.n_walkers)
        np.testing.assert_array_equal(got[1, walkers], output.time, strict=True)
        assert np.isnan(got[1, : task.first_walker]).all()


# --------------------------------------------------------------------------- full disk


def test_full_disk_stops_cleanly_keeps_finished_tasks_and_resumes(
    reference_store: Path, small_disk: Callable[[str, str], tuple[Path, Path]]
) -> None:
    """A 200 KiB disk holds the store's metadata and a few tasks, then fills up."""
    small_spec, disk = small_disk("full-disk", "200k")
    out = disk / "s.zarr"
    args = ("run", small_spec, "--store", out, "--threads", "1", "--quiet")
    result = run_cli(*args)
    assert_one_error(
        result.returncode, result.stderr, [str(out), "the disk is full", "rerun"]
    )
    done = store.done_tasks(out)
    assert 0 < len(done) < 12, f"{len(done)} tasks fit: resize the disk of this test"
    assert not (out / store.LOCK_FILE).exists()
    # Every finished task reads back exactly as in an uninterrupted run.
    ref = zarr.open_group(str(reference_store), mode="r")
    got = zarr.open_group(str(out), mode="r")
    for p, c in sorted(done):
        walkers = slice(500 * c, 500 * (c + 1))
        for name in ("first_passage_time", "absorbing_wall", "exit_position"):
            np.testing.assert_array_equal(
                got[name][p, walkers], ref[name][p, walkers], strict=True
            )
        for name in ("survival_count", "occupancy_count"):
            np.testing.assert_array_equal(got[name][p, c], ref[name][p, c], strict=True)
    status = run_cli("status", out)
    assert status.returncode == 0, status.stderr
    assert f"{len(done)}/12 tasks done" in status.stdout
    # Free space: the same command resumes and ends bit-identical to the reference.
    subprocess.run(["mount", "-o", "remount,size=8m", str(out.parent)], check=True)
    resumed = run_cli(*args)
    assert resumed.returncode == 0, resumed.stderr
    assert_stores_identical(reference_store, out)
