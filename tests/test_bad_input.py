"""Bad input at the command line: one clear message, exit code 2, results untouched.

Project rule: malformed or impossible input gets ONE message on stderr (one line starting
``sweep: error:``; the message may continue on further lines) that names the file or
store, the key, the value and what is allowed; exit code 2; no Python traceback; and every
file of an existing store is byte-identical afterwards (the run log ``_runs.log`` aside).

Every case runs the real command line in a subprocess. The cases of the table are
independent, so they are started together on a small thread pool (the imports of
``sweep run`` cost about two CPU-seconds each) and every test waits for its own result.

Root ignores permission bits (``chmod 0o555`` does not stop it), so read-only
directories are read-only tmpfs mounts (EROFS stops root too) and the full disk is a
small tmpfs; these cases skip, with the reason, where mounting is not allowed.
"""

from __future__ import annotations

import concurrent.futures
import contextlib
import json
import os
import shutil
import subprocess
import sys
import tempfile
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest
import zarr

from kernels import STREAM_VERSION
from sweep import store
from sweep.execute import RunOptions, run
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical, sweep_command

#: For a missing scheduler file: the message must come well before the 60 s the Dask
#: client would wait for a scheduler (the command takes about 2 s on an idle machine;
#: a loaded 2-core CI machine takes several times that).
FAIL_FAST = 25.0
ERROR = "sweep: error:"
#: The message argparse prints for bad options of `sweep run`.
ARGPARSE_RUN_ERROR = "sweep run: error:"
#: Address-space limits for cases that could otherwise take the machine's memory: enough
#: for `sweep run` (numba, dask) or for `sweep plan` (numpy only).
RUN_LIMIT = 4 << 30
PLAN_LIMIT = 512 << 20

# --------------------------------------------------------------------------- definitions


def _edit(base: str, *edits: tuple[str, str]) -> str:
    """Apply text replacements, each of which must match exactly once."""
    for old, new in edits:
        assert base.count(old) == 1, f"edit target {old!r} not unique in the definition"
        base = base.replace(old, new)
    return base


#: SMALL_SPEC without its grid, so [motion] values are not overridden by [grid].
BASE = _edit(SMALL_SPEC, ('[grid]\n"motion.diffusivity" = [0.5, 1.0]\n', ""))

CUBE = """
[sweep]
name = "cube"
seed = 1
walkers = 1000

[motion]
dimension = 3
diffusivity = 1.0
start = [0.5, 0.5, 0.5]

[time]
dt = 1e-3
horizon = 1.0

[domain]
lower = [0.0, 0.0, 0.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing", y_lower = "absorbing", y_upper = "absorbing", z_lower = "absorbing", z_upper = "absorbing" }
"""

WALLS = 'walls = { x_lower = "absorbing", x_upper = "absorbing" }'
OCCUPANCY = "occupancy = { times = [0.2, 0.05], bins = 8 }"


def base(*edits: tuple[str, str]) -> str:
    return _edit(BASE, *edits)


def with_grid(grid: str) -> str:
    """The base definition plus a [grid] or [[zip]] table."""
    return base() + f"\n{grid}\n"


# --------------------------------------------------------------------------- cases


class Unavailable(Exception):
    """A case cannot be set up on this machine (reason in the message): skip it."""


Setup = Callable[[Path, contextlib.ExitStack], None]


@dataclass(frozen=True)
class Case:
    """One bad command line.

    ``argv`` and ``expect`` may contain ``{ws}`` (the case's own directory) and
    ``{pid}`` (this test process). ``store`` is an existing store (or any directory or
    file) that must be byte-identical afterwards; ``absent`` a path that must not be
    created.
    """

    id: str
    argv: tuple[str, ...]
    expect: tuple[str, ...]
    setup: tuple[Setup, ...] = ()
    store: str | None = None
    absent: str | None = None
    prefix: str = ERROR
    memory_limit: int | None = None
    timeout: float = PATIENCE
    bug: str | None = None


def write(name: str, text: str | bytes) -> Setup:
    """Write ``ws/name`` (text, or raw bytes)."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        target = ws / name
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(text, bytes):
            target.write_bytes(text)
        else:
            target.write_text(text)

    return setup


#: The reference store (SMALL_SPEC, complete), set by the `reference_store` fixture
#: before any case is set up.
REFERENCE: list[Path] = []


def copy_store(name: str = "s.zarr", forget: int = 0) -> Setup:
    """Copy the reference store to ``ws/name``, forgetting ``forget`` finished tasks."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        target = ws / name
        shutil.copytree(REFERENCE[0], target)
        for marker in sorted((target / store.MARKER_DIR).iterdir())[:forget]:
            marker.unlink()

    return setup


