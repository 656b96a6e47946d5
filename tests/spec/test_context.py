"""Tests of ``sweep.spec.context``: messages name the file, the key, the grid point, and show
values as TOML; unknown keys get the nearest valid one; missing keys and tables are named.
"""

from __future__ import annotations

import math
import re
import tomllib
from typing import Any

import pytest

from sweep.errors import SpecError
from tests.spec.bases import DISK, LINE, PLANE, SOURCE
from tests.spec.edit import DELETE, assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "motion-list",
        spec(LINE, motion=[1, 2]),
        "[motion] must be a table; got [1, 2].",
    ),
    bad(
        "sweep-array-of-tables",
        spec(LINE, sweep=[{"seed": 1}]),
        "[sweep] must be a table; got [{ seed = 1 }].",
    ),
    bad("record-number", spec(LINE, record=1), "[record] must be a table; got 1."),
    bad(
        "walls-list",
        spec(LINE, domain__walls=["absorbing", "absorbing"]),
        '[domain.walls] must be a table; got ["absorbing", "absorbing"].',
    ),
    bad(
        "unknown-sweep-key",
        spec(LINE, sweep__seeds=1),
        "unknown key 'seeds' in [sweep]",
        "Did you mean 'seed'?",
    ),
    bad(
        "unknown-motion-key",
        spec(LINE, motion__difusivity=0.5),
        "unknown key 'difusivity' in [motion]",
        "Did you mean 'diffusivity'?",
    ),
    bad(
        "unknown-time-key",
        spec(LINE, time__horizn=4.0),
        "unknown key 'horizn' in [time]",
        "Did you mean 'horizon'?",
    ),
    bad(
        "unknown-domain-key",
        spec(LINE, domain__uper=[1.0]),
        "unknown key 'uper' in [domain]",
        "Did you mean 'upper'?",
    ),
    bad(
        "unknown-wall-name",
        spec(LINE, domain__walls={"x_lo": "absorbing", "x_upper": "absorbing"}),
        "unknown key 'x_lo' in [domain.walls]",
        "Did you mean 'x_lower'?",
    ),
    bad(
        "unknown-record-key",
        spec(LINE, record={"survivl": {}}),
        "unknown key 'survivl' in [record]",
        "Did you mean 'survival'?",
    ),
    bad(
        "unknown-survival-key",
        spec(LINE, record={"survival": {"point": 11}}),
        "unknown key 'point' in [record.survival]",
        "Did you mean 'points'?",
    ),
    bad(
        "unknown-occupancy-key",
        spec(LINE, record={"occupancy": {"times": [1.0], "bin": 8}}),
        "unknown key 'bin' in [record.occupancy]",
        "Did you mean 'bins'?",
    ),
    bad(
        "unknown-target-key",
        spec(PLANE, domain__targets=[{"centre": [0.75, 0.5], "radius": 0.1}]),
        "unknown key 'centre' in [domain.targets.0]",
        "Did you mean 'center'?",
    ),
    bad(
        "unknown-key-no-suggestion",
        spec(LINE, motion__colour="red"),
        "unknown key 'colour' in [motion]. Allowed keys: dimension, diffusivity, "
        "drift, start.",
    ),
    bad(
        "missing-seed",
        spec(LINE, sweep__seed=DELETE),
        "[sweep] is missing the required key 'seed'.",
    ),
    bad(
        "missing-walkers",
        spec(LINE, sweep__walkers=DELETE),
        "[sweep] is missing the required key 'walkers'.",
    ),
    bad(
        "missing-dimension",
        spec(LINE, motion__dimension=DELETE),
        "[motion] is missing the required key 'dimension'.",
    ),
    bad(
        "missing-diffusivity",
        spec(LINE, motion__diffusivity=DELETE),
        "[motion] is missing the required key 'diffusivity'.",
    ),
    bad(
        "missing-start",
        spec(LINE, motion__start=DELETE),
        "[motion] is missing the required key 'start'.",
    ),
    bad(
        "missing-dt",
        spec(LINE, time__dt=DELETE),
        "[time] is missing the required key 'dt'.",
    ),
    bad(
        "missing-horizon",
        spec(LINE, time__horizon=DELETE),
        "[time] is missing the required key 'horizon'.",
    ),
    bad(
        "missing-lower",
        spec(LINE, domain__lower=DELETE),
        "[domain] is missing the required key 'lower'.",
    ),
    bad(
        "missing-ball-radius",
        spec(DISK, domain__radius=DELETE),
        "[domain] is missing the required key 'radius'.",
    ),
    bad(
        "missing-ball-wall",
        spec(DISK, domain__wall=DELETE),
        "[domain] is missing the required key 'wall'.",
    ),
    bad(
        "missing-target-radius",
        spec(PLANE, domain__targets=[{"center": [0.75, 0.5]}]),
        "[domain.targets.0] is missing the required key 'radius'.",
    ),
    bad(
        "occupancy-without-times",
        spec(LINE, record={"occupancy": {"bins": 8}}),
        "[record.occupancy] is missing the required key 'times'.",
    ),
    bad(
        "occupancy-without-bins",
        spec(LINE, record={"occupancy": {"times": [1.0]}}),
        "[record.occupancy] is missing the required key 'bins'.",
    ),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


