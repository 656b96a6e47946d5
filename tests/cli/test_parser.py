"""The `sweep` parser: version, help of every positional, range checks as argparse
types, and the flag of every library option an error may name.
"""

from __future__ import annotations

import pytest

from sweep.cli import FLAGS, build_parser
from tests.conftest import run_cli


def test_version() -> None:
    result = run_cli("--version")
    assert result.returncode == 0 and result.stdout.startswith("sweep "), result


def test_every_positional_has_help_and_definitions_are_called_so() -> None:
    parser = build_parser()
    commands = next(a for a in parser._actions if a.dest == "command")
    for name, sub in commands.choices.items():  # type: ignore[union-attr]
        for action in sub._actions:
            if not action.option_strings:
                assert action.help, (name, action.dest)
                assert action.dest != "spec", name  # the README says "definition"


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (
            ["bench", "--repeats", "0"],
            "argument --repeats: expected a whole number of at least 1; got 0.",
        ),
        (
            ["bench", "--walkers", "0"],
            "argument --walkers: expected a whole number of at least 1; got 0.",
        ),
        (
            ["bench", "--remeasure", "-1"],
            "argument --remeasure: expected a whole number of at least 0; got -1.",
        ),
        (["bench", "--repeats", "two"], "argument --repeats: invalid int value: 'two'"),
        (
            ["export", "s", "o.h5", "--points", "3-1"],
            "the range '3-1' runs backwards; write it as 1-3.",
        ),
        (
            ["export", "s", "o.h5", "--points", "a"],
            "expected indices like 0,3,5-9; got 'a'.",
        ),
    ],
)
def test_range_checks_are_argparse_types(
    argv: list[str], message: str, capsys: pytest.CaptureFixture[str]
) -> None:
    with pytest.raises(SystemExit) as stop:
        build_parser().parse_args(argv)
    assert stop.value.code == 2
    assert message in capsys.readouterr().err


def test_points_parse_into_indices_and_every_command_has_a_function() -> None:
    args = build_parser().parse_args(["export", "s", "o.h5", "--points", "0,3,5-7"])
    assert args.points == [0, 3, 5, 6, 7]
    commands = next(a for a in build_parser()._actions if a.dest == "command")
    for name, sub in commands.choices.items():  # type: ignore[union-attr]
        assert callable(sub.get_default("func")), name


def test_every_run_option_has_a_flag() -> None:
    """Each field of RunOptions an error may name is worded as a `sweep run` flag."""
    import dataclasses

    from sweep.execute import RunOptions

    run = next(a for a in build_parser()._actions if a.dest == "command").choices["run"]  # type: ignore[union-attr,index]
    flags = {s for a in run._actions for s in a.option_strings}
    for field in dataclasses.fields(RunOptions):
        assert FLAGS[field.name] in flags, field.name
