"""``sweep check`` for points with a ``[force]``: the exact one-dimensional references.

A potential is separable (harmonic) or acts on one axis, so in a box whose only
absorbing faces are those of one axis (other axes reflecting or unbounded, no
targets, a point start) the first passage is that of the one-dimensional motion along
that axis in ``U_a(x) - drift_a x / D``: its mean first-passage time and splitting
probability are the quadratures of ``sweep.analytic.force`` (Gardiner §5.2.7
[memory]). An unbounded side counts as reflecting at infinity and needs a confining
potential (cut where U exceeds its minimum by ``potentials.CONFINED_KT``). A
tilted-periodic point absorbed a whole number of periods ahead on an axis unbounded
behind also compares its drift velocity (distance / mean time, exact by renewal)
with Stratonovich's formula (Reimann 2002 [memory]).

A harmonic well in free space (a box with every side unbounded, a point start) has
an exact Gaussian occupancy at every snapshot: per snapshot and axis, the fraction of
walkers between the histogram edges nearest mean -+ one standard deviation is compared
with the Gaussian's mass there (a binomial standard error).

Not compared: survival curves (no closed form in a potential), balls, targets,
uniform starts. Endpoint monitoring is compared with the same references; no
shifted-wall bias is predicted for it in a force (allowance 0).
"""

from __future__ import annotations

import math

import numpy as np
import xarray as xr
from scipy.special import ndtr

from sweep import stats
from sweep.analytic import force as analytic_force
from sweep.check import Z_PASS, CheckRow
from sweep.spec import PointSpec

SOURCE_MEAN = (
    "1-D mean first-passage time by quadrature (Gardiner §5.2.7) [from memory]"
)
SOURCE_SPLIT = "1-D splitting probability by quadrature (Gardiner §5.2.8) [from memory]"
SOURCE_OU = (
    "Ornstein-Uhlenbeck occupancy, Gaussian with variance (1 - e^(-2Dkt))/k "
    "(Uhlenbeck & Ornstein 1930; Gardiner §3.8.4) [from memory]"
)
SOURCE_VELOCITY = (
    "tilted-periodic drift velocity (Stratonovich; Reimann 2002) [from memory]"
)
#: A start this close (relative) to a whole number of periods from the wall counts.
PERIOD_RTOL = 1e-9


def force_axis(point: PointSpec) -> tuple[int | None, str]:
    """(The one axis with absorbing faces, "") or (None, why not comparable)."""
    m, dom = point.motion, point.domain
    if dom.shape != "box":
        return None, "force in a ball: no closed form"
    if dom.targets:
        return None, "absorbing targets: no closed form"
    if m.start is None:
        return None, "uniform start: no closed form implemented"
    axes = [
        i for i in range(m.dimension) if dom.absorbing_low[i] or dom.absorbing_high[i]
    ]
    if len(axes) != 1:
        return None, "force with absorbing faces on several axes: no closed form"
    return axes[0], ""


def _problem(point: PointSpec, axis: int) -> tuple:
    m, dom, f = point.motion, point.domain, point.force
    u = analytic_force.effective_profile(f, axis, m.diffusivity, m.drift[axis])
    kind = {True: "absorbing", False: "reflecting"}
    walls = (kind[dom.absorbing_low[axis]], kind[dom.absorbing_high[axis]])
    assert m.start is not None
    return u, dom.lower[axis], dom.upper[axis], m.start[axis], walls


def exact_mean(point: PointSpec) -> float:
    """The quadrature's mean first-passage time [time]; ValueError if none."""
    axis, why = force_axis(point)
    if axis is None:
        raise ValueError(why)
    u, lo, hi, x0, walls = _problem(point, axis)
    return analytic_force.mean_exit_time(
        u, lo, hi, x0, point.motion.diffusivity, walls
    ).value


def force_rows(
    p: int,
    point: PointSpec,
    mean: xr.Dataset | None,
    split: xr.Dataset | None,
    censored: float,
    data: xr.Dataset | None = None,
) -> tuple[list[CheckRow], str]:
    """Rows comparing point ``p`` with the references, and why nothing was compared
    ("" when something was). ``data``: the point's slice of the store's Dataset (for
    the occupancy of a harmonic well in free space)."""
    f, dom = point.force, point.domain
    assert f is not None
    if f.potential == "harmonic" and not any(dom.wall_absorbing()):
        return ou_rows(p, point, data)
    axis, why = force_axis(point)
    if axis is None:
        return [], why
    if mean is None or split is None:
        return (
            [],
            "force: only the mean and splitting have references (per-walker data needed)",
        )
    if censored > 0:
        return [], (
            f"force: the mean and splitting are compared only without censored walkers "
            f"({censored:.1%} censored: lengthen time.horizon)"
        )
    u, lo, hi, x0, walls = _problem(point, axis)
    D = point.motion.diffusivity
    rows: list[CheckRow] = []
    try:
        exact = analytic_force.mean_exit_time(u, lo, hi, x0, D, walls).value
    except ValueError as err:
        return [], f"force: {err}"
    est, se = float(mean["estimate"]), float(mean["stderr"])
    if se > 0 and math.isfinite(se):
        rows.append(_row(p, "mean first-passage time", est, se, exact, SOURCE_MEAN))
        velocity = _velocity_row(p, point, axis, est, se)
        if velocity is not None:
            rows.append(velocity)
    if walls == ("absorbing", "absorbing"):
        prob = analytic_force.splitting(u, lo, hi, x0).value
        wall = point.domain.wall_names()[2 * axis + 1]
        n = float(split["n"])
        sim = float(split["estimate"].sel(wall=wall))
        se_p = math.sqrt(prob * (1 - prob) / n)
        rows.append(_row(p, f"P(absorbed at {wall})", sim, se_p, prob, SOURCE_SPLIT))
    return rows, "" if rows else "force: fewer than two absorbed walkers"


