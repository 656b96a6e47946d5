"""Fixtures of the store tests: a small disk to fill up (the command-line case
machinery's fixtures come from :mod:`tests.cli_cases`, a plugin of the tests)."""

from __future__ import annotations

import contextlib
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from tests.cli_cases import Unavailable, mount_tmpfs
from tests.conftest import SMALL_SPEC


@pytest.fixture
def small_disk(workspace: Path) -> Iterator[Callable[[str, str], tuple[Path, Path]]]:
    """``small_disk(name, size)``: (the SMALL_SPEC definition, a tmpfs folder of
    ``size``) in folder ``name`` of the workspace, unmounted after the test; the test
    skips, with the reason, where a tmpfs cannot be mounted."""
    with contextlib.ExitStack() as stack:

        def make(name: str, size: str) -> tuple[Path, Path]:
            folder = workspace / name
            folder.mkdir()
            spec = folder / "small.toml"
            spec.write_text(SMALL_SPEC)
            try:
                mount_tmpfs(folder / "disk", size, stack)
            except Unavailable as why:
                pytest.skip(str(why))
            return spec, folder / "disk"

        yield make
