"""A damaged or stale-written store is never read as numbers without a message.

Each case damages a copy of a complete store the way a crash, a full disk, a careless
copy or an editor would, and then: every reading command says ``store damaged: <file>:
<what>`` (exit 2, one message), and a rerun of ``sweep run`` recomputes the tasks
whose data no longer match their markers, saying so, and ends bit-identical to an
undamaged run. Damage to the files made at creation (metadata, coordinates, the
marker folder) cannot be repaired by a rerun; it is refused with the same message.
"""

from __future__ import annotations

import concurrent.futures
import json
import os
import shutil
import subprocess
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import pytest

import sweep
from sweep import store
from sweep.errors import StoreDamagedError
from sweep.execute import RunOptions, run
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical, sweep_command

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


@pytest.fixture(scope="module")
def reference(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("damage")
    spec = folder / "small.toml"
    spec.write_text(SMALL_SPEC)
    out = folder / "reference.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    return out


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


def _cli(*args: str | Path) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.run(
        [*sweep_command(), *map(str, args)],
        env=env,
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )


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
        results = {name: pool.submit(_cli, *argv) for name, argv in commands.items()}
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


def test_open_expands_the_home_folder(
    reference: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("HOME", str(reference.parent))
    ds = sweep.open(f"~/{reference.name}", verify=True)
    assert int(ds.attrs["complete"]) == 1


def test_summary_of_a_data_array_says_what_it_needs(reference: Path) -> None:
    from sweep.errors import UsageError

    ds = sweep.open(reference)
    with pytest.raises(UsageError, match="needs a store's whole Dataset"):
        sweep.stats.summary(ds["first_passage_time"])


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
    out = tmp_path / "short.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    attrs, done = store.verified_markers(out, digests=True)
    key = "first_passage_time/c/0/1"
    assert done[(0, 1)]["chunks"][key] == store.ABSENT
    assert not (out / key).exists()
    reference = tmp_path / "reference.zarr"
    shutil.copytree(out, reference)
    other = tmp_path / "other.zarr"
    assert run(_small(tmp_path), other, RunOptions(threads=2, progress=False)).complete
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


def _small(folder: Path) -> Path:
    spec = folder / "small.toml"
    spec.write_text(SMALL_SPEC)
    return spec