def edit_attrs(name: str, change: Callable[[dict[str, object]], None]) -> Setup:
    """Change the store's provenance attributes (an older tool or kernel made it)."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        meta = ws / name / "zarr.json"
        doc = json.loads(meta.read_text())
        change(doc["attributes"][store.ATTRS_KEY])
        meta.write_text(json.dumps(doc, indent=2))
        # As the tool that made it would have sealed it (not damage, another version).
        seal_file = ws / name / store.SEAL_FILE
        seal = json.loads(seal_file.read_text())
        seal["files"]["zarr.json"] = store._file_state(meta, digest=True)
        seal_file.write_text(json.dumps(seal))

    return setup


def _as_unversioned_store(attrs: dict[str, object]) -> None:
    """Attributes as stores written before stream versions were recorded had them."""
    del attrs["stream_version"], attrs["provenance"]
    attrs["fingerprint"] = {
        "kernel_sha256": "0" * 64,
        "numpy": "2.1.0",
        "numba": "0.60.0",
        "bit_generator": "SFC64",
    }


def hold_lock(name: str) -> Setup:
    """Hold the store's runner lock in this process until the cases are done."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        stack.enter_context(store.runner_lock(ws / name))

    return setup


def mount_tmpfs(where: Path, size: str, stack: contextlib.ExitStack) -> None:
    """Mount a tmpfs at ``where`` and unmount it when ``stack`` closes."""
    if shutil.which("mount") is None:
        raise Unavailable("no mount command on this machine")
    where.mkdir(parents=True, exist_ok=True)
    result = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(where)],
        capture_output=True,
        text=True,
    )
    if result.returncode != 0:
        raise Unavailable(
            f"cannot mount a tmpfs (needs root with CAP_SYS_ADMIN): {result.stderr.strip()}"
        )
    stack.callback(subprocess.run, ["umount", str(where)], check=False)


def remount_read_only(where: Path) -> None:
    result = subprocess.run(
        ["mount", "-o", "remount,ro", str(where)], capture_output=True, text=True
    )
    if result.returncode != 0:
        raise Unavailable(f"cannot remount a tmpfs read-only: {result.stderr.strip()}")


