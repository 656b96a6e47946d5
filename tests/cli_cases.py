"""Table-driven bad-input cases of the command line, shared by the test files that
list them (``tests/spec/test_load_cli.py``, ``tests/store/test_*.py``,
``tests/execute/test_options.py``, ``tests/cli/test_bench.py``, ``tests/test_memory.py``,
``tests/test_export.py``): the one case runner, through ``tests.conftest.run_cli``.

A :class:`Case` is one bad command line: what it must say (ONE ``sweep: error:`` line
naming the file or store, the key, the value, what is allowed), exit code 2, no
traceback, and every file of an existing store byte-identical afterwards (the run log
``_runs.log`` aside). A module lists its cases in ``CASES`` and defines::

    test_something = case_test(CASES, "What the cases have in common.")

(the fixtures here, ``workspace``, ``reference_store`` and ``outcomes``, reach every
test module: ``tests/conftest.py`` loads this module as a pytest plugin). A bad
definition file is a :func:`spec_case`. The reference store (``reference_store``, a
copy of the session's SMALL_SPEC store) is made only when a case copies it.

The cases of a module are independent, so they are set up and started together
on a small thread pool (the imports of ``sweep run`` cost about two CPU-seconds each) and
every test waits for its own result.

Root ignores permission bits (``chmod 0o555`` does not stop it), so read-only
directories are read-only tmpfs mounts (EROFS stops root too) and a full disk is a small
tmpfs; these cases skip, with the reason, where mounting is not allowed.
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

import pytest

from sweep import store
from tests.conftest import PATIENCE, SMALL_SPEC, run_cli

ERROR = "sweep: error:"
#: Address-space limits for cases that could otherwise take the machine's memory: enough
#: for `sweep run` (numba, dask) or for `sweep plan` (numpy only).
RUN_LIMIT = 4 << 30
PLAN_LIMIT = 512 << 20


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


# --------------------------------------------------------------------------- setups


def write(name: str, text: str | bytes | dict[str, str]) -> Setup:
    """Write ``ws/name`` (text, raw bytes, or a directory of these files' texts)."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        target = ws / name
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(text, dict):
            target.mkdir()
            for file, content in text.items():
                (target / file).write_text(content)
        elif isinstance(text, bytes):
            target.write_bytes(text)
        else:
            target.write_text(text)

    return setup


#: SMALL_SPEC written into the case's folder, and `sweep run` on it into ``ws/s.zarr``.
SMALL = write("small.toml", SMALL_SPEC)
RUN_SMALL = ("run", "{ws}/small.toml", "--store", "{ws}/s.zarr", "--quiet")

#: How a setup gets the reference store (SMALL_SPEC, complete): set by the `outcomes`
#: fixture before any case is set up, and made by it only when a case asks.
REFERENCE: list[Callable[[], Path]] = []


def copy_store(name: str = "s.zarr", forget: int = 0) -> Setup:
    """Copy the reference store to ``ws/name``, forgetting ``forget`` finished tasks."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        target = ws / name
        shutil.copytree(REFERENCE[0](), target)
        for marker in sorted((target / store.MARKER_DIR).iterdir())[:forget]:
            marker.unlink()

    return setup


def reseal(path: Path) -> None:
    """Renew the seal's entry of the root ``zarr.json`` after an edit, as the tool
    that made the store would have sealed it (another version, not damage)."""
    seal_file = path / store.SEAL_FILE
    seal = json.loads(seal_file.read_text())
    seal["files"]["zarr.json"] = store.file_state(path / "zarr.json")
    seal_file.write_text(json.dumps(seal))


def edit_attrs(name: str, change: Callable[[dict[str, object]], None]) -> Setup:
    """Change the store's provenance attributes (an older tool or kernel made it)."""

    def setup(ws: Path, stack: contextlib.ExitStack) -> None:
        meta = ws / name / "zarr.json"
        doc = json.loads(meta.read_text())
        change(doc["attributes"][store.ATTRS_KEY])
        meta.write_text(json.dumps(doc, indent=2))
        reseal(ws / name)

    return setup


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
    text: str | bytes | dict[str, str] | None,
    *expect: str,
    command: str = "plan",
    path: str = "bad.toml",
    memory_limit: int | None = None,
    bug: str | None = None,
) -> Case:
    """A bad definition at ``ws/path``: its text or bytes, ``None`` for a missing file,
    or a dict of file names to texts for a directory in its place.

    The message must name that path; ``run`` must create no store (``ws/out.zarr``),
    and a directory in the definition's place is left as it was. ``plan`` validates
    exactly as ``run`` does (both call ``load_spec``) at a tenth of the start-up cost,
    so most definitions go through ``plan`` and a sample through ``run``.
    """
    where = "{ws}/" + path
    argv: tuple[str, ...] = ("plan", where)
    if command == "run":
        argv = ("run", where, "--store", "{ws}/out.zarr", "--quiet")
    return Case(
        id=id,
        argv=argv,
        expect=(where, *expect),
        setup=() if text is None else (write(path, text),),
        store=path if isinstance(text, dict) else None,
        absent="out.zarr",
        memory_limit=memory_limit,
        bug=bug,
    )


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


