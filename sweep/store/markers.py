"""Per-task completion: writing a task's chunks durably, its marker, and checking both.

A task writes only its own chunks (:func:`write_task`), flushes every chunk file to
disk (the files come from zarr's own chunk-key encoding, :class:`~.layout.ChunkKeys`;
one zarr must have written but did not is an error), and only then commits its marker
``_tasks/p<point>-c<chunk>.json`` atomically: the task's counts, the store id, and the
size and checksum of every chunk file (``"absent"`` where zarr wrote none because the
chunk is all fill value). Completion is read from markers only, each checked against
the store (:func:`scan_markers`); damaged tasks are named, and a run recomputes them
(:func:`resume_state`).
"""

from __future__ import annotations

import asyncio
import json
import logging
import os
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import zarr
import zarr.api.asynchronous
from zarr.core.sync import sync as zarr_sync

from sweep.errors import StaleStoreError, StoreError
from sweep.plan import Task
from sweep.store.files import (
    ABSENT,
    Damage,
    atomic_json,
    damaged,
    difference,
    file_state,
    fsync_dir,
    fsync_file,
    os_error,
    read_json,
)
from sweep.store.layout import (
    MARKER_DIR,
    SEAL_FILE,
    TASK_ARRAYS,
    ChunkKeys,
    TaskOutput,
    task_chunk_key,
)
from sweep.store.provenance import read_attrs

log = logging.getLogger(__name__)

MARKER_NAME = re.compile(r"p(\d+)-c(\d+)\.json")
#: Damaged tasks named one by one in a run's warnings; the rest are counted.
MAX_WARNINGS = 20


def marker_path(path: Path, point: int, chunk: int) -> Path:
    """The completion marker of task (point, chunk) of the store at ``path``."""
    return path / MARKER_DIR / f"p{point}-c{chunk}.json"


# --------------------------------------------------------------------------- writing


def check_store_id(path: Path, store_id: str, task: Task) -> None:
    """Raise StaleStoreError unless the store at ``path`` is the one of ``store_id``.

    Read from disk each time: the store may have been deleted and made again by
    another run while this task was queued or running.
    """
    seal = read_json(path / SEAL_FILE)
    now = None if seal is None else seal.get("store_id")
    if now == store_id:
        return
    state = (
        "no longer exists" if seal is None else f"was replaced by another (id {now})"
    )
    raise StaleStoreError(
        f"{path}: point {task.point}, chunk {task.chunk} was planned for the store "
        f"with id {store_id}, which {state}; the task stops without marking "
        f"anything done."
    )


def write_task(
    path: str,
    task: Task,
    output: TaskOutput,
    summary: dict[str, Any],
    store_id: str,
) -> dict[str, Any]:
    """Write one task's chunks, flush them, then its completion marker.

    Called inside tasks (threads or worker processes); opens the store read-write
    without touching metadata. The store id is checked on disk before the chunks are
    written and again right before the marker is renamed into place.

    Returns
    -------
    dict
        The marker written: ``summary`` with ``store_id`` and ``chunks`` (chunk key →
        ``[size, blake2b]`` or ``"absent"``).

    Raises
    ------
    StaleStoreError
        The store was deleted or replaced since the task was planned.
    StoreError
        A chunk file zarr should have written is missing (nothing is marked done).
    """
    base = Path(path)
    check_store_id(base, store_id, task)
    expected = write_chunks(path, task, output)
    chunks = sync_chunks(base, expected, task)
    marker_doc = {**summary, "store_id": store_id, "chunks": chunks}
    atomic_json(
        marker_path(base, task.point, task.chunk),
        marker_doc,
        before_rename=lambda: check_store_id(base, store_id, task),
    )
    return marker_doc


def write_chunks(path: str, task: Task, output: TaskOutput) -> dict[str, bool]:
    """Write the task's region of every task array of the store at ``path``; chunk
    key → whether zarr must have written a file there.

    zarr writes no file for a chunk that is all fill value (and deletes one that was
    there) unless the array's ``write_empty_chunks`` is set; every other chunk must
    exist once the write returns.
    """
    # The root zarr.json holds the consolidated metadata of every array: all that
    # opening the store reads. Read here, it decides whether the arrays opened for an
    # earlier task are still those of this store.
    try:
        metadata = (Path(path) / "zarr.json").read_bytes()
    except OSError as err:
        raise os_error(Path(path), "read the store's metadata", err) from err
    # One trip to zarr's event-loop thread for the whole task: through the
    # synchronous API, opening the group, finding each array and writing it are ~17
    # round trips (about 2 ms of a task's CPU); the chunk files are the same bytes.
    return zarr_sync(_write_chunks(path, metadata, task, output))