def _velocity_row(
    p: int, point: PointSpec, axis: int, mean: float, se: float
) -> CheckRow | None:
    f, dom, m = point.force, point.domain, point.motion
    if f is None or f.potential != "tilted_periodic" or f.axis != axis:
        return None
    if math.isfinite(dom.lower[axis]) or not dom.absorbing_high[axis]:
        return None
    assert m.start is not None
    distance = dom.upper[axis] - m.start[axis]
    periods = distance / f.period
    if round(periods) < 1 or abs(periods - round(periods)) > PERIOD_RTOL * periods:
        return None
    exact = analytic_force.periodic_drift_velocity(
        lambda x: f.amplitude * np.cos(2 * np.pi * x / f.period),
        f.period,
        f.tilt,
        m.diffusivity,
        m.drift[axis],
    )
    # distance / T by the delta method: se(v) = distance se(T) / T^2.
    return _row(
        p,
        "drift velocity",
        distance / mean,
        distance * se / mean**2,
        exact,
        SOURCE_VELOCITY,
    )


def _row(
    p: int, name: str, sim: float, se: float, exact: float, source: str
) -> CheckRow:
    z = stats.zscore(sim, exact, se)
    return CheckRow(p, name, sim, se, exact, z, abs(z) <= Z_PASS, source, 0.0)


def ou_rows(
    p: int, point: PointSpec, data: xr.Dataset | None
) -> tuple[list[CheckRow], str]:
    """Occupancy of a harmonic well in free space against the exact Gaussian law."""
    f, dom, m = point.force, point.domain, point.motion
    assert f is not None
    if dom.shape != "box" or dom.targets or m.start is None:
        return (
            [],
            "harmonic well: occupancy compared only for a box, no targets, a point start",
        )
    if any(math.isfinite(v) for v in dom.lower + dom.upper):
        return [], (
            "harmonic well with walls: no closed form (the Gaussian occupancy holds "
            "in free space only)"
        )
    if data is None or "occupancy" not in data:
        return [], "harmonic well without walls: record.occupancy gives the comparison"
    counts = data["occupancy"].values  # (snapshot, bins, ..., bins)
    times = data["snapshot_time"].values
    n = float(data["walkers_done"])
    bins = counts.shape[1]
    rows: list[CheckRow] = []
    names = ("x", "y", "z")
    for s, t in enumerate(times):
        if t <= 0:
            continue
        laws = [_gaussian(point, i, float(t)) for i in range(m.dimension)]
        lo, hi = data["occupancy_lower"].values, data["occupancy_upper"].values
        # The histogram holds walkers inside its range on every axis; the axes are
        # independent, so each marginal carries the other axes' in-range mass.
        inside = [
            float(ndtr((hi[i] - mu) / sd) - ndtr((lo[i] - mu) / sd))
            for i, (mu, sd) in enumerate(laws)
        ]
        for i, (mean, sd) in enumerate(laws):
            edges = np.linspace(float(lo[i]), float(hi[i]), bins + 1)
            a = int(np.argmin(np.abs(edges - (mean - sd))))
            b = int(np.argmin(np.abs(edges - (mean + sd))))
            if b <= a:
                continue
            rest = tuple(j for j in range(m.dimension) if j != i)
            marginal = counts[s].sum(axis=rest) if rest else counts[s]
            sim = float(marginal[a:b].sum()) / n
            exact = float(ndtr((edges[b] - mean) / sd) - ndtr((edges[a] - mean) / sd))
            exact *= math.prod(inside[j] for j in rest)
            se = math.sqrt(exact * (1 - exact) / n)
            name = names[i] if i < 3 else f"x{i}"
            label = f"P({edges[a]:.3g} <= {name} < {edges[b]:.3g}, t = {t:g})"
            rows.append(_row(p, label, sim, se, exact, SOURCE_OU))
    return rows, "" if rows else "harmonic well: no snapshot resolves the occupancy"


def _gaussian(point: PointSpec, axis: int, t: float) -> tuple[float, float]:
    """(mean, standard deviation) of coordinate ``axis`` at time ``t`` in a harmonic
    well (free motion with drift where its stiffness is 0)."""
    f, m = point.force, point.motion
    assert f is not None and m.start is not None
    k, D, mu, x0 = f.stiffness[axis], m.diffusivity, m.drift[axis], m.start[axis]
    if k > 0:
        mean = float(analytic_force.ou_mean(t, x0, f.center[axis], k, D, mu))
        return mean, math.sqrt(float(analytic_force.ou_variance(t, k, D)))
    return x0 + mu * t, math.sqrt(2.0 * D * t)


def horizon_warning(index: int, point: PointSpec) -> str | None:
    """``sweep plan``'s warning when the horizon is under three exact mean
    first-passage times (where ``sweep.check.force`` has one): then walkers are
    censored and the mean cannot be checked."""
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
