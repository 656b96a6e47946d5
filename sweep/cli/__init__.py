"""The ``sweep`` command line: parses arguments and calls the public API, nothing more.

Exit codes: 0 success; 1 a check failed (or tasks failed); 2 bad input, with one message
naming the file, the key, the value and what is allowed; 130 interrupted; 141 the reader
of the output closed it early.

Modules: :mod:`~sweep.cli.parser` (commands, options, range checks),
:mod:`~sweep.cli.commands` (run and the store commands), :mod:`~sweep.cli.plan`,
:mod:`~sweep.cli.bench`. Library errors name options by their library names; the
command line words them as flags (:data:`FLAGS`).
"""

from __future__ import annotations

import logging
import os
import sys
import warnings
from collections.abc import Sequence
from typing import Any

from sweep.cli.parser import build_parser
from sweep.errors import SweepError, SweepWarning

#: The flag of each library option an error message may name (see
#: :meth:`sweep.errors.SweepError.worded`).
FLAGS = {
    "threads": "--threads",
    "processes": "--processes",
    "scheduler": "--scheduler",
    "scheduler_file": "--scheduler-file",
    "progress": "--quiet",
}


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``sweep`` console script."""
    args = build_parser().parse_args(argv)
    logging.basicConfig(
        level=logging.WARNING, format="sweep: %(message)s", stream=sys.stderr
    )
    warnings.showwarning = _show_warning
    try:
        code = args.func(args)
        sys.stdout.flush()  # a closed pipe shows here, not at the interpreter's exit
        return code
    except SweepError as err:
        if args.traceback:
            raise
        print(f"sweep: error: {err.worded(FLAGS)}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("\nsweep: interrupted.", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader left early (`sweep summary STORE | head`): the rest of the output
        # is unwanted. stdout goes to /dev/null so the interpreter's last flush does
        # not fail again; 141 is the shell's code for a writer stopped by SIGPIPE.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141


_python_show_warning = warnings.showwarning


def _show_warning(message: Warning | str, category: type[Warning], *rest: Any) -> None:
    """The tool's own warnings as one line ``sweep: warning: ...``, others as Python's."""
    if issubclass(category, SweepWarning):
        print(f"sweep: warning: {message}", file=sys.stderr)
    else:
        _python_show_warning(message, category, *rest)