@pytest.mark.parametrize(
    ("value", "shown"),
    [
        pytest.param(True, "true", id="true"),
        pytest.param(False, "false", id="false"),
        pytest.param(0, "0", id="int"),
        pytest.param(-(2**63), str(-(2**63)), id="int-min"),
        pytest.param(0.5, "0.5", id="float"),
        pytest.param(1e300, "1e+300", id="float-exponent"),
        pytest.param(math.inf, "inf", id="inf"),
        pytest.param(-math.inf, "-inf", id="minus-inf"),
        pytest.param(math.nan, "nan", id="nan"),
        pytest.param([], "[]", id="empty-list"),
        pytest.param([1.0, 2.0], "[1.0, 2.0]", id="list"),
        pytest.param([True, [1, "a"]], '[true, [1, "a"]]', id="nested-list"),
        pytest.param({}, "{}", id="empty-table"),
        pytest.param({"k": "v"}, '{ k = "v" }', id="table"),
        pytest.param(
            {"a": [False], "b": {"c": 1}}, "{ a = [false], b = { c = 1 } }", id="nested"
        ),
    ],
)
def test_got_values_are_shown_as_toml(value: Any, shown: str) -> None:
    text = spec(LINE, sweep__description=value)
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value) == (
        f"{SOURCE}: [sweep.description] must be a string; got {shown}."
    )


@pytest.mark.parametrize(
    ("text", "shown"),
    [
        pytest.param("text", '"text"', id="plain"),
        pytest.param("", '""', id="empty"),
        pytest.param('say "hi"', '"say \\"hi\\""', id="double-quotes"),
        pytest.param("it's", '"it\'s"', id="single-quote"),
        pytest.param("a\\b", '"a\\\\b"', id="backslash"),
        pytest.param("tab\there", '"tab\\there"', id="tab"),
    ],
)
def test_got_strings_are_shown_as_toml_basic_strings(text: str, shown: str) -> None:
    with pytest.raises(SpecError) as info:
        parse(spec(LINE, motion__diffusivity=text))
    message = str(info.value)
    assert message == f"{SOURCE}: [motion.diffusivity] must be a number; got {shown}."
    got = message.removeprefix(f"{SOURCE}: [motion.diffusivity] must be a number; got ")
    assert tomllib.loads(f"v = {got[:-1]}")["v"] == text


def test_got_values_in_point_context_are_shown_as_toml() -> None:
    text = spec(
        LINE,
        grid={"time.monitoring": ["bridge", "end"], "domain.upper": [[1.0]]},
    )
    with pytest.raises(SpecError) as info:
        parse(text)
    assert str(info.value).endswith(
        '(at point 1: time.monitoring = "end", domain.upper = [1.0])'
    )


def test_parse_spec_error_names_grid_point_index() -> None:
    text = spec(LINE, grid={"motion.diffusivity": [1.0, -1.0]})
    with pytest.raises(SpecError) as info:
        parse(text)
    assert "point 1" in str(info.value)
    assert "point 0" not in str(info.value)


def all_bad_inputs() -> list[Any]:
    """The refused definitions of every module's table, in one list."""
    from tests.spec import (
        test_context,
        test_definition,
        test_grid,
        test_load,
        test_values,
    )
    from tests.spec.sections import (
        test_domain,
        test_head,
        test_motion,
        test_record,
        test_timing,
    )

    modules = (
        test_load,
        test_values,
        test_context,
        test_definition,
        test_head,
        test_motion,
        test_timing,
        test_domain,
        test_record,
        test_grid,
    )
    return [case for module in modules for case in module.BAD_INPUTS]


def test_bad_inputs_table_is_large_and_ids_are_unique() -> None:
    ids = [case.id for case in all_bad_inputs()]
    assert len(ids) >= 45
    assert len(set(ids)) == len(ids)


def test_bad_inputs_show_no_python_reprs() -> None:
    for case in all_bad_inputs():
        text, _ = case.values
        with pytest.raises(SpecError) as info:
            parse(text)
        message = str(info.value)
        assert not re.search(r"got (True|False|None|'|\[')", message), case.id
        assert "{'" not in message, case.id