def read_only_dir(name: str, contents: Setup | None = None) -> Setup:
    """``ws/name`` on a read-only tmpfs, filled by ``contents`` before it turns so."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        where = ws / name
        mount_tmpfs(where, "4m", stack)
        if contents is not None:
            contents(ws, stack)
        remount_read_only(where)

    return setup


def spec_case(
    id: str,
    text: str | bytes,
    *expect: str,
    command: str = "plan",
    bug: str | None = None,
    memory_limit: int | None = None,
) -> Case:
    """A bad definition ``ws/bad.toml``; ``run`` must create no store.

    ``plan`` validates exactly as ``run`` does (both call ``load_spec``) at a tenth of the
    start-up cost, so most definitions go through ``plan`` and a sample through ``run``.
    """
    argv: tuple[str, ...] = ("plan", "{ws}/bad.toml")
    if command == "run":
        argv = ("run", "{ws}/bad.toml", "--store", "{ws}/out.zarr", "--quiet")
    return Case(
        id=id,
        argv=argv,
        expect=("{ws}/bad.toml", *expect),
        setup=(write("bad.toml", text),),
        absent="out.zarr",
        bug=bug,
        memory_limit=memory_limit,
    )


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


def store_command(
    id: str, command: str, setup: tuple[Setup, ...], *expect: str
) -> Case:
    """``sweep status|check|export`` on ``ws/target`` (missing, or not a store)."""
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
SMALL = write("small.toml", SMALL_SPEC)
RUN_SMALL = ("run", "{ws}/small.toml", "--store", "{ws}/s.zarr", "--quiet")

CASES: list[Case] = [
    # ----- syntax
    spec_case(
        "toml-unclosed-string",
        base(('name = "small"', 'name = "small')),
        "not valid TOML",
        "line 3",
        command="run",
    ),
    spec_case(
        "toml-unclosed-table-header",
        base(("[motion]", "[motion")),
        "not valid TOML",
        "line 8",
    ),
    spec_case(
        "toml-duplicate-key",
        base(("seed = 7", "seed = 7\nseed = 8")),
        "not valid TOML",
        "line 5",
        "seed",
    ),
    spec_case(
        "not-utf8",
        base().encode().replace(b'"small"', b'"caf\xe9"'),
        "not UTF-8",
    ),
    # ----- wrong types
    spec_case(
        "walkers-is-text",
        base(("walkers = 3000", 'walkers = "many"')),
        "[sweep.walkers]",
        "whole number",
        '"many"',
    ),
    spec_case(
        "walkers-is-float",
        base(("walkers = 3000", "walkers = 3e3")),
        "[sweep.walkers]",
        "whole number",
        "3000.0",
    ),
    spec_case(
        "diffusivity-is-text",
        base(("diffusivity = 0.5", 'diffusivity = "fast"')),
        "[motion.diffusivity]",
        "must be a number",
        '"fast"',
    ),
    spec_case(
        "dimension-is-float",
        base(("dimension = 1", "dimension = 1.5")),
        "[motion.dimension]",
        "whole number",
        "1.5",
    ),
    spec_case(
        "start-is-a-word",
        base(("start = [0.3]", 'start = "middle"')),
        "[motion.start]",
        '"uniform"',
        '"middle"',
    ),
    spec_case(
        "per-walker-is-text",
        base(("[record]", '[record]\nper_walker = "yes"')),
        "[record.per_walker]",
        "true or false",
        '"yes"',
    ),
    spec_case(
        "wall-kind-unknown",
        base(('x_upper = "absorbing"', 'x_upper = "sticky"')),
        "[domain.walls.x_upper]",
        "'absorbing' or 'reflecting'",
        '"sticky"',
    ),
    spec_case(
        "drift-has-wrong-length",
        base(("start = [0.3]", "start = [0.3]\ndrift = [0.0, 1.0]")),
        "[motion.drift]",
        "list of 1 number",
        "[0.0, 1.0]",
    ),
    spec_case(
        "diffusivity-is-nan",
        base(("diffusivity = 0.5", "diffusivity = nan")),
        "[motion.diffusivity]",
        "finite",
        "nan",
    ),
    # ----- unknown keys, with the suggestion
    spec_case(
        "unknown-table",
        base(("[record]", "[recrod]")),
        "unknown key 'recrod'",
        "Did you mean 'record'?",
    ),
    spec_case(
        "unknown-key-in-motion",
        base(("diffusivity = 0.5", "difusivity = 0.5")),
        "unknown key 'difusivity' in [motion]",
        "Allowed keys: dimension, diffusivity",
        "Did you mean 'diffusivity'?",
        command="run",
    ),
    spec_case(
        "unknown-key-in-time",
        base(("horizon = 3.0", 'horizon = 3.0\nmonitor = "bridge"')),
        "unknown key 'monitor' in [time]",
        "Did you mean 'monitoring'?",
    ),
    spec_case(
        "unknown-key-in-survival",
        base(("points = 11", "point = 11")),
        "unknown key 'point' in [record.survival]",
        "Did you mean 'points'?",
    ),
    spec_case(
        "unknown-grid-key",
        with_grid('[grid]\n"motion.difusivity" = [0.5, 1.0]'),
        "[grid.motion.difusivity]",
        "Did you mean 'motion.diffusivity'?",
    ),
    spec_case(
        "missing-required-key",
        base(("seed = 7\n", "")),
        "[sweep] is missing the required key 'seed'",
    ),
    spec_case(
        "missing-table",
        base(("[time]\ndt = 1e-3\nhorizon = 3.0\n", "")),
        "the table [time] is missing",
    ),
    # ----- impossible numbers
    spec_case(
        "diffusivity-negative",
        base(("diffusivity = 0.5", "diffusivity = -0.5")),
        "[motion.diffusivity]",
        "must be > 0",
        "-0.5",
    ),
    spec_case(
        "diffusivity-zero",
        base(("diffusivity = 0.5", "diffusivity = 0")),
        "[motion.diffusivity]",
        "must be > 0",
        "got 0.0",
    ),
    spec_case(
        "dt-negative",
        base(("dt = 1e-3", "dt = -1e-3")),
        "[time.dt]",
        "must be > 0",
        "-0.001",
    ),
    spec_case(
        "dt-zero",
        base(("dt = 1e-3", "dt = 0.0")),
        "[time.dt]",
        "must be > 0",
        "got 0.0",
    ),
    spec_case(
        "horizon-negative",
        base(("horizon = 3.0", "horizon = -3.0")),
        "[time.horizon]",
        "must be > 0",
        "-3.0",
    ),
    spec_case(
        "horizon-zero",
        base(("horizon = 3.0", "horizon = 0")),
        "[time.horizon]",
        "must be > 0",
    ),
    spec_case(
        "dt-equals-horizon",
        base(("dt = 1e-3", "dt = 3.0")),
        "[time.dt]",
        "smaller than time.horizon = 3.0",
        "got 3.0",
    ),
    spec_case(
        "dt-above-horizon",
        base(("dt = 1e-3", "dt = 5.0")),
        "[time.dt]",
        "smaller than time.horizon = 3.0",
        "got 5.0",
    ),
    spec_case(
        "walkers-zero",
        base(("walkers = 3000", "walkers = 0")),
        "[sweep.walkers]",
        "must be >= 1",
        "got 0",
    ),
    spec_case(
        "chunk-above-walkers",
        base(("chunk = 500", "chunk = 5000")),
        "[sweep.chunk]",
        "from 1 to 3000",
        "got 5000",
    ),
    spec_case(
        "seed-negative",
        base(("seed = 7", "seed = -7")),
        "[sweep.seed]",
        ">= 0",
        "-7",
    ),
    spec_case(
        "dimension-too-high",
        base(("dimension = 1", "dimension = 9")),
        "[motion.dimension]",
        "from 1 to 8",
        "got 9",
    ),
    # ----- geometry
    spec_case(
        "start-outside-domain",
        base(("start = [0.3]", "start = [1.5]")),
        "[motion.start]",
        "strictly inside the domain",
        "[1.5]",
    ),
    spec_case(
        "start-on-wall",
        base(("start = [0.3]", "start = [0.0]")),
        "[motion.start]",
        "strictly inside the domain",
        "[0.0]",
    ),
    spec_case(
        "start-inside-target",
        base((WALLS, WALLS + "\ntargets = [{ center = [0.35], radius = 0.1 }]")),
        "[motion.start]",
        "inside target 0",
        "[0.3]",
    ),
    spec_case(
        "target-outside-domain",
        base((WALLS, WALLS + "\ntargets = [{ center = [2.0], radius = 0.1 }]")),
        "[domain.targets.0.center]",
        "inside the domain",
        "[2.0]",
    ),
    spec_case(
        "wall-for-missing-axis",
        base((WALLS, WALLS[:-2] + ', y_lower = "reflecting" }')),
        "[domain.walls.y_lower]",
        "names axis 'y'",
        "only the axes x",
    ),
    spec_case(
        "wall-kind-missing",
        base((', x_upper = "absorbing"', "")),
        "[domain.walls]",
        "'x_upper'",
        '"absorbing" or "reflecting"',
    ),
    spec_case(
        "wall-at-infinity",
        base(
            ("upper = [1.0]", 'upper = ["inf"]'),
            (OCCUPANCY, OCCUPANCY[:-2] + ", lower = [0.0], upper = [1.0] }"),
        ),
        "[domain.walls.x_upper]",
        "is at infinity",
    ),
    spec_case(
        "uniform-start-unbounded",
        base(
            ("upper = [1.0]", 'upper = ["inf"]'),
            (', x_upper = "absorbing"', ""),
            ("start = [0.3]", 'start = "uniform"'),
        ),
        "[motion.start]",
        '"uniform" needs a bounded domain',
    ),
    spec_case(
        "snapshot-beyond-horizon",
        base(("times = [0.2, 0.05]", "times = [0.2, 5.0]")),
        "[record.occupancy.times]",
        "[0, time.horizon = 3.0]",
        "got 5.0",
    ),
    spec_case(
        "survival-stop-beyond-horizon",
        base(("stop = 1.0", "stop = 10.0")),
        "[record.survival.stop]",
        "must not exceed time.horizon = 3.0",
        "got 10.0",
    ),
    spec_case(
        "occupancy-bins-over-limit-3d",
        CUBE + "\n[record]\noccupancy = { times = [0.5], bins = 216 }\n",
        "[record.occupancy.bins]",
        "10,000,000",
        "216",
    ),
    # ----- grids
    spec_case(
        "grid-changes-dimension",
        with_grid('[grid]\n"motion.dimension" = [1, 2]'),
        "[grid.motion.dimension]",
        "cannot be swept",
        "array shapes",
    ),
    spec_case(
        "grid-changes-shape",
        with_grid('[grid]\n"domain.shape" = ["box", "ball"]'),
        "[grid.domain.shape]",
        "cannot be swept",
    ),
    spec_case(
        "grid-changes-number-of-targets",
        base((WALLS, WALLS + "\ntargets = [{ center = [0.8], radius = 0.05 }]"))
        + '\n[grid]\n"domain.targets" = [[{ center = [0.8], radius = 0.05 }], []]\n',
        "point 1",
        "has 0 targets but point 0 has 1",
        "cannot change within one store",
    ),
    spec_case(
        "grid-record-key",
        with_grid('[grid]\n"record.per_walker" = [true, false]'),
        "[grid.record.per_walker]",
        "not a sweepable key",
    ),
    spec_case(
        "grid-bad-value-at-one-point",
        with_grid('[grid]\n"motion.diffusivity" = [0.5, -1.0]'),
        "[motion.diffusivity]",
        "must be > 0",
        "(at point 1: motion.diffusivity = -1.0)",
    ),
    spec_case(
        "grid-key-not-quoted",
        with_grid("[grid]\nmotion.diffusivity = [0.5, 1.0]"),
        "[grid.motion]",
        "is a table, not a list",
    ),
    spec_case(
        "zip-lists-of-unequal-length",
        with_grid('[[zip]]\n"motion.diffusivity" = [0.5, 1.0]\n"time.dt" = [1e-3]'),
        "[zip #1]",
        "same length",
        "motion.diffusivity: 2, time.dt: 1",
    ),
    spec_case(
        "grid-of-a-billion-points",
        with_grid(
            "[grid]\n"
            + "\n".join(
                f'"{key}" = [{", ".join(str(v) for v in values)}]'
                for key, values in (
                    ("motion.diffusivity", [0.1 + i / 1000 for i in range(1000)]),
                    ("time.horizon", [2.0 + i / 1000 for i in range(1000)]),
                    ("motion.drift", [i / 1000 for i in range(1000)]),
                )
            ),
        ),
        "[grid]",
        "1,000,000,000 points",
        memory_limit=PLAN_LIMIT,
    ),
    # ----- hostile definitions: nesting, magnitudes, sizes (answered at once)
    spec_case(
        "start-nested-5000-deep",
        base(("start = [0.3]", "start = " + "[" * 5000 + "0.3" + "]" * 5000)),
        "nested too deeply",
        command="run",
    ),
    spec_case(
        "inline-table-nested-3000-deep",
        base(("[record]", "[record]\nx = " + "{ a = " * 3000 + "1" + " }" * 3000)),
        "nested too deeply",
    ),
    spec_case(
        "start-nested-40-deep",
        base(("start = [0.3]", "start = " + "[" * 40 + "0.3" + "]" * 40)),
        "nested too deeply",
    ),
    spec_case(
        "box-of-1e308",
        base(
            ("lower = [0.0]", "lower = [-1e308]"),
            ("upper = [1.0]", "upper = [1e308]"),
            ("start = [0.3]", "start = [0.0]"),
        ),
        "[domain.lower]",
        "within +-1e+100",
        "-1e+308",
    ),
    spec_case(
        "box-of-width-1e-300",
        base(
            ("upper = [1.0]", "upper = [1e-300]"), ("start = [0.3]", "start = [5e-301]")
        ),
        "[domain.upper]",
        "domain width",
        "1e-300",
    ),
    spec_case(
        "drift-of-1e308",
        base(("start = [0.3]", "start = [0.3]\ndrift = [-1e308]")),
        "[motion.drift]",
        "-1e+308",
        command="run",
    ),
    spec_case(
        "diffusivity-1e308",
        base(("diffusivity = 0.5", "diffusivity = 1e308")),
        "[motion.diffusivity]",
        "1e+308",
        command="run",
    ),
    spec_case(
        "diffusivity-5e-324",
        base(("diffusivity = 0.5", "diffusivity = 5e-324")),
        "[motion.diffusivity]",
        "5e-324",
        command="run",
    ),
    spec_case(
        "step-below-the-resolution-of-positions",
        base(
            ("lower = [0.0]", "lower = [1e20]"),
            ("upper = [1.0]", "upper = [2e20]"),
            ("start = [0.3]", "start = [1.5e20]"),
        ),
        "[time.dt]",
        "resolution of positions",
    ),
    spec_case(
        "walkers-2-to-the-63-minus-1",
        base(
            ("walkers = 3000", "walkers = 9223372036854775807"), ("chunk = 500\n", "")
        ),
        "[sweep.walkers]",
        "at most 1,000,000,000,000",
        command="run",
        memory_limit=RUN_LIMIT,
    ),
    spec_case(
        "ten-million-tasks",
        base(("walkers = 3000", "walkers = 10_000_000"), ("chunk = 500", "chunk = 1")),
        "[sweep.chunk]",
        "10,000,000 tasks",
        "at most 2,000,000",
        memory_limit=PLAN_LIMIT,
    ),
    spec_case(
        "million-grid-points",
        with_grid(
            "[grid]\n"
            + "\n".join(
                f'"{key}" = [{", ".join(str(v) for v in values)}]'
                for key, values in (
                    ("motion.diffusivity", [0.1 + i / 1000 for i in range(1000)]),
                    ("time.horizon", [2.0 + i / 1000 for i in range(1000)]),
                )
            )
        ),
        "[grid]",
        "1,000,000 points",
        "at most 100,000",
        memory_limit=PLAN_LIMIT,
    ),
    # ----- the definition file itself
    Case(
        id="spec-file-missing",
        argv=("run", "{ws}/nope.toml", "--store", "{ws}/out.zarr"),
        expect=("{ws}/nope.toml", "no such sweep definition file"),
        absent="out.zarr",
    ),
    Case(
        id="spec-is-a-directory",
        argv=("plan", "{ws}/defs"),
        expect=("{ws}/defs", "is a directory", "TOML file"),
        setup=(write("defs/notes.txt", "x"),),
        store="defs",
    ),
    Case(
        id="plan-spec-file-missing",
        argv=("plan", "{ws}/nope.toml"),
        expect=("{ws}/nope.toml", "no such sweep definition file"),
    ),
    # ----- memory
    spec_case(
        "chunk-needs-more-memory-than-the-machine",
        _edit(
            CUBE, ("walkers = 1000", "walkers = 2_000_000_000\nchunk = 2_000_000_000")
        ),
        "[sweep.chunk] = 2000000000",
        "GiB per task",
        "Lower sweep.chunk",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
    spec_case(
        "two-threads-need-more-memory-than-the-machine",
        _edit(CUBE, ("walkers = 1000", "walkers = 200_000_000\nchunk = 200_000_000")),
        "[sweep.chunk] = 200000000",
        "2 tasks at once",
        "run fewer tasks at once",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
    spec_case(
        "occupancy-snapshots-need-more-memory-than-the-machine",
        CUBE
        + "\n[record]\noccupancy = { times = ["
        + ", ".join(["0.5"] * 400)
        + "], bins = 215 }\n",
        "[record.occupancy]",
        "GiB per task",
        memory_limit=RUN_LIMIT,
        command="run",
    ),
    # ----- stores made by another definition
    other_definition(
        "store-of-other-grid",
        _edit(SMALL_SPEC, ("[0.5, 1.0]", "[0.5, 2.0]")),
        "points removed (1; their values of motion.diffusivity: [1.0])",
    ),
    other_definition(
        "store-of-other-seed-and-horizon",
        _edit(SMALL_SPEC, ("seed = 7", "seed = 8"), ("horizon = 3.0", "horizon = 4.0")),
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
            "another --store path",
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
    # ----- paths that are not stores
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
    Case(
        id="store-on-read-only-disk",
        argv=("run", "{ws}/small.toml", "--store", "{ws}/ro/s.zarr", "--quiet"),
        expect=("{ws}/ro/s.zarr", "runner lock", "read-only file system"),
        setup=(SMALL, read_only_dir("ro", copy_store("ro/s.zarr", forget=2))),
        store="ro/s.zarr",
    ),
    # ----- a second runner
    Case(
        id="store-locked-by-live-runner",
        argv=RUN_SMALL,
        expect=(
            "{ws}/s.zarr",
            "another `sweep run` is using this store",
            "pid {pid}",
            "_lock.json",
        ),
        setup=(copy_store(forget=3), SMALL, hold_lock("s.zarr")),
        store="s.zarr",
    ),
    Case(
        id="store-locked-from-another-host",
        argv=RUN_SMALL,
        expect=("{ws}/s.zarr", "pid 4242 on node-17", "_lock.json"),
        setup=(
            copy_store(forget=3),
            SMALL,
            write(
                "s.zarr/_lock.json",
                json.dumps({"pid": 4242, "host": "node-17", "started": "earlier"}),
            ),
        ),
        store="s.zarr",
    ),
    # ----- executor options
    Case(
        id="threads-zero",
        argv=(*RUN_SMALL, "--threads", "0"),
        expect=("--threads must be >= 1; got 0",),
        setup=(copy_store(forget=3), SMALL),
        store="s.zarr",
    ),
    Case(
        id="threads-and-processes",
        argv=(*RUN_SMALL, "--threads", "2", "--processes", "2"),
        expect=("argument --processes: not allowed with argument --threads",),
        setup=(SMALL,),
        absent="s.zarr",
        prefix=ARGPARSE_RUN_ERROR,
    ),
    Case(
        id="threads-not-a-number",
        argv=(*RUN_SMALL, "--threads", "two"),
        expect=("argument --threads: invalid int value: 'two'",),
        setup=(SMALL,),
        absent="s.zarr",
        prefix=ARGPARSE_RUN_ERROR,
    ),
    Case(
        id="scheduler-address-malformed",
        argv=(*RUN_SMALL, "--scheduler", "not-an-address"),
        expect=("--scheduler", "'not-an-address'"),
        setup=(SMALL,),
        absent="s.zarr",
    ),
    Case(
        id="scheduler-file-missing",
        argv=(*RUN_SMALL, "--scheduler-file", "{ws}/scheduler.json"),
        expect=("--scheduler-file", "{ws}/scheduler.json"),
        setup=(SMALL,),
        absent="s.zarr",
        timeout=FAIL_FAST,
    ),
    # ----- bench options
    Case(
        id="bench-no-repeats",
        argv=("bench", "--repeats", "0"),
        expect=("--repeats", "at least 1", "got 0"),
    ),
    Case(
        id="bench-negative-remeasure",
        argv=("bench", "--remeasure", "-1"),
        expect=("--remeasure", "at least 0", "got -1"),
    ),
    # ----- status, check, export on paths that are not stores
    store_command("status-missing-store", "status", (), "no such store"),
    store_command(
        "status-not-a-store", "status", NOT_A_STORE, "is not a brownian-sweep store"
    ),
    store_command("check-missing-store", "check", (), "no such store"),
    store_command(
        "check-not-a-store", "check", NOT_A_STORE, "is not a brownian-sweep store"
    ),
    store_command("summary-missing-store", "summary", (), "no such store"),
    store_command(
        "summary-not-a-store", "summary", NOT_A_STORE, "is not a brownian-sweep store"
    ),
    store_command("export-missing-store", "export", (), "no such store"),
    store_command(
        "export-not-a-store", "export", NOT_A_STORE, "is not a brownian-sweep store"
    ),
    # ----- export options and destinations
    Case(
        id="export-points-not-indices",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "0,x"),
        expect=("--points", "0,3,5-9", "'0,x'"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-points-out-of-range",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "0,9"),
        expect=("{ws}/s.zarr", "--points [9] out of range", "points 0 to 1"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-points-range-backwards",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--points", "1-0"),
        expect=("--points", "'1-0'"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-unknown-variable",
        argv=("export", "{ws}/s.zarr", "{ws}/out.h5", "--variables", "survival,fpt"),
        expect=("{ws}/s.zarr", "no variable 'fpt'", "the store has first_passage_time"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="out.h5",
    ),
    Case(
        id="export-into-missing-directory",
        argv=("export", "{ws}/s.zarr", "{ws}/no/out.h5"),
        expect=("{ws}/no/out.h5", "cannot write the HDF5 export", "does not exist"),
        setup=(copy_store(),),
        store="s.zarr",
        absent="no",
    ),
    Case(
        id="export-onto-the-store-itself",
        argv=("export", "{ws}/s.zarr", "{ws}/s.zarr"),
        expect=("{ws}/s.zarr", "already exists", "--replace"),
        setup=(copy_store(),),
        store="s.zarr",
    ),
    Case(
        id="export-replacing-the-store-itself",
        argv=("export", "{ws}/s.zarr", "{ws}/s.zarr", "--replace"),
        expect=("{ws}/s.zarr", "cannot write the HDF5 export"),
        setup=(copy_store(),),
        store="s.zarr",
    ),
    Case(
        id="export-into-read-only-directory",
        argv=("export", "{ws}/s.zarr", "{ws}/ro/out.h5"),
        expect=("{ws}/ro/out.h5", "read-only file system"),
        setup=(copy_store(), read_only_dir("ro")),
        store="s.zarr",
    ),
]

# --------------------------------------------------------------------------- running

#: Runs the command line under an address-space limit (argv[1] bytes), so a definition
#: that tries to allocate the machine's memory fails fast instead of swapping it away.
LIMITED = (
    "import resource, runpy, sys\n"
    "limit = int(sys.argv.pop(1))\n"
    "resource.setrlimit(resource.RLIMIT_AS, (limit, limit))\n"
    "runpy.run_module('sweep.cli', run_name='__main__', alter_sys=True)\n"
)


@dataclass
class Outcome:
    ws: Path
    returncode: int | None = None
    stderr: str = ""
    before: dict[str, bytes | None] = field(default_factory=dict)
    after: dict[str, bytes | None] = field(default_factory=dict)
    skipped: str | None = None
    setup_error: Exception | None = None


def snapshot(path: Path) -> dict[str, bytes | None]:
    """Every file's bytes (directories as None) under ``path``, the run log aside."""
    if path.is_file():
        return {".": path.read_bytes()}
    out: dict[str, bytes | None] = {}
    for item in sorted(path.rglob("*")):
        if item.name == "_runs.log":
            continue
        out[str(item.relative_to(path))] = item.read_bytes() if item.is_file() else None
    return out


