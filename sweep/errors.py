"""The one place where brownian-sweep's exceptions and warnings are defined.

Every message follows one template: *where* (file and key, store path or task), *what*
is wrong, ``got <value>``, what is *expected*, and how to fix it when that is not
obvious. The command line turns a :class:`SweepError` into that one message on stderr
and exit code 2; a failed analytic check is exit code 1.

Each class also subclasses the builtin a Python caller would catch for that kind of
failure, so library users need not know this module:

* ``ValueError``: the input is wrong: a definition or parameter (:class:`SpecError`,
  :class:`OptionError`), a plan that cannot fit (:class:`PlanError`), two stores
  that are not one study (:class:`CompareError`);
* ``OSError``: the store or disk is: cannot be created, opened or written, made by
  another definition, locked by another runner, damaged or replaced
  (:class:`StoreError` and its subclasses);
* ``TypeError``: a library function got an object it cannot use
  (:class:`UsageError`);
* ``RuntimeError``: tasks failed while simulating or writing (:class:`TaskError`).

Messages speak the library's terms (``threads must be >= 1``). Where a message names
a caller's option, it is written as a template with the option's library name in
braces and ``options=`` naming them (``SweepError("{threads} must be >= 1",
options=("threads",))``); :meth:`SweepError.worded` re-words it with other names:
the command line passes its flag names (``--threads``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence


class SweepError(Exception):
    """Base class of every error the tool reports to its user.

    Parameters
    ----------
    message : str
        The message; with ``options``, a template in which ``{name}`` stands for
        the option ``name`` (other braces doubled).
    options : sequence of str
        Library names of the options the message names.
    """

    #: Exit code the command line uses for this error.
    exit_code: int = 2

    def __init__(self, *args: object, options: Sequence[str] = ()) -> None:
        self.options = tuple(options)
        self.template = str(args[0]) if args else ""
        if self.options:
            args = (self.worded({}), *args[1:])
        super().__init__(*args)

    def worded(self, names: Mapping[str, str]) -> str:
        """The message with each option named as ``names`` says (others keep their
        library name), e.g. ``{"threads": "--threads"}`` for the command line."""
        if not self.options:
            return str(self)
        return self.template.format_map({o: names.get(o, o) for o in self.options})


class SpecError(SweepError, ValueError):
    """A sweep definition file is malformed or asks for something impossible."""


def escape(text: str) -> str:
    """``text`` as literal text of a message template (braces doubled)."""
    return text.replace("{", "{{").replace("}", "}}")


class OptionError(SweepError, ValueError):
    """A run option (threads, processes, scheduler, ...) is impossible or
    contradicts another."""


class PlanError(SweepError, ValueError):
    """A valid definition cannot be turned into tasks (sizes, memory, shapes)."""


class StoreError(SweepError, OSError):
    """A store cannot be created, opened or written as requested."""


class StoreMismatchError(StoreError):
    """A store was created by a different sweep definition or with other random
    streams."""


class StoreLockedError(StoreError):
    """Another runner holds the lock of a store."""


class CompareError(SweepError, ValueError):
    """Two stores cannot be compared point by point (not one study)."""


class StoreDamagedError(StoreError):
    """A file of a store no longer holds what was written there (checksums, counts)."""


class StaleStoreError(StoreError):
    """A task's store was deleted or replaced after the task was planned."""


class UsageError(SweepError, TypeError):
    """A library function was given something it cannot use (e.g. a DataArray)."""


class TaskError(SweepError, RuntimeError):
    """A task raised while simulating or writing; names the point and chunk."""

    exit_code = 1


class SweepWarning(UserWarning):
    """Something the user should know that does not stop the run."""
