"""Growing a store in place: its metadata rebuilt beside it, committed by a journal,
installed by renames (docs/store-format.md, "Growing a store, and what a kill leaves").

:func:`grow` applies a :class:`sweep.growth.Growth` (what the new definition adds) to
the files; :func:`finish_growth` completes a committed growth a kill interrupted, and
removes the folders of growths never committed. Chunk files and completion markers
are never touched: old points keep their indices and chunk keys.
"""

from __future__ import annotations

import contextlib
import datetime
import logging
import os
import sys
import time
import uuid
from pathlib import Path
from typing import Any

from sweep.growth import Growth, in_store_order
from sweep.plan import Plan
from sweep.spec import Sweep
from sweep.store.create import create
from sweep.store.files import (
    Damage,
    atomic_json,
    damaged,
    fsync_dir,
    fsync_file,
    os_error,
    read_json,
    remove_tree,
)
from sweep.store.layout import MARKER_DIR, SEAL_FILE
from sweep.store.lock import pid_alive
from sweep.store.provenance import (
    GROWN_FORMAT,
    GROWTH_JOURNAL,
    STORE_HINT,
    read_attrs,
    tool_version,
)

log = logging.getLogger(__name__)

#: A grown store's new metadata is built as ``.<name>.growing-<pid>-<random>`` beside it.
GROWING = ".growing-"
#: Set to a step name (``built``, ``committed``, ``installing``, ``sealed``) to make a
#: growth stop there and wait (for tests that kill it); never set in normal use.
PAUSE_ENV = "SWEEP_GROWTH_PAUSE"


def _pause(step: str) -> None:
    if os.environ.get(PAUSE_ENV) == step:
        sys.stderr.write(f"growth paused at step {step}\n")
        sys.stderr.flush()
        time.sleep(3600)


def grow(path: Path, sweep: Sweep, growth: Growth) -> None:
    """Extend the store at ``path`` (whose runner lock the caller holds) to ``sweep``.

    Crash-safe in three phases (docs/store-format.md, "Growing a store"):

    1. *build*: the new metadata (every ``zarr.json``, the coordinate arrays, the
       consolidated metadata and ``_seal.json``, with the store's own id) is made as
       a store of its own in ``.<name>.growing-<pid>-<random>`` beside the store and
       flushed to disk. A kill here leaves the old store untouched (the folder is
       removed by the next run);
    2. *commit*: ``_growth.json`` names that folder and the files of the old
       metadata the new one no longer has; it is written atomically;
    3. *install*: each file is renamed into the store (each rename atomic), stale
       files removed, ``_seal.json`` renamed last, then the folder and the journal
       are removed. While the journal exists readers refuse the store and the next
       ``sweep run`` finishes the installation (:func:`finish_growth`) before
       anything else.

    Chunk files and completion markers are never touched: old points keep their
    indices and chunk keys, new points and chunks get new ones.
    """
    attrs = read_attrs(path, writing=True)
    ordered = in_store_order(sweep, growth.order)
    identity = list(growth.order) == list(range(len(growth.order)))
    record = {
        "when": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "changes": list(growth.changes),
        "points": [growth.old_points, growth.new_points],
        "walkers": [growth.old_walkers, growth.new_walkers],
        "from_spec_hash": attrs["spec_hash"],
        "to_spec_hash": sweep.spec_hash,
        "source": sweep.source,
        "tool_version": tool_version(),
    }
    extra: dict[str, Any] = {
        "created": attrs["created"],
        "growth": [*attrs.get("growth", []), record],
    }
    if not identity:
        extra["point_order"] = list(growth.order)
        extra["format"] = GROWN_FORMAT
    elif attrs.get("format") == GROWN_FORMAT:
        extra["format"] = GROWN_FORMAT
    skeleton = path.parent / (
        f".{path.name}{GROWING}{os.getpid()}-{uuid.uuid4().hex[:8]}"
    )
    try:
        create(skeleton, Plan(sweep=ordered, tasks=()), attrs["store_id"], extra)
        for folder, _, names in os.walk(skeleton):
            for name in names:
                fsync_file(Path(folder) / name)
            fsync_dir(Path(folder))
    except OSError as err:
        remove_tree(skeleton)
        raise os_error(path, "grow the store", err) from err
    except BaseException:
        remove_tree(skeleton)
        raise
    _pause("built")
    old_seal = read_json(path / SEAL_FILE) or {}
    new_seal = read_json(skeleton / SEAL_FILE) or {}
    stale = sorted(set(old_seal.get("files", {})) - set(new_seal.get("files", {})))
    atomic_json(
        path / GROWTH_JOURNAL,
        {"skeleton": skeleton.name, "stale": stale, "growth": record},
    )
    _pause("committed")
    finish_growth(path)
    log.warning(
        "%s: grown (%s); only the new tasks run.", path, "; ".join(growth.changes)
    )


def finish_growth(path: Path) -> bool:
    """Finish a committed growth (its journal exists); remove uncommitted ones.

    Idempotent: a kill at any point of it leaves a state the next call finishes.
    Call it holding the runner lock.

    Returns
    -------
    bool
        Whether a growth was finished.
    """
    journal = read_json(path / GROWTH_JOURNAL)
    named = None if journal is None else str(journal.get("skeleton", ""))
    # Folders of growths never committed (killed while building): the old store is
    # intact, so they only go.
    prefix = f".{path.name}{GROWING}"
    with contextlib.suppress(OSError), os.scandir(path.parent) as entries:
        for entry in list(entries):
            if (
                entry.name.startswith(prefix)
                and entry.name != named
                and entry.is_dir(follow_symlinks=False)
            ):
                pid = entry.name[len(prefix) :].partition("-")[0]
                if pid.isdigit() and not pid_alive(int(pid)):
                    remove_tree(Path(entry.path))
    if journal is None:
        if (path / GROWTH_JOURNAL).exists():
            raise damaged(
                [Damage(path / GROWTH_JOURNAL, "not readable as a growth journal")],
                STORE_HINT,
            )
        return False
    skeleton = path.parent / str(named)
    if named and skeleton.is_dir():
        moved = 0
        for folder, _, names in sorted(os.walk(skeleton)):
            for name in sorted(names):
                source = Path(folder) / name
                rel = source.relative_to(skeleton)
                if rel.as_posix() == SEAL_FILE:
                    continue
                target = path / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                os.replace(source, target)
                moved += 1
                if moved == 2:
                    _pause("installing")
        for rel in journal.get("stale", []):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(path / rel)
        for folder, _, _ in os.walk(path):
            if MARKER_DIR not in Path(folder).relative_to(path).parts:
                fsync_dir(Path(folder))
        if (skeleton / SEAL_FILE).exists():
            os.replace(skeleton / SEAL_FILE, path / SEAL_FILE)
            fsync_dir(path)
        _pause("sealed")
        remove_tree(skeleton)
    os.unlink(path / GROWTH_JOURNAL)
    fsync_dir(path)
    return True
