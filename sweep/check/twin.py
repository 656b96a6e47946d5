"""``sweep check``'s consistency rows for the mirror identity J7: a box with periodic
faces and the same box with reflecting faces, each with one target at its centre,
have the same first-passage law (``docs/analytic-reference.md``, J7).

Unfolding a reflecting box of sides L_i by mirror images gives free motion in space
with images of the target at centre + L_i k_i, the lattice a periodic box of the same
sides unfolds to; the start unfolds alike (a point start to itself, a uniform start to
the uniform law). So both boxes give the same survival and the same mean first-passage
time, from any start, in any dimension, per axis (a box may mix periodic and
reflecting axes). There is no closed form: the stored point is compared with a
*companion run* of its twin (every periodic axis made reflecting and every reflecting
one periodic), simulated here through :func:`sweep.simulate.simulate_task` with the
store's own seed and chunk size, so the companion is exactly what ``sweep run`` would
store for the twin point with that many walkers (:func:`companion_walkers`). Its random streams differ from the store's
(the twin point's digest differs), so the two estimates are independent and
``z = (stored - twin) / sqrt(se_stored² + se_twin²)``.

The identity needs (:func:`mirror_twin` returns None otherwise, and ``sweep check``
says what it said before): a bounded box whose every face is periodic or reflecting
(none absorbing or reactive), exactly one target (absorbing, or reactive with κ > 0),
centred in the box, no obstacles, no drift and no force (both break the mirror
symmetry), the steps scheme (the spheres scheme refuses periodic faces), and a target
at least ``PERIODIC_CLEARANCE`` steps clear of every face, as periodic faces require
(so the twin is a valid point either way).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import xarray as xr

from sweep import stats
from sweep.check.verdict import Z_PASS, CheckRow
from sweep.spec import PointSpec, Sweep
from sweep.spec.sections.surfaces import PERIODIC_CLEARANCE

#: At most this many walkers in a companion run (fewer when the store holds fewer for
#: the point): enough for a standard error of about 1 % of the mean (first-passage
#: times of a small target are nearly exponential, so sd ≈ mean).
COMPANION_WALKERS = 10_000
#: ... and at most about this many walker-steps (a few seconds of one core), judged by
#: the stored point's mean time to absorption or the horizon, whichever comes first:
#: an overnight point's walkers may each need 10^5-10^6 steps.
COMPANION_STEPS = 2e8
#: ... and all companion runs of one check together at most about this many
#: walker-steps (shared equally among the points J7 applies to), so a check of a
#: thousand-point overnight sweep adds minutes, not hours; each point still gets at
#: least MIN_COMPANION_WALKERS.
COMPANION_STEPS_TOTAL = 2e9
#: ... but never fewer walkers than this (or than the store holds for the point): below
#: it the comparison says little.
MIN_COMPANION_WALKERS = 100

#: A target is "at the centre" when every coordinate is within this fraction of the
#: box's side of the side's midpoint (floating-point slack for values like 0.1 + 0.2).
CENTRE_TOLERANCE = 1e-12

SOURCE = (
    "J7: periodic box = reflecting box with a target at the centre (mirror symmetry; "
    "derived, analytic reference J7)"
)


def mirror_twin(point: PointSpec) -> PointSpec | None:
    """The point's mirror twin (periodic and reflecting axes swapped; the record
    without occupancy, which draws no random numbers), or None when identity J7 does
    not apply to the point (see the module's docstring)."""
    m, dom, tm = point.motion, point.domain, point.timing
    d = m.dimension
    if (
        dom.shape != "box"
        or point.force is not None
        or tm.scheme != "steps"
        or any(v != 0.0 for v in m.drift)
        or dom.obstacles
        or len(dom.targets) != 1
        or not dom.bounded
        or any(dom.absorbing_low + dom.absorbing_high)
        or any(k is not None for k in dom.reactivity_low + dom.reactivity_high)
    ):
        return None
    target = dom.targets[0]
    if target.reactivity == 0.0:
        return None  # nothing reacts: every walker is censored
    for c, lo, hi in zip(target.center, dom.lower, dom.upper):
        if abs(c - (lo + hi) / 2) > CENTRE_TOLERANCE * (hi - lo):
            return None
    clearance = PERIODIC_CLEARANCE * math.sqrt(2.0 * m.diffusivity * tm.dt)
    if min(hi - lo for lo, hi in zip(dom.lower, dom.upper)) / 2 - target.radius < (
        clearance
    ):
        return None
    periodic = tuple(not p for p in (dom.periodic or (False,) * d))
    # () rather than all False: the form a definition without periodic faces parses
    # to, so the twin's digest (and stream) is that of the twin's own definition.
    twin_domain = dataclasses.replace(dom, periodic=periodic if any(periodic) else ())
    record = dataclasses.replace(
        point.record,
        occupancy_times=(),
        occupancy_bins=0,
        occupancy_lower=None,
        occupancy_upper=None,
    )
    return dataclasses.replace(point, domain=twin_domain, record=record)


def twin_kind(twin: PointSpec) -> str:
    """ "periodic", "reflecting" or "mixed": the twin's faces, for labels."""
    periodic = twin.domain.periodic or (False,) * twin.motion.dimension
    if all(periodic):
        return "periodic"
    return "mixed" if any(periodic) else "reflecting"


def companion_dataset(
    twin: PointSpec, sweep: Sweep, walkers: int, per_walker: bool
) -> xr.Dataset:
    """Simulate ``walkers`` walkers of ``twin`` as ``sweep run`` would (the sweep's
    seed and chunk size, chunks 0, 1, ...) and return them as a one-point Dataset of
    the store's layout that :mod:`sweep.stats` reads: ``walkers_done``,
    ``survival_count`` on the point's survival grid and, with ``per_walker``, the
    ``first_passage_time`` of each walker (NaN: censored), else the
    ``fpt_histogram`` and ``fpt_bin_width``.

    Runs in the calling thread (numba compiles the twin's loop on first use).
    """
    # Imported here: the kernels load only when a companion is run.
    from sweep.plan import make_plan
    from sweep.simulate import simulate_task

    one = dataclasses.replace(
        sweep, points=(twin,), walkers=walkers, swept=(), values=((),), precision=None
    )
    times, survival, histogram = [], 0, 0
    for task in make_plan(one).tasks:
        out, _ = simulate_task(task)
        times.append(out.time)
        survival = survival + out.survival
        if out.fpt_histogram is not None:
            histogram = histogram + out.fpt_histogram
    grid = np.asarray(twin.record.survival_times, dtype=float)
    data: dict[str, tuple[tuple[str, ...], object]] = {
        "walkers_done": (("point",), np.array([walkers], dtype=np.int64)),
        "survival_count": (("point", "time"), np.asarray(survival)[None, :]),
    }
    if per_walker:
        data["first_passage_time"] = (("point", "walker"), np.concatenate(times)[None])
    else:
        data["fpt_histogram"] = (
            ("point", "wall", "fpt_bin"),
            np.asarray(histogram)[None],
        )
        tm = twin.timing
        width = tm.n_steps * tm.dt / max(twin.record.fpt_bins, 1)
        data["fpt_bin_width"] = (("point",), np.array([width]))
    return xr.Dataset(data, coords={"time": grid})


def consistency_rows(
    p: int,
    point: PointSpec,
    twin: PointSpec,
    sweep: Sweep,
    ds: xr.Dataset,
    survival_range: tuple[float, float],
    survival_times: int,
    sharing: int = 1,
) -> tuple[list[CheckRow], str]:
    """The J7 rows of stored point ``p`` against its ``twin`` (:func:`mirror_twin`
    of ``point``, not None) and, when there are none, why.

    Survival is compared at up to ``survival_times`` grid times where the pooled
    estimate of the two runs lies in ``survival_range``, with the binomial standard
    errors at that pooled value (what the null hypothesis of one law implies); the
    mean first-passage time only when neither run has censored walkers (as the closed
    forms' mean rows), each run with its sample standard error.

    Parameters
    ----------
    ds : xarray.Dataset
        The store's Dataset (all points; point ``p`` is read).
    sharing : int
        How many points of this check run companions (they share
        ``COMPANION_STEPS_TOTAL``).
    """
    stored = ds.isel(point=[p])
    per_walker = "first_passage_time" in ds
    has_times = per_walker or "fpt_histogram" in ds
    m1 = stats.mean_first_passage_time(stored).isel(point=0) if has_times else None
    walkers = companion_walkers(point, int(stored["walkers_done"][0]), m1, sharing)
    other = companion_dataset(twin, sweep, walkers, per_walker)
    kind = twin_kind(twin)
    companion = (
        f"{kind} twin: {walkers} walkers, seed {sweep.seed}, chunks of {sweep.chunk}"
    )
    label = f", {kind} twin (J7)"
    source = f"{SOURCE}; companion run, not a closed form ({companion})"
    rows: list[CheckRow] = []

    s1 = stats.survival(stored).isel(point=0)
    s2 = stats.survival(other).isel(point=0)
    n1, n2 = float(s1["n"]), float(s2["n"])
    est1, est2 = s1["estimate"].values, s2["estimate"].values
    pooled = (n1 * est1 + n2 * est2) / (n1 + n2)
    low, high = survival_range
    inside = np.flatnonzero((pooled > low) & (pooled < high))
    if inside.size:
        picks = inside[
            np.unique(
                np.linspace(0, inside.size - 1, survival_times).round().astype(int)
            )
        ]
        times = s1["time"].values
        for k in picks:
            q = float(pooled[k])
            rows.append(
                twin_row(
                    p,
                    f"survival S(t={times[k]:.4g}){label}",
                    float(est1[k]),
                    math.sqrt(q * (1 - q) / n1),
                    float(est2[k]),
                    math.sqrt(q * (1 - q) / n2),
                    source,
                    companion,
                )
            )
    why = ""
    if m1 is not None:
        m2 = stats.mean_first_passage_time(other).isel(point=0)
        c1, c2 = float(m1["censored"]), float(m2["censored"])
        se1, se2 = float(m1["stderr"]), float(m2["stderr"])
        if c1 > 0 or c2 > 0:
            why = (
                f"the mean is compared only without censored walkers ({c1:.1%} "
                f"censored, {c2:.1%} in the twin: lengthen time.horizon)"
            )
        elif not all(se > 0 and math.isfinite(se) for se in (se1, se2)):
            why = "fewer than two absorbed walkers: no standard error for the mean"
        else:
            rows.append(
                twin_row(
                    p,
                    f"mean first-passage time{label}",
                    float(m1["estimate"]),
                    se1,
                    float(m2["estimate"]),
                    se2,
                    source,
                    companion,
                )
            )
    if rows:
        return rows, ""
    reasons = [f"the pooled survival is outside {low:g}-{high:g} at every stored time"]
    reasons += [why] if why else []
    return [], f"J7 {companion}: " + "; ".join(reasons)


def companion_walkers(
    point: PointSpec, stored: int, mean: xr.Dataset | None, sharing: int = 1
) -> int:
    """Walkers of a companion run: ``COMPANION_WALKERS``, fewer when that would take
    more than ``COMPANION_STEPS`` walker-steps (or than this point's share of
    ``COMPANION_STEPS_TOTAL`` among ``sharing`` points), at least
    ``MIN_COMPANION_WALKERS``, and never more than the ``stored`` walkers of the point.

    A walker's steps are judged by the stored point: its mean first-passage time over
    absorbed walkers and the horizon for censored ones (``mean``: the point's row of
    :func:`sweep.stats.mean_first_passage_time`), or the horizon when no times are
    stored. Read from stored data only, so the count (and the check) is reproducible.
    """
    tm = point.timing
    horizon = tm.n_steps * tm.dt
    expected = horizon
    if mean is not None:
        censored, estimate = float(mean["censored"]), float(mean["estimate"])
        if math.isfinite(estimate) and math.isfinite(censored):
            expected = (1.0 - censored) * estimate + censored * horizon
    steps = max(expected / tm.dt, 1.0)
    budget = min(COMPANION_STEPS, COMPANION_STEPS_TOTAL / max(sharing, 1))
    affordable = max(int(budget / steps), MIN_COMPANION_WALKERS)
    return min(stored, COMPANION_WALKERS, affordable)


def twin_row(
    p: int,
    statistic: str,
    simulated: float,
    stderr: float,
    twin: float,
    twin_stderr: float,
    source: str,
    companion: str,
) -> CheckRow:
    """A consistency row: ``simulated`` ± ``stderr`` (the store) against ``twin`` ±
    ``twin_stderr`` (the companion run); z = difference / sqrt(stderr² +
    twin_stderr²), passing when |z| <= Z_PASS."""
    z = stats.zscore(simulated, twin, math.hypot(stderr, twin_stderr))
    return CheckRow(
        p,
        statistic,
        simulated,
        stderr,
        twin,
        z,
        abs(z) <= Z_PASS,
        source,
        reference_stderr=twin_stderr,
        companion=companion,
    )
