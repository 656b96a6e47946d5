"""The ``[force]`` table of a sweep definition: reading, refusals and the dt bound.

``sweep.spec`` calls :func:`read_force` for each point with its parser (the value
readers and the message template: file, key, got, allowed, how to fix) once the
point's motion, time and domain are read; :func:`dt_warning` gives ``sweep plan``
(and ``sweep run``, which repeats plan's warnings) its warning. The model and the
formulas are in :mod:`sweep.potentials`.

The dt bound. Euler–Maruyama in a force of curvature U'' moves the linearised
deviation as ``x <- (1 - D U'' dt) x + noise``; its stationary variance in a harmonic
well is that of the exact process times ``1 / (1 - q / 2)``, with ``q = D dt
max|U''|``. So ``q`` is the relative error scale of the force over one step (also:
the change of the force over the typical drift displacement). Above
:data:`DT_LIMIT` = 0.5 (a 33 % variance error; above 1 the step overshoots the
well's minimum, above 2 it diverges) a definition is refused; above :data:`DT_WARN`
= 0.05 (2.6 %) it is warned about. Both messages give the largest dt within the
bound. The harmonic well is stepped by its exact Ornstein–Uhlenbeck update, which has
no such error in the bulk: it is only warned about (walls still treat the drift as
constant over a step). ``max|U''|`` is taken over the domain along each axis the
potential acts on (for the double well: up to where U exceeds its minimum by
``potentials.CURVATURE_KT``).
"""

from __future__ import annotations

import math
from typing import Any, Protocol

from sweep.potentials import FAMILIES, FAMILY_KEYS, Force, max_curvature

#: Refuse above this D dt max|U''| (see the module docstring).
DT_LIMIT = 0.5
#: Warn above this D dt max|U''|.
DT_WARN = 0.05
#: At most this many table values (the kernel keeps three coefficients per cell).
MAX_TABLE_VALUES = 1_000_000


class _Parser(Protocol):  # the parts of sweep.spec's parser used here
    def fail(self, key: str, message: str) -> Exception: ...
    def keys(self, table: Any, allowed: Any, where: str) -> None: ...
    def required(self, table: Any, key: str, where: str) -> Any: ...
    def number(self, value: Any, key: str, **kw: bool) -> float: ...
    def vector(self, value: Any, key: str, dimension: int) -> tuple[float, ...]: ...
    def choice(self, value: Any, key: str, allowed: Any) -> str: ...


def _toml(value: Any) -> str:
    from sweep.spec import _toml as show

    return show(value)


def read_force(
    p: _Parser,
    table: Any,
    axes: tuple[str, ...],
    extent: tuple[tuple[float, float], ...],
    diffusivity: float,
    dt: float,
    scheme: str,
) -> Force:
    """The ``[force]`` table of one point, validated.

    Parameters
    ----------
    p : the spec parser (messages and value readers)
    table : the raw table
    axes : axis names of the domain (x, y, ...)
    extent : (lower, upper) of the domain per axis (a ball: its bounding box)
    diffusivity, dt : D and the time step, for the dt bound
    scheme : time.scheme; "spheres" is refused
    """
    if not isinstance(table, dict):
        raise p.fail("force", f"must be a table; got {_toml(table)}.")
    potential = p.choice(
        p.required(table, "potential", "force"), "force.potential", FAMILIES
    )
    keys = FAMILY_KEYS[potential]
    p.keys(table, ("potential", *keys), f"force] (potential = {potential!r}")
    for key in keys:
        p.required(table, key, "force")
    if scheme == "spheres":
        raise p.fail(
            "time.scheme",
            'must be "steps" with a [force]: the sphere jumps use the exit laws of '
            'free Brownian motion, exact only without a force. Got "spheres"; use '
            'time.scheme = "steps" (the default).',
        )
    d = len(axes)
    axis = 0
    if "axis" in keys:
        name = table["axis"]
        if name not in axes:
            raise p.fail(
                "force.axis",
                f"must name an axis of the {d}-dimensional domain: "
                f"{' or '.join(repr(a) for a in axes)}; got {_toml(name)}.",
            )
        axis = axes.index(name)
    if potential == "harmonic":
        center = p.vector(table["center"], "force.center", d)
        stiffness = p.vector(table["stiffness"], "force.stiffness", d)
        for name, k in zip(axes, stiffness):
            if k < 0:
                raise p.fail(
                    "force.stiffness",
                    f"must be >= 0 on every axis (kT per length^2; 0 leaves an axis "
                    f"free); got {_toml(list(stiffness))} ({name}: {k!r}). A negative "
                    f"stiffness is an inverted well that throws walkers out.",
                )
        force = Force(potential, center=center, stiffness=stiffness)
    elif potential == "double_well":
        force = Force(
            potential,
            axis=axis,
            center=(p.number(table["center"], "force.center"),),
            barrier=p.number(table["barrier"], "force.barrier", positive=True),
            half_separation=p.number(
                table["half_separation"], "force.half_separation", positive=True
            ),
        )
    elif potential == "tilted_periodic":
        force = Force(
            potential,
            axis=axis,
            amplitude=p.number(table["amplitude"], "force.amplitude"),
            period=p.number(table["period"], "force.period", positive=True),
            tilt=p.number(table["tilt"], "force.tilt"),
        )
    else:
        force = _table(p, table, axis, axes, extent)
    q_per_dt = diffusivity * _curvature(force, extent)
    if potential != "harmonic" and q_per_dt * dt > DT_LIMIT:
        raise p.fail(
            "time.dt",
            f"= {dt!r} is too coarse for the force: D dt max|U''| = "
            f"{q_per_dt * dt:.3g} exceeds {DT_LIMIT:g} (Euler–Maruyama would overshoot "
            f"the potential's wells). The largest dt within the bound is "
            f"{DT_LIMIT / q_per_dt:.3g}; for accurate results stay below "
            f"{DT_WARN / q_per_dt:.3g} (D dt max|U''| <= {DT_WARN:g}).",
        )
    return force


