"""The definition-file cases of the command-line battery: how a case is written down,
set up in its own folder, and run (``tests/spec/test_load_cli.py`` holds the table).
"""

from __future__ import annotations

import subprocess
from dataclasses import dataclass
from pathlib import Path

from tests.conftest import PATIENCE, SMALL_SPEC, run_cli
from tests.spec.edit import edit_text

ERROR = "sweep: error:"
#: Address-space limits for cases that could otherwise take the machine's memory: enough
#: for `sweep run` (numba, dask) or for `sweep plan` (numpy only).
RUN_LIMIT = 4 << 30
PLAN_LIMIT = 512 << 20

#: SMALL_SPEC without its grid, so [motion] values are not overridden by [grid].
BASE = edit_text(SMALL_SPEC, ('[grid]\n"motion.diffusivity" = [0.5, 1.0]\n', ""))
WALLS = 'walls = { x_lower = "absorbing", x_upper = "absorbing" }'
OCCUPANCY = "occupancy = { times = [0.2, 0.05], bins = 8 }"


def base(*edits: tuple[str, str]) -> str:
    return edit_text(BASE, *edits)


def base_with(grid: str) -> str:
    """The base definition plus a [grid] or [[zip]] table."""
    return base() + f"\n{grid}\n"


@dataclass(frozen=True)
class Case:
    """One bad definition file and the command run on it.

    ``text`` is the file's text or bytes, ``None`` for a missing file, or a dict of
    file names to texts for a directory in its place.
    """

    id: str
    text: str | bytes | dict[str, str] | None
    expect: tuple[str, ...]
    command: str = "plan"
    memory_limit: int | None = None
    path: str = "bad.toml"


def spec_case(
    id: str,
    text: str | bytes | dict[str, str] | None,
    *expect: str,
    command: str = "plan",
    memory_limit: int | None = None,
    path: str = "bad.toml",
) -> Case:
    """A bad definition at ``ws/path``; the message must name that path."""
    return Case(id, text, expect, command, memory_limit, path)


def prepare(case: Case, ws: Path) -> Path:
    """Write the case's definition (or directory) into ``ws``; return its path."""
    target = ws / case.path
    if isinstance(case.text, dict):
        target.mkdir()
        for name, text in case.text.items():
            (target / name).write_text(text)
    elif isinstance(case.text, bytes):
        target.write_bytes(case.text)
    elif case.text is not None:
        target.write_text(case.text)
    return target


#: What a case left behind: its folder and the finished command.
Outcome = tuple[Path, subprocess.CompletedProcess[str]]


def execute(case: Case, ws: Path) -> Outcome:
    """Run the case's command on its definition in ``ws``."""
    definition = prepare(case, ws)
    argv: tuple[str | Path, ...] = ("plan", definition)
    if case.command == "run":
        argv = ("run", definition, "--store", ws / "out.zarr", "--quiet")
    try:
        return ws, run_cli(*argv, cwd=ws, memory_limit=case.memory_limit)
    except subprocess.TimeoutExpired as err:
        stderr = err.stderr.decode() if isinstance(err.stderr, bytes) else err.stderr
        message = f"<still running after {PATIENCE} s>\n{stderr or ''}"
        return ws, subprocess.CompletedProcess(err.cmd, -1, "", message)
