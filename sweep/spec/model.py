"""The definition's model: the frozen dataclasses every later stage receives.

:class:`Sweep` holds the validated points (:class:`PointSpec`: :class:`Motion`,
:class:`Timing`, :class:`Domain` with its :class:`Target` balls, :class:`Record`), the
canonical form and its hash; :class:`Units` labels quantities. Nothing here reads or
validates a definition (that is :mod:`sweep.spec.sections` and the section readers);
these classes only describe the result.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from sweep.potentials import Force
from sweep.precision import Precision

#: The most axes a domain may have (``motion.dimension``); kernels compile a loop for each.
MAX_DIMENSION = 8


def axis_names(dimension: int) -> tuple[str, ...]:
    """Names of the axes of a ``dimension``-dimensional domain: x, y, z, x3, x4, ..."""
    base = ("x", "y", "z")
    return tuple(base[i] if i < 3 else f"x{i}" for i in range(dimension))


# --------------------------------------------------------------------------- types


@dataclass(frozen=True)
class Target:
    """An absorbing ball inside the domain.

    Attributes
    ----------
    center : tuple of float, length d, length units
    radius : float, length units, > 0
    """

    center: tuple[float, ...]
    radius: float
    #: Reactivity κ (length/time) of a reactive target; None: absorbing.
    reactivity: float | None = None


@dataclass(frozen=True)
class Obstacle:
    """A reflecting ball inside the domain (docs/surfaces.md).

    Attributes
    ----------
    center : tuple of float, length d, length units
    radius : float, length units, > 0
    """

    center: tuple[float, ...]
    radius: float


#: Fields of Domain added after stores existed, with their defaults: left out of the
#: canonical form at these values, so older definitions keep their hash and streams.
_LATER_FIELDS: dict[str, Any] = {
    "reactivity_low": (),
    "reactivity_high": (),
    "periodic": (),
    "surface_reactivity": None,
    "obstacles": (),
}


@dataclass(frozen=True)
class Domain:
    """Where walkers live and which walls absorb them.

    For a box, ``lower``/``upper`` give each axis' extent (infinite sides allowed) and
    ``absorbing_low``/``absorbing_high`` each face's kind (an infinite side is never
    absorbing). For a ball, ``center``/``radius``/``surface_absorbing`` describe it and
    ``lower``/``upper`` hold its bounding box.
    """

    shape: Literal["box", "ball"]
    lower: tuple[float, ...]
    upper: tuple[float, ...]
    absorbing_low: tuple[bool, ...]
    absorbing_high: tuple[bool, ...]
    center: tuple[float, ...] = ()
    radius: float = math.inf
    surface_absorbing: bool = False
    targets: tuple[Target, ...] = ()
    #: Per axis, κ of a reactive lower / upper face or None; () when no face reacts.
    reactivity_low: tuple[float | None, ...] = ()
    reactivity_high: tuple[float | None, ...] = ()
    #: Per axis, whether its two faces are periodic; () when none is.
    periodic: tuple[bool, ...] = ()
    #: κ of a reactive ball wall, or None.
    surface_reactivity: float | None = None
    #: Reflecting balls inside the domain (no wall index: they never absorb).
    obstacles: tuple[Obstacle, ...] = ()

    @property
    def dimension(self) -> int:
        return len(self.lower)

    def surface_kinds(self) -> list[str]:
        """The surface kinds of docs/surfaces.md present ("reactive walls", ...)."""
        kinds = []
        if any(k is not None for k in self.reactivity_low + self.reactivity_high) or (
            self.surface_reactivity is not None
        ):
            kinds.append("reactive walls")
        if any(t.reactivity is not None for t in self.targets):
            kinds.append("reactive targets")
        if any(self.periodic):
            kinds.append("periodic faces")
        if self.obstacles:
            kinds.append("obstacles")
        return kinds

    def has_surface_kinds(self) -> bool:
        """Whether any wall is reactive or periodic, or any obstacle is present."""
        return bool(self.surface_kinds())

    def wall_reactivity(self) -> tuple[float | None, ...]:
        """κ of each wall of :meth:`wall_names` (None: not reactive)."""
        kappas: list[float | None] = []
        if self.shape == "box":
            d = self.dimension
            low = self.reactivity_low or (None,) * d
            high = self.reactivity_high or (None,) * d
            for lo, hi in zip(low, high):
                kappas += [lo, hi]
        kappas += [t.reactivity for t in self.targets]
        if self.shape == "ball":
            kappas.append(self.surface_reactivity)
        return tuple(kappas)

    @property
    def bounded(self) -> bool:
        return all(math.isfinite(v) for v in self.lower + self.upper)

    def wall_names(self) -> tuple[str, ...]:
        """Names of every wall in the order of stored wall indices.

        Box faces ``<axis>_lower``, ``<axis>_upper`` come first (also reflecting ones, so
        indices do not depend on wall kinds), then ``target_<i>``, then ``wall``
        for a ball.
        """
        names: list[str] = []
        if self.shape == "box":
            for axis in axis_names(self.dimension):
                names += [f"{axis}_lower", f"{axis}_upper"]
        names += [f"target_{i}" for i in range(len(self.targets))]
        if self.shape == "ball":
            names.append("wall")
        return tuple(names)

    def wall_absorbing(self) -> tuple[bool, ...]:
        """Whether each wall of :meth:`wall_names` absorbs walkers (absorbing targets
        always do; a reactive wall with κ > 0 absorbs some: a reaction is a first
        passage to it)."""
        kinds: list[bool] = []
        if self.shape == "box":
            for low, high in zip(self.absorbing_low, self.absorbing_high):
                kinds += [low, high]
        kinds += [t.reactivity is None for t in self.targets]
        if self.shape == "ball":
            kinds.append(self.surface_absorbing)
        reactive = self.wall_reactivity()
        return tuple(a or (k is not None and k > 0) for a, k in zip(kinds, reactive))

    def contains(self, point: Sequence[float]) -> bool:
        """Whether ``point`` lies strictly inside the domain and outside every target
        and obstacle."""
        if self.shape == "box":
            inside = all(
                lo < p < hi for p, lo, hi in zip(point, self.lower, self.upper)
            )
        else:
            inside = distance(point, self.center) < self.radius
        return (
            inside
            and not any(distance(point, t.center) <= t.radius for t in self.targets)
            and not any(distance(point, o.center) <= o.radius for o in self.obstacles)
        )


@dataclass(frozen=True)
class Motion:
    """Brownian motion with constant drift: dX = drift dt + sqrt(2 D) dW per axis."""

    dimension: int
    diffusivity: float
    drift: tuple[float, ...]
    #: Start point, or None for uniform over the (bounded) domain outside targets.
    start: tuple[float, ...] | None


@dataclass(frozen=True)
class Timing:
    """Time stepping: step ``dt`` and the censoring ``horizon`` (time units).

    ``scheme`` is "steps" (fixed steps everywhere) or "spheres" (exact jumps while a
    walker is clear of every surface, steps of ``dt`` in a thin layer next to them).
    """

    dt: float
    horizon: float
    monitoring: Literal["bridge", "endpoint"]
    scheme: Literal["steps", "spheres"] = "steps"

    @property
    def n_steps(self) -> int:
        """Number of steps to the horizon (the horizon is snapped to the step grid)."""
        return max(1, round(self.horizon / self.dt))


@dataclass(frozen=True)
class Record:
    """What each task records besides (optionally) the per-walker values."""

    per_walker: bool
    survival_stop: float
    survival_points: int
    occupancy_times: tuple[float, ...] = ()
    occupancy_bins: int = 0
    occupancy_lower: tuple[float, ...] | None = None
    occupancy_upper: tuple[float, ...] | None = None
    #: Bins of the first-passage-time histogram per wall over [0, horizon] (0: none).
    fpt_bins: int = 0

    @property
    def survival_times(self) -> tuple[float, ...]:
        """The survival curve's uniform time grid, from 0 to ``survival_stop``."""
        n = self.survival_points
        return tuple(self.survival_stop * i / (n - 1) for i in range(n))


