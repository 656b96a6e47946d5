"""What a store says about itself, and the proof that it is still what was made.

The root attributes (format, store id, the canonical definition and its hash, the random
stream version, library versions for the reader), the seal written at creation (the
store id and the checksum of every file made then), and the checks every reader and
every run make against them: :func:`read_attrs` (format, seal, marker folder) and
:func:`check_matches` (a run refuses a store of another definition or stream version).

Format version policy: :data:`STORE_FORMAT` changes when a store of the previous format
cannot be read or resumed correctly by this code (arrays, markers, seal or attributes
change meaning or are required anew); the stream version
(:data:`kernels.STREAM_VERSION`) changes when the same seeds give other numbers. A
store is resumed only by code of its own format and stream version.
"""

from __future__ import annotations

import datetime
import json
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from kernels import STREAM_VERSION
from sweep.errors import StoreError, StoreMismatchError, SweepError
from sweep.growth import Growth, Refused, differences, in_store_order, plan_growth
from sweep.plan import BIT_GENERATOR, coordinate_columns
from sweep.spec import Sweep, axis_names, parse_spec
from sweep.store.files import (
    Damage,
    atomic_json,
    damaged,
    difference,
    file_state,
    read_json,
)
from sweep.store.layout import MARKER_DIR, SEAL_FILE, record_flags

#: 2: the store id and ``_seal.json``; markers list their chunk files' checksums.
#: 3: a grown store whose points are not in its definition's order (``point_order``).
STORE_FORMAT = 2
GROWN_FORMAT = 3
#: Formats this version reads (and resumes, and grows).
READ_FORMATS = (2, 3)
#: The growth journal: present from the moment a growth is committed until its files
#: are all in place; its presence means "finish me" (sweep.store.growth).
GROWTH_JOURNAL = "_growth.json"
#: The root attribute that holds everything the tool records about a store.
ATTRS_KEY = "brownian_sweep"
#: The stream version of stores made before versions were recorded (they carry a
#: "fingerprint" of the kernel's source instead): numpy's bit generator.
UNVERSIONED_STREAM = 1
#: What to do about a damaged file the driver wrote once, at creation.
STORE_HINT = (
    "Files made when the store is created are never rewritten, and no result can be "
    "read without them: restore the store from a copy, or move it away and run its definition "
    "again into a new store."
)
#: Differences between two definitions named one by one; the rest are counted.
MAX_DIFFERENCES = 20