#: Store path → (its root zarr.json, its task arrays opened from it), for the stores
#: this process wrote to last; used only on zarr's event-loop thread.
_OPENED: dict[str, tuple[bytes, dict[str, zarr.AsyncArray[Any]]]] = {}
#: Stores remembered at most (a process writes to one at a time).
MAX_OPENED = 4


async def _task_arrays(path: str, metadata: bytes) -> dict[str, zarr.AsyncArray[Any]]:
    """The store's task arrays by name, opened again only when ``metadata`` (the
    root zarr.json just read) differs from the one they were opened with.

    Parsing the consolidated metadata costs about 1.5 ms per task. Reusing it is
    exact: with consolidated metadata, opening reads nothing but the root zarr.json,
    so the same bytes give the same arrays. The file changes only under the store's
    runner lock (growth), never while a run's tasks write.
    """
    known = _OPENED.get(path)
    if known is not None and known[0] == metadata:
        return known[1]
    root = await zarr.api.asynchronous.open_group(
        store=path, mode="r+", use_consolidated=True
    )
    arrays = {}
    for spec in TASK_ARRAYS:
        try:
            array = await root.getitem(spec.name)
        except KeyError:
            continue
        assert isinstance(array, zarr.AsyncArray), spec.name
        arrays[spec.name] = array
    if len(_OPENED) >= MAX_OPENED:
        _OPENED.clear()
    _OPENED[path] = (metadata, arrays)
    return arrays


async def _write_chunks(
    path: str, metadata: bytes, task: Task, output: TaskOutput
) -> dict[str, bool]:
    arrays = await _task_arrays(path, metadata)
    p, c = task.point, task.chunk
    expected = {}
    writes = []
    for spec in TASK_ARRAYS:
        array = arrays.get(spec.name)
        if array is None:
            continue
        data = getattr(output, str(spec.output))
        if data is None:
            raise StoreError(
                f"{array.store}: the task of point {p}, chunk {c} has no "
                f"'{spec.output}' output for the store's array {spec.name}."
            )
        dims = tuple(array.metadata.dimension_names or ())
        region = tuple(
            p
            if d == "point"
            else c
            if d == "chunk"
            else slice(task.first_walker, task.first_walker + task.n_walkers)
            if d == "walker"
            else slice(None)
            for d in dims
        )
        writes.append((array, region, data))
        data = np.asarray(data)
        all_fill = np.array_equal(
            data,
            np.broadcast_to(
                np.asarray(array.metadata.fill_value, dtype=data.dtype), data.shape
            ),
            equal_nan=data.dtype.kind in "fc",
        )
        expected[task_chunk_key(array, p, c)] = (
            array.config.write_empty_chunks or not all_fill
        )
    # Every write ends before this returns, also when one fails (then the first
    # error is raised): nothing of this task is still being written afterwards.
    done = await asyncio.gather(
        *(array.setitem(region, data) for array, region, data in writes),
        return_exceptions=True,
    )
    for result in done:
        if isinstance(result, BaseException):
            raise result
    return expected


def sync_chunks(
    base: Path, expected: Mapping[str, bool], task: Task | None = None
) -> dict[str, Any]:
    """Flush every chunk file of a task (and its folder) to disk; key → its state.

    ``expected``: chunk key → whether zarr must have written the file. A file that
    must exist and does not is an error; one zarr legitimately did not write (all fill
    value) is recorded ``"absent"``.

    Raises
    ------
    StoreError
        A chunk file that must exist is missing.
    """
    states: dict[str, Any] = {}
    for key, must in expected.items():
        file = base / key
        try:
            fsync_file(file)
        except FileNotFoundError:
            if must:
                where = (
                    "" if task is None else f" (point {task.point}, chunk {task.chunk})"
                )
                raise StoreError(
                    f"{file}: zarr wrote no chunk file here{where}, although the "
                    f"data are not all fill value; nothing was marked done, a rerun "
                    f"computes the task again."
                ) from None
            states[key] = ABSENT
            continue
        except OSError as err:
            raise os_error(base, "flush a chunk file to disk", err) from err
        fsync_dir(file.parent)  # the file's name, new in its folder, must last too
        states[key] = file_state(file)
    return states