# --------------------------------------------------------------------------- fixtures


@pytest.fixture(scope="module")
def workspace() -> Iterator[Path]:
    """A private folder for a module's cases and mounts.

    Not pytest's tmp_path: pytest deletes all but its three newest base folders when a
    session starts, so another session started meanwhile would delete a store (or the
    files under a mount) while a case still uses it.
    """
    with tempfile.TemporaryDirectory(
        prefix="sweep-bad-input-", ignore_cleanup_errors=True
    ) as folder:
        yield Path(folder)


@pytest.fixture(scope="module")
def reference_store(workspace: Path, small_store: Path) -> Path:
    """The session's complete SMALL_SPEC store, copied into the workspace (cases copy
    it in turn, and a concurrent pytest session cannot delete this copy)."""
    out = workspace / "reference" / "s.zarr"
    shutil.copytree(small_store, out)
    return out


@pytest.fixture(scope="module")
def outcomes(
    request: pytest.FixtureRequest, workspace: Path
) -> Iterator[dict[str, concurrent.futures.Future[Outcome]]]:
    """Set up every selected case of the requesting module, then run them all at once
    on a small pool (the reference store is made at the first case that copies it)."""
    REFERENCE[:] = [lambda: request.getfixturevalue("reference_store")]
    selected = []
    for item in request.session.items:
        callspec = getattr(item, "callspec", None)
        if (
            getattr(item, "module", None) is request.module
            and callspec is not None
            and isinstance(callspec.params.get("case"), Case)
        ):
            selected.append(callspec.params["case"])
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


# --------------------------------------------------------------------------- checks


def params(cases: list[Case]) -> list[object]:
    """The cases as pytest parameters (a case with a known bug: strict xfail)."""
    ids = [c.id for c in cases]
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
        for c in cases
    ]


def case_test(cases: list[Case], doc: str) -> Callable[..., None]:
    """The test of a module's ``cases``: bind it to a ``test_*`` name there."""

    @pytest.mark.parametrize("case", params(cases))
    def test(case: Case, request: pytest.FixtureRequest) -> None:
        check(case, request)

    test.__doc__ = doc
    return test


def assert_one_error(
    returncode: int | None, stderr: str, fragments: list[str], prefix: str = ERROR
) -> None:
    assert returncode == 2, f"exit code {returncode}; stderr:\n{stderr}"
    assert "Traceback" not in stderr, stderr
    heads = [line for line in stderr.splitlines() if line.startswith(prefix)]
    assert len(heads) == 1, f"expected one {prefix!r} line; stderr:\n{stderr}"
    for fragment in fragments:
        assert fragment in stderr, f"{fragment!r} not in stderr:\n{stderr}"


def check(case: Case, request: pytest.FixtureRequest) -> None:
    """The case's command gave one clear message and left every file as it was
    (``request``: the test's)."""
    outcomes: dict[str, concurrent.futures.Future[Outcome]] = request.getfixturevalue(
        "outcomes"
    )
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
