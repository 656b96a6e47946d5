"""sweep.store.create: a store is made whole or not at all; paths where none can be
made get one clear message and are left as they were."""

from __future__ import annotations

from tests.cli_cases import (
    SMALL,
    Case,
    case_test,
    read_only_dir,
    write,
)

CASES: list[Case] = [
    Case(
        id="store-path-is-a-file",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/results.txt", "--quiet"),
        expect=("{ws}/results.txt", "not a directory"),
        setup=(SMALL, write("results.txt", "keep me")),
        store="results.txt",
    ),
    Case(
        id="store-parent-missing",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/no/such/s.zarr", "--quiet"),
        expect=("{ws}/no/such/s.zarr", "{ws}/no/such does not exist", "Create it"),
        setup=(SMALL,),
        absent="no",
    ),
    Case(
        id="store-parent-read-only",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/ro/s.zarr", "--quiet"),
        expect=("{ws}/ro/s.zarr", "not writable"),
        setup=(SMALL, read_only_dir("ro")),
        store="ro",
    ),
]


test_no_store_where_none_can_be_made = case_test(
    CASES, "No store is made, and nothing changed, where none can be made."
)
