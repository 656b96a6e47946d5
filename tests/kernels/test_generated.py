"""The generated step loops (``kernels/_loops.py``) are exactly what
``kernels/generate.py`` makes of the template ``kernels/step.py`` and the current
``kernels/walkers.py``: no hand edit, no stale copy (numba's cache would not notice)."""

from __future__ import annotations

import pytest

from kernels import _loops, generate


def test_generated_loops_are_up_to_date() -> None:
    expected = generate.generate()
    actual = generate.OUTPUT.read_text()
    assert actual == expected, (
        "kernels/_loops.py is out of date with kernels/step.py, kernels/generate.py "
        "or kernels/walkers.py: run `python -m kernels.generate` and commit the result"
    )


def test_every_kind_and_dimension_has_a_loop() -> None:
    kinds = generate.KINDS.values()
    expected = {
        (kind, dim)
        for kind in kinds
        for dim in generate.DIMENSIONS
        if not (kind == generate.KINDS["ball"] and dim < 2)
    }
    assert set(_loops.LOOPS) == expected


@pytest.mark.parametrize(
    ("condition", "taken"),
    [("KIND == BALL", True), ("KIND != BALL", False), ("DIM >= 3", True),
     ("DIM < 3", False)],
)  # fmt: skip
def test_static_conditions_are_parsed_not_evaluated(
    condition: str, taken: bool
) -> None:
    env = {"KIND": 2, "DIM": 3, **generate.KINDS_CONSTANTS}
    assert generate._decide(condition, env) is taken
    with pytest.raises(ValueError, match="static"):
        generate._decide("__import__('os')", env)
