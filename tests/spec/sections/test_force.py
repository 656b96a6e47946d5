"""The [force] table: reading, sweeping, refusals (exit 2, one message), the dt bound
in `sweep plan`, the hash of definitions without a force. Runs and checks of force
sweeps: tests/check/test_force.py."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sweep.errors import SpecError
from sweep.spec import parse_spec
from tests.conftest import SMALL_SPEC, run_cli

BASE = """
[sweep]
name = "force"
seed = 3
walkers = 300
chunk = 100

[motion]
dimension = 2
diffusivity = 0.8
start = [-1.0, 0.2]

[time]
dt = 5e-4
horizon = 60.0

[domain]
shape = "box"
lower = [-2.5, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "absorbing", y_lower = "reflecting", y_upper = "reflecting" }
"""

DOUBLE_WELL = """
[force]
potential = "double_well"
axis = "x"
center = 0.0
barrier = 2.0
half_separation = 1.0
"""


def spec(force: str, base: str = BASE) -> str:
    return base + force


def test_no_force_keeps_the_hash() -> None:
    # The canonical form leaves an absent [force] out: stores made before it resume.
    sweep = parse_spec(SMALL_SPEC)
    assert "force" not in sweep.canonical["point0"]


def test_force_is_read_and_sweepable() -> None:
    text = spec(DOUBLE_WELL + '[grid]\n"force.barrier" = [2.0, 3.0]\n')
    sweep = parse_spec(text)
    assert [p.force.barrier for p in sweep.points] == [2.0, 3.0]
    assert sweep.canonical["point0"]["force"]["axis"] == "x"
    harmonic = parse_spec(
        spec('[force]\npotential = "harmonic"\ncenter = [0, 0.5]\nstiffness = [2, 0]\n')
    )
    assert harmonic.points[0].force.stiffness == (2.0, 0.0)


BAD = {
    "negative stiffness": (
        '[force]\npotential = "harmonic"\ncenter = [0, 0]\nstiffness = [1.0, -2.0]\n',
        ["force.stiffness", "-2.0", ">= 0"],
    ),
    "non-finite table": (
        '[force]\npotential = "table"\naxis = "x"\nlower = -3.0\nupper = 1.0\n'
        "values = [1.0, nan, 2.0]\n",
        ["force.values", "entry 1", "finite"],
    ),
    "table short of the domain": (
        '[force]\npotential = "table"\naxis = "x"\nlower = -2.0\nupper = 1.0\n'
        "values = [1.0, 0.0, 2.0]\n",
        ["force.lower", "cover the domain", "-2.5"],
    ),
    "unknown axis": (DOUBLE_WELL.replace('"x"', '"q"'), ["force.axis", "'x' or 'y'"]),
    "unknown potential": (
        '[force]\npotential = "quartic"\n',
        ["force.potential", "harmonic"],
    ),
    "missing key": (
        DOUBLE_WELL.replace("barrier = 2.0\n", ""),
        ["missing the required key 'barrier'"],
    ),
    "foreign key": (DOUBLE_WELL + "stiffness = 1.0\n", ["unknown key 'stiffness'"]),
    "dt too coarse": (
        DOUBLE_WELL.replace("barrier = 2.0", "barrier = 400.0"),
        ["time.dt", "too coarse", "largest dt within the bound"],
    ),
    "spheres": (
        DOUBLE_WELL,
        ["time.scheme", 'must be "steps" with a [force]'],
    ),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_force_refused(case: str) -> None:
    force, fragments = BAD[case]
    base = (
        BASE.replace("horizon = 60.0", 'horizon = 60.0\nscheme = "spheres"')
        if case == "spheres"
        else BASE
    )
    with pytest.raises(SpecError) as err:
        parse_spec(spec(force, base), "def.toml")
    for fragment in fragments:
        assert fragment in str(err.value), str(err.value)


def test_bad_force_exits_2_with_one_message(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(spec(BAD["negative stiffness"][0]))
    done = run_cli("plan", path)
    assert done.returncode == 2
    lines = [line for line in done.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and "force.stiffness" in lines[0], done.stderr
    assert "Traceback" not in done.stderr


def test_plan_warns_when_dt_is_coarse(tmp_path: Path) -> None:
    path = tmp_path / "coarse.toml"
    path.write_text(spec(DOUBLE_WELL).replace("dt = 5e-4", "dt = 4e-3"))
    done = run_cli("plan", path)
    assert done.returncode == 0, done.stderr
    assert re.search(
        r"coarse for the force: D dt max\|U''\| = .* largest dt",
        done.stdout + done.stderr,
    )