# --------------------------------------------------------------------------- reading


def _task_hint(path: Path, attrs: Mapping[str, Any]) -> str:
    return (
        f"Run the sweep again into this store (its definition: "
        f"{attrs.get('source', 'SPEC')}): the run checks every finished task and "
        f"recomputes the damaged ones; the other results are intact."
    )


def scan_markers(
    path: Path, attrs: Mapping[str, Any], digests: bool = False
) -> tuple[dict[tuple[int, int], dict[str, Any]], list[Damage]]:
    """Read every completion marker and check it against the store.

    Always (cheap: one small read per marker and one ``stat`` per chunk file): the
    marker is a JSON object of this store (its store id), of the task its name says,
    with walker counts that match the task and add up, and every chunk file it lists
    has the size its task wrote (or is absent, if the task wrote none). With
    ``digests``, every chunk file is also read and its checksum compared.

    Returns
    -------
    done : dict
        (point, chunk) → marker, for every task whose marker and data check out.
    damage : list of Damage
        Everything that did not.
    """
    n_p, n_c = attrs["n_points"], attrs["n_chunks"]
    folder = path / MARKER_DIR
    done: dict[tuple[int, int], dict[str, Any]] = {}
    found: list[Damage] = []
    try:
        with os.scandir(folder) as entries:
            names = sorted(e.name for e in entries)
    except OSError:
        names = []
    keys = ChunkKeys(zarr.open_group(str(path), mode="r", use_consolidated=True))
    for name in names:
        match = MARKER_NAME.fullmatch(name)
        if match is None:
            continue  # ours being written (.sweep-tmp-*), or not ours
        p, c = int(match.group(1)), int(match.group(2))
        file = folder / name
        if p >= n_p or c >= n_c:
            found.append(
                Damage(
                    file,
                    f"a marker of point {p}, chunk {c}, but the store has {n_p} "
                    f"points of {n_c} chunks",
                    (p, c),
                )
            )
            continue
        marker, problem = _check_marker(path, file, attrs, (p, c), keys(p, c))
        if problem is not None:
            found.append(problem)
            continue
        done[(p, c)] = marker
    if digests and done:
        found += _check_digests(path, done)
    return done, found


def _check_digests(
    path: Path, done: dict[tuple[int, int], dict[str, Any]]
) -> list[Damage]:
    """Hash every chunk file of the finished tasks; drop the damaged tasks from
    ``done`` and return what is wrong with them."""
    from concurrent.futures import ThreadPoolExecutor

    def digest_problem(task: tuple[int, int]) -> Damage | None:
        for key, state in done[task]["chunks"].items():
            if state == ABSENT:
                continue
            now = file_state(path / key)
            if now != state:
                return Damage(
                    path / key,
                    difference(state, now, "its task finished")
                    + f" (point {task[0]}, chunk {task[1]})",
                    task,
                )
        return None

    found = []
    # hashlib releases the GIL on large buffers: chunk files hash in parallel.
    with ThreadPoolExecutor(min(8, os.cpu_count() or 1)) as pool:
        for problem in pool.map(digest_problem, sorted(done)):
            if problem is not None:
                found.append(problem)
                del done[problem.task]  # type: ignore[arg-type]
    return found


