"""The walker kernel's inputs and outputs: a few named, typed structures.

:func:`kernels.walkers.simulate` takes a :class:`Geometry` (where walkers move), a
:class:`Motion` (how and for how long), a :class:`Recording` (what is recorded besides
each walker's fate) and :class:`Outputs` (preallocated arrays). They are NamedTuples of
numpy arrays and Python scalars: numba types them on its fast path (a few microseconds
per call), they pickle for Dask, and each field is named where it is made and where it
is read, so two swapped floats cannot pass unnoticed. This module is the one place where
they are made (``sweep.plan`` and the kernel tests both call the builders below); each
builder coerces its values to the dtypes the compiled loops expect, so no call compiles
a second variant for an int where a float belongs. numpy only: importing it does not
import numba.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray


class Geometry(NamedTuple):
    """Where the walkers move: a box or a ball, and absorbing targets inside it.

    Attributes
    ----------
    lower, upper : float64 (d,)
        Box extent per axis (+-inf allowed); for a ball, its bounding box.
    absorbing_lower, absorbing_upper : bool (d,)
        Kind of each box face (finite faces only; ignored for a ball).
    ball_center : float64 (d,)
    ball_radius : float
        The ball domain; ``inf`` means a box domain.
    ball_absorbing : bool
    target_center : float64 (k, d)
    target_radius : float64 (k,)
        Balls inside the domain that absorb (or react with) walkers.
    reactivity_lower, reactivity_upper : float64 (d,)
        Reactivity kappa (length / time) of each reactive box face; NaN for faces that
        are not reactive (those follow ``absorbing_lower`` / ``absorbing_upper``).
    periodic : bool (d,)
        Axes whose two faces are periodic (box only).
    ball_reactivity : float
        Reactivity of the ball's surface; NaN when it is not reactive.
    target_reactivity : float64 (k,)
        Reactivity of each target; NaN for absorbing targets.
    obstacle_center : float64 (m, d)
    obstacle_radius : float64 (m,)
        Reflecting balls inside the domain.
    """

    lower: NDArray[np.float64]
    upper: NDArray[np.float64]
    absorbing_lower: NDArray[np.bool_]
    absorbing_upper: NDArray[np.bool_]
    ball_center: NDArray[np.float64]
    ball_radius: float
    ball_absorbing: bool
    target_center: NDArray[np.float64]
    target_radius: NDArray[np.float64]
    reactivity_lower: NDArray[np.float64]
    reactivity_upper: NDArray[np.float64]
    periodic: NDArray[np.bool_]
    ball_reactivity: float
    target_reactivity: NDArray[np.float64]
    obstacle_center: NDArray[np.float64]
    obstacle_radius: NDArray[np.float64]

    @property
    def dimension(self) -> int:
        return int(self.lower.shape[0])

    @property
    def is_ball(self) -> bool:
        return bool(math.isfinite(self.ball_radius))

    @property
    def n_walls(self) -> int:
        """Wall indices in use: box faces x_lower, x_upper, y_lower, ..., then the
        targets, then (ball) the ball surface."""
        faces = 1 if self.is_ball else 2 * self.dimension
        return faces + int(self.target_radius.shape[0])


class Motion(NamedTuple):
    """How the walkers move and for how long.

    Attributes
    ----------
    start : float64 (d,)
        Start point (ignored when ``uniform_start``).
    uniform_start : bool
        Start uniformly over the domain outside targets (bounded domains only).
    diffusivity : float
        D, length^2 / time; each axis' variance grows as 2 D t.
    drift : float64 (d,)
        Constant velocity, length / time.
    dt : float
        Time step.
    n_steps : int
        Steps to the horizon; walkers still free then are censored.
    bridge : bool
        Brownian-bridge monitoring of absorbing walls between steps.
    """

    start: NDArray[np.float64]
    uniform_start: bool
    diffusivity: float
    drift: NDArray[np.float64]
    dt: float
    n_steps: int
    bridge: bool


class Recording(NamedTuple):
    """What is recorded besides each walker's fate.

    Attributes
    ----------
    survival_times : float64 (m,)
        Ascending times at which survivors are counted.
    occupancy_steps : int64 (s,)
        Ascending step numbers at which free walkers are binned.
    occupancy_lower, occupancy_upper : float64 (d,)
        Histogram range per axis.
    occupancy_bins : int
        Bins per axis.
    fpt_bins : int
        Bins of the first-passage-time histogram per wall; 0: not recorded.
    fpt_bin_width : float
        Their width, time units.
    final : bool
        Whether the position at the horizon of censored walkers is recorded.
    displacement : bool
        Whether each walker's unwrapped displacement (through periodic faces) from its
        start to its end (absorption or the horizon) is recorded.
    """

    survival_times: NDArray[np.float64]
    occupancy_steps: NDArray[np.int64]
    occupancy_lower: NDArray[np.float64]
    occupancy_upper: NDArray[np.float64]
    occupancy_bins: int
    fpt_bins: int
    fpt_bin_width: float
    final: bool
    displacement: bool


class Outputs(NamedTuple):
    """Preallocated outputs of one :func:`simulate` call (see :func:`allocate`).

    Attributes
    ----------
    time : float64 (n_walkers,)
        First-passage time; NaN when censored.
    wall : int16 (n_walkers,)
        Index of the absorbing wall (:attr:`Geometry.n_walls`); -1 when censored.
    position : float64 (n_walkers, d)
        Position at absorption; NaN when censored.
    survival : int64 (m,)
        Incremented by the number of walkers with first-passage time > t_k.
    occupancy : int64 (s, occupancy_bins ** d)
        Incremented by the binned positions of free walkers at each snapshot.
    final : float64 (n_walkers, d), or (0, d) when not recorded
        Position at the horizon of walkers still free then; NaN for absorbed ones.
    fpt_hist : int64 (n_walls, fpt_bins), or (0, 0) when not recorded
        Incremented at [wall, floor(time / fpt_bin_width)] per absorbed walker.
    displacement : float64 (n_walkers, d), or (0, d) when not recorded
        End position minus start position, unwrapped: each crossing of a periodic face
        adds the box width along that axis (length units).
    """

    time: NDArray[np.float64]
    wall: NDArray[np.int16]
    position: NDArray[np.float64]
    survival: NDArray[np.int64]
    occupancy: NDArray[np.int64]
    final: NDArray[np.float64]
    fpt_hist: NDArray[np.int64]
    displacement: NDArray[np.float64]


# ------------------------------------------------------------------------- builders


def geometry(
    lower: Sequence[float],
    upper: Sequence[float],
    absorbing_lower: Sequence[bool],
    absorbing_upper: Sequence[bool],
    *,
    ball_center: Sequence[float] | None = None,
    ball_radius: float = math.inf,
    ball_absorbing: bool = True,
    target_center: Sequence[Sequence[float]] = (),
    target_radius: Sequence[float] = (),
    reactivity_lower: Sequence[float] | None = None,
    reactivity_upper: Sequence[float] | None = None,
    periodic: Sequence[bool] | None = None,
    ball_reactivity: float = math.nan,
    target_reactivity: Sequence[float] | None = None,
    obstacle_center: Sequence[Sequence[float]] = (),
    obstacle_radius: Sequence[float] = (),
) -> Geometry:
    """A box (``ball_radius`` infinite) or a ball, with targets and obstacles; see
    :class:`Geometry`. Reactivities default to NaN (not reactive)."""
    d = len(lower)
    k = len(target_radius)
    f64 = np.float64
    nan = math.nan
    return Geometry(
        lower=np.array(lower, f64),
        upper=np.array(upper, f64),
        absorbing_lower=np.array(absorbing_lower, np.bool_),
        absorbing_upper=np.array(absorbing_upper, np.bool_),
        ball_center=np.array(
            ball_center if ball_center is not None else [0.0] * d, f64
        ),
        ball_radius=float(ball_radius),
        ball_absorbing=bool(ball_absorbing),
        target_center=np.array(target_center, f64).reshape(len(target_radius), d),
        target_radius=np.array(target_radius, f64).reshape(-1),
        reactivity_lower=np.array(
            reactivity_lower if reactivity_lower is not None else [nan] * d, f64
        ),
        reactivity_upper=np.array(
            reactivity_upper if reactivity_upper is not None else [nan] * d, f64
        ),
        periodic=np.array(periodic if periodic is not None else [False] * d, np.bool_),
        ball_reactivity=float(ball_reactivity),
        target_reactivity=np.array(
            target_reactivity if target_reactivity is not None else [nan] * k, f64
        ).reshape(k),
        obstacle_center=np.array(obstacle_center, f64).reshape(len(obstacle_radius), d),
        obstacle_radius=np.array(obstacle_radius, f64).reshape(-1),
    )


def motion(
    start: Sequence[float] | None,
    *,
    dimension: int,
    diffusivity: float,
    dt: float,
    n_steps: int,
    drift: Sequence[float] | None = None,
    bridge: bool = True,
) -> Motion:
    """Walkers from ``start`` (``None``: uniform over the domain); see :class:`Motion`."""
    f64 = np.float64
    return Motion(
        start=np.array(start if start is not None else [math.nan] * dimension, f64),
        uniform_start=start is None,
        diffusivity=float(diffusivity),
        drift=np.array(drift if drift is not None else [0.0] * dimension, f64),
        dt=float(dt),
        n_steps=int(n_steps),
        bridge=bool(bridge),
    )


def recording(
    dimension: int,
    *,
    survival_times: Sequence[float] = (),
    occupancy_steps: Sequence[int] = (),
    occupancy_lower: Sequence[float] | None = None,
    occupancy_upper: Sequence[float] | None = None,
    occupancy_bins: int = 1,
    fpt_bins: int = 0,
    fpt_bin_width: float = 1.0,
    final: bool = False,
    displacement: bool = False,
) -> Recording:
    """What to record; see :class:`Recording`. Snapshot steps must be ascending."""
    f64 = np.float64
    d = dimension
    return Recording(
        survival_times=np.array(survival_times, f64).reshape(-1),
        occupancy_steps=np.array(occupancy_steps, np.int64).reshape(-1),
        occupancy_lower=np.array(
            occupancy_lower if occupancy_lower is not None else [0.0] * d, f64
        ),
        occupancy_upper=np.array(
            occupancy_upper if occupancy_upper is not None else [1.0] * d, f64
        ),
        occupancy_bins=int(occupancy_bins),
        fpt_bins=int(fpt_bins),
        fpt_bin_width=float(fpt_bin_width),
        final=bool(final),
        displacement=bool(displacement),
    )


def allocate(n_walkers: int, geometry: Geometry, recording: Recording) -> Outputs:
    """Outputs for ``n_walkers`` walkers, counters zeroed; what ``recording`` leaves
    out gets no memory (shape 0 on its first axis)."""
    d = geometry.dimension
    r = recording
    n_snap = r.occupancy_steps.shape[0]
    return Outputs(
        time=np.empty(n_walkers, np.float64),
        wall=np.empty(n_walkers, np.int16),
        position=np.empty((n_walkers, d), np.float64),
        survival=np.zeros(r.survival_times.shape[0], np.int64),
        occupancy=np.zeros((n_snap, r.occupancy_bins**d if n_snap else 0), np.int64),
        final=np.empty((n_walkers if r.final else 0, d), np.float64),
        fpt_hist=np.zeros(
            (geometry.n_walls, r.fpt_bins) if r.fpt_bins else (0, 0), np.int64
        ),
        displacement=np.empty((n_walkers if r.displacement else 0, d), np.float64),
    )
