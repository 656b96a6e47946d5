"""Box ``prod_i [lower_i, upper_i]`` with per-face absorbing or reflecting walls:
survival by the product rule over independent axes, mean exit time by quadrature.

Each axis reduces to a half-line, an interval or a free axis. Formulas, sources and
their status: ``docs/analytic-reference.md``, section D.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import integrate

from sweep.analytic.halfline import halfline_mean_fpt, halfline_survival
from sweep.analytic.interval import interval_survival
from sweep.analytic.interval_moments import interval_mean_exit_time
from sweep.analytic.interval_series import _on_absorbing_wall
from sweep.analytic.series import (
    SERIES_RTOL,
    FloatArray,
    _f64,
    _finite,
    _positive,
    _time,
    _walls,
)


@dataclass(frozen=True)
class _Axis:
    """One axis of a box, reduced to a canonical 1-D problem.

    kind: "free" (never absorbs), "interval" (finite, at least one absorbing wall) or
    "halfline" (absorbing wall at distance ``x0``; ``mu > 0`` means away from the wall).
    """

    kind: str
    x0: float
    length: float
    walls: tuple[str, str]
    d: float
    mu: float

    def survival(self, t: FloatArray) -> FloatArray:
        if self.kind == "free":
            return np.ones(t.shape)
        if self.kind == "halfline":
            return halfline_survival(t, self.x0, self.d, self.mu)
        return interval_survival(t, self.x0, self.length, self.d, self.mu, self.walls)

    def decay(self) -> tuple[str, float]:
        """Long-time behaviour of S: ("exp", rate), ("algebraic", 0) or ("none", 0)."""
        if self.kind == "free":
            return "none", 0.0
        if self.kind == "halfline":
            if self.mu < 0.0:
                return "exp", self.mu**2 / (4.0 * self.d)
            return ("algebraic", 0.0) if self.mu == 0.0 else ("none", 0.0)
        if self.walls == ("absorbing", "absorbing"):
            rate = self.d * (np.pi / self.length) ** 2 + self.mu**2 / (4.0 * self.d)
            return "exp", float(rate)
        return "exp", float(self.d * (np.pi / (2.0 * self.length)) ** 2)

    def mean(self) -> float:
        if self.kind == "free":
            return math.inf
        if self.kind == "halfline":
            return halfline_mean_fpt(self.x0, self.d, self.mu)
        return interval_mean_exit_time(
            self.x0, self.length, self.d, self.mu, self.walls
        )

    def time_scales(self) -> list[float]:
        if self.kind == "halfline":
            dists = [self.x0]
        elif self.kind == "interval":
            dists = [
                dist
                for dist, kind in zip(
                    (self.x0, self.length - self.x0), self.walls, strict=True
                )
                if kind == "absorbing"
            ]
        else:
            dists = []
        return [dist**2 / self.d for dist in dists if dist > 0.0]


def _box_axes(
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None,
) -> list[_Axis]:
    x0_a = np.atleast_1d(_f64(x0))
    lo_a = np.atleast_1d(_f64(lower))
    hi_a = np.atleast_1d(_f64(upper))
    dim = x0_a.size
    if x0_a.ndim != 1 or lo_a.shape != (dim,) or hi_a.shape != (dim,):
        raise ValueError("x0, lower and upper must be sequences of the same length d")
    if len(walls) != dim:
        raise ValueError("walls must hold one (low_kind, high_kind) pair per axis")
    d_a = np.broadcast_to(_f64(diffusivity), (dim,))
    mu_a = np.zeros(dim) if drift is None else np.atleast_1d(_f64(drift))
    if mu_a.shape != (dim,):
        raise ValueError("drift must be None or a sequence of length d")
    axes = []
    for i in range(dim):
        lo, hi, xi = float(lo_a[i]), float(hi_a[i]), float(x0_a[i])
        w = _walls(walls[i])
        di = _positive(f"diffusivity[{i}]", float(d_a[i]))
        mi = _finite(f"drift[{i}]", float(mu_a[i]))
        if not lo < hi or math.isnan(lo) or math.isnan(hi):
            raise ValueError(f"axis {i}: need lower < upper, got {lo!r}, {hi!r}")
        if not (lo <= xi <= hi and math.isfinite(xi)):
            raise ValueError(f"axis {i}: x0 = {xi!r} outside [{lo!r}, {hi!r}]")
        lo_fin, hi_fin = math.isfinite(lo), math.isfinite(hi)
        if lo_fin and hi_fin:
            if w == ("reflecting", "reflecting"):
                axes.append(_Axis("free", xi - lo, hi - lo, w, di, mi))
            else:
                axes.append(_Axis("interval", xi - lo, hi - lo, w, di, mi))
        elif lo_fin and w[0] == "absorbing":
            axes.append(_Axis("halfline", xi - lo, math.inf, w, di, mi))
        elif hi_fin and w[1] == "absorbing":
            axes.append(_Axis("halfline", hi - xi, math.inf, w, di, -mi))
        else:
            axes.append(_Axis("free", 0.0, math.inf, w, di, mi))
    return axes


def box_survival(
    t: ArrayLike,
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None = None,
) -> FloatArray:
    """Survival probability in a box ``prod_i [lower_i, upper_i]`` (product rule).

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time], any shape.
    x0, lower, upper : sequence of float, length d
        Start point and per-axis bounds [length]; bounds may be ``-inf`` / ``inf``.
    walls : sequence of (str, str), length d
        ``(kind at lower, kind at upper)`` per axis.  The kind given for an infinite side
        is ignored (a wall at infinity is never reached).
    diffusivity : float or sequence of float
        ``D`` [length**2/time], isotropic or per axis.
    drift : sequence of float or None, optional
        Per-axis drift ``mu_i`` [length/time], ``mu_i > 0`` toward ``upper_i``.

    Returns
    -------
    ndarray of float64
        ``S_box(t) = prod_i S_i(t)``, shape of ``t``.  Axes with both sides infinite, with
        only reflecting finite walls, or RR intervals contribute 1; an axis with one finite
        absorbing side is a half-line (``halfline_survival``); a finite axis is an interval
        (``interval_survival``).

    Raises
    ------
    NotImplementedError
        An AR/RA axis with nonzero drift.

    Notes
    -----
    Sheet section D: the coordinates are independent, so the survival factorises.  Sources:
    Carslaw & Jaeger (1959), Ch. VI, rectangular parallelepiped, product solutions
    [memory]; the product rule itself follows from independence.
    """
    t_arr = _time(t)
    axes = _box_axes(x0, lower, upper, walls, diffusivity, drift)
    out = np.ones(t_arr.shape)
    for axis in axes:
        out *= axis.survival(t_arr)
    return out


def box_mean_exit_time(
    x0: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    walls: Sequence[Sequence[str]],
    diffusivity: float | Sequence[float],
    drift: Sequence[float] | None = None,
) -> float:
    """Mean exit time from a box, ``E[T] = integral_0^inf prod_i S_i(t) dt``.

    Parameters
    ----------
    x0, lower, upper, walls, diffusivity, drift
        As in :func:`box_survival`.

    Returns
    -------
    float
        ``E[T]`` [time].  If only one axis can absorb, the 1-D closed form is returned
        (``interval_mean_exit_time`` or ``halfline_mean_fpt``).  Otherwise the integral is
        computed with ``scipy.integrate.quad`` (relative tolerance 1e-11) on ``[0, T_max]``,
        where ``T_max`` is chosen from the summed exponential decay rates of the axes
        (``D pi**2/L**2 + mu**2/(4D)`` for AA, ``D pi**2/(4 L**2)`` for AR, ``v**2/(4D)`` for
        a half-line with drift toward its wall) so that the neglected tail is below 1e-12
        relative.  Returns ``inf`` when no axis can absorb, or when ``prod S_i`` is not
        integrable: no exponentially decaying axis and fewer than three driftless
        half-lines (``S ~ t**(-1/2)`` each).  With three or more driftless half-lines and
        no exponential axis the integral is taken to infinity by ``quad``.

    Notes
    -----
    Sheet section D [D1, D5]: the mean exit time does not factorise and has no elementary
    closed form.  Sources: Carslaw & Jaeger (1959), Ch. VI [memory]; the square's value
    (torsion function) is classical, e.g. Timoshenko & Goodier, *Theory of Elasticity*
    [memory].
    """
    axes = _box_axes(x0, lower, upper, walls, diffusivity, drift)
    active = [axis for axis in axes if axis.kind != "free"]
    if not active:
        return math.inf
    if len(active) == 1:
        return active[0].mean()
    for axis in active:
        if (axis.kind == "halfline" and axis.x0 == 0.0) or (
            axis.kind == "interval"
            and _on_absorbing_wall(axis.x0, axis.length, axis.walls)
        ):
            return 0.0
    decays = [axis.decay() for axis in active]
    rate = sum(r for kind, r in decays if kind == "exp")
    n_alg = sum(1 for kind, _ in decays if kind == "algebraic")
    if rate == 0.0 and n_alg < 3:
        return math.inf

    def surv(tt: float) -> float:
        arr = np.array([tt])
        val = 1.0
        for axis in active:
            val *= float(axis.survival(arr)[0])
        return val

    scales = sorted({s for axis in active for s in axis.time_scales()})
    opts = {"epsabs": 0.0, "epsrel": 1e-11, "limit": 500}
    if rate == 0.0:
        t1 = max(scales)
        head = integrate.quad(surv, 0.0, t1, points=scales[:-1] or None, **opts)[0]
        tail = integrate.quad(surv, t1, math.inf, **opts)[0]
        return head + tail
    t_max = 40.0 / rate
    for _ in range(60):
        pts = [s for s in [*scales, 1.0 / rate] if s < t_max] or None
        value = integrate.quad(surv, 0.0, t_max, points=pts, **opts)[0]
        if surv(t_max) / rate <= SERIES_RTOL * value:
            return value
        t_max *= 2.0
    raise RuntimeError("box_mean_exit_time: survival did not decay")  # pragma: no cover
