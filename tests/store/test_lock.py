"""sweep.store.lock: one runner per store. A second runner, a lock held from another
host, a store on a read-only or full disk: one clear message, no lock left behind, and
a later run resumes."""

from __future__ import annotations

import contextlib
import json
import shutil
from collections.abc import Callable
from pathlib import Path

from sweep import store
from tests.cli_cases import (
    RUN_SMALL,
    SMALL,
    Case,
    assert_one_error,
    case_test,
    copy_store,
    hold_lock,
    read_only_dir,
    write,
)
from tests.conftest import assert_stores_identical, run_cli

CASES: list[Case] = [
    Case(
        id="store-on-read-only-disk",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/ro/s.zarr", "--quiet"),
        expect=("{ws}/ro/s.zarr", "runner lock", "read-only file system"),
        setup=(SMALL, read_only_dir("ro", copy_store("ro/s.zarr", forget=2))),
        store="ro/s.zarr",
    ),
    Case(
        id="store-locked-by-live-runner",
        argv=RUN_SMALL,
        expect=(
            "{ws}/s.zarr",
            "another `sweep run` is using this store",
            "pid {pid}",
            "_lock.json",
        ),
        setup=(copy_store(forget=3), SMALL, hold_lock("s.zarr")),
        store="s.zarr",
    ),
    Case(
        id="store-locked-from-another-host",
        argv=RUN_SMALL,
        expect=("{ws}/s.zarr", "pid 4242 on node-17", "_lock.json"),
        setup=(
            copy_store(forget=3),
            SMALL,
            write(
                "s.zarr/_lock.json",
                json.dumps({"pid": 4242, "host": "node-17", "started": "earlier"}),
            ),
        ),
        store="s.zarr",
    ),
]


test_a_second_runner_is_refused = case_test(
    CASES, "A second runner, or a store it cannot lock, gets one message."
)


def test_full_disk_at_the_lock_leaves_no_lock_and_resumes(
    reference_store: Path, small_disk: Callable[[str, str], tuple[Path, Path]]
) -> None:
    """Resuming on a disk that is already full: the disk-full message, no lock left
    behind (an empty ``_lock.json`` used to block every later run), then a resume."""
    small_spec, disk = small_disk("full-disk-lock", "8m")
    out = disk / "s.zarr"
    shutil.copytree(reference_store, out)
    for marker in sorted((out / store.MARKER_DIR).iterdir())[:3]:
        marker.unlink()
    filler = disk / "filler"
    with contextlib.suppress(OSError), filler.open("wb") as f:
        while True:
            f.write(b"\0" * 4096)
            f.flush()
    args = ("run", small_spec, "--store", out, "--threads", "1", "--quiet")
    result = run_cli(*args)
    assert_one_error(result.returncode, result.stderr, [str(out), "the disk is full"])
    assert not (out / store.LOCK_FILE).exists()
    assert not [p for p in out.iterdir() if p.name.startswith(store.OWN_TMP)]
    filler.unlink()
    resumed = run_cli(*args)
    assert resumed.returncode == 0, resumed.stderr
    assert_stores_identical(reference_store, out)
