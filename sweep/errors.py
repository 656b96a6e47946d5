"""The one place where brownian-sweep's exceptions and warnings are defined.

Every message follows one template: *where* (file and key, store path or task), *what*
is wrong, ``got <value>``, what is *expected*, and how to fix it when that is not
obvious. The command line turns a :class:`SweepError` into that one message on stderr
and exit code 2; a failed analytic check is exit code 1.
"""

from __future__ import annotations


class SweepError(Exception):
    """Base class of every error the tool reports to its user."""

    #: Exit code the command line uses for this error.
    exit_code: int = 2


class SpecError(SweepError, ValueError):
    """A sweep definition file is malformed or asks for something impossible."""


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
