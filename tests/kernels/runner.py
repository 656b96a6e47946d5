"""The one runner of the walker kernel in the tests: a :class:`Domain` holds every input
of a run as plain tuples (easy to ``replace``), :func:`run` turns it into the kernel's
named inputs with the builders the executor uses (``kernels.inputs``), calls the kernel
and returns every output."""

from __future__ import annotations

import math
from collections import namedtuple
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from kernels import inputs
from kernels.rng import initial_state
from kernels.walkers import simulate, step_loop


@dataclass(frozen=True)
class Domain:
    """Every kernel input of one run, for a box or a ball domain.

    A box when ``ball_radius`` is infinite (the default); a ball of that radius around
    ``ball_center`` otherwise, with ``lower`` / ``upper`` its bounding box.
    """

    start: tuple[float, ...]
    lower: tuple[float, ...]
    upper: tuple[float, ...]
    absorbing_lower: tuple[bool, ...]
    absorbing_upper: tuple[bool, ...]
    diffusivity: float
    dt: float
    n_steps: int
    bridge: bool = True
    drift: tuple[float, ...] | None = None
    uniform_start: bool = False
    ball_center: tuple[float, ...] | None = None
    ball_radius: float = math.inf
    ball_absorbing: bool = True
    target_centers: tuple[tuple[float, ...], ...] = ()
    target_radii: tuple[float, ...] = ()
    survival_times: tuple[float, ...] = ()
    occupancy_steps: tuple[int, ...] = ()
    occupancy_lower: tuple[float, ...] | None = None
    occupancy_upper: tuple[float, ...] | None = None
    occupancy_bins: int = 1
    fpt_bin_width: float = 1.0
    fpt_bins: int = 0
    # Surfaces of issue 21: NaN reactivity = not reactive.
    reactivity_lower: tuple[float, ...] | None = None
    reactivity_upper: tuple[float, ...] | None = None
    periodic: tuple[bool, ...] | None = None
    ball_reactivity: float = math.nan
    target_reactivities: tuple[float, ...] | None = None
    obstacle_centers: tuple[tuple[float, ...], ...] = ()
    obstacle_radii: tuple[float, ...] = ()
    displacement: bool = False
    #: A potential: ``kernels.inputs.force(...)`` (None: no force).
    force: Any = None

    @property
    def dimension(self) -> int:
        return len(self.start)

    @property
    def horizon(self) -> float:
        return self.n_steps * self.dt

    @property
    def is_ball(self) -> bool:
        return math.isfinite(self.ball_radius)

    @property
    def first_target(self) -> int:
        """Wall index of target 0: after the 2 d box faces; first for a ball."""
        return 0 if self.is_ball else 2 * self.dimension

    @property
    def n_walls(self) -> int:
        """Wall indices in use: box faces x_lower, x_upper, y_lower, ..., then the
        targets, then (ball) the ball surface; the first-passage histogram has one
        row each."""
        faces = 1 if self.is_ball else 2 * self.dimension
        return faces + len(self.target_radii)

    def kernel_inputs(self) -> tuple[inputs.Geometry, inputs.Motion, inputs.Recording]:
        """The kernel's named inputs, made as ``sweep.plan`` makes them."""
        d = self.dimension
        geometry = inputs.geometry(
            self.lower,
            self.upper,
            self.absorbing_lower,
            self.absorbing_upper,
            ball_center=self.ball_center,
            ball_radius=self.ball_radius,
            ball_absorbing=self.ball_absorbing,
            target_center=self.target_centers,
            target_radius=self.target_radii,
            reactivity_lower=self.reactivity_lower,
            reactivity_upper=self.reactivity_upper,
            periodic=self.periodic,
            ball_reactivity=self.ball_reactivity,
            target_reactivity=self.target_reactivities,
            obstacle_center=self.obstacle_centers,
            obstacle_radius=self.obstacle_radii,
        )
        motion = inputs.motion(
            None if self.uniform_start else self.start,
            dimension=d,
            diffusivity=self.diffusivity,
            dt=self.dt,
            n_steps=self.n_steps,
            drift=self.drift,
            bridge=self.bridge,
            force=self.force,
        )
        recording = inputs.recording(
            d,
            survival_times=self.survival_times,
            occupancy_steps=self.occupancy_steps,
            occupancy_lower=self.occupancy_lower or self.lower,
            occupancy_upper=self.occupancy_upper or self.upper,
            occupancy_bins=self.occupancy_bins,
            fpt_bins=self.fpt_bins,
            fpt_bin_width=self.fpt_bin_width,
            final=True,
            displacement=self.displacement,
        )
        return geometry, motion, recording


#: Every output of one run: the fields of :class:`kernels.inputs.Outputs` (derived, so
#: an output added there is one here), then ``steps`` (-1 for the numpy reference).
Run = namedtuple("Run", (*inputs.Outputs._fields, "steps"))


def reference_run(**outputs: NDArray[Any]) -> Run:
    """A :class:`Run` of a numpy reference: the ``outputs`` it computes, an empty array
    for each it does not, and ``steps`` -1."""
    unknown = set(outputs) - set(inputs.Outputs._fields)
    assert not unknown, f"not kernel outputs: {sorted(unknown)}"
    empty = np.zeros((0, 0))
    return Run(
        **{name: outputs.get(name, empty) for name in inputs.Outputs._fields}, steps=-1
    )


def stream(seed: int) -> NDArray[np.uint64]:
    """A kernel's random stream (SFC64 state, uint64 (4,)) from the integer ``seed``,
    seeded as a task's (``Task.stream_state``)."""
    return initial_state(np.random.SeedSequence(seed))


def run(
    domain: Domain,
    n_walkers: int,
    state: NDArray[np.uint64] | int,
    kernel: Callable[..., Any] = simulate,
) -> Run:
    """Run ``kernel`` (``simulate`` or :func:`uncompiled_loop`) on ``domain``;
    ``state`` is a stream (:func:`stream`; advanced in place) or a seed for one."""
    if isinstance(state, int):
        state = stream(state)
    geometry, motion, recording = domain.kernel_inputs()
    out = inputs.allocate(n_walkers, geometry, recording)
    steps = kernel(state, n_walkers, geometry, motion, recording, out)
    return Run(*out, steps=int(steps))


def uncompiled_loop(domain: Domain) -> Callable[..., Any]:
    """The generated step loop ``simulate`` runs for ``domain``
    (``kernels.walkers.step_loop``), uncompiled (its ``py_func``), calling the
    compiled helpers; ``simulate`` itself only dispatches to a compiled loop."""
    geometry, motion, recording = domain.kernel_inputs()
    out = inputs.allocate(1, geometry, recording)
    return step_loop(geometry, motion, out).py_func  # type: ignore[no-any-return]


def assert_runs_identical(a: Run, b: Run) -> None:
    """Every output equal to the last bit."""
    for name, x, y in zip(Run._fields, a, b):
        np.testing.assert_array_equal(x, y, err_msg=name)
