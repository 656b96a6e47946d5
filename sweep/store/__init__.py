"""The zarr v3 store: layout, creation, task writes, completion markers, lock, reading.

The only package that imports zarr. One module per job:

* :mod:`~sweep.store.layout`: the table of every array (:data:`ARRAYS`) and what is
  derived from it (creation, task chunk keys, the documented layout);
* :mod:`~sweep.store.provenance`: root attributes, format and stream version, the seal,
  and the checks against them (:func:`read_attrs`, :func:`check_matches`);
* :mod:`~sweep.store.create`: making a store (:func:`prepare`);
* :mod:`~sweep.store.growth`: growing one in place, crash-safe (:func:`grow`,
  :func:`finish_growth`);
* :mod:`~sweep.store.markers`: task writes and completion markers (:func:`write_task`,
  :func:`done_tasks`, :func:`resume_state`);
* :mod:`~sweep.store.lock`: one runner per store (:func:`runner_lock`);
* :mod:`~sweep.store.clean`: leftovers of killed writers;
* :mod:`~sweep.store.read`: the xarray Dataset (:func:`open_dataset`);
* :mod:`~sweep.store.files`: durable small files, checksums, damage reports.

Rules it keeps (``docs/store-format.md`` describes the format):

* every array is created once, by the driver, before any task runs (a growth rebuilds
  the metadata under the runner lock, before any task); tasks never touch metadata or
  attributes;
* a task writes only its own chunks: per-walker arrays are chunked (1, chunk walkers),
  per-chunk aggregates (1, 1, ...), so no two tasks share a chunk object;
* a task's completion marker ``_tasks/p<point>-c<chunk>.json`` is written atomically
  after its chunk files are flushed to disk; completion is never inferred from chunk
  files (zarr does not write chunks that are all fill value);
* one runner at a time holds ``_lock.json``; a lock left by a dead process on this host
  is taken over with a notice;
* a store made by another definition is refused with the differences listed, and one
  made with other random streams (:data:`kernels.STREAM_VERSION`) with both versions
  named;
* nothing is read as numbers without proof: ``_seal.json`` (written at creation) holds
  the store's random id and the checksum of every file the driver wrote, each marker
  the store's id and the size and checksum of every chunk file its task wrote (or
  "absent": zarr writes no all-fill chunk); a task checks the id on disk before it
  writes and again right before its marker is committed, so a writer left over from
  a deleted store cannot mark its data done in a new one.
"""

from sweep.store.clean import CREATING, ZARR_PARTIAL, clean_creating, clean_partials
from sweep.store.create import create, prepare
from sweep.store.files import (
    ABSENT,
    OWN_TMP,
    Damage,
    damaged,
    file_state,
    os_error,
)
from sweep.store.growth import GROWING, PAUSE_ENV, finish_growth, grow
from sweep.store.layout import (
    ARRAYS,
    LOCK_FILE,
    MARKER_DIR,
    SEAL_FILE,
    ArraySpec,
    ChunkKeys,
    TaskOutput,
    exported_variables,
    read_fill,
)
from sweep.store.lock import UNREADABLE_LOCK_AGE, lock_holder, runner_lock
from sweep.store.markers import (
    MARKER_NAME,
    MAX_WARNINGS,
    check_store_id,
    done_tasks,
    markers_by_point,
    read_markers,
    resume_state,
    scan_markers,
    sync_chunks,
    verified_markers,
    write_chunks,
    write_task,
)
from sweep.store.provenance import (
    ATTRS_KEY,
    GROWN_FORMAT,
    GROWTH_JOURNAL,
    READ_FORMATS,
    STORE_FORMAT,
    STORE_HINT,
    UNVERSIONED_STREAM,
    check_matches,
    load_sweep,
    ordered_sweep,
    point_order,
    provenance,
    read_attrs,
    stream_version,
    tool_version,
)
from sweep.store.read import RENAMED, open_dataset

__all__ = [
    "ABSENT",
    "ARRAYS",
    "ATTRS_KEY",
    "CREATING",
    "GROWING",
    "GROWN_FORMAT",
    "GROWTH_JOURNAL",
    "LOCK_FILE",
    "MARKER_DIR",
    "MARKER_NAME",
    "MAX_WARNINGS",
    "OWN_TMP",
    "PAUSE_ENV",
    "READ_FORMATS",
    "RENAMED",
    "SEAL_FILE",
    "STORE_FORMAT",
    "STORE_HINT",
    "UNREADABLE_LOCK_AGE",
    "UNVERSIONED_STREAM",
    "ZARR_PARTIAL",
    "ArraySpec",
    "ChunkKeys",
    "Damage",
    "TaskOutput",
    "check_matches",
    "check_store_id",
    "clean_creating",
    "clean_partials",
    "create",
    "damaged",
    "done_tasks",
    "exported_variables",
    "file_state",
    "finish_growth",
    "grow",
    "load_sweep",
    "lock_holder",
    "markers_by_point",
    "open_dataset",
    "ordered_sweep",
    "os_error",
    "point_order",
    "prepare",
    "provenance",
    "read_attrs",
    "read_fill",
    "read_markers",
    "resume_state",
    "runner_lock",
    "scan_markers",
    "stream_version",
    "sync_chunks",
    "tool_version",
    "verified_markers",
    "write_chunks",
    "write_task",
]