def tool_version() -> str:
    """The installed brownian-sweep version (``0+unknown`` in an uninstalled tree)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("brownian-sweep")
    except PackageNotFoundError:  # running from a source tree without install
        return "0+unknown"


def provenance() -> dict[str, str]:
    """The libraries a store was made with, recorded for the reader but not compared
    on resume: compatibility follows :data:`kernels.STREAM_VERSION` (the golden test
    notices a library update that changes the numbers)."""
    import numba

    return {
        "numpy": np.__version__,
        "numba": numba.__version__,
        "generator": f"{BIT_GENERATOR.__name__} (kernels/rng.py)",
    }


def root_attributes(
    sweep: Sweep, store_id: str, extra: Mapping[str, Any] | None = None
) -> dict[str, Any]:
    """The root group's attributes of a new store of ``sweep`` with id ``store_id``;
    ``extra`` overrides or adds entries (a grown store's ``created``, ``growth``,
    ``point_order`` and ``format``)."""
    first = sweep.points[0]
    flags = record_flags(sweep)
    return {
        ATTRS_KEY: {
            "format": STORE_FORMAT,
            "store_id": store_id,
            "spec": sweep.canonical,
            "spec_hash": sweep.spec_hash,
            "stream_version": STREAM_VERSION,
            "provenance": provenance(),
            "tool_version": tool_version(),
            "created": datetime.datetime.now(datetime.UTC).isoformat(
                timespec="seconds"
            ),
            "source": sweep.source,
            "definition": sweep.text,
            "walkers": sweep.walkers,
            "chunk": sweep.chunk,
            "n_points": sweep.n_points,
            "n_chunks": sweep.n_chunks,
            "axis_names": list(axis_names(sweep.dimension)),
            "wall_names": list(first.domain.wall_names()),
            "swept": list(sweep.swept),
            "parameter_coordinates": list(coordinate_columns(sweep)),
            "per_walker": flags["per_walker"],
            "occupancy": flags["occupancy"],
            "fpt_bins": first.record.fpt_bins,
            "units": {"length": sweep.units.length, "time": sweep.units.time},
        }
        | dict(extra or {}),
        "title": f"brownian-sweep results: {sweep.name}",
        "Conventions": "CF-1.10",
    }


def write_seal(path: Path, store_id: str) -> None:
    """Record the store id and the size and checksum of every file made so far."""
    files: dict[str, Any] = {}
    for folder, _, names in os.walk(path):
        for name in names:
            full = Path(folder) / name
            files[full.relative_to(path).as_posix()] = file_state(full)
    atomic_json(path / SEAL_FILE, {"store_id": store_id, "files": files})


def read_attrs(path: str | Path, writing: bool = False) -> dict[str, Any]:
    """The store's provenance attributes, after checking the files made at creation.

    ``writing``: the caller means to write there (a run), so the message suggests
    another store path; readers get a hint that fits them.

    Raises
    ------
    StoreError
        ``path`` is not a store, or of another store format.
    StoreDamagedError
        A file written at creation (``zarr.json`` files, coordinates, ``_seal.json``)
        changed or went missing, or ``_tasks`` is not a folder.
    """
    path = Path(path).expanduser()
    meta = path / "zarr.json"
    fix = " Choose another store path." if writing else ""
    if path.exists() and not path.is_dir():
        if not writing and path.suffix == ".toml":
            fix = (
                f" It looks like a sweep definition: run it with `sweep run {path}`, "
                f"then pass the store directory that run names (by default "
                f"{path.stem}.zarr)."
            )
        raise StoreError(
            f"{path}: exists and is not a directory (a store is a directory made by "
            f"`sweep run`); nothing was changed.{fix}"
        )
    if not path.is_dir():
        raise StoreError(
            f"{path}: no such store (expected a directory made by `sweep run`)."
        )
    if (path / GROWTH_JOURNAL).exists():
        raise StoreError(
            f"{path}: this store is being grown to a larger definition, or its growth "
            f"was stopped midway ({GROWTH_JOURNAL} exists): wait for the run that grows "
            f"it, or rerun `sweep run` with the new definition and --store {path} to "
            f"finish the growth; the stored results are intact."
        )
    ours = (path / SEAL_FILE).exists()
    try:
        attrs = json.loads(meta.read_text())["attributes"][ATTRS_KEY]
        if not isinstance(attrs, dict):
            raise TypeError
    except (OSError, ValueError, KeyError, TypeError) as err:
        if ours:
            what = (
                "missing"
                if isinstance(err, FileNotFoundError)
                else "not readable as the store's metadata (not JSON, or no "
                f"'{ATTRS_KEY}' attributes)"
            )
            raise damaged([Damage(meta, what)], STORE_HINT) from None
        raise StoreError(
            f"{path}: exists but is not a brownian-sweep store (no readable zarr.json with "
            f"'{ATTRS_KEY}' attributes); nothing was changed.{fix}"
        ) from None
    _check_format(path, attrs)
    found = _check_seal(path, attrs)
    tasks = path / MARKER_DIR
    if not tasks.is_dir() or tasks.is_symlink():
        found.append(
            Damage(
                tasks,
                "missing, so no completion marker can be read"
                if not tasks.exists()
                else "not a folder (it holds the completion markers)",
            )
        )
    if found:
        raise damaged(found, STORE_HINT)
    return dict(attrs)


def _check_format(path: Path, attrs: Mapping[str, Any]) -> None:
    if attrs.get("format") in READ_FORMATS:
        return
    older = isinstance(attrs.get("format"), int) and attrs["format"] < STORE_FORMAT
    raise StoreError(
        f"{path}: store format {attrs.get('format')!r}; this version of the tool reads "
        f"format {' and '.join(map(str, READ_FORMATS))}."
        + (
            " Earlier formats kept no checksums of their results: run the "
            "definition again into a new store."
            if older
            else ""
        )
    )


def _check_seal(path: Path, attrs: Mapping[str, Any]) -> list[Damage]:
    """Every file the seal lists, compared with its checksum; and the seal's store id."""
    seal_file = path / SEAL_FILE
    seal = read_json(seal_file)
    if seal is None or not isinstance(seal.get("files"), dict):
        what = (
            "missing"
            if not seal_file.exists()
            else "not readable (expected JSON with 'files')"
        )
        raise damaged([Damage(seal_file, what)], STORE_HINT)
    found = []
    for rel, state in seal["files"].items():
        now = file_state(path / rel)
        if now != state:
            found.append(
                Damage(path / rel, difference(state, now, "the store was created"))
            )
    if not found and seal.get("store_id") != attrs.get("store_id"):
        found.append(
            Damage(seal_file, "belongs to another store (its store id differs)")
        )
    return found