def _check_marker(
    path: Path,
    file: Path,
    attrs: Mapping[str, Any],
    task: tuple[int, int],
    keys: Mapping[str, str],
) -> tuple[dict[str, Any], Damage | None]:
    """The marker of ``task``, and what is wrong with it or its chunk files' sizes.

    ``keys``: array name → the chunk key the task writes there.
    """
    p, c = task

    def bad(what: str, where: Path = file) -> tuple[dict[str, Any], Damage]:
        return {}, Damage(where, what, task)

    try:
        with open(file) as f:
            text = f.read()
    except OSError as err:
        return bad(f"cannot be read ({err.strerror})")
    if not text.strip():
        return bad("empty (a completion marker holds the task's counts)")
    try:
        marker = json.loads(text)
    except (ValueError, RecursionError):
        return bad("not valid JSON (a completion marker is JSON)")
    if not isinstance(marker, dict):
        return bad("not a completion marker (expected a JSON object)")
    if marker.get("store_id") != attrs["store_id"]:
        return bad(
            "written for another store (its store id differs): a task of an earlier "
            "store at this path, or a copied file"
        )
    if marker.get("point") != p or marker.get("chunk") != c:
        return bad(
            f"says point {marker.get('point')}, chunk {marker.get('chunk')}, but is "
            f"the marker of point {p}, chunk {c}"
        )
    walkers = min(attrs["chunk"], attrs["walkers"] - c * attrs["chunk"])
    absorbed = marker.get("absorbed_by")
    counts_ok = (
        marker.get("walkers") == walkers
        and isinstance(marker.get("censored"), int)
        and isinstance(absorbed, list)
        and all(isinstance(n, int) and n >= 0 for n in absorbed)
        and 0 <= marker["censored"] <= walkers
        and marker["censored"] + sum(absorbed) == walkers
    )
    if not counts_ok:
        return bad(
            f"its counts do not fit the task of {walkers} walkers (walkers "
            f"{marker.get('walkers')!r}, censored {marker.get('censored')!r}, "
            f"absorbed {absorbed!r})"
        )
    chunks = marker.get("chunks")
    if not isinstance(chunks, dict) or sorted(chunks) != sorted(keys.values()):
        return bad("does not list the chunk files of its task")
    root = str(path) + os.sep  # plain strings: pathlib costs more than the stat
    for key, state in chunks.items():
        if state != ABSENT and not (
            isinstance(state, list)
            and len(state) == 2
            and isinstance(state[0], int)
            and isinstance(state[1], str)
        ):
            return bad(f"lists {key} as {state!r}, not as a size and a checksum")
        try:
            now: Any = [os.stat(root + key).st_size, None]
        except (FileNotFoundError, NotADirectoryError):
            now = ABSENT
        same = state == now if ABSENT in (state, now) else now[0] == state[0]
        if not same:
            return bad(
                difference(state, now, "its task finished")
                + f" (point {p}, chunk {c})",
                Path(root + key),
            )
    return marker, None


def verified_markers(
    path: str | Path, digests: bool = False
) -> tuple[dict[str, Any], dict[tuple[int, int], dict[str, Any]]]:
    """The store's attributes and the markers of its finished tasks, all checked.

    Raises
    ------
    StoreDamagedError
        Any file is damaged; the message names them and says what to do.
    """
    path = Path(path).expanduser()
    attrs = read_attrs(path)
    done, found = scan_markers(path, attrs, digests)
    if found:
        raise damaged(found, _task_hint(path, attrs))
    return attrs, done


def done_tasks(path: Path) -> set[tuple[int, int]]:
    """(point, chunk) of every finished task (markers checked; damage raises).

    Empty while the store does not exist yet (a run is still creating it).
    """
    if not Path(path).expanduser().exists():
        return set()
    return set(verified_markers(path)[1])


def markers_by_point(path: Path) -> dict[int, dict[int, dict[str, Any]]]:
    """Markers of finished tasks (checked; damage raises): point → chunk → marker,
    by store index."""
    out: dict[int, dict[int, dict[str, Any]]] = {}
    for (p, c), marker in verified_markers(path)[1].items():
        out.setdefault(p, {})[c] = marker
    return out


def read_markers(path: Path) -> list[dict[str, Any]]:
    """The summaries written in every completion marker (checked; damage raises)."""
    done = verified_markers(path)[1]
    return [done[task] for task in sorted(done)]


def resume_state(path: Path) -> tuple[str, set[tuple[int, int]]]:
    """For a run: the store id and the finished tasks, all checksums verified.

    A task whose marker or data is damaged is reported (a warning naming the file)
    and its marker removed, so the run recomputes it.
    """
    attrs = read_attrs(path)
    done, found = scan_markers(path, attrs, digests=True)
    for n, problem in enumerate(found):
        p, c = problem.task or (-1, -1)
        inside = 0 <= p < attrs["n_points"] and 0 <= c < attrs["n_chunks"]
        if n < MAX_WARNINGS:
            where = (
                f"recomputing point {p}, chunk {c}"
                if inside
                else "its marker is removed"
            )
            log.warning("store damaged: %s; %s.", problem, where)
        elif n == MAX_WARNINGS:
            log.warning(
                "store damaged: %d more damaged tasks, recomputed as well.",
                len(found) - MAX_WARNINGS,
            )
        if problem.task is not None:
            try:
                os.unlink(marker_path(path, p, c))
            except FileNotFoundError:
                pass
            except OSError as err:
                raise os_error(
                    path, "remove the marker of a damaged task", err
                ) from err
    return attrs["store_id"], set(done)
