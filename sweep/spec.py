"""Sweep definitions: TOML text in, validated frozen dataclasses out.

This is the only module that reads user-written dictionaries. Everything downstream
receives :class:`Sweep` and :class:`PointSpec` objects and never re-validates. Nothing
read from a file is evaluated: values are taken as TOML data only.
"""

from __future__ import annotations

import copy
import dataclasses
import difflib
import hashlib
import itertools
import json
import math
import random
import re
import tomllib
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

from sweep import precision as precision_target
from sweep.errors import SpecError, SweepWarning

WallKind = Literal["absorbing", "reflecting"]
WALL_KINDS: tuple[str, ...] = ("absorbing", "reflecting")
#: Box-wall suffixes of earlier versions, refused with a message naming the new one.
_OLD_SIDES: dict[str, str] = {"low": "lower", "high": "upper"}
MONITORING: tuple[str, ...] = ("bridge", "endpoint")
#: Propagation schemes: fixed steps everywhere, or exact sphere jumps in the bulk with
#: steps only near surfaces (kernels/spheres.py).
SCHEMES: tuple[str, ...] = ("steps", "spheres")
SHAPES: tuple[str, ...] = ("box", "ball")
MAX_DIMENSION = 8
#: At most this many points in one store (grid product x zip lengths): each point is
#: validated on its own (about 0.1 ms), so 10^5 points take seconds to check.
MAX_POINTS = 100_000
#: At most this many tasks (points x chunks): one completion marker file each, and a
#: plan of 10^6 tasks takes seconds to build. Larger sweeps need a larger sweep.chunk.
MAX_TASKS = 2_000_000
#: At most this many walkers per point (the per-walker arrays' length).
MAX_WALKERS = 10**12
#: Tables and lists nest at most this deep in a definition (the deepest legal use,
#: a list of points in a grid of a vector key, nests 4).
MAX_NESTING = 16
#: Every finite number of a point (coordinates, lengths, D, drift, dt, horizon) lies
#: within +-MAGNITUDE, and lengths, D and dt are at least TINY: then squares and
#: products of them stay finite and nonzero in double precision.
MAGNITUDE = 1e100
TINY = 1e-100
#: The step sqrt(2 D dt) must exceed this fraction of the largest coordinate, or
#: positions would round the steps away.
RESOLUTION = 1e-12
#: At most this many occupancy bins in all (bins ** dimension), so each task's histogram
#: stays below 80 MB per snapshot.
MAX_OCCUPANCY_BINS = 10**7
#: First-passage-time histogram bins per wall when per-walker values are not kept.
DEFAULT_FPT_BINS = 2000
MAX_FPT_BINS = 1_000_000
#: Default number of points of the survival curve's uniform time grid.
DEFAULT_SURVIVAL_POINTS = 101