@dataclass(frozen=True)
class PointSpec:
    """Every parameter of one point of the sweep, fully resolved."""

    motion: Motion
    timing: Timing
    domain: Domain
    record: Record
    #: The [force] potential (sweep.potentials), or None: then it is left out of the
    #: canonical form, so definitions without a force keep their hash and streams.
    force: Force | None = None

    def canonical(self) -> dict[str, Any]:
        """A JSON-able dictionary of this point's parameters (used for seeding)."""
        timing = dict(self.timing.__dict__)
        if timing["scheme"] == "steps":
            # The default is left out, so definitions written before the key existed
            # keep their hash and their random streams.
            del timing["scheme"]
        return jsonable(
            {
                "motion": self.motion.__dict__,
                "time": timing,
                "domain": {
                    **{
                        k: v
                        for k, v in self.domain.__dict__.items()
                        if k not in ("targets", "obstacles")
                        and not (k in _LATER_FIELDS and v == _LATER_FIELDS[k])
                    },
                    # A target's reactivity and the obstacles only when used, so
                    # older definitions keep their hash and streams.
                    "targets": [
                        {
                            k: v
                            for k, v in t.__dict__.items()
                            if not (k == "reactivity" and v is None)
                        }
                        for t in self.domain.targets
                    ],
                    **(
                        {"obstacles": [o.__dict__ for o in self.domain.obstacles]}
                        if self.domain.obstacles
                        else {}
                    ),
                },
                "record": self.record.__dict__,
            }
            | (
                {"force": self.force.canonical(axis_names(self.motion.dimension))}
                if self.force is not None
                else {}
            )
        )


#: What is shown in place of a unit the definition does not name.
NO_UNITS = "definition units"