def fill(text: str, ws: Path) -> str:
    return text.replace("{ws}", str(ws)).replace("{pid}", str(os.getpid()))


def cli(
    *args: str | Path,
    timeout: float = PATIENCE,
    memory_limit: int | None = None,
    cwd: Path | None = None,
) -> subprocess.CompletedProcess[str]:
    """Run ``sweep ARGS`` (under an address-space limit if given)."""
    command = sweep_command()
    if memory_limit is not None:
        command = [sys.executable, "-c", LIMITED, str(memory_limit)]
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.run(
        [*command, *map(str, args)],
        env=env,
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=timeout,
    )


def execute(case: Case, outcome: Outcome) -> Outcome:
    try:
        result = cli(
            *(fill(a, outcome.ws) for a in case.argv),
            timeout=case.timeout,
            memory_limit=case.memory_limit,
            cwd=outcome.ws,
        )
        outcome.returncode, outcome.stderr = result.returncode, result.stderr
    except subprocess.TimeoutExpired as err:
        stderr = err.stderr.decode() if isinstance(err.stderr, bytes) else err.stderr
        outcome.stderr = f"<still running after {case.timeout} s>\n{stderr or ''}"
    if case.store:
        outcome.after = snapshot(outcome.ws / case.store)
    return outcome


@pytest.fixture(scope="module")
def workspace() -> Iterator[Path]:
    """A private folder for this module's cases and mounts.

    Not pytest's tmp_path: pytest deletes all but its three newest base folders when a
    session starts, so another session started meanwhile would delete a store (or the
    files under a mount) while a case still uses it.
    """
    with tempfile.TemporaryDirectory(
        prefix="sweep-bad-input-", ignore_cleanup_errors=True
    ) as folder:
        yield Path(folder)


