"""Bad definition files at the command line: one clear message, exit code 2, no store.

The definition-file cases of the command-line battery (the rest are beside the stage
they check: stores in ``tests/store/``, executor options in
``tests/execute/test_options.py``, ...): each case writes a definition (or leaves it
missing, or puts a directory there), runs ``sweep plan`` (which validates exactly as
``run`` does, both through ``load_spec``, at a tenth of the start-up cost) or, for a
sample, ``sweep run``, and checks for ONE ``sweep: error:`` line naming the file, the
key and the value, exit code 2, no traceback and no store created. The cases are
independent, so they run together on a small thread pool (:mod:`tests.cli_cases`).
"""

from __future__ import annotations

from tests.cli_cases import (
    PLAN_LIMIT,
    RUN_LIMIT,
    Case,
    case_test,
    spec_case,
)
from tests.conftest import SMALL_SPEC
from tests.spec.bases import CUBE
from tests.spec.edit import dumps, edit_text

#: SMALL_SPEC without its grid, so [motion] values are not overridden by [grid].
BASE = edit_text(SMALL_SPEC, ('[grid]\n"motion.diffusivity" = [0.5, 1.0]\n', ""))
WALLS = 'walls = { x_lower = "absorbing", x_upper = "absorbing" }'
OCCUPANCY = "occupancy = { times = [0.2, 0.05], bins = 8 }"


def base(*edits: tuple[str, str]) -> str:
    return edit_text(BASE, *edits)


def base_with(grid: str) -> str:
    """The base definition plus a [grid] or [[zip]] table."""
    return base() + f"\n{grid}\n"


