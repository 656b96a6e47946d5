"""The generated step loops (``kernels/_loops.py``) are exactly what
``kernels/generate.py`` makes of the template ``kernels/step.py`` and the current
``kernels/walkers.py``: no hand edit, no stale copy (numba's cache would not notice)."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from kernels import _loops, generate, inputs
from kernels.walkers import BALL, BOX, BOX_TARGETS, loop_table
from tests.kernels.runner import Domain, assert_runs_identical, run


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
    for table in (
        _loops.LOOPS,
        _loops.DRIFT_LOOPS,
        _loops.SURFACE_LOOPS,
        _loops.FORCE_LOOPS,
    ):
        assert set(table) == expected


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


# Plain geometries of every kind of loop (1-3 axes, drift, occupancy, survival, a
# reflecting ball, several targets, a uniform start), each run by both variants.
_PLAIN = {
    "1-D interval, drift": Domain(
        start=(0.3,), lower=(0.0,), upper=(1.0,), absorbing_lower=(True,),
        absorbing_upper=(False,), diffusivity=0.5, dt=1e-3, n_steps=400,
        drift=(0.4,), survival_times=(0.05, 0.2), occupancy_steps=(0, 50, 200),
        occupancy_bins=4, fpt_bins=6, fpt_bin_width=0.05,
    ),
    "3-D box, endpoint": Domain(
        start=(0.2, 0.5, 0.5), lower=(0.0,) * 3, upper=(1.0,) * 3,
        absorbing_lower=(True, False, False), absorbing_upper=(True, False, False),
        diffusivity=1.0, dt=1e-3, n_steps=300, bridge=False,
    ),
    "2-D reflecting box, two targets, uniform start": Domain(
        start=(0.5, 0.5), lower=(0.0, 0.0), upper=(1.0, 1.0),
        absorbing_lower=(False, False), absorbing_upper=(False, False),
        diffusivity=0.5, dt=1e-3, n_steps=300, uniform_start=True,
        target_centers=((0.5, 0.5), (0.2, 0.8)), target_radii=(0.1, 0.05),
    ),
    "3-D reflecting ball, target": Domain(
        start=(0.5, 0.0, 0.0), lower=(-1.0,) * 3, upper=(1.0,) * 3,
        absorbing_lower=(True,) * 3, absorbing_upper=(True,) * 3, diffusivity=1.0,
        dt=1e-3, n_steps=300, ball_center=(0.0,) * 3, ball_radius=1.0,
        ball_absorbing=False, target_centers=((0.0, 0.0, 0.0),), target_radii=(0.2,),
    ),
}  # fmt: skip


@pytest.mark.parametrize("name", list(_PLAIN))
def test_plain_loops_equal_surface_loops_without_surfaces(name: str) -> None:
    """The loops without surfaces' code (``LOOPS`` without a drift, ``DRIFT_LOOPS``
    with one: the constants of ``static(SURFACES == 0)``) give the surface loops'
    numbers bit for bit wherever no surface is present, and ``simulate`` picks them
    there."""
    domain = _PLAIN[name]
    geometry, motion, recording = domain.kernel_inputs()
    kind = BALL if domain.is_ball else BOX_TARGETS if domain.target_radii else BOX
    out = inputs.allocate(1, geometry, recording)
    table = _loops.DRIFT_LOOPS if domain.drift else _loops.LOOPS
    assert loop_table(geometry, motion, out) is table
    dim = domain.dimension
    plain = run(domain, 200, 7, kernel=table[kind, dim])
    assert_runs_identical(plain, run(domain, 200, 7))
    assert_runs_identical(
        plain, run(domain, 200, 7, kernel=_loops.SURFACE_LOOPS[kind, dim])
    )


@pytest.mark.parametrize("name", list(_PLAIN))
def test_drift_free_loops_equal_drift_loops_at_zero_drift(name: str) -> None:
    """The drift-free loops (``static(DRIFT == 0)``: y = x + sigma z) give the numbers
    of the drift loops (y = x + 0.0 + sigma z) bit for bit when the drift is zero, and
    ``simulate`` takes them then; a drift on any one axis takes the drift loops."""
    domain = replace(_PLAIN[name], drift=None)
    geometry, motion, recording = domain.kernel_inputs()
    kind = BALL if domain.is_ball else BOX_TARGETS if domain.target_radii else BOX
    out = inputs.allocate(1, geometry, recording)
    assert loop_table(geometry, motion, out) is _loops.LOOPS
    dim = domain.dimension
    free = run(domain, 200, 7, kernel=_loops.LOOPS[kind, dim])
    assert np.any(free.wall >= 0)
    assert_runs_identical(
        free, run(domain, 200, 7, kernel=_loops.DRIFT_LOOPS[kind, dim])
    )
    for axis in range(dim):
        drift = tuple(0.1 if a == axis else 0.0 for a in range(dim))
        geometry, motion, recording = replace(domain, drift=drift).kernel_inputs()
        assert loop_table(geometry, motion, out) is _loops.DRIFT_LOOPS


@pytest.mark.parametrize(
    "change",
    [
        {"reactivity_lower": (2.0,)}, {"reactivity_upper": (math.inf,)},
        {"periodic": (True,)}, {"target_centers": ((0.5,),), "target_radii": (0.1,),
        "target_reactivities": (1.0,)}, {"obstacle_centers": ((0.6,),),
        "obstacle_radii": (0.05,)}, {"displacement": True},
    ],
    ids=["reactive lower", "reactive upper", "periodic", "reactive target", "obstacle",
         "displacement"],
)  # fmt: skip
def test_any_surface_gets_the_surface_loops(change: dict[str, object]) -> None:
    """A single reactive face or target, a periodic axis, an obstacle or the
    displacement output is enough for ``simulate`` to take the loops that hold their
    code (the plain loops would silently ignore it)."""
    domain = replace(_PLAIN["1-D interval, drift"], absorbing_lower=(False,), **change)
    geometry, motion, recording = domain.kernel_inputs()
    out = inputs.allocate(1, geometry, recording)
    assert loop_table(geometry, motion, out) is _loops.SURFACE_LOOPS
    harmonic = inputs.force(
        inputs.HARMONIC, dimension=1, diffusivity=0.5, dt=1e-3, stiffness=(1.0,),
        center=(0.5,),
    )  # fmt: skip
    geometry, motion, recording = replace(domain, force=harmonic).kernel_inputs()
    assert loop_table(geometry, motion, out) is _loops.FORCE_LOOPS