@pytest.fixture(scope="module")
def reference_store(workspace: Path) -> Path:
    """SMALL_SPEC run to completion once; cases copy it."""
    folder = workspace / "reference"
    folder.mkdir()
    spec = folder / "small.toml"
    spec.write_text(SMALL_SPEC)
    out = folder / "s.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    REFERENCE[:] = [out]
    return out


@pytest.fixture(scope="module")
def outcomes(
    request: pytest.FixtureRequest, workspace: Path, reference_store: Path
) -> Iterator[dict[str, concurrent.futures.Future[Outcome]]]:
    """Set up every selected case, then run them all at once on a small pool."""
    params = [getattr(item, "callspec", None) for item in request.session.items]
    selected = [
        p.params["case"]
        for p in params
        if p is not None and isinstance(p.params.get("case"), Case)
    ]
    futures: dict[str, concurrent.futures.Future[Outcome]] = {}
    # Mounts and locks come down last, after the pool has waited for every command.
    with contextlib.ExitStack() as cleanup:
        workers = (os.cpu_count() or 1) + 1
        with concurrent.futures.ThreadPoolExecutor(max_workers=workers) as pool:
            for case in selected:
                outcome = Outcome(ws=workspace / case.id)
                outcome.ws.mkdir()
                try:
                    for step in case.setup:
                        step(outcome.ws, cleanup)
                except Exception as err:  # reported by the case's own test
                    if isinstance(err, Unavailable):
                        outcome.skipped = str(err)
                    else:
                        outcome.setup_error = err
                    ready: concurrent.futures.Future[Outcome] = (
                        concurrent.futures.Future()
                    )
                    ready.set_result(outcome)
                    futures[case.id] = ready
                    continue
                if case.store:
                    outcome.before = snapshot(outcome.ws / case.store)
                futures[case.id] = pool.submit(execute, case, outcome)
            yield futures


