"""sweep.store.read: opening a store as a Dataset; reading commands on paths that are
not stores get one clear message."""

from __future__ import annotations

from pathlib import Path

import pytest

import sweep
from sweep import store
from sweep.errors import UsageError
from tests.cli_cases import (
    Case,
    Setup,
    case_test,
    write,
)


def store_command(
    id: str, command: str, setup: tuple[Setup, ...], *expect: str
) -> Case:
    """``sweep status|check|summary|export`` on ``ws/target`` (missing, or not a store)."""
    argv = (command, "{ws}/target") + (("{ws}/out.h5",) if command == "export" else ())
    return Case(
        id=id,
        argv=argv,
        expect=("{ws}/target", *expect),
        setup=setup,
        store="target" if setup else None,
        absent="out.h5" if command == "export" else None,
    )


NOT_A_STORE = (write("target/notes.txt", "keep me"),)

CASES: list[Case] = [
    case
    for command in ("status", "check", "summary", "export")
    for case in (
        store_command(f"{command}-missing-store", command, (), "no such store"),
        store_command(
            f"{command}-not-a-store",
            command,
            NOT_A_STORE,
            "is not a brownian-sweep store",
        ),
    )
]


test_reading_what_is_not_a_store = case_test(
    CASES, "Reading commands on a missing path or a folder that is no store."
)


def test_open_expands_the_home_folder(
    small_store: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("HOME", str(small_store.parent))
    ds = sweep.open(f"~/{small_store.name}", verify=True)
    assert int(ds.attrs["complete"]) == 1


def test_summary_of_a_data_array_says_what_it_needs(small_store: Path) -> None:
    ds = sweep.open(small_store)
    with pytest.raises(UsageError, match="needs a store's whole Dataset"):
        sweep.stats.summary(ds["first_passage_time"])


def test_the_dataset_has_the_variables_the_layout_names(small_store: Path) -> None:
    """Every Dataset variable comes from a table entry, or from the markers."""
    ds = store.open_dataset(small_store)
    named = {n for spec in store.ARRAYS for n in spec.dataset_names()}
    marker_variables = set(store.layout.MARKER_VARIABLES)
    marker_variables |= set(store.layout.TARGET_VARIABLES)
    parameters = set(ds.attrs["parameter_coordinates"])
    assert set(ds.data_vars) <= named | marker_variables
    assert set(ds.coords) <= named | parameters | {"axis", "wall"}
    assert {"first_passage_time", "survival", "occupancy", "done"} <= set(ds.data_vars)