CASES: list[Case] = [
    # ----- syntax
    spec_case(
        "toml-unclosed-string",
        base(('name = "small"', 'name = "small')),
        "not valid TOML",
        "line 3",
        command="run",
    ),
    spec_case(
        "toml-unclosed-table-header",
        base(("[motion]", "[motion")),
        "not valid TOML",
        "line 8",
    ),
    spec_case(
        "toml-duplicate-key",
        base(("seed = 7", "seed = 7\nseed = 8")),
        "not valid TOML",
        "line 5",
        "seed",
    ),
    spec_case(
        "not-utf8",
        base().encode().replace(b'"small"', b'"caf\xe9"'),
        "not UTF-8",
    ),
    # ----- wrong types
    spec_case(
        "walkers-is-text",
        base(("walkers = 3000", 'walkers = "many"')),
        "[sweep.walkers]",
        "whole number",
        '"many"',
    ),
    spec_case(
        "walkers-is-float",
        base(("walkers = 3000", "walkers = 3e3")),
        "[sweep.walkers]",
        "whole number",
        "3000.0",
    ),
    spec_case(
        "diffusivity-is-text",
        base(("diffusivity = 0.5", 'diffusivity = "fast"')),
        "[motion.diffusivity]",
        "must be a number",
        '"fast"',
    ),
    spec_case(
        "dimension-is-float",
        base(("dimension = 1", "dimension = 1.5")),
        "[motion.dimension]",
        "whole number",
        "1.5",
    ),
    spec_case(
        "start-is-a-word",
        base(("start = [0.3]", 'start = "middle"')),
        "[motion.start]",
        '"uniform"',
        '"middle"',
    ),
    spec_case(
        "per-walker-is-text",
        base(("[record]", '[record]\nper_walker = "yes"')),
        "[record.per_walker]",
        "true or false",
        '"yes"',
    ),
    spec_case(
        "wall-kind-unknown",
        base(('x_upper = "absorbing"', 'x_upper = "sticky"')),
        "[domain.walls.x_upper]",
        "'absorbing' or 'reflecting'",
        '"sticky"',
    ),
    spec_case(
        "drift-has-wrong-length",
        base(("start = [0.3]", "start = [0.3]\ndrift = [0.0, 1.0]")),
        "[motion.drift]",
        "list of 1 number",
        "[0.0, 1.0]",
    ),
    spec_case(
        "diffusivity-is-nan",
        base(("diffusivity = 0.5", "diffusivity = nan")),
        "[motion.diffusivity]",
        "finite",
        "nan",
    ),
    # ----- unknown keys, with the suggestion
    spec_case(
        "unknown-table",
        base(("[record]", "[recrod]")),
        "unknown key 'recrod'",
        "Did you mean 'record'?",
    ),
    spec_case(
        "unknown-key-in-motion",
        base(("diffusivity = 0.5", "difusivity = 0.5")),
        "unknown key 'difusivity' in [motion]",
        "Allowed keys: dimension, diffusivity",
        "Did you mean 'diffusivity'?",
        command="run",
    ),
    spec_case(
        "unknown-key-in-time",
        base(("horizon = 3.0", 'horizon = 3.0\nmonitor = "bridge"')),
        "unknown key 'monitor' in [time]",
        "Did you mean 'monitoring'?",
    ),
    spec_case(
        "unknown-key-in-survival",
        base(("points = 11", "point = 11")),
        "unknown key 'point' in [record.survival]",
        "Did you mean 'points'?",
    ),
    spec_case(
        "unknown-grid-key",
        base_with('[grid]\n"motion.difusivity" = [0.5, 1.0]'),
        "[grid.motion.difusivity]",
        "Did you mean 'motion.diffusivity'?",
    ),
    spec_case(
        "missing-required-key",
        base(("seed = 7\n", "")),
        "[sweep] is missing the required key 'seed'",
    ),
    spec_case(
        "missing-table",
        base(("[time]\ndt = 1e-3\nhorizon = 3.0\n", "")),
        "the table [time] is missing",
    ),
    # ----- impossible numbers
    spec_case(
        "diffusivity-negative",
        base(("diffusivity = 0.5", "diffusivity = -0.5")),
        "[motion.diffusivity]",
        "must be > 0",
        "-0.5",
    ),
    spec_case(
        "diffusivity-zero",
        base(("diffusivity = 0.5", "diffusivity = 0")),
        "[motion.diffusivity]",
        "must be > 0",
        "got 0.0",
    ),
    spec_case(
        "dt-negative",
        base(("dt = 1e-3", "dt = -1e-3")),
        "[time.dt]",
        "must be > 0",
        "-0.001",
    ),
    spec_case(
        "dt-zero",
        base(("dt = 1e-3", "dt = 0.0")),
        "[time.dt]",
        "must be > 0",
        "got 0.0",
    ),
    spec_case(
        "horizon-negative",
        base(("horizon = 3.0", "horizon = -3.0")),
        "[time.horizon]",
        "must be > 0",
        "-3.0",
    ),
    spec_case(
        "horizon-zero",
        base(("horizon = 3.0", "horizon = 0")),
        "[time.horizon]",
        "must be > 0",
    ),
    spec_case(
        "dt-equals-horizon",
        base(("dt = 1e-3", "dt = 3.0")),
        "[time.dt]",
        "smaller than time.horizon = 3.0",
        "got 3.0",
    ),
    spec_case(
        "dt-above-horizon",
        base(("dt = 1e-3", "dt = 5.0")),
        "[time.dt]",
        "smaller than time.horizon = 3.0",
        "got 5.0",
    ),
    spec_case(
        "walkers-zero",
        base(("walkers = 3000", "walkers = 0")),
        "[sweep.walkers]",
        "must be >= 1",
        "got 0",
    ),
    spec_case(
        "chunk-above-walkers",
        base(("chunk = 500", "chunk = 5000")),
        "[sweep.chunk]",
        "from 1 to 3000",
        "got 5000",
    ),
    spec_case(
        "seed-negative",
        base(("seed = 7", "seed = -7")),
        "[sweep.seed]",
        ">= 0",
        "-7",
    ),
    spec_case(
        "dimension-too-high",
        base(("dimension = 1", "dimension = 9")),
        "[motion.dimension]",
        "from 1 to 8",
        "got 9",
    ),
    # ----- geometry
    spec_case(
        "start-outside-domain",
        base(("start = [0.3]", "start = [1.5]")),
        "[motion.start]",
        "strictly inside the domain",
        "[1.5]",
    ),
    spec_case(
        "start-on-wall",
        base(("start = [0.3]", "start = [0.0]")),
        "[motion.start]",
        "strictly inside the domain",
        "[0.0]",
    ),
    spec_case(
        "start-inside-target",
        base((WALLS, WALLS + "\ntargets = [{ center = [0.35], radius = 0.1 }]")),
        "[motion.start]",
        "inside target 0",
        "[0.3]",
    ),
    spec_case(
        "target-outside-domain",
        base((WALLS, WALLS + "\ntargets = [{ center = [2.0], radius = 0.1 }]")),
        "[domain.targets.0.center]",
        "inside the domain",
        "[2.0]",
    ),
    spec_case(
        "wall-for-missing-axis",
        base((WALLS, WALLS[:-2] + ', y_lower = "reflecting" }')),
        "[domain.walls.y_lower]",
        "names axis 'y'",
        "only the axes x",
    ),
    spec_case(
        "wall-kind-missing",
        base((', x_upper = "absorbing"', "")),
        "[domain.walls]",
        "'x_upper'",
        '"absorbing" or "reflecting"',
    ),
    spec_case(
        "wall-at-infinity",
        base(
            ("upper = [1.0]", 'upper = ["inf"]'),
            (OCCUPANCY, OCCUPANCY[:-2] + ", lower = [0.0], upper = [1.0] }"),
        ),
        "[domain.walls.x_upper]",
        "is at infinity",
    ),
    spec_case(
        "uniform-start-unbounded",
        base(
            ("upper = [1.0]", 'upper = ["inf"]'),
            (', x_upper = "absorbing"', ""),
            ("start = [0.3]", 'start = "uniform"'),
        ),
        "[motion.start]",
        '"uniform" needs a bounded domain',
    ),
    spec_case(
        "snapshot-beyond-horizon",
        base(("times = [0.2, 0.05]", "times = [0.2, 5.0]")),
        "[record.occupancy.times]",
        "[0, time.horizon = 3.0]",
        "got 5.0",
    ),
    spec_case(
        "survival-stop-beyond-horizon",
        base(("stop = 1.0", "stop = 10.0")),
        "[record.survival.stop]",
        "must not exceed time.horizon = 3.0",
        "got 10.0",
    ),
    spec_case(
        "occupancy-bins-over-limit-3d",
        dumps(CUBE) + "\n[record]\noccupancy = { times = [0.5], bins = 216 }\n",
        "[record.occupancy.bins]",
        "10,000,000",
        "216",
    ),
    # ----- grids
    spec_case(
        "grid-changes-dimension",
        base_with('[grid]\n"motion.dimension" = [1, 2]'),
        "[grid.motion.dimension]",
        "cannot be swept",
        "array shapes",
    ),
    spec_case(
        "grid-changes-shape",
        base_with('[grid]\n"domain.shape" = ["box", "ball"]'),
        "[grid.domain.shape]",
        "cannot be swept",
    ),
    spec_case(
        "grid-changes-number-of-targets",
        base((WALLS, WALLS + "\ntargets = [{ center = [0.8], radius = 0.05 }]"))
        + '\n[grid]\n"domain.targets" = [[{ center = [0.8], radius = 0.05 }], []]\n',
        "point 1",
        "has 0 targets but point 0 has 1",
        "cannot change within one store",
    ),
    spec_case(
        "grid-record-key",
        base_with('[grid]\n"record.per_walker" = [true, false]'),
        "[grid.record.per_walker]",
        "not a sweepable key",
    ),
    spec_case(
        "grid-bad-value-at-one-point",
        base_with('[grid]\n"motion.diffusivity" = [0.5, -1.0]'),
        "[motion.diffusivity]",
        "must be > 0",
        "(at point 1: motion.diffusivity = -1.0)",
    ),
    spec_case(
        "grid-key-not-quoted",
        base_with("[grid]\nmotion.diffusivity = [0.5, 1.0]"),
        "[grid.motion]",
        "is a table, not a list",
    ),
    spec_case(
        "zip-lists-of-unequal-length",
        base_with('[[zip]]\n"motion.diffusivity" = [0.5, 1.0]\n"time.dt" = [1e-3]'),
        "[zip #1]",
        "same length",
        "motion.diffusivity: 2, time.dt: 1",
    ),
    spec_case(
        "grid-of-a-billion-points",
        base_with(
            "[grid]\n"
            + "\n".join(
                f'"{key}" = [{", ".join(str(v) for v in values)}]'
                for key, values in (
                    ("motion.diffusivity", [0.1 + i / 1000 for i in range(1000)]),
                    ("time.horizon", [2.0 + i / 1000 for i in range(1000)]),
                    ("motion.drift", [i / 1000 for i in range(1000)]),
                )
            ),
        ),
        "[grid]",
        "1,000,000,000 points",
        memory_limit=PLAN_LIMIT,
    ),
    # ----- hostile definitions: nesting, magnitudes, sizes (answered at once)
    spec_case(
        "start-nested-5000-deep",
        base(("start = [0.3]", "start = " + "[" * 5000 + "0.3" + "]" * 5000)),
        "nested too deeply",
        command="run",
    ),
    spec_case(
        "inline-table-nested-3000-deep",
        base(("[record]", "[record]\nx = " + "{ a = " * 3000 + "1" + " }" * 3000)),
        "nested too deeply",
    ),
    spec_case(
        "start-nested-40-deep",
        base(("start = [0.3]", "start = " + "[" * 40 + "0.3" + "]" * 40)),
        "nested too deeply",
    ),
    spec_case(
        "box-of-1e308",
        base(
            ("lower = [0.0]", "lower = [-1e308]"),
            ("upper = [1.0]", "upper = [1e308]"),
            ("start = [0.3]", "start = [0.0]"),
        ),
        "[domain.lower]",
        "within +-1e+100",
        "-1e+308",
    ),
    spec_case(
        "box-of-width-1e-300",
        base(
            ("upper = [1.0]", "upper = [1e-300]"), ("start = [0.3]", "start = [5e-301]")
        ),
        "[domain.upper]",
        "domain width",
        "1e-300",
    ),
    spec_case(
        "drift-of-1e308",
        base(("start = [0.3]", "start = [0.3]\ndrift = [-1e308]")),
        "[motion.drift]",
        "-1e+308",
        command="run",
    ),
    spec_case(
        "diffusivity-1e308",
        base(("diffusivity = 0.5", "diffusivity = 1e308")),
        "[motion.diffusivity]",
        "1e+308",
        command="run",
    ),
    spec_case(
        "diffusivity-5e-324",
        base(("diffusivity = 0.5", "diffusivity = 5e-324")),
        "[motion.diffusivity]",
        "5e-324",
        command="run",
    ),
    spec_case(
        "step-below-the-resolution-of-positions",
        base(
            ("lower = [0.0]", "lower = [1e20]"),
            ("upper = [1.0]", "upper = [2e20]"),
            ("start = [0.3]", "start = [1.5e20]"),
        ),
        "[time.dt]",
        "resolution of positions",
    ),
    spec_case(
        "walkers-2-to-the-63-minus-1",
        base(
            ("walkers = 3000", "walkers = 9223372036854775807"), ("chunk = 500\n", "")
        ),
        "[sweep.walkers]",
        "at most 1,000,000,000,000",
        command="run",
        memory_limit=RUN_LIMIT,
    ),
    spec_case(
        "ten-million-tasks",
        base(("walkers = 3000", "walkers = 10_000_000"), ("chunk = 500", "chunk = 1")),
        "[sweep.chunk]",
        "10,000,000 tasks",
        "at most 2,000,000",
        memory_limit=PLAN_LIMIT,
    ),
    spec_case(
        "million-grid-points",
        base_with(
            "[grid]\n"
            + "\n".join(
                f'"{key}" = [{", ".join(str(v) for v in values)}]'
                for key, values in (
                    ("motion.diffusivity", [0.1 + i / 1000 for i in range(1000)]),
                    ("time.horizon", [2.0 + i / 1000 for i in range(1000)]),
                )
            )
        ),
        "[grid]",
        "1,000,000 points",
        "at most 100,000",
        memory_limit=PLAN_LIMIT,
    ),
    # ----- the definition file itself
    spec_case(
        "spec-file-missing",
        None,
        "no such sweep definition file",
        command="run",
        path="nope.toml",
    ),
    spec_case(
        "spec-is-a-directory",
        {"notes.txt": "x"},
        "is a directory",
        "TOML file",
        path="defs",
    ),
    spec_case(
        "plan-spec-file-missing",
        None,
        "no such sweep definition file",
        path="nope.toml",
    ),
]


def test_case_ids_are_unique() -> None:
    ids = [c.id for c in CASES]
    assert len(ids) == len(set(ids))


test_bad_definition_gets_one_clear_message = case_test(
    CASES, "A bad definition gets one clear message naming its file; no store made."
)
