"""Force fields: the ``[force]`` model and each potential family's formulas.

A potential U is given in units of kT; the force adds the drift ``-D dU/dx`` to the
constant drift of ``[motion]`` (overdamped Langevin motion
``dX = (drift - D grad U) dt + sqrt(2 D) dW``). Families (``[force] potential``):

* ``"harmonic"``: ``U = 1/2 sum_i stiffness_i (x_i - center_i)^2`` (every axis);
* ``"double_well"``: ``U = barrier ((x_a - center)^2 / half_separation^2 - 1)^2``
  along axis a: minima at ``center +- half_separation``, a barrier of ``barrier`` kT
  at ``center``;
* ``"tilted_periodic"``: ``U = amplitude cos(2 pi x_a / period) - tilt x_a``;
* ``"table"``: values of U on a uniform grid over [lower, upper] along axis a,
  joined by the natural cubic spline through them (``scipy.interpolate.CubicSpline``,
  ``bc_type="natural"``). The kernel evaluates the slope of this very spline from its
  per-cell coefficients (:func:`slope_coefficients`), and the exact references
  (``sweep.analytic.force``) integrate the same spline, so a table is checked against
  its own interpolant.

This module is the lowest layer of the force feature: the definition reader
(``sweep.spec.sections.force``), the plan (kernel coefficients), the references and the
checks all take their formulas from here. numpy and scipy only; nothing from sweep.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

#: The families, as the definition spells them.
FAMILIES = ("harmonic", "double_well", "tilted_periodic", "table")
#: The keys each family takes (besides ``potential``), all required.
FAMILY_KEYS: dict[str, tuple[str, ...]] = {
    "harmonic": ("center", "stiffness"),
    "double_well": ("axis", "center", "barrier", "half_separation"),
    "tilted_periodic": ("axis", "amplitude", "period", "tilt"),
    "table": ("axis", "lower", "upper", "values"),
}
#: Walkers are practically never found where U exceeds its minimum by this many kT
#: (probability about e^-50 in equilibrium): the region over which an unbounded
#: quartic's curvature enters the dt bound, and where the references cut an infinite
#: reflecting side off.
CONFINED_KT = 50.0
#: The dt bound takes an unbounded quartic's curvature where U is at most this many kT
#: above its minimum: an equilibrium walker is beyond with probability about e^-20,
#: and a brief excursion there adds little to Euler's error.
CURVATURE_KT = 20.0


@dataclass(frozen=True)
class Force:
    """A potential in units of kT (see the module docstring for each family).

    Attributes
    ----------
    potential : str
        One of :data:`FAMILIES`.
    axis : int
        The axis of a one-dimensional family (0 = x); 0 and unused for "harmonic".
    center : tuple of float
        Harmonic: the well's centre per axis (length); double well: ``(center,)``.
    stiffness : tuple of float
        Harmonic: per axis, kT / length^2 (>= 0; 0 leaves an axis free).
    barrier, half_separation : float
        Double well: barrier height (kT, > 0) and distance of each minimum from the
        centre (length, > 0).
    amplitude, period, tilt : float
        Tilted periodic: amplitude (kT), period (length, > 0), tilt (kT / length).
    lower, upper : float
        Table: the grid's ends along ``axis`` (length).
    values : tuple of float
        Table: U at ``len(values)`` >= 2 evenly spaced points from lower to upper (kT).
    """

    potential: str
    axis: int = 0
    center: tuple[float, ...] = ()
    stiffness: tuple[float, ...] = ()
    barrier: float = 0.0
    half_separation: float = 0.0
    amplitude: float = 0.0
    period: float = 0.0
    tilt: float = 0.0
    lower: float = 0.0
    upper: float = 0.0
    values: tuple[float, ...] = ()

    def canonical(self, axis_names: tuple[str, ...]) -> dict[str, Any]:
        """The family's keys as the definition spells them (for the hash)."""
        out: dict[str, Any] = {"potential": self.potential}
        for key in FAMILY_KEYS[self.potential]:
            if key == "axis":
                out[key] = axis_names[self.axis]
            elif key == "center" and self.potential == "double_well":
                out[key] = self.center[0]
            else:
                value = getattr(self, key)
                out[key] = list(value) if isinstance(value, tuple) else value
        return out

    def spline(self) -> Any:
        """The table's interpolant, a ``scipy.interpolate.CubicSpline`` (natural);
        tables only. scipy is imported here: the definition reader imports this
        module, and most definitions have no table."""
        from scipy.interpolate import CubicSpline

        grid = np.linspace(self.lower, self.upper, len(self.values))
        return CubicSpline(grid, np.array(self.values), bc_type="natural")

    def acts_on(self, axis: int) -> bool:
        """Whether U depends on coordinate ``axis``."""
        if self.potential == "harmonic":
            return self.stiffness[axis] != 0.0
        return axis == self.axis


