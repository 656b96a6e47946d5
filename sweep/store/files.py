"""The small files a store keeps beside zarr's, written durably and checked on reading.

JSON read and atomic write, the ``[size, checksum]`` state of a file, fsync of files and
folders, what a damaged file is and how it is reported, and the one wording of an
OSError met while using a store. Nothing here knows the store's layout.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import shutil
import uuid
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sweep.errors import StoreDamagedError, StoreError

#: Every temporary file the tool writes inside a store starts so (markers being
#: written, a lock being taken); cleaning deletes nothing else of the user's.
OWN_TMP = ".sweep-tmp-"
#: The state of a chunk file its task did not write (all fill value).
ABSENT = "absent"
#: Damaged files named one by one in a message; the rest are counted.
MAX_NAMED = 10


def checksum(data: bytes) -> str:
    """blake2b-128 hex digest of ``data``."""
    # blake2b: in the standard library, about as fast as reading from the page cache,
    # and unlike a CRC it also tells apart a chunk copied from another task on purpose.
    return hashlib.blake2b(data, digest_size=16).hexdigest()


def file_state(file: Path, digest: bool = True) -> Any:
    """``"absent"``, or ``[size in bytes, blake2b hex digest]`` (None if not asked)."""
    try:
        if not digest:
            return [os.stat(file).st_size, None]
        data = file.read_bytes()
    except (FileNotFoundError, NotADirectoryError):
        return ABSENT
    return [len(data), checksum(data)]


def difference(was: Any, now: Any, since: str) -> str:
    """How a file's state ``now`` differs from the state ``was`` recorded ``since``."""
    if now == ABSENT:
        return f"missing (written when {since}, {was[0]} bytes)"
    if was == ABSENT:
        return f"exists, but nothing was written there when {since} (all fill value)"
    if now[0] != was[0]:
        return (
            f"{now[0]} bytes where {was[0]} were written when {since} (truncated or "
            "replaced)"
        )
    return f"its content changed since {since} (checksum differs)"


def read_json(path: Path) -> dict[str, Any] | None:
    """The JSON object in ``path``, or None if it is missing, unreadable or no object."""
    try:
        value = json.loads(path.read_text())
    except (OSError, ValueError, RecursionError):
        return None
    return value if isinstance(value, dict) else None


def own_tmp(target: Path, tag: str = "") -> Path:
    """A temporary name of ours beside ``target`` (cleaned by :func:`clean_partials`)."""
    return target.with_name(
        f"{OWN_TMP}{tag or target.name}-{os.getpid()}-{uuid.uuid4().hex[:8]}"
    )


def atomic_json(
    target: Path, value: Any, before_rename: Callable[[], None] | None = None
) -> None:
    """Write JSON under a temporary name of ours, flush it to disk, rename it.

    ``before_rename`` runs between the flush and the rename (a last check; if it
    raises, nothing appears under ``target``). The folder is flushed too, so the new
    name survives a crash once this returns.
    """
    tmp = own_tmp(target)
    try:
        with open(tmp, "w") as f:
            json.dump(value, f)
            f.flush()
            os.fsync(f.fileno())
        if before_rename is not None:
            before_rename()
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    fsync_dir(target.parent)


def fsync_file(file: Path) -> None:
    """Flush ``file`` to disk; a missing file raises FileNotFoundError."""
    fd = os.open(file, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def fsync_dir(folder: Path) -> None:
    """Flush a folder's entries (new names) to disk, where the system allows it."""
    with contextlib.suppress(OSError):
        fsync_file(folder)


def remove_tree(path: Path) -> None:
    """Delete a folder and everything in it, ignoring errors (cleanup paths only)."""
    shutil.rmtree(path, ignore_errors=True)


def os_error(path: Path, action: str, err: OSError) -> StoreError:
    """A clear StoreError for an OSError met while using a store."""
    if err.errno == errno.ENOSPC:
        return StoreError(
            f"{path}: cannot {action}: the disk is full. Free space or choose another "
            f"store path; results already stored are intact and a rerun resumes."
        )
    if err.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        return StoreError(
            f"{path}: cannot {action}: permission denied or read-only file system "
            f"({err.strerror}). Choose a writable store path."
        )
    return StoreError(f"{path}: cannot {action}: {err.strerror or err}.")


@dataclass(frozen=True)
class Damage:
    """One file of a store that does not hold what was written there."""

    file: Path
    what: str
    #: (point, chunk) of the task whose results it spoils, if any.
    task: tuple[int, int] | None = None

    def __str__(self) -> str:
        return f"{self.file}: {self.what}"


def damaged(found: list[Damage], hint: str) -> StoreDamagedError:
    """One message for every damaged file found: the first, then up to nine more."""
    lines = [f"store damaged: {found[0]}."]
    lines += [f"  also damaged: {d}." for d in found[1:MAX_NAMED]]
    if len(found) > MAX_NAMED:
        lines.append(f"  ... and {len(found) - MAX_NAMED} more damaged files.")
    lines.append(hint)
    return StoreDamagedError("\n".join(lines))