def load_sweep(path: str | Path) -> Sweep:
    """The validated sweep that made the store at ``path`` (from its stored text).

    Its points are in the definition's order, as ``open_dataset`` presents them (a
    grown store keeps them in another order on disk: see :func:`point_order`).
    """
    attrs = read_attrs(path)
    return parse_spec(
        attrs["definition"], source=f"{attrs.get('source', '?')} (stored in {path})"
    )


def point_order(attrs: Mapping[str, Any]) -> list[int]:
    """Store index → index of the point in the definition (identity unless grown)."""
    order = attrs.get("point_order")
    return list(range(attrs["n_points"])) if order is None else list(order)


def ordered_sweep(path: str | Path, sweep: Sweep) -> Sweep:
    """``sweep``, the definition the store at ``path`` holds, with its points in the
    store's order (what a run's tasks are numbered by)."""
    attrs = read_attrs(path, writing=True)
    if attrs["spec"] != sweep.canonical:
        raise StoreMismatchError(f"{path}: not the store of {sweep.source}.")
    return in_store_order(sweep, attrs.get("point_order"))


def stream_version(attrs: Mapping[str, Any]) -> int:
    """The random-stream version of the store with attributes ``attrs``."""
    return int(attrs.get("stream_version", UNVERSIONED_STREAM))


def check_matches(path: Path, sweep: Sweep) -> Growth | None:
    """Refuse a store made with other random streams or by a definition that does not
    only add work to it.

    Returns
    -------
    Growth or None
        None when the store was made by this very definition; a :class:`Growth` when
        the definition adds walkers or points (or lists the same points in another
        order), which ``sweep.store.growth.grow`` applies.

    Raises
    ------
    StoreMismatchError
        Other random streams (both versions named), or any other difference (listed).
    """
    attrs = read_attrs(path, writing=True)
    version = stream_version(attrs)
    if version != STREAM_VERSION:
        raise StoreMismatchError(
            f"{path}: this store's walkers were drawn with random stream version "
            f"{version}, and this version of brownian-sweep draws stream version "
            f"{STREAM_VERSION} (CHANGELOG.md says what changed): the same seeds now "
            "give other numbers, so resuming would mix two streams in one sample. "
            f"Finish it with a brownian-sweep that draws stream version {version}, or "
            "start the sweep again under another store path; nothing was changed."
        )
    if attrs["spec"] == sweep.canonical:
        return None
    try:
        stored = parse_spec(attrs["definition"], source=f"{path}")
        if stored.canonical != attrs["spec"]:
            # Stored by a version that resolved the definition otherwise: only an
            # identical definition resumes it.
            raise Refused(differences(attrs["spec"], sweep.canonical))
        return plan_growth(stored, attrs.get("point_order"), sweep)
    except Refused as refused:
        changed = refused.differences
    except SweepError:
        changed = differences(attrs["spec"], sweep.canonical)
    lines = [f"  {key}: stored {_short(a)}, now {_short(b)}" for key, a, b in changed]
    shown = "\n".join(lines[:MAX_DIFFERENCES]) + (
        f"\n  ... and {len(lines) - MAX_DIFFERENCES} more"
        if len(lines) > MAX_DIFFERENCES
        else ""
    )
    raise StoreMismatchError(
        f"{path}: this store was made by a different sweep definition "
        f"({attrs.get('source', '?')}), so resuming it with {sweep.source} would mix "
        f"results. A rerun may only add work to a store (more walkers with the same "
        f"chunk, more grid values or zip rows). Differences:\n{shown}\n"
        f"Use another store path for the new definition, or restore the old one."
    )


def _short(value: Any) -> str:
    text = json.dumps(value)
    return text if len(text) <= 80 else text[:77] + "..."
