"""The ``[force]`` table of a sweep definition: reading, refusals and the dt bound.

``sweep.spec.point`` calls :func:`read_force` for each point once its motion, time and
domain are read; :func:`dt_warning` gives ``sweep plan``
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
from typing import Any

from sweep.potentials import FAMILIES, FAMILY_KEYS, Force, max_curvature
from sweep.spec.context import Context, toml_text
from sweep.spec.sections.section import Section
from sweep.spec.values import choice, number, vector

#: Every key of every family (potentials.FAMILY_KEYS says which a family takes).
KEYS = ("potential", *dict.fromkeys(k for ks in FAMILY_KEYS.values() for k in ks))
SECTION = Section("force", KEYS, per_point=True, sweepable=True)

#: Refuse above this D dt max|U''| (see the module docstring).
DT_LIMIT = 0.5
#: Warn above this D dt max|U''|.
DT_WARN = 0.05
#: At most this many table values (the kernel keeps three coefficients per cell).
MAX_TABLE_VALUES = 1_000_000


def read_force(
    ctx: Context,
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
    ctx : the definition's context (file, key and grid point of messages)
    table : the raw table
    axes : axis names of the domain (x, y, ...)
    extent : (lower, upper) of the domain per axis (a ball: its bounding box)
    diffusivity, dt : D and the time step, for the dt bound
    scheme : time.scheme; "spheres" is refused
    """
    if not isinstance(table, dict):
        raise ctx.fail("force", f"must be a table; got {toml_text(table)}.")
    potential = choice(
        ctx, ctx.required(table, "potential", "force"), "force.potential", FAMILIES
    )
    keys = FAMILY_KEYS[potential]
    ctx.keys(table, ("potential", *keys), f"force] (potential = {potential!r}")
    for key in keys:
        ctx.required(table, key, "force")
    if scheme == "spheres":
        raise ctx.fail(
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
            raise ctx.fail(
                "force.axis",
                f"must name an axis of the {d}-dimensional domain: "
                f"{' or '.join(repr(a) for a in axes)}; got {toml_text(name)}.",
            )
        axis = axes.index(name)
    if potential == "harmonic":
        center = vector(ctx, table["center"], "force.center", d)
        stiffness = vector(ctx, table["stiffness"], "force.stiffness", d)
        for name, k in zip(axes, stiffness):
            if k < 0:
                raise ctx.fail(
                    "force.stiffness",
                    f"must be >= 0 on every axis (kT per length^2; 0 leaves an axis "
                    f"free); got {toml_text(list(stiffness))} ({name}: {k!r}). A negative "
                    f"stiffness is an inverted well that throws walkers out.",
                )
        force = Force(potential, center=center, stiffness=stiffness)
    elif potential == "double_well":
        force = Force(
            potential,
            axis=axis,
            center=(number(ctx, table["center"], "force.center"),),
            barrier=number(ctx, table["barrier"], "force.barrier", positive=True),
            half_separation=number(
                ctx, table["half_separation"], "force.half_separation", positive=True
            ),
        )
    elif potential == "tilted_periodic":
        force = Force(
            potential,
            axis=axis,
            amplitude=number(ctx, table["amplitude"], "force.amplitude"),
            period=number(ctx, table["period"], "force.period", positive=True),
            tilt=number(ctx, table["tilt"], "force.tilt"),
        )
    else:
        force = _table(ctx, table, axis, axes, extent)
    q_per_dt = diffusivity * _curvature(force, extent)
    if potential != "harmonic" and q_per_dt * dt > DT_LIMIT:
        raise ctx.fail(
            "time.dt",
            f"= {dt!r} is too coarse for the force: D dt max|U''| = "
            f"{q_per_dt * dt:.3g} exceeds {DT_LIMIT:g} (Euler–Maruyama would overshoot "
            f"the potential's wells). The largest dt within the bound is "
            f"{DT_LIMIT / q_per_dt:.3g}; for accurate results stay below "
            f"{DT_WARN / q_per_dt:.3g} (D dt max|U''| <= {DT_WARN:g}).",
        )
    return force


def _table(
    ctx: Context,
    table: dict[str, Any],
    axis: int,
    axes: tuple[str, ...],
    extent: tuple[tuple[float, float], ...],
) -> Force:
    lower = number(ctx, table["lower"], "force.lower")
    upper = number(ctx, table["upper"], "force.upper")
    if not lower < upper:
        raise ctx.fail(
            "force.upper", f"must exceed force.lower = {lower!r}; got {upper!r}."
        )
    values = table["values"]
    if (
        not isinstance(values, list)
        or not 2 <= len(values) <= MAX_TABLE_VALUES
        or any(isinstance(v, bool) or not isinstance(v, int | float) for v in values)
    ):
        raise ctx.fail(
            "force.values",
            f"must be a list of 2 to {MAX_TABLE_VALUES:,} numbers (U in kT at evenly "
            f"spaced points from force.lower to force.upper); got {toml_text(values)}.",
        )
    bad = [i for i, v in enumerate(values) if not math.isfinite(float(v))]
    if bad:
        raise ctx.fail(
            "force.values",
            f"must all be finite numbers; entry {bad[0]} is {toml_text(values[bad[0]])}"
            f"{f' ({len(bad)} entries in all)' if len(bad) > 1 else ''}. Give U in kT "
            f"at every grid point (a wall belongs in [domain], not in the table).",
        )
    lo, hi = extent[axis]
    if not (lower <= lo and hi <= upper):
        raise ctx.fail(
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