def _table(
    p: _Parser,
    table: dict[str, Any],
    axis: int,
    axes: tuple[str, ...],
    extent: tuple[tuple[float, float], ...],
) -> Force:
    lower = p.number(table["lower"], "force.lower")
    upper = p.number(table["upper"], "force.upper")
    if not lower < upper:
        raise p.fail(
            "force.upper", f"must exceed force.lower = {lower!r}; got {upper!r}."
        )
    values = table["values"]
    if (
        not isinstance(values, list)
        or not 2 <= len(values) <= MAX_TABLE_VALUES
        or any(isinstance(v, bool) or not isinstance(v, int | float) for v in values)
    ):
        raise p.fail(
            "force.values",
            f"must be a list of 2 to {MAX_TABLE_VALUES:,} numbers (U in kT at evenly "
            f"spaced points from force.lower to force.upper); got {_toml(values)}.",
        )
    bad = [i for i, v in enumerate(values) if not math.isfinite(float(v))]
    if bad:
        raise p.fail(
            "force.values",
            f"must all be finite numbers; entry {bad[0]} is {_toml(values[bad[0]])}"
            f"{f' ({len(bad)} entries in all)' if len(bad) > 1 else ''}. Give U in kT "
            f"at every grid point (a wall belongs in [domain], not in the table).",
        )
    lo, hi = extent[axis]
    if not (lower <= lo and hi <= upper):
        raise p.fail(
            "force.lower",
            f"the table spans [{lower!r}, {upper!r}] along {axes[axis]} but the domain "
            f"reaches [{lo!r}, {hi!r}] there; a table must cover the domain along its "
            f"axis (bounded, with walls inside [force.lower, force.upper]). Extend the "
            f"table or move the walls.",
        )
    return Force(
        "table",
        axis=axis,
        lower=lower,
        upper=upper,
        values=tuple(float(v) for v in values),
    )


def _curvature(force: Force, extent: tuple[tuple[float, float], ...]) -> float:
    """max|U''| over the domain along every axis the potential acts on."""
    return (
        max(
            max_curvature(force, i, lo, hi)
            for i, (lo, hi) in enumerate(extent)
            if force.acts_on(i)
        )
        if any(force.acts_on(i) for i in range(len(extent)))
        else 0.0
    )


def dt_warning(
    index: int,
    force: Force,
    extent: tuple[tuple[float, float], ...],
    diffusivity: float,
    dt: float,
) -> str | None:
    """``sweep plan``'s warning when D dt max|U''| exceeds :data:`DT_WARN`."""
    q_per_dt = diffusivity * _curvature(force, extent)
    if q_per_dt * dt <= DT_WARN:
        return None
    exact = (
        " (the harmonic well's update is exact in the bulk; walls treat the force as "
        "constant over a step)"
        if force.potential == "harmonic"
        else ""
    )
    return (
        f"point {index}: dt = {dt:g} is coarse for the force: D dt max|U''| = "
        f"{q_per_dt * dt:.3g} exceeds {DT_WARN:g}{exact}; the largest dt within the "
        f"bound is {DT_WARN / q_per_dt:.3g}."
    )


def horizon_warning(index: int, point: Any) -> str | None:
    """``sweep plan``'s warning when the horizon is under three exact mean
    first-passage times (where ``sweep.check_force`` has one): then walkers are
    censored and the mean cannot be checked."""
    from sweep.check_force import exact_mean

    try:
        mean = exact_mean(point)
    except ValueError:
        return None
    if point.timing.horizon >= 3 * mean:
        return None
    return (
        f"point {index}: horizon {point.timing.horizon:g} is short: the exact mean "
        f"first-passage time in the potential is {mean:.3g}, so many walkers may "
        f"still be free (censored) at the horizon; lengthen time.horizon to at least "
        f"{10 * mean:.3g} for a checkable mean."
    )
