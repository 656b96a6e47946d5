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
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from kernels import STREAM_VERSION
from sweep.errors import StoreError, StoreMismatchError
from sweep.plan import BIT_GENERATOR, Plan, coordinate_columns
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
STORE_FORMAT = 2
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


def root_attributes(sweep: Sweep, store_id: str) -> dict[str, Any]:
    """The root group's attributes of a new store of ``sweep`` with id ``store_id``."""
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
        },
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
    if attrs.get("format") == STORE_FORMAT:
        return
    older = isinstance(attrs.get("format"), int) and attrs["format"] < STORE_FORMAT
    raise StoreError(
        f"{path}: store format {attrs.get('format')!r}; this version of the tool reads "
        f"format {STORE_FORMAT}."
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
    """The validated sweep that made the store at ``path`` (from its stored text)."""
    attrs = read_attrs(path)
    return parse_spec(
        attrs["definition"], source=f"{attrs.get('source', '?')} (stored in {path})"
    )


def stream_version(attrs: Mapping[str, Any]) -> int:
    """The random-stream version of the store with attributes ``attrs``."""
    return int(attrs.get("stream_version", UNVERSIONED_STREAM))


def check_matches(path: Path, plan: Plan) -> None:
    """Refuse a store made with other random streams or by another definition.

    Raises
    ------
    StoreMismatchError
        The store's stream version or definition differs from ``plan``'s; the
        message names both versions, or lists the differences.
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
    stored = {"spec": attrs["spec"]}
    wanted = {"spec": plan.sweep.canonical}
    if stored == wanted:
        return
    lines = [
        f"  {key}: stored {_short(a)}, now {_short(b)}"
        for key, a, b in _differences(stored, wanted)
    ]
    shown = "\n".join(lines[:MAX_DIFFERENCES]) + (
        f"\n  ... and {len(lines) - MAX_DIFFERENCES} more"
        if len(lines) > MAX_DIFFERENCES
        else ""
    )
    raise StoreMismatchError(
        f"{path}: this store was made by a different sweep definition "
        f"({attrs.get('source', '?')}), so resuming it with {plan.sweep.source} would mix "
        f"results. Differences:\n{shown}\n"
        f"Use another store path for the new definition, or restore the old one."
    )


def _differences(a: Any, b: Any, prefix: str = "") -> Iterator[tuple[str, Any, Any]]:
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        for key in sorted(set(a) | set(b)):
            yield from _differences(
                a.get(key, "<absent>"), b.get(key, "<absent>"), f"{prefix}{key}."
            )
    elif a != b:
        yield prefix.rstrip("."), a, b


def _short(value: Any) -> str:
    text = json.dumps(value)
    return text if len(text) <= 80 else text[:77] + "..."