def _params() -> list[object]:
    ids = [c.id for c in CASES]
    assert len(ids) == len(set(ids)), "case ids must be unique"
    return [
        pytest.param(
            c,
            id=c.id,
            # Only a failed assertion is the known bug; any other error is a new one.
            marks=[pytest.mark.xfail(strict=True, raises=AssertionError, reason=c.bug)]
            if c.bug
            else [],
        )
        for c in CASES
    ]


def assert_one_error(
    returncode: int | None, stderr: str, fragments: list[str], prefix: str = ERROR
) -> None:
    assert returncode == 2, f"exit code {returncode}; stderr:\n{stderr}"
    assert "Traceback" not in stderr, stderr
    heads = [line for line in stderr.splitlines() if line.startswith(prefix)]
    assert len(heads) == 1, f"expected one {prefix!r} line; stderr:\n{stderr}"
    for fragment in fragments:
        assert fragment in stderr, f"{fragment!r} not in stderr:\n{stderr}"


@pytest.mark.parametrize("case", _params())
def test_bad_input_gets_one_clear_message(
    case: Case, outcomes: dict[str, concurrent.futures.Future[Outcome]]
) -> None:
    outcome = outcomes[case.id].result()
    if outcome.skipped:
        pytest.skip(outcome.skipped)
    if outcome.setup_error is not None:
        raise outcome.setup_error
    ws = outcome.ws
    assert_one_error(
        outcome.returncode,
        outcome.stderr,
        [fill(f, ws) for f in case.expect],
        case.prefix,
    )
    if case.store:
        changed = sorted(
            k
            for k in set(outcome.before) | set(outcome.after)
            if outcome.before.get(k, b"<absent>") != outcome.after.get(k, b"<absent>")
        )
        assert not changed, f"{case.store}: files changed: {changed}"
    if case.absent:
        assert not (ws / case.absent).exists(), f"{case.absent} was created"


