"""sweep.errors: every error is also the builtin a caller would catch, is exported
from ``sweep``, and words options in library terms (the CLI re-words them)."""

from __future__ import annotations

import inspect

import pytest

import sweep
from sweep import errors
from sweep.cli import FLAGS

#: The builtin each error class must also be (errors.py's docstring says why).
BUILTIN = {
    errors.SpecError: ValueError,
    errors.OptionError: ValueError,
    errors.PlanError: ValueError,
    errors.CompareError: ValueError,
    errors.StoreError: OSError,
    errors.StoreMismatchError: OSError,
    errors.StoreLockedError: OSError,
    errors.StoreDamagedError: OSError,
    errors.StaleStoreError: OSError,
    errors.UsageError: TypeError,
    errors.TaskError: RuntimeError,
}


def _classes() -> list[type]:
    return [
        c
        for _, c in inspect.getmembers(errors, inspect.isclass)
        if c.__module__ == errors.__name__
    ]


def test_every_error_and_warning_class_is_exported_from_sweep() -> None:
    for cls in _classes():
        assert cls.__name__ in sweep.__all__, cls
        assert getattr(sweep, cls.__name__) is cls


def test_every_error_subclasses_its_builtin() -> None:
    for cls in _classes():
        if cls in (errors.SweepError, errors.SweepWarning):
            continue
        assert cls in BUILTIN, f"{cls.__name__}: say which builtin it is"
        assert issubclass(cls, BUILTIN[cls]) and issubclass(cls, errors.SweepError)


def test_option_names_are_library_names_until_worded_for_the_command_line() -> None:
    err = errors.OptionError(
        "{scheduler_file} {{braces}} kept; {threads} too.",
        options=("scheduler_file", "threads"),
    )
    assert str(err) == "scheduler_file {braces} kept; threads too."
    assert err.worded(FLAGS) == "--scheduler-file {braces} kept; --threads too."
    plain = errors.SpecError("a {literal} message")
    assert plain.worded(FLAGS) == str(plain) == "a {literal} message"


@pytest.mark.parametrize(
    ("options", "library", "flags"),
    [
        ({"threads": 0}, "threads must be >= 1; got 0.", "--threads must be >= 1"),
        ({"processes": -2}, "processes must be >= 1; got -2.", "--processes must"),
        (
            {"threads": 1, "scheduler_file": "x.json"},
            "choose one executor; got threads, scheduler_file.",
            "got --threads, --scheduler-file.",
        ),
        (
            {"scheduler_file": "/nonexistent/s.json"},
            "scheduler_file /nonexistent/s.json: no such file",
            "--scheduler-file /nonexistent/s.json: no such file",
        ),
        ({"scheduler": "not-an-address"}, "scheduler: ", "--scheduler: "),
    ],
)
def test_run_options_speak_library_terms(
    options: dict[str, object], library: str, flags: str
) -> None:
    with pytest.raises(ValueError) as caught:
        sweep.RunOptions(**options)  # type: ignore[arg-type]
    err = caught.value
    assert isinstance(err, errors.OptionError)
    assert library in str(err) and flags not in str(err), str(err)
    assert flags in err.worded(FLAGS)