SECTIONS: dict[str, tuple[str, ...]] = {
    "sweep": (
        "name",
        "seed",
        "walkers",
        "chunk",
        "description",
        "units",
        "precision",
    ),
    "motion": ("dimension", "diffusivity", "drift", "start"),
    "time": ("dt", "horizon", "monitoring", "scheme"),
    "domain": (
        "shape",
        "lower",
        "upper",
        "walls",
        "center",
        "radius",
        "wall",
        "targets",
    ),
    "record": ("per_walker", "survival", "occupancy", "fpt_bins"),
    "grid": (),
    "zip": (),
}
#: Tables whose keys may be swept by [grid] and [[zip]].
SWEEPABLE_SECTIONS = ("motion", "time", "domain")
#: Keys that change array shapes or the meaning of stored indices: one store, one value.
SHAPE_KEYS = ("motion.dimension", "domain.shape")
TARGET_KEYS = ("center", "radius")


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

    @property
    def dimension(self) -> int:
        return len(self.lower)

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
        """Whether each wall of :meth:`wall_names` absorbs walkers (targets always do)."""
        kinds: list[bool] = []
        if self.shape == "box":
            for low, high in zip(self.absorbing_low, self.absorbing_high):
                kinds += [low, high]
        kinds += [True] * len(self.targets)
        if self.shape == "ball":
            kinds.append(self.surface_absorbing)
        return tuple(kinds)

    def contains(self, point: Sequence[float]) -> bool:
        """Whether ``point`` lies strictly inside the domain and outside every target."""
        if self.shape == "box":
            inside = all(
                lo < p < hi for p, lo, hi in zip(point, self.lower, self.upper)
            )
        else:
            inside = _distance(point, self.center) < self.radius
        return inside and not any(
            _distance(point, t.center) <= t.radius for t in self.targets
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

    def canonical(self) -> dict[str, Any]:
        """A JSON-able dictionary of this point's parameters (used for seeding)."""
        timing = dict(self.timing.__dict__)
        if timing["scheme"] == "steps":
            # The default is left out, so definitions written before the key existed
            # keep their hash and their random streams.
            del timing["scheme"]
        return _jsonable(
            {
                "motion": self.motion.__dict__,
                "time": timing,
                "domain": {
                    **{k: v for k, v in self.domain.__dict__.items() if k != "targets"},
                    "targets": [t.__dict__ for t in self.domain.targets],
                },
                "record": self.record.__dict__,
            }
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
    precision: precision_target.Precision | None = None

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


def _absorbing_everywhere(points: Sequence[PointSpec]) -> list[str]:
    """Names of the walls and targets that absorb at every point."""
    names = points[0].domain.wall_names()
    return [
        name
        for i, name in enumerate(names)
        if all(p.domain.wall_absorbing()[i] for p in points)
    ]


def canonical_hash(canonical: Mapping[str, Any]) -> str:
    """sha256 hex digest of a canonical dictionary's sorted, compact JSON."""
    text = json.dumps(canonical, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


# --------------------------------------------------------------------------- parsing


def load_spec(path: str | Path) -> Sweep:
    """Read and validate a sweep definition file.

    Parameters
    ----------
    path : str or Path
        A TOML file laid out as in the design's "Sweep definition".

    Returns
    -------
    Sweep

    Raises
    ------
    SpecError
        With one message naming the file, the key, the value and what is allowed.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise SpecError(f"{path}: no such sweep definition file.") from None
    except IsADirectoryError:
        raise SpecError(f"{path}: is a directory; expected a TOML file.") from None
    except UnicodeDecodeError as err:
        raise SpecError(f"{path}: not UTF-8 text ({err.reason}).") from None
    except OSError as err:
        raise SpecError(f"{path}: cannot be read ({err.strerror}).") from None
    return parse_spec(text, source=str(path))


def parse_spec(text: str, source: str = "<string>") -> Sweep:
    """Validate the TOML ``text`` of a sweep definition (see :func:`load_spec`)."""
    too_deep = SpecError(
        f"{source}: tables or lists are nested too deeply (more than {MAX_NESTING} "
        f"levels); a sweep definition nests at most a few (a list of points inside "
        f"[grid]). Check for runaway brackets or braces."
    )
    try:
        raw = tomllib.loads(text)
    except RecursionError:  # the TOML parser itself recurses per level
        raise too_deep from None
    except tomllib.TOMLDecodeError as err:
        where = ""
        found = re.search(r"line (\d+)", str(err))
        if found:
            lines = text.splitlines()
            number = int(found.group(1))
            if 0 < number <= len(lines):
                where = f"\n  line {number}: {lines[number - 1].strip()}"
        raise SpecError(f"{source}: not valid TOML: {err}.{where}") from None
    if _nesting(raw) > MAX_NESTING:
        raise too_deep
    sweep = _Parser(source).sweep(raw)
    _warn_duplicates(sweep)
    return dataclasses.replace(sweep, text=text)


def _nesting(value: Any) -> int:
    """How deep lists and tables nest in ``value`` (without recursion)."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if depth > MAX_NESTING:
            break
        if isinstance(item, dict):
            stack += [(v, depth + 1) for v in item.values()]
        elif isinstance(item, list):
            stack += [(v, depth + 1) for v in item]
    return deepest


def _warn_duplicates(sweep: Sweep) -> None:
    """Warn when grid points repeat: they simulate bit-identical walkers."""
    first: dict[str, int] = {}
    repeats: list[tuple[int, int]] = []
    for index, values in enumerate(sweep.canonical["values"]):
        key = json.dumps(values)
        if key in first:
            repeats.append((first[key], index))
        else:
            first.setdefault(key, index)
    if not repeats:
        return
    shown = ", ".join(f"{b} repeats {a}" for a, b in repeats[:5])
    more = f" and {len(repeats) - 5} more" if len(repeats) > 5 else ""
    warnings.warn(
        f"{sweep.source}: [grid] {len(repeats)} point(s) repeat an earlier point "
        f"({shown}{more}); a repeated point simulates bit-identical walkers (its "
        f"random stream depends only on its parameters), so it adds no information. "
        f"Remove the repeated values.",
        SweepWarning,
        stacklevel=3,
    )


class _Parser:
    """Validation with messages that name the file and the key."""

    def __init__(self, source: str) -> None:
        self.source = source
        self.context = ""  # e.g. " (grid point 3: motion.diffusivity = -1)"
        self.origin: dict[str, str] = {}  # swept key -> "grid" or "zip #<n>"

    def fail(self, key: str, message: str) -> SpecError:
        return SpecError(f"{self.source}: [{key}] {message}{self.context}")

    # ----- generic value readers

    def keys(
        self, table: Mapping[str, Any], allowed: Sequence[str], where: str
    ) -> None:
        for key in table:
            if key not in allowed:
                hint = difflib.get_close_matches(key, allowed, n=1, cutoff=0.5)
                maybe = f" Did you mean {hint[0]!r}?" if hint else ""
                place = "at the top level" if not where else f"in [{where}]"
                raise SpecError(
                    f"{self.source}: unknown key {key!r} {place}."
                    f" Allowed keys: {', '.join(allowed)}.{maybe}{self.context}"
                )

    def table(self, raw: Mapping[str, Any], key: str, where: str) -> dict[str, Any]:
        value = raw.get(key, {})
        if not isinstance(value, dict):
            raise self.fail(
                f"{where}.{key}" if where else key,
                f"must be a table; got {_toml(value)}.",
            )
        return value

    def required(self, table: Mapping[str, Any], key: str, where: str) -> Any:
        if key not in table:
            raise SpecError(
                f"{self.source}: [{where}] is missing the required key {key!r}.{self.context}"
            )
        return table[key]

    def number(
        self,
        value: Any,
        key: str,
        *,
        positive: bool = False,
        nonnegative: bool = False,
        allow_inf: bool = False,
    ) -> float:
        if isinstance(value, str) and value.strip() in ("inf", "+inf", "-inf"):
            value = float(value)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(key, f"must be a number; got {_toml(value)}.")
        try:
            value = float(value)
        except OverflowError:
            raise self.fail(
                key, f"must be a number within +-1.8e308; got {_short_int(value)}."
            ) from None
        if math.isnan(value):
            raise self.fail(key, "must be a finite number; got nan.")
        if math.isinf(value) and not allow_inf:
            raise self.fail(key, f"must be finite; got {_toml(value)}.")
        if positive and not value > 0:
            raise self.fail(key, f"must be > 0; got {_toml(value)}.")
        if nonnegative and not value >= 0:
            raise self.fail(key, f"must be >= 0; got {_toml(value)}.")
        return value

    def integer(
        self, value: Any, key: str, *, minimum: int, maximum: int | None = None
    ) -> int:
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.fail(key, f"must be a whole number; got {_toml(value)}.")
        if value < minimum or (maximum is not None and value > maximum):
            allowed = (
                f">= {minimum}" if maximum is None else f"from {minimum} to {maximum}"
            )
            raise self.fail(key, f"must be {allowed}; got {_toml(value)}.")
        return value

    def vector(
        self, value: Any, key: str, dimension: int, *, allow_inf: bool = False
    ) -> tuple[float, ...]:
        if dimension == 1 and not isinstance(value, list):
            value = [value]
        if not isinstance(value, list) or len(value) != dimension:
            raise self.fail(
                key,
                f"must be a list of {dimension} number{'s' if dimension > 1 else ''} "
                f"(one per axis of a {dimension}-dimensional domain); got {_toml(value)}.",
            )
        return tuple(self.number(v, key, allow_inf=allow_inf) for v in value)

    def choice(self, value: Any, key: str, allowed: Sequence[str]) -> str:
        if value not in allowed:
            quoted = " or ".join(repr(a) for a in allowed)
            raise self.fail(key, f"must be {quoted}; got {_toml(value)}.")
        return str(value)

    def boolean(self, value: Any, key: str) -> bool:
        if not isinstance(value, bool):
            raise self.fail(key, f"must be true or false; got {_toml(value)}.")
        return value

    # ----- the sweep as a whole

    def sweep(self, raw: dict[str, Any]) -> Sweep:
        self.keys(raw, tuple(SECTIONS), "")
        for name in ("sweep", "motion", "time", "domain"):
            if name not in raw:
                raise SpecError(
                    f"{self.source}: the table [{name}] is missing; a definition needs "
                    f"[sweep], [motion], [time] and [domain]."
                )
        for name in ("sweep", "motion", "time", "domain", "record", "grid"):
            self.table(raw, name, "")
        head = raw["sweep"]
        self.keys(head, SECTIONS["sweep"], "sweep")
        name = head.get("name", Path(self.source).stem)
        if not isinstance(name, str) or not name.strip():
            raise self.fail(
                "sweep.name", f"must be a non-empty string; got {_toml(name)}."
            )
        description = head.get("description", "")
        if not isinstance(description, str):
            raise self.fail(
                "sweep.description", f"must be a string; got {_toml(description)}."
            )
        units = self.units(head.get("units", {}))
        seed = self.integer(
            self.required(head, "seed", "sweep"), "sweep.seed", minimum=0
        )
        target = None
        if "precision" in head:
            # A target: the store holds max_walkers per point; `walkers` (optional)
            # is the first round's (sweep.precision).
            target = precision_target.parse(head["precision"], self.source)
            if "chunk" in head:
                chunk = self.integer(head["chunk"], "sweep.chunk", minimum=1)
                if chunk > target.max_walkers:
                    raise self.fail(
                        "sweep.precision.max_walkers",
                        f"must hold at least one chunk of {chunk:,} walkers "
                        f"(sweep.chunk); got {target.max_walkers:,}.",
                    )
            first = (
                self.integer(
                    head["walkers"],
                    "sweep.walkers",
                    minimum=1,
                    maximum=target.max_walkers,
                )
                if "walkers" in head
                else min(precision_target.DEFAULT_FIRST_WALKERS, target.max_walkers)
            )
            target = dataclasses.replace(target, first_walkers=first)
            walkers = target.max_walkers
        else:
            walkers = self.integer(
                self.required(head, "walkers", "sweep"), "sweep.walkers", minimum=1
            )
        if walkers > MAX_WALKERS:
            raise self.fail(
                "sweep.walkers",
                f"must be at most {MAX_WALKERS:,} per point (the per-walker arrays "
                f"alone would hold {walkers * 26 / 1e12:.3g} TB); got {walkers:,}.",
            )
        if target is not None:
            if "chunk" not in head:
                chunk = auto_chunk(target.first_walkers)
        elif "chunk" in head:
            chunk = self.integer(
                head["chunk"], "sweep.chunk", minimum=1, maximum=walkers
            )
        else:
            chunk = auto_chunk(walkers)

        axes = self.axes(raw)
        n_points = math.prod(len(values) for _, values in axes)
        if n_points > MAX_POINTS:
            lengths = " x ".join(f"{len(v)} ({', '.join(k)})" for k, v in axes)
            raise self.fail(
                "grid",
                f"gives {n_points:,} points ({lengths}); at most {MAX_POINTS:,} fit in "
                f"one store. Split the sweep into several definitions.",
            )
        n_tasks = n_points * -(-walkers // chunk)
        if n_tasks > MAX_TASKS:
            raise self.fail(
                "sweep.chunk",
                f"{walkers:,} walkers per point in tasks of {chunk:,} over {n_points:,} "
                f"point(s) make {n_tasks:,} tasks; at most {MAX_TASKS:,} fit in one "
                f"store (one completion marker each). Raise sweep.chunk to at least "
                f"{-(-walkers * n_points // MAX_TASKS):,}, or split the sweep.",
            )
        base = {
            k: copy.deepcopy(raw[k])
            for k in ("motion", "time", "domain", "record")
            if k in raw
        }
        combos = list(itertools.product(*(values for _, values in axes)))
        swept = tuple(key for keys, _ in axes for key in keys)

        points: list[PointSpec] = []
        values: list[tuple[Any, ...]] = []
        for index, combo in enumerate(combos):
            flat = tuple(v for group in combo for v in group)
            if swept:
                shown = ", ".join(f"{k} = {_show(v)}" for k, v in zip(swept, flat))
                self.context = f" (at point {index}: {shown})"
            point_raw = copy.deepcopy(base)
            for key, value in zip(swept, flat):
                self.assign(point_raw, key, copy.deepcopy(value))
            points.append(self.point(point_raw))
            values.append(flat)
        self.context = ""
        self.same_shapes(points, swept, values)
        points = self.common_survival_grid(points, raw)
        if target is not None:
            precision_target.check_wall(
                target, _absorbing_everywhere(points), self.source
            )
        # Point 0 fully resolved plus every point's swept values determine all points:
        # keys not swept are equal everywhere, swept ones are overridden everywhere.
        canonical = _jsonable(
            {
                # The name is a label, not part of the hash: renaming the file (its
                # default name) must not block resuming.
                "sweep": {"seed": seed, "walkers": walkers, "chunk": chunk}
                # Units enter the hash only when named, so definitions without them
                # keep their hash (and their stores); a store in "um" is not resumed
                # as one in "mm".
                | ({"units": dataclasses.asdict(units)} if units != Units() else {})
                | ({"precision": target.canonical()} if target is not None else {}),
                "point0": points[0].canonical(),
                "swept": list(swept),
                # Every sweepable number is a float: 1 and 1.0 are the same point.
                "values": [[_floats(x) for x in v] for v in values],
            }
        )
        return Sweep(
            name=name,
            seed=seed,
            walkers=walkers,
            chunk=chunk,
            source=self.source,
            swept=swept,
            points=tuple(points),
            values=tuple(values),
            canonical=canonical,
            units=units,
            precision=target,
        )

    def units(self, raw: Any) -> Units:
        """``[sweep] units = { length = "um", time = "s" }``: free text, each optional."""
        if not isinstance(raw, dict):
            raise self.fail(
                "sweep.units",
                f'must be a table like {{ length = "um", time = "s" }}; got {_toml(raw)}.',
            )
        self.keys(raw, ("length", "time"), "sweep.units")
        named = {}
        for key, value in raw.items():
            if not isinstance(value, str) or not value.strip() or len(value) > 40:
                raise self.fail(
                    f"sweep.units.{key}",
                    f'must be a short non-empty text such as "um" or "s"; got '
                    f"{_toml(value)}.",
                )
            named[key] = value.strip()
        return Units(**named)

    def axes(
        self, raw: dict[str, Any]
    ) -> list[tuple[tuple[str, ...], list[tuple[Any, ...]]]]:
        """The sweep's axes: each ([keys], [values per step]); a product over axes."""
        axes: list[tuple[tuple[str, ...], list[tuple[Any, ...]]]] = []
        seen: set[str] = set()
        for key, values in raw.get("grid", {}).items():
            self.swept_values(key, values, "grid", seen)
            axes.append(((key,), [(v,) for v in values]))
        zips = raw.get("zip", [])
        if not isinstance(zips, list) or not all(isinstance(z, dict) for z in zips):
            raise self.fail(
                "zip", "must be written as [[zip]] tables of lists of equal length."
            )
        for number, group in enumerate(zips):
            if not group:
                raise self.fail(
                    f"zip #{number + 1}", "is empty; give it at least one key."
                )
            lengths = set()
            for key, values in group.items():
                self.swept_values(key, values, f"zip #{number + 1}", seen)
                lengths.add(len(values))
            if len(lengths) > 1:
                shown = ", ".join(f"{k}: {len(v)}" for k, v in group.items())
                raise self.fail(
                    f"zip #{number + 1}",
                    f"lists must all have the same length; got {shown}.",
                )
            keys = tuple(group)
            axes.append(
                (keys, [tuple(group[k][i] for k in keys) for i in range(lengths.pop())])
            )
        return axes

    def swept_values(self, key: str, values: Any, where: str, seen: set[str]) -> None:
        """Check one swept key of [grid] or a [[zip]] table and its list of values."""
        if isinstance(values, dict) and "." not in key:
            raise self.fail(
                f"{where}.{key}",
                "is a table, not a list: write dotted keys in quotes, e.g. "
                '"motion.diffusivity" = [0.5, 1.0] (without quotes TOML reads the '
                "dots as nested tables).",
            )
        self.sweep_key(key, where, seen)
        self.origin[key] = where
        if not isinstance(values, list) or not values:
            raise self.fail(
                f"{where}.{key}",
                f"must be a non-empty list of values; got {_toml(values)}.",
            )

    def sweep_key(self, key: str, where: str, seen: set[str]) -> None:
        parts = key.split(".")
        section = parts[0]
        if key in SHAPE_KEYS:
            raise self.fail(
                f"{where}.{key}",
                "cannot be swept: it changes array shapes within one store. "
                "Write one sweep definition per value instead.",
            )
        if section not in SWEEPABLE_SECTIONS or len(parts) < 2:
            allowed = ", ".join(
                f"{s}.{k}"
                for s in SWEEPABLE_SECTIONS
                for k in SECTIONS[s]
                if f"{s}.{k}" not in SHAPE_KEYS
            )
            raise self.fail(
                f"{where}.{key}",
                f"is not a sweepable key. Sweepable keys are dotted paths into "
                f"[motion], [time] and [domain]: {allowed} "
                f"(and domain.targets.<i>.center / domain.targets.<i>.radius, "
                f"domain.walls.<wall>).",
            )
        leaf = parts[1]
        if leaf not in SECTIONS[section]:
            hint = difflib.get_close_matches(leaf, SECTIONS[section], n=1, cutoff=0.5)
            maybe = f" Did you mean '{section}.{hint[0]}'?" if hint else ""
            raise self.fail(
                f"{where}.{key}",
                f"names no key of [{section}]; allowed: {', '.join(SECTIONS[section])}.{maybe}",
            )
        if len(parts) > 2:
            ok = (leaf == "walls" and len(parts) == 3) or (
                leaf == "targets"
                and len(parts) == 4
                and _is_index(parts[2])
                and parts[3] in TARGET_KEYS
            )
            if not ok:
                raise self.fail(
                    f"{where}.{key}",
                    "is too deep; only domain.walls.<wall> and "
                    "domain.targets.<i>.center|radius reach inside a key.",
                )
        for other in seen:
            if (
                key == other
                or key.startswith(other + ".")
                or other.startswith(key + ".")
            ):
                raise self.fail(
                    f"{where}.{key}",
                    f"is swept twice (also as {other!r}); sweep it once.",
                )
        seen.add(key)

    def common_survival_grid(
        self, points: list[PointSpec], raw: dict[str, Any]
    ) -> list[PointSpec]:
        """One survival time grid for the whole store.

        Without an explicit ``record.survival.stop`` the grid ends at the shortest
        horizon of all points (the horizon may be swept).
        """
        survival = raw.get("record", {}).get("survival", {})
        if "stop" in survival:
            return points
        stop = min(p.timing.horizon for p in points)
        return [
            dataclasses.replace(
                p, record=dataclasses.replace(p.record, survival_stop=stop)
            )
            for p in points
        ]

    def assign(self, raw: dict[str, Any], key: str, value: Any) -> None:
        """Set ``raw[a][b]...`` for a swept dotted ``key``; integer parts index lists."""
        parts = key.split(".")
        node: Any = raw
        for depth, part in enumerate(parts):
            last = depth == len(parts) - 1
            where = ".".join(parts[:depth]) or "the definition"
            if isinstance(node, list):
                if not _is_index(part):
                    raise self.fail(
                        f"{self.origin[key]}.{key}",
                        f"reaches into {where}, which is {_toml(node)}: a list takes an "
                        f"entry number, not {part!r}.",
                    )
                index = int(part)
                if index >= len(node):
                    entries = "entry" if len(node) == 1 else "entries"
                    raise self.fail(
                        f"{self.origin[key]}.{key}",
                        f"reaches entry {index} of {where}, which has {len(node)} {entries}.",
                    )
                if last:
                    node[index] = value
                else:
                    node = node[index]
            elif isinstance(node, dict):
                if last:
                    node[part] = value
                else:
                    if part not in node:
                        node[part] = [] if _is_index(parts[depth + 1]) else {}
                    node = node[part]
            else:
                raise self.fail(
                    f"{self.origin[key]}.{key}",
                    f"reaches into {where}, which is {_toml(node)} and not a table or list.",
                )

    def same_shapes(
        self,
        points: list[PointSpec],
        swept: tuple[str, ...],
        values: list[tuple[Any, ...]],
    ) -> None:
        """Points of one store must share every array shape and wall index."""
        first = points[0]
        for index, p in enumerate(points[1:], start=1):
            if len(p.domain.targets) != len(first.domain.targets):
                shown = ", ".join(
                    f"{k} = {_show(v)}" for k, v in zip(swept, values[index])
                )
                raise SpecError(
                    f"{self.source}: point {index} ({shown}) has "
                    f"{len(p.domain.targets)} targets but point 0 has "
                    f"{len(first.domain.targets)}; the number of targets fixes wall "
                    f"indices and cannot change within one store."
                )

    # ----- one point

    def point(self, raw: dict[str, Any]) -> PointSpec:
        motion_raw = self.table(raw, "motion", "")
        self.keys(motion_raw, SECTIONS["motion"], "motion")
        dimension = self.integer(
            self.required(motion_raw, "dimension", "motion"),
            "motion.dimension",
            minimum=1,
            maximum=MAX_DIMENSION,
        )
        timing = self.timing(self.table(raw, "time", ""))
        domain = self.domain(self.table(raw, "domain", ""), dimension)
        motion = self.motion(motion_raw, dimension, domain)
        self.scales(motion, timing, domain)
        record = self.record(self.table(raw, "record", ""), timing, domain)
        if timing.scheme == "spheres":
            self.spheres_allowed(motion, record)
        return PointSpec(motion=motion, timing=timing, domain=domain, record=record)

    def spheres_allowed(self, motion: Motion, record: Record) -> None:
        """Refuse what the sphere jumps cannot do: drift and occupancy snapshots."""
        if any(v != 0.0 for v in motion.drift):
            raise self.fail(
                "motion.drift",
                f'must be zero with time.scheme = "spheres": the jumps use the exit '
                f"laws of free Brownian motion. Got {_toml(list(motion.drift))}; use "
                f'time.scheme = "steps" for motion with drift.',
            )
        if record.occupancy_times:
            raise self.fail(
                "record.occupancy",
                'is not available with time.scheme = "spheres": a walker\'s position '
                "at a fixed time falls inside a jump, where only its exit is drawn. "
                'Use time.scheme = "steps" for occupancy snapshots (or a second sweep '
                "with it), or remove record.occupancy.",
            )

    def scales(self, motion: Motion, timing: Timing, domain: Domain) -> None:
        """Refuse numbers whose squares or products leave double precision."""
        why = (
            "so that squares and products of lengths, times and rates stay finite "
            "and nonzero in double precision"
        )
        box = domain.shape == "box"
        coordinates: list[tuple[str, float]] = [
            *(
                (f"domain.{'lower' if box else 'center'}", v)
                for v in (domain.lower if box else domain.center)
            ),
            *(("domain.upper", v) for v in (domain.upper if box else ())),
            *(("motion.start", v) for v in (motion.start or ())),
            *(("motion.drift", v) for v in motion.drift),
            *(
                (f"domain.targets.{i}.center", v)
                for i, t in enumerate(domain.targets)
                for v in t.center
            ),
            ("motion.diffusivity", motion.diffusivity),
            ("time.horizon", timing.horizon),
        ]
        for key, value in coordinates:
            if math.isfinite(value) and abs(value) > MAGNITUDE:
                raise self.fail(
                    key, f"must lie within +-{MAGNITUDE:g} ({why}); got {value!r}."
                )
        lengths: list[tuple[str, float]] = [
            ("motion.diffusivity", motion.diffusivity),
            ("time.dt", timing.dt),
            *(
                (f"domain.targets.{i}.radius", t.radius)
                for i, t in enumerate(domain.targets)
            ),
        ]
        if box:
            lengths += [
                ("domain.upper", hi - lo)
                for lo, hi in zip(domain.lower, domain.upper)
                if math.isfinite(lo) and math.isfinite(hi)
            ]
        else:
            lengths.append(("domain.radius", domain.radius))
        for key, value in lengths:
            if value < TINY or value > MAGNITUDE:
                what = (
                    "domain width upper - lower" if key == "domain.upper" else "value"
                )
                raise self.fail(
                    key,
                    f"the {what} must lie within {TINY:g} .. {MAGNITUDE:g} ({why}); "
                    f"got {value!r}.",
                )
        step = math.sqrt(2.0 * motion.diffusivity * timing.dt)
        scale = max(
            (
                abs(v)
                for key, v in coordinates
                if key.startswith(("domain", "motion.start")) and math.isfinite(v)
            ),
            default=0.0,
        )
        if not (math.isfinite(step) and step > RESOLUTION * scale):
            raise self.fail(
                "time.dt",
                f"the step sqrt(2 D dt) = {step!r} is below the resolution of positions "
                f"as large as {scale!r} (at least {RESOLUTION:g} of them): steps would "
                f"round away. Raise dt or D, or move the domain nearer the origin.",
            )

    def timing(self, table: dict[str, Any]) -> Timing:
        self.keys(table, SECTIONS["time"], "time")
        dt = self.number(self.required(table, "dt", "time"), "time.dt", positive=True)
        horizon = self.number(
            self.required(table, "horizon", "time"), "time.horizon", positive=True
        )
        if dt >= horizon:
            raise self.fail(
                "time.dt",
                f"must be smaller than time.horizon = {horizon!r}; got {_toml(dt)}.",
            )
        if horizon / dt > 2**62:
            raise self.fail(
                "time.horizon", f"needs more than 2^62 steps of dt = {dt!r}."
            )
        monitoring = self.choice(
            table.get("monitoring", "bridge"), "time.monitoring", MONITORING
        )
        scheme = self.choice(table.get("scheme", "steps"), "time.scheme", SCHEMES)
        return Timing(dt=dt, horizon=horizon, monitoring=monitoring, scheme=scheme)  # type: ignore[arg-type]

    def domain(self, table: dict[str, Any], dimension: int) -> Domain:
        self.keys(table, SECTIONS["domain"], "domain")
        shape = self.choice(table.get("shape", "box"), "domain.shape", SHAPES)
        axes = axis_names(dimension)
        if shape == "box":
            for key in ("center", "radius", "wall"):
                if key in table:
                    raise self.fail(
                        f"domain.{key}",
                        "belongs to a ball domain; a box takes lower, upper and walls.",
                    )
            lower = self.vector(
                self.required(table, "lower", "domain"),
                "domain.lower",
                dimension,
                allow_inf=True,
            )
            upper = self.vector(
                self.required(table, "upper", "domain"),
                "domain.upper",
                dimension,
                allow_inf=True,
            )
            for axis, lo, hi in zip(axes, lower, upper):
                if not lo < hi or lo == math.inf or hi == -math.inf:
                    raise self.fail(
                        "domain.lower",
                        f"must be below domain.upper on every axis; got {_toml(lo)} >= {hi!r} "
                        f"on axis {axis}.",
                    )
            walls = self.table(table, "walls", "domain")
            names = [f"{a}_{side}" for a in axes for side in ("lower", "upper")]
            for name in walls:
                axis, _, side = name.rpartition("_")
                if side in _OLD_SIDES:
                    raise self.fail(
                        f"domain.walls.{name}",
                        f"is the old spelling; walls are named after the lower and upper "
                        f"keys that place them: write {axis}_{_OLD_SIDES[side]}.",
                    )
                if name not in names and name.endswith(("_lower", "_upper")):
                    if axis in axis_names(MAX_DIMENSION):
                        raise self.fail(
                            f"domain.walls.{name}",
                            f"names axis {axis!r}, but this {dimension}-dimensional "
                            f"domain has only the axes {', '.join(axes)}; remove it or "
                            f"raise motion.dimension.",
                        )
            self.keys(walls, names, "domain.walls")
            low: list[bool] = []
            high: list[bool] = []
            for axis, lo, hi in zip(axes, lower, upper):
                for side, bound, kinds in (("lower", lo, low), ("upper", hi, high)):
                    name = f"{axis}_{side}"
                    if math.isinf(bound):
                        if name in walls:
                            raise self.fail(
                                f"domain.walls.{name}",
                                f"is at infinity (domain.{side} "
                                f"is {bound!r}); remove it.",
                            )
                        kinds.append(False)
                        continue
                    if name not in walls:
                        raise self.fail(
                            "domain.walls",
                            f"must give the kind of wall {name!r} "
                            f'("absorbing" or "reflecting"); got {_toml(sorted(walls))}.',
                        )
                    kind = self.choice(walls[name], f"domain.walls.{name}", WALL_KINDS)
                    kinds.append(kind == "absorbing")
            domain = Domain(
                shape="box",
                lower=lower,
                upper=upper,
                absorbing_low=tuple(low),
                absorbing_high=tuple(high),
            )
        else:
            for key in ("lower", "upper", "walls"):
                if key in table:
                    raise self.fail(
                        f"domain.{key}",
                        "belongs to a box domain; a ball takes center, radius and wall.",
                    )
            if dimension < 2:
                raise self.fail(
                    "domain.shape",
                    '"ball" needs motion.dimension >= 2; in one dimension use a box '
                    "(an interval).",
                )
            center = self.vector(
                self.required(table, "center", "domain"), "domain.center", dimension
            )
            radius = self.number(
                self.required(table, "radius", "domain"), "domain.radius", positive=True
            )
            kind = self.choice(
                self.required(table, "wall", "domain"), "domain.wall", WALL_KINDS
            )
            domain = Domain(
                shape="ball",
                lower=tuple(c - radius for c in center),
                upper=tuple(c + radius for c in center),
                absorbing_low=(False,) * dimension,
                absorbing_high=(False,) * dimension,
                center=center,
                radius=radius,
                surface_absorbing=kind == "absorbing",
            )
        targets = table.get("targets", [])
        if not isinstance(targets, list):
            raise self.fail(
                "domain.targets", f"must be a list of tables; got {_toml(targets)}."
            )
        parsed: list[Target] = []
        for i, target in enumerate(targets):
            key = f"domain.targets.{i}"
            if not isinstance(target, dict):
                raise self.fail(
                    key,
                    f"must be a table {{ center = [...], radius = ... }}; got {_toml(target)}.",
                )
            self.keys(target, TARGET_KEYS, key)
            center = self.vector(
                self.required(target, "center", key), f"{key}.center", dimension
            )
            radius = self.number(
                self.required(target, "radius", key), f"{key}.radius", positive=True
            )
            if not _inside_box_or_ball(domain, center):
                raise self.fail(
                    f"{key}.center",
                    f"must lie inside the domain; got {_toml(list(center))}.",
                )
            parsed.append(Target(center=center, radius=radius))
        if parsed:
            domain = Domain(**{**domain.__dict__, "targets": tuple(parsed)})
        return domain

    def motion(self, table: dict[str, Any], dimension: int, domain: Domain) -> Motion:
        diffusivity = self.number(
            self.required(table, "diffusivity", "motion"),
            "motion.diffusivity",
            positive=True,
        )
        drift = self.vector(
            table.get("drift", [0.0] * dimension), "motion.drift", dimension
        )
        start_raw = self.required(table, "start", "motion")
        if start_raw == "uniform":
            if not domain.bounded:
                raise self.fail(
                    "motion.start",
                    '"uniform" needs a bounded domain (every side finite); give a start '
                    "point instead.",
                )
            if domain.targets and _free_fraction(domain) == 0.0:
                raise self.fail(
                    "motion.start",
                    '"uniform" needs free space, but the targets cover (nearly) the whole '
                    "domain: none of 4096 evenly scattered sample points is free. Make "
                    "them smaller or give a start point.",
                )
            return Motion(dimension, diffusivity, drift, None)
        if isinstance(start_raw, str):
            raise self.fail(
                "motion.start",
                f'must be a point (list of {dimension} numbers) or "uniform"; got {_toml(start_raw)}.',
            )
        start = self.vector(start_raw, "motion.start", dimension)
        if not _inside_box_or_ball(domain, start):
            raise self.fail(
                "motion.start",
                f"must lie strictly inside the domain; got {_toml(list(start))}.",
            )
        for i, target in enumerate(domain.targets):
            if _distance(start, target.center) <= target.radius:
                raise self.fail(
                    "motion.start",
                    f"lies inside target {i} (center {list(target.center)!r}, radius "
                    f"{target.radius!r}); got {_toml(list(start))}. Start outside every target.",
                )
        return Motion(dimension, diffusivity, drift, start)

    def record(self, table: dict[str, Any], timing: Timing, domain: Domain) -> Record:
        self.keys(table, SECTIONS["record"], "record")
        per_walker = self.boolean(table.get("per_walker", True), "record.per_walker")
        # Without per-walker values the histogram is the only record of absorption
        # times and walls, so it is on by default then.
        fpt_bins = self.integer(
            table.get("fpt_bins", 0 if per_walker else DEFAULT_FPT_BINS),
            "record.fpt_bins",
            minimum=0 if per_walker else 1,
            maximum=MAX_FPT_BINS,
        )
        survival = table.get("survival", {})
        if not isinstance(survival, dict):
            raise self.fail(
                "record.survival",
                f"must be a table {{ stop, points }}; got {_toml(survival)}.",
            )
        self.keys(survival, ("stop", "points"), "record.survival")
        stop = self.number(
            survival.get("stop", timing.horizon), "record.survival.stop", positive=True
        )
        if stop > timing.horizon * (1 + 1e-12):
            raise self.fail(
                "record.survival.stop",
                f"must not exceed time.horizon = {timing.horizon!r}; got {_toml(stop)}.",
            )
        points = self.integer(
            survival.get("points", DEFAULT_SURVIVAL_POINTS),
            "record.survival.points",
            minimum=2,
            maximum=1_000_000,
        )
        occupancy = table.get("occupancy")
        if occupancy is None:
            return Record(per_walker, stop, points, fpt_bins=fpt_bins)
        if not isinstance(occupancy, dict):
            raise self.fail(
                "record.occupancy",
                f"must be a table {{ times, bins }}; got {_toml(occupancy)}.",
            )
        self.keys(occupancy, ("times", "bins", "lower", "upper"), "record.occupancy")
        times_raw = self.required(occupancy, "times", "record.occupancy")
        if not isinstance(times_raw, list) or not times_raw:
            raise self.fail(
                "record.occupancy.times",
                f"must be a non-empty list; got {_toml(times_raw)}.",
            )
        times = tuple(
            self.number(t, "record.occupancy.times", nonnegative=True)
            for t in times_raw
        )
        for t in times:
            if t > timing.horizon:
                raise self.fail(
                    "record.occupancy.times",
                    f"must lie within [0, time.horizon = {timing.horizon!r}]; got {_toml(t)}.",
                )
        d = domain.dimension
        bins_raw = self.required(occupancy, "bins", "record.occupancy")
        if (
            isinstance(bins_raw, int)
            and not isinstance(bins_raw, bool)
            and bins_raw > 0
        ):
            if bins_raw**d > MAX_OCCUPANCY_BINS:
                raise self.fail(
                    "record.occupancy.bins",
                    f"gives more than {MAX_OCCUPANCY_BINS:,} bins in all (bins per axis, "
                    f"to the power {d} of the dimension); at most {MAX_OCCUPANCY_BINS:,} "
                    f"are allowed. Got {_short_int(bins_raw)}.",
                )
        bins = self.integer(
            self.required(occupancy, "bins", "record.occupancy"),
            "record.occupancy.bins",
            minimum=1,
            maximum=max(1, int((MAX_OCCUPANCY_BINS * (1 + 1e-12)) ** (1 / d))),
        )
        lower = domain.lower
        upper = domain.upper
        if "lower" in occupancy:
            lower = self.vector(occupancy["lower"], "record.occupancy.lower", d)
        if "upper" in occupancy:
            upper = self.vector(occupancy["upper"], "record.occupancy.upper", d)
        if not all(math.isfinite(v) for v in lower + upper):
            raise self.fail(
                "record.occupancy",
                "needs finite bin ranges; the domain is unbounded, so give "
                "record.occupancy.lower and record.occupancy.upper.",
            )
        if not all(lo < hi for lo, hi in zip(lower, upper)):
            raise self.fail(
                "record.occupancy.lower",
                f"must be below record.occupancy.upper on every axis; got {_toml(list(lower))} "
                f"and {list(upper)!r}.",
            )
        return Record(per_walker, stop, points, times, bins, lower, upper, fpt_bins)


def auto_chunk(walkers: int, target: int = 100_000) -> int:
    """Walkers per task when the definition gives none: about ``target``, evenly split."""
    n_chunks = -(-walkers // target)
    return -(-walkers // n_chunks)


# --------------------------------------------------------------------------- helpers


def _distance(a: Sequence[float], b: Sequence[float]) -> float:
    return math.dist(a, b)  # no overflow for huge coordinates, unlike summed squares


def _inside_box_or_ball(domain: Domain, point: Sequence[float]) -> bool:
    if domain.shape == "box":
        return all(lo < p < hi for p, lo, hi in zip(point, domain.lower, domain.upper))
    return _distance(point, domain.center) < domain.radius


def _free_fraction(domain: Domain, samples: int = 4096) -> float:
    """Fraction of the bounding box that is inside the domain and outside targets."""
    rng = random.Random(0)  # deterministic: validation must not depend on chance
    inside = 0
    for _ in range(samples):
        p = [
            lo + (hi - lo) * rng.random() for lo, hi in zip(domain.lower, domain.upper)
        ]
        inside += domain.contains(p)
    return inside / samples


def _floats(value: Any) -> Any:
    if isinstance(value, bool):
        return value
    if isinstance(value, str) and value.strip() in ("inf", "+inf", "-inf"):
        return _jsonable(float(value))
    if isinstance(value, int):
        return float(value)
    if isinstance(value, list):
        return [_floats(v) for v in value]
    if isinstance(value, dict):
        return {k: _floats(v) for k, v in value.items()}
    return value


def _short_int(value: int) -> str:
    text = str(value)
    return text if len(text) <= 20 else f"{text[:6]}...({len(text)} digits)"


def _is_index(text: str) -> bool:
    return text.isascii() and text.isdigit()


def _toml(value: Any) -> str:
    """A value as it would be written in TOML, for messages."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    if isinstance(value, dict):
        if not value:
            return "{}"
        return "{ " + ", ".join(f"{k} = {_toml(v)}" for k, v in value.items()) + " }"
    return str(value)


def _show(value: Any) -> str:
    return _toml(value)


def _jsonable(value: Any) -> Any:
    """Plain JSON data: tuples become lists, infinities become the strings 'inf'."""
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, float) and math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return value
