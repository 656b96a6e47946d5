"""sweep.execute's options at the command line (``sweep run --threads``,
``--processes``, ``--scheduler``, ``--scheduler-file``): a bad one gets one clear
message, exit code 2, and leaves the store as it was (the case machinery:
:mod:`tests.cli_cases`)."""

from __future__ import annotations

from tests.cli_cases import (
    RUN_SMALL,
    SMALL,
    Case,
    case_test,
    copy_store,
)

#: For a missing scheduler file: the message must come well before the 60 s the Dask
#: client would wait for a scheduler (the command takes about 2 s on an idle machine;
#: a loaded 2-core CI machine takes several times that).
FAIL_FAST = 25.0
#: The message argparse prints for bad options of `sweep run`.
ARGPARSE_RUN_ERROR = "sweep run: error:"


CASES: list[Case] = [
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
]

test_bad_run_option_gets_one_clear_message = case_test(
    CASES, "A bad executor option gets one clear message, exit code 2, store untouched."
)