#: Powers of (length, time) of every quantity that carries units; the dotted keys of
#: the definition map to these through :func:`key_quantity`.
QUANTITIES: dict[str, tuple[int, int]] = {
    "length": (1, 0),
    "time": (0, 1),
    "diffusivity": (2, -1),
    "velocity": (1, -1),
    "rate": (0, -1),
}


@dataclass(frozen=True)
class Units:
    """The definition's units (``[sweep] units = { length = "um", time = "s" }``):
    free text, a label only (numbers are in these units; nothing is converted).
    An empty string: not named."""

    length: str = ""
    time: str = ""

    def of(self, quantity: str, per_length_power: int = 0) -> str:
        """The unit of a quantity of :data:`QUANTITIES` as text ("um^2/s"), or
        :data:`NO_UNITS` when a unit it needs is not named. ``per_length_power``
        divides by length to that power (densities per volume)."""
        length, time = QUANTITIES[quantity]
        length -= per_length_power
        if (length and not self.length) or (time and not self.time):
            return NO_UNITS
        top = [_power(self.length, length)] if length > 0 else []
        top += [_power(self.time, time)] if time > 0 else []
        bottom = [_power(self.length, -length)] if length < 0 else []
        bottom += [_power(self.time, -time)] if time < 0 else []
        text = " ".join(top) or "1"
        return f"{text}/{' '.join(bottom)}" if bottom else text

    def label(self, name: str, quantity: str, per_length_power: int = 0) -> str:
        """``name [unit]`` for axis labels and table headers."""
        return f"{name} [{self.of(quantity, per_length_power)}]"


def _power(unit: str, power: int) -> str:
    return unit if power == 1 else f"{unit}^{power}"


def key_quantity(key: str) -> str | None:
    """The quantity (a key of :data:`QUANTITIES`) of a dotted definition key or a
    store coordinate name, or None for dimensionless ones (wall kinds, counts)."""
    leaf = key.split(".")[-1]
    leaf = leaf.removeprefix("target_").lstrip("0123456789_")
    for axis_suffix in ("_x", "_y", "_z"):
        leaf = leaf.removesuffix(axis_suffix)
    if leaf in ("diffusivity",):
        return "diffusivity"
    if leaf in ("drift", "reactivity"):
        return "velocity"
    if leaf in ("start", "lower", "upper", "center", "radius", "length"):
        return "length"
    if leaf in ("dt", "horizon", "time", "stop", "times"):
        return "time"
    return None


@dataclass(frozen=True)
class Sweep:
    """A validated sweep: the points to simulate and how many walkers each gets.

    Attributes
    ----------
    name, seed, walkers, chunk
        From ``[sweep]``; ``chunk`` is the number of walkers per task (resolved).
    source : str
        Path of the definition file (for messages).
    swept : tuple of str
        Dotted keys that vary between points, in definition order.
    points : tuple of PointSpec, shape (n_points,)
    values : tuple of tuple, shape (n_points, n_swept)
        Each point's value of each swept key, as written in the file.
    canonical : dict
        The whole definition with defaults filled in; stored with the results.
    """

    name: str
    seed: int
    walkers: int
    chunk: int
    source: str
    swept: tuple[str, ...]
    points: tuple[PointSpec, ...]
    values: tuple[tuple[Any, ...], ...]
    canonical: dict[str, Any] = field(compare=False, repr=False)
    #: The definition's TOML text, stored with the results for provenance.
    text: str = field(default="", compare=False, repr=False)
    #: Units of length and time the definition names (labels for tables and plots).
    units: Units = Units()
    #: A precision target (``[sweep] precision``): then ``walkers`` is its ceiling
    #: and each point runs only as many chunks as its target needs.
    precision: Precision | None = None

    @property
    def n_points(self) -> int:
        return len(self.points)

    @property
    def n_chunks(self) -> int:
        return -(-self.walkers // self.chunk)

    @property
    def dimension(self) -> int:
        return self.points[0].motion.dimension

    @property
    def spec_hash(self) -> str:
        """sha256 of the canonical definition: equal hashes mean equal results."""
        return canonical_hash(self.canonical)

    def chunk_walkers(self, chunk: int) -> int:
        """Number of walkers in chunk ``chunk`` (the last one may be smaller)."""
        return min(self.chunk, self.walkers - chunk * self.chunk)


def canonical_hash(canonical: Mapping[str, Any]) -> str:
    """sha256 hex digest of a canonical dictionary's sorted, compact JSON."""
    text = json.dumps(canonical, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


def distance(a: Sequence[float], b: Sequence[float]) -> float:
    """Euclidean distance of two points (length units)."""
    return math.dist(a, b)  # no overflow for huge coordinates, unlike summed squares


def jsonable(value: Any) -> Any:
    """Plain JSON data: tuples become lists, infinities become the strings 'inf'."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [jsonable(v) for v in value]
    if isinstance(value, float) and math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return value
