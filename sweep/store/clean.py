"""Cleaning what killed writers leave: temporary files inside a store, and half-made
stores beside it.

Only names the tool or zarr gives are ever deleted: ``.sweep-tmp-*`` files in the store
folder and in ``_tasks``, zarr's ``<name>.<32 hex>.partial`` files inside the store's own
array folders, and ``.<name>.creating-<pid>-*`` folders whose creating process is gone.
A user's files (``analysis.tmp-v2.ipynb``) stay; symbolic links are neither followed nor
deleted.
"""

from __future__ import annotations

import contextlib
import logging
import os
import re
from pathlib import Path

from sweep.store.files import OWN_TMP, read_json, remove_tree
from sweep.store.layout import MARKER_DIR, SEAL_FILE
from sweep.store.lock import pid_alive

log = logging.getLogger(__name__)

#: zarr's LocalStore writes ``<key minus suffix>.<uuid4 hex>.partial`` then renames it.
ZARR_PARTIAL = re.compile(r".+\.[0-9a-f]{32}\.partial")
#: A store is built as ``.<name>.creating-<pid>-<random>`` beside it, then renamed.
CREATING = ".creating-"


def clean_partials(path: Path) -> int:
    """Delete the temporary files killed writers left inside the store.

    Only files the tool or zarr names are touched: ``.sweep-tmp-*`` files in the
    store folder and in ``_tasks``, and zarr's ``*.<32 hex>.partial`` files inside the
    store's own array folders (those listed in ``_seal.json``). A user's files, even
    ones named ``*.partial`` or ``*.tmp-*``, are never deleted; symbolic links are
    neither followed nor deleted. Call it while holding the runner lock.

    Returns
    -------
    int
        Number of files removed.
    """
    removed = 0

    def remove(entry: os.DirEntry[str]) -> None:
        nonlocal removed
        if entry.is_file(follow_symlinks=False):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(entry.path)
                removed += 1

    for folder in (path, path / MARKER_DIR):
        with contextlib.suppress(OSError), os.scandir(folder) as entries:
            for entry in entries:
                if entry.name.startswith(OWN_TMP):
                    remove(entry)
    seal = read_json(path / SEAL_FILE) or {}
    arrays = {rel.split("/")[0] for rel in seal.get("files", {}) if rel.count("/") == 1}
    for name in sorted(arrays):
        for folder, dirs, _ in os.walk(path / name, followlinks=False):
            dirs[:] = [d for d in dirs if not os.path.islink(os.path.join(folder, d))]
            with os.scandir(folder) as entries:
                for entry in entries:
                    if ZARR_PARTIAL.fullmatch(entry.name):
                        remove(entry)
    return removed


def clean_creating(path: Path) -> int:
    """Delete ``.<name>.creating-<pid>-*`` folders beside ``path`` left by dead creators.

    A store is built under such a name and renamed when complete; a creation killed
    midway leaves the folder. Only folders of this store's name whose creating
    process no longer exists on this host are deleted.
    """
    prefix = f".{path.name}{CREATING}"
    removed = 0
    try:
        entries = list(os.scandir(path.parent))
    except OSError:
        return 0
    for entry in entries:
        if not entry.name.startswith(prefix) or not entry.is_dir(follow_symlinks=False):
            continue
        pid, _, _ = entry.name[len(prefix) :].partition("-")
        if not pid.isdigit() or pid_alive(int(pid)):
            continue
        remove_tree(Path(entry.path))
        removed += 1
    if removed:
        log.warning(
            "%s: removed %d unfinished store folder(s) %s* left by a creation that was "
            "stopped.",
            path,
            removed,
            prefix,
        )
    return removed