# --------------------------------------------------------------------------- full disk


@pytest.fixture
def cleanup() -> Iterator[contextlib.ExitStack]:
    with contextlib.ExitStack() as stack:
        yield stack


def test_full_disk_stops_cleanly_keeps_finished_tasks_and_resumes(
    workspace: Path, reference_store: Path, cleanup: contextlib.ExitStack
) -> None:
    """A 200 KiB disk holds the store's metadata and a few tasks, then fills up."""
    folder = workspace / "full-disk"
    folder.mkdir()
    small_spec = folder / "small.toml"
    small_spec.write_text(SMALL_SPEC)
    try:
        mount_tmpfs(folder / "disk", "200k", cleanup)
    except Unavailable as why:
        pytest.skip(str(why))
    out = folder / "disk" / "s.zarr"
    args = ("run", small_spec, "--store", out, "--threads", "1", "--quiet")
    result = cli(*args)
    assert_one_error(
        result.returncode, result.stderr, [str(out), "the disk is full", "rerun"]
    )
    done = store.done_tasks(out)
    assert 0 < len(done) < 12, f"{len(done)} tasks fit: resize the disk of this test"
    assert not (out / store.LOCK_FILE).exists()
    # Every finished task reads back exactly as in an uninterrupted run.
    ref = zarr.open_group(str(reference_store), mode="r")
    got = zarr.open_group(str(out), mode="r")
    for p, c in sorted(done):
        walkers = slice(500 * c, 500 * (c + 1))
        for name in ("first_passage_time", "absorbing_wall", "exit_position"):
            np.testing.assert_array_equal(
                got[name][p, walkers], ref[name][p, walkers], strict=True
            )
        for name in ("survival_count", "occupancy_count"):
            np.testing.assert_array_equal(got[name][p, c], ref[name][p, c], strict=True)
    status = cli("status", out)
    assert status.returncode == 0, status.stderr
    assert f"{len(done)}/12 tasks done" in status.stdout
    # Free space: the same command resumes and ends bit-identical to the reference.
    subprocess.run(["mount", "-o", "remount,size=8m", str(out.parent)], check=True)
    resumed = cli(*args)
    assert resumed.returncode == 0, resumed.stderr
    assert_stores_identical(reference_store, out)


