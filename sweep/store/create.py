"""Making a store: every array created once, by the driver, before any task runs.

The store is built under a temporary name beside its path (``.<name>.creating-...``)
and renamed when complete, so a killed creation leaves no half store; the arrays come
from the layout table (:func:`~sweep.store.layout.create_arrays`), the metadata is
consolidated once, and the seal records every file made. An existing store is checked
against the plan instead (:func:`~sweep.store.provenance.check_matches`).
"""

from __future__ import annotations

import os
import uuid
import warnings
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import zarr

from sweep.errors import StoreError
from sweep.plan import Plan
from sweep.store.clean import CREATING, clean_creating
from sweep.store.files import os_error, remove_tree
from sweep.store.layout import MARKER_DIR, create_arrays
from sweep.store.provenance import (
    GROWTH_JOURNAL,
    check_matches,
    root_attributes,
    write_seal,
)


def prepare(path: str | Path, plan: Plan) -> Path:
    """Create the store for ``plan`` at ``path``, or check that the existing one matches.

    Returns
    -------
    Path
        The store's absolute, resolved path.

    Raises
    ------
    StoreMismatchError
        The store was made by another definition or another kernel version.
    StoreError
        The path exists but is not a store, or cannot be created.
    """
    path = Path(path).expanduser().absolute()
    clean_creating(path)
    if path.exists():
        if not (path / GROWTH_JOURNAL).exists():
            # Under the runner lock, the run finishes the growth and checks again.
            check_matches(path, plan.sweep)
        return path.resolve()
    parent = path.parent
    if not parent.is_dir():
        raise StoreError(
            f"{path}: cannot create the store; the directory {parent} does not exist. "
            f"Create it first or choose another store path."
        )
    if not os.access(parent, os.W_OK):
        raise StoreError(
            f"{path}: cannot create the store; the directory {parent} is not writable. "
            f"Choose another store path."
        )
    # Build under a temporary name and rename: a killed creation leaves no half store.
    tmp = parent / f".{path.name}{CREATING}{os.getpid()}-{uuid.uuid4().hex[:8]}"
    try:
        create(tmp, plan)
        os.rename(tmp, path)
    except OSError as err:
        remove_tree(tmp)
        if path.exists():  # another runner created it first: check it like any store
            check_matches(path, plan.sweep)
            return path.resolve()
        raise os_error(path, "create the store", err) from err
    except BaseException:
        remove_tree(tmp)
        raise
    return path.resolve()


def create(
    path: Path,
    plan: Plan,
    store_id: str | None = None,
    extra: Mapping[str, Any] | None = None,
) -> None:
    """Make the complete store of ``plan`` at ``path`` (which must not exist).

    ``plan.sweep``'s points are in store order. ``store_id`` and ``extra`` (root
    attributes that override the defaults) are given when a growth rebuilds a
    store's metadata: the id and ``created`` stay, the growth record and
    ``point_order`` are added (sweep.store.growth).
    """
    store_id = store_id or uuid.uuid4().hex
    root = zarr.open_group(
        str(path),
        mode="w-",
        zarr_format=3,
        attributes=root_attributes(plan.sweep, store_id, extra),
    )
    create_arrays(root, plan.sweep)
    with warnings.catch_warnings():
        # "Consolidated metadata is currently not part in the Zarr format 3
        # specification": zarr-python reads it, and readers that do not simply list.
        warnings.filterwarnings("ignore", message="Consolidated metadata")
        # Metadata never changes after creation, so one consolidated copy is exact;
        # readers then never list the folder, whose other entries (markers, lock, a
        # user's notes) zarr would otherwise try to read as arrays.
        zarr.consolidate_metadata(str(path))
    (path / MARKER_DIR).mkdir()
    write_seal(path, store_id)
