"""Bad input at the command line: one clear message, exit code 2, results untouched.

Project rule: malformed or impossible input gets ONE message on stderr (one line starting
``sweep: error:``; the message may continue on further lines) that names the file or
store, the key, the value and what is allowed; exit code 2; no Python traceback; and every
file of an existing store is byte-identical afterwards (the run log ``_runs.log`` aside).

Every case runs the real command line in a subprocess (the case machinery is
:mod:`tests.cli_cases`). Cases about stores (another definition, paths that are not
stores, a second runner, a full disk) are in ``tests/store/``, those of ``sweep export``
in ``tests/test_export.py``, those of definition files in ``tests/spec/``.
"""

from __future__ import annotations

from tests.cli_cases import (
    Case,
    case_test,
    copy_store,
    outcomes,  # noqa: F401  (a fixture)
    reference_store,  # noqa: F401  (a fixture)
    workspace,  # noqa: F401  (a fixture)
    write,
)
from tests.conftest import SMALL_SPEC
from tests.spec.edit import edit_text

#: For a missing scheduler file: the message must come well before the 60 s the Dask
#: client would wait for a scheduler (the command takes about 2 s on an idle machine;
#: a loaded 2-core CI machine takes several times that).
FAIL_FAST = 25.0
#: The message argparse prints for bad options of `sweep run`.
ARGPARSE_RUN_ERROR = "sweep run: error:"
#: ... and for `sweep bench`, whose range checks are argparse types.
ARGPARSE_BENCH_ERROR = "sweep bench: error:"
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
]

test_bad_input_gets_one_clear_message = case_test(
    CASES, "Bad input gets one clear message, exit code 2, results untouched."
)