def test_full_disk_at_the_lock_leaves_no_lock_and_resumes(
    workspace: Path, reference_store: Path, cleanup: contextlib.ExitStack
) -> None:
    """Resuming on a disk that is already full: the disk-full message, no lock left
    behind (an empty ``_lock.json`` used to block every later run), then a resume."""
    folder = workspace / "full-disk-lock"
    folder.mkdir()
    small_spec = folder / "small.toml"
    small_spec.write_text(SMALL_SPEC)
    try:
        mount_tmpfs(folder / "disk", "8m", cleanup)
    except Unavailable as why:
        pytest.skip(str(why))
    out = folder / "disk" / "s.zarr"
    shutil.copytree(reference_store, out)
    for marker in sorted((out / store.MARKER_DIR).iterdir())[:3]:
        marker.unlink()
    filler = folder / "disk" / "filler"
    with contextlib.suppress(OSError), filler.open("wb") as f:
        while True:
            f.write(b"\0" * 4096)
            f.flush()
    args = ("run", small_spec, "--store", out, "--threads", "1", "--quiet")
    result = cli(*args)
    assert_one_error(result.returncode, result.stderr, [str(out), "the disk is full"])
    assert not (out / store.LOCK_FILE).exists()
    assert not [p for p in out.iterdir() if p.name.startswith(store.OWN_TMP)]
    filler.unlink()
    resumed = cli(*args)
    assert resumed.returncode == 0, resumed.stderr
    assert_stores_identical(reference_store, out)
