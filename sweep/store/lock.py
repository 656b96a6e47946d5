"""One runner per store: the runner lock ``_lock.json`` and its stale-lock recovery.

The lock appears complete or not at all (written under a temporary name, then
hard-linked into place); a lock whose process is gone on this host is taken over with a
warning, an empty or unreadable one older than :data:`UNREADABLE_LOCK_AGE` likewise; a
lock held from another host is never broken automatically.
"""

from __future__ import annotations

import contextlib
import datetime
import errno
import json
import logging
import os
import socket
import sys
import time
import uuid
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

from sweep.errors import StoreLockedError
from sweep.store.files import OWN_TMP, os_error, read_json
from sweep.store.layout import LOCK_FILE

log = logging.getLogger(__name__)

#: Seconds after which an unreadable lock is no longer a lock being written.
UNREADABLE_LOCK_AGE = 2.0
#: Attempts to take the lock while other runners keep taking and releasing it.
LOCK_ATTEMPTS = 20


@contextlib.contextmanager
def runner_lock(path: Path) -> Iterator[None]:
    """Hold the store's runner lock; take over a stale one left by a dead process.

    The lock appears complete or not at all: it is written under a temporary name
    and hard-linked to ``_lock.json`` (which fails if a lock exists). So a full disk
    leaves no empty lock behind, and an empty or unreadable lock (left by an older
    version, or by a file system without hard links, stopped while writing it) is
    taken over, with a notice, once it is two seconds old.

    Raises
    ------
    StoreLockedError
        Another live process (or a process on another host) holds the lock.
    StoreError
        The lock cannot be written (full disk, read-only store).
    """
    lock = path / LOCK_FILE
    token = uuid.uuid4().hex
    mine = {
        "pid": os.getpid(),
        "host": socket.gethostname(),
        "started": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "token": token,
        "command": " ".join(sys.argv),
    }
    for _ in range(LOCK_ATTEMPTS):
        try:
            _create_lock(lock, mine, token)
            break
        except FileExistsError:
            pass
        except OSError as err:
            raise os_error(path, "take the runner lock", err) from err
        try:
            seen = os.stat(lock)
        except FileNotFoundError:
            continue  # released meanwhile
        holder = read_json(lock)
        if holder is None:
            age = datetime.datetime.now().timestamp() - seen.st_mtime
            if age < UNREADABLE_LOCK_AGE:
                time.sleep(0.2)  # may be a lock being written right now
                continue
            log.warning(
                "%s: the runner lock %s is empty or unreadable (%d bytes), as a run "
                "stopped while writing it leaves it (a full disk, a killed process); "
                "no runner can be identified by it, so it is taken over.",
                path,
                lock,
                seen.st_size,
            )
        elif not _is_stale(holder):
            raise StoreLockedError(
                f"{path}: another `sweep run` is using this store (pid "
                f"{holder.get('pid')} on {holder.get('host')}, since "
                f"{holder.get('started')}). Wait for it to finish, or stop it; "
                f"if you are sure it is gone, delete {lock}."
            ) from None
        else:
            log.warning(
                "%s: taking over a stale lock left by pid %s on %s (started %s); "
                "the process no longer exists.",
                path,
                holder.get("pid"),
                holder.get("host"),
                holder.get("started"),
            )
        _remove_lock(lock, seen, token)
    else:
        raise StoreLockedError(
            f"{path}: could not take the runner lock {lock}: other runners kept "
            f"taking and releasing it; try again."
        )
    try:
        yield
    finally:
        holder = read_json(lock)
        if holder is not None and holder.get("token") == token:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(lock)


def _create_lock(lock: Path, content: Mapping[str, Any], token: str) -> None:
    """Make ``lock`` appear with its full content; FileExistsError if it exists."""
    tmp = lock.with_name(f"{OWN_TMP}lock-{token}")
    try:
        with open(tmp, "x") as f:
            json.dump(content, f)
            f.flush()
        try:
            os.link(tmp, lock)
        except FileExistsError:
            raise
        except OSError as err:
            if err.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP):
                raise
            # No hard links here: create exclusively and write (not atomic; an
            # unreadable lock younger than UNREADABLE_LOCK_AGE is waited for).
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            try:
                with os.fdopen(fd, "w") as f:
                    json.dump(content, f)
            except BaseException:
                with contextlib.suppress(OSError):
                    os.unlink(lock)
                raise
    finally:
        with contextlib.suppress(OSError):
            os.unlink(tmp)


def _remove_lock(lock: Path, seen: os.stat_result, token: str) -> None:
    """Remove the lock judged stale, unless another runner replaced it meanwhile."""
    away = lock.with_name(f"{OWN_TMP}lock-stale-{token}")
    try:
        os.rename(lock, away)
    except FileNotFoundError:
        return
    now = os.stat(away)
    if (now.st_ino, now.st_dev) != (seen.st_ino, seen.st_dev):
        # A fresh lock of another runner: put it back (unless a third took the name).
        with contextlib.suppress(FileExistsError):
            os.link(away, lock)
    os.unlink(away)


def lock_holder(path: Path) -> dict[str, Any] | None:
    """The live lock holder of a store, or None."""
    holder = read_json(path / LOCK_FILE)
    if holder is None or _is_stale(holder):
        return None
    return holder


def _is_stale(holder: Mapping[str, Any]) -> bool:
    if holder.get("host") != socket.gethostname():
        return False  # cannot see processes on other hosts: assume alive
    pid = holder.get("pid")
    if not isinstance(pid, int):
        return True
    return not pid_alive(pid)


def pid_alive(pid: int) -> bool:
    """Whether a process ``pid`` exists on this host (one of another user counts)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError):
        return True
    return True