def along(force: Force, axis: int, x: ArrayLike, order: int = 0) -> NDArray[np.float64]:
    """U (order 0), dU/dx (1) or d2U/dx2 (2) along ``axis`` at coordinates ``x``.

    U is separable (harmonic) or one-dimensional (the others), so its dependence on
    one coordinate is a function of that coordinate alone; zero for axes it ignores.
    Units: kT / length^order.
    """
    x = np.asarray(x, dtype=np.float64)
    f = force
    if not f.acts_on(axis):
        return np.zeros_like(x)
    if f.potential == "harmonic":
        k, c = f.stiffness[axis], f.center[axis]
        return (0.5 * k * (x - c) ** 2, k * (x - c), np.full_like(x, k))[order]
    if f.potential == "double_well":
        b2 = f.half_separation**2
        s = (x - f.center[0]) ** 2 / b2
        if order == 0:
            return f.barrier * (s - 1.0) ** 2
        if order == 1:
            return 4.0 * f.barrier * (s - 1.0) * (x - f.center[0]) / b2
        return 4.0 * f.barrier * (3.0 * s - 1.0) / b2
    if f.potential == "tilted_periodic":
        q = 2.0 * math.pi / f.period
        if order == 0:
            return f.amplitude * np.cos(q * x) - f.tilt * x
        if order == 1:
            return -f.amplitude * q * np.sin(q * x) - f.tilt
        return -f.amplitude * q * q * np.cos(q * x)
    return np.asarray(f.spline()(x, order), dtype=np.float64)


def slope_coefficients(force: Force) -> NDArray[np.float64]:
    """The table spline's slope per cell for the kernel, float64 (cells, 3).

    In cell j (from ``lower + j h`` to ``lower + (j + 1) h``, h the grid spacing)
    ``dU/dx = a_j + t (b_j + c_j t)`` with ``t = x - (lower + j h)``, the derivative of
    scipy's piecewise cubic ``sum_m C[m, j] t^(3 - m)``.
    """
    c = force.spline().c
    return np.ascontiguousarray(np.stack([c[2], 2.0 * c[1], 3.0 * c[0]], axis=1))


def max_curvature(force: Force, axis: int, lower: float, upper: float) -> float:
    """The largest |d2U/dx2| along ``axis`` over [lower, upper] (kT / length^2).

    For the double well the range is cut where U exceeds its minimum by
    :data:`CURVATURE_KT` (walkers practically never get there); a table's
    curvature is linear in each cell, so its largest value sits on a knot.
    """
    f = force
    if not f.acts_on(axis):
        return 0.0
    if f.potential == "harmonic":
        return abs(f.stiffness[axis])
    if f.potential == "tilted_periodic":
        return abs(f.amplitude) * (2.0 * math.pi / f.period) ** 2
    if f.potential == "double_well":
        reach = f.half_separation * math.sqrt(1.0 + math.sqrt(CURVATURE_KT / f.barrier))
        lo = max(lower, f.center[0] - reach)
        hi = min(upper, f.center[0] + reach)
        s = max((lo - f.center[0]) ** 2, (hi - f.center[0]) ** 2) / f.half_separation**2
        # d2U/dx2 = 4 h (3 s - 1) / b^2 grows with s; -4h/b^2 at the centre.
        return 4.0 * f.barrier * max(3.0 * s - 1.0, 1.0) / f.half_separation**2
    knots = np.linspace(f.lower, f.upper, len(f.values))
    return float(np.max(np.abs(f.spline()(knots, 2))))


def kernel_force(
    force: Force | None,
    dimension: int,
    diffusivity: float,
    dt: float,
    drift: tuple[float, ...],
) -> Any:
    """The kernel's ``kernels.inputs.Force`` for a point (``no_force`` without one)."""
    from kernels import inputs  # numpy only

    if force is None:
        return inputs.no_force(dimension)
    common = dict(dimension=dimension, diffusivity=diffusivity, dt=dt, drift=drift)
    if force.potential == "harmonic":
        return inputs.force(
            inputs.HARMONIC, stiffness=force.stiffness, center=force.center, **common
        )
    if force.potential == "double_well":
        b2 = force.half_separation**2
        params = (force.center[0], 4.0 * force.barrier / b2, 1.0 / b2)
        return inputs.force(
            inputs.DOUBLE_WELL, axis=force.axis, params=params, **common
        )
    if force.potential == "tilted_periodic":
        q = 2.0 * math.pi / force.period
        params = (force.amplitude * q, q, force.tilt)
        return inputs.force(
            inputs.TILTED_PERIODIC, axis=force.axis, params=params, **common
        )
    spacing = (force.upper - force.lower) / (len(force.values) - 1)
    return inputs.force(
        inputs.TABLE,
        axis=force.axis,
        table=slope_coefficients(force),
        table_lower=force.lower,
        table_spacing=spacing,
        **common,
    )
