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
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical, run_cli
from tests.spec.edit import edit_text

#: For a missing scheduler file: the message must come well before the 60 s the Dask
#: client would wait for a scheduler (the command takes about 2 s on an idle machine;
#: a loaded 2-core CI machine takes several times that).
FAIL_FAST = 25.0
ERROR = "sweep: error:"
#: The message argparse prints for bad options of `sweep run`.
ARGPARSE_RUN_ERROR = "sweep run: error:"
#: ... and for `sweep bench`, whose range checks are argparse types.
ARGPARSE_BENCH_ERROR = "sweep bench: error:"
ARGPARSE_EXPORT_ERROR = "sweep export: error:"
#: Address-space limit for cases that could otherwise take the machine's memory: enough
#: for `sweep run` (numba, dask).
RUN_LIMIT = 4 << 30

# --------------------------------------------------------------------------- definitions


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
    # ----- memory
    spec_case(
        "chunk-needs-more-memory-than-the-machine",
        edit_text(
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
        edit_text(
            CUBE, ("walkers = 1000", "walkers = 200_000_000\nchunk = 200_000_000")
        ),
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
        prefix=ARGPARSE_BENCH_ERROR,
    ),
    Case(
        id="bench-negative-remeasure",
        argv=("bench", "--remeasure", "-1"),
        expect=("--remeasure", "at least 0", "got -1"),
        prefix=ARGPARSE_BENCH_ERROR,
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
        prefix=ARGPARSE_EXPORT_ERROR,
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
        prefix=ARGPARSE_EXPORT_ERROR,
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


def execute(case: Case, outcome: Outcome) -> Outcome:
    try:
        result = run_cli(
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
    result = run_cli(*args)
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
    status = run_cli("status", out)
    assert status.returncode == 0, status.stderr
    assert f"{len(done)}/12 tasks done" in status.stdout
    # Free space: the same command resumes and ends bit-identical to the reference.
    subprocess.run(["mount", "-o", "remount,size=8m", str(out.parent)], check=True)
    resumed = run_cli(*args)
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
    result = run_cli(*args)
    assert_one_error(result.returncode, result.stderr, [str(out), "the disk is full"])
    assert not (out / store.LOCK_FILE).exists()
    assert not [p for p in out.iterdir() if p.name.startswith(store.OWN_TMP)]
    filler.unlink()
    resumed = run_cli(*args)
    assert resumed.returncode == 0, resumed.stderr
    assert_stores_identical(reference_store, out)
