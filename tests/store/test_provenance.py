"""sweep.store.provenance: a run refuses a store made by another definition, with other
random streams or in another format, with one clear message and nothing changed; the
attributes and the seal a store is made with."""

from __future__ import annotations

import json
from pathlib import Path

from kernels import STREAM_VERSION
from sweep import store
from tests.cli_cases import (
    RUN_SMALL,
    SMALL,
    Case,
    case_test,
    copy_store,
    edit_attrs,
    write,
)
from tests.conftest import SMALL_SPEC
from tests.spec.edit import edit_text


def other_definition(id: str, text: str, *expect: str) -> Case:
    """Resume the reference store with another definition."""
    return Case(
        id=id,
        argv=("run", "{ws}/other.toml", "--store", "{ws}/s.zarr", "--quiet"),
        expect=(
            "{ws}/s.zarr",
            "other.toml",
            "made by a different sweep definition",
            "Differences:",
            *expect,
        ),
        setup=(copy_store(), write("other.toml", text)),
        store="s.zarr",
    )


def _as_unversioned_store(attrs: dict[str, object]) -> None:
    """Attributes as stores written before stream versions were recorded had them."""
    del attrs["stream_version"], attrs["provenance"]
    attrs["fingerprint"] = {
        "kernel_sha256": "0" * 64,
        "numpy": "2.1.0",
        "numba": "0.60.0",
        "bit_generator": "SFC64",
    }


CASES: list[Case] = [
    other_definition(
        "store-of-other-grid",
        edit_text(SMALL_SPEC, ("[0.5, 1.0]", "[0.5, 2.0]")),
        "points removed (1; their values of motion.diffusivity: [1.0])",
    ),
    other_definition(
        "store-of-other-seed-and-horizon",
        edit_text(
            SMALL_SPEC, ("seed = 7", "seed = 8"), ("horizon = 3.0", "horizon = 4.0")
        ),
        "sweep.seed: stored 7, now 8",
        "time.horizon: stored 3.0, now 4.0",
    ),
    Case(
        id="store-of-other-stream-version",
        argv=RUN_SMALL,
        expect=(
            "{ws}/s.zarr",
            "random stream version 99",
            f"draws stream version {STREAM_VERSION}",
            "CHANGELOG.md",
            "another store path",
        ),
        setup=(
            copy_store(),
            SMALL,
            edit_attrs("s.zarr", lambda a: a.update(stream_version=99)),
        ),
        store="s.zarr",
    ),
    Case(
        # Made before stream versions were recorded: a kernel fingerprint instead.
        id="store-of-the-bit-generator-kernel",
        argv=RUN_SMALL,
        expect=(
            "{ws}/s.zarr",
            "random stream version 1,",
            f"draws stream version {STREAM_VERSION}",
        ),
        setup=(
            copy_store(),
            SMALL,
            edit_attrs("s.zarr", _as_unversioned_store),
        ),
        store="s.zarr",
    ),
    Case(
        id="store-of-newer-format",
        argv=RUN_SMALL,
        expect=("{ws}/s.zarr", "store format 4", "reads format 2 and 3"),
        setup=(copy_store(), SMALL, edit_attrs("s.zarr", lambda a: a.update(format=4))),
        store="s.zarr",
    ),
    Case(
        id="store-path-is-a-plain-directory",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/data", "--quiet"),
        expect=("{ws}/data", "is not a brownian-sweep store", "nothing was changed"),
        setup=(SMALL, write("data/notes.txt", "keep me")),
        store="data",
    ),
    Case(
        id="store-with-corrupt-metadata",
        argv=RUN_SMALL,
        expect=(
            "store damaged: {ws}/s.zarr/zarr.json",
            "restore the store from a copy",
        ),
        setup=(copy_store(), SMALL, write("s.zarr/zarr.json", '{"attributes": {')),
        store="s.zarr",
    ),
]


test_a_store_of_another_making_is_refused = case_test(
    CASES, "A run refuses a store of another definition, stream version or format."
)


def test_the_seal_lists_every_file_made_at_creation(small_store: Path) -> None:
    """Every file but the markers, the run log and the task chunks is sealed, with
    the store id of the root attributes."""
    seal = json.loads((small_store / store.SEAL_FILE).read_text())
    attrs = store.read_attrs(small_store)
    assert seal["store_id"] == attrs["store_id"]
    task_arrays = {spec.name for spec in store.ARRAYS if spec.output}
    made = {
        p.relative_to(small_store).as_posix()
        for p in small_store.rglob("*")
        if p.is_file()
        and p.parts[len(small_store.parts)] not in (store.MARKER_DIR, *task_arrays)
        and p.name not in (store.SEAL_FILE, "_runs.log")
    }
    made |= {
        f"{name}/zarr.json" for name in task_arrays if (small_store / name).exists()
    }
    assert set(seal["files"]) == made
    for rel, state in seal["files"].items():
        assert state == store.file_state(small_store / rel), rel


def test_root_attributes_record_the_stream_version_not_a_kernel_hash(
    small_store: Path,
) -> None:
    """Compatibility follows kernels.STREAM_VERSION; no hash of a kernel file by path."""
    attrs = store.read_attrs(small_store)
    assert attrs["stream_version"] == STREAM_VERSION
    assert attrs["format"] == store.STORE_FORMAT
    assert "fingerprint" not in attrs
    assert set(attrs["provenance"]) == {"numpy", "numba", "generator"}
