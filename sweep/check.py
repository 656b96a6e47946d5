"""``sweep check``: every stored point against the analytic results that exist for it.

For each point whose geometry has a closed form (intervals, half-lines, boxes as products
of intervals, absorbing balls), the simulated statistic with its standard error is
compared with the exact value (survival, mean first-passage time, splitting probability,
and for balls the mean cosine of the exit angle): z = (simulated - exact) / stderr, and
the check passes when |z| <= Z_PASS. Points without an analytic counterpart are listed
as such.
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import xarray as xr

from sweep import analytic, stats, store
from sweep.plan import coordinate_columns
from sweep.spec import PointSpec, Sweep, key_quantity

#: |z| above this fails a check. With a handful of statistics per point and thousands
#: of points, 5 standard errors keeps false alarms rare (two-sided 5.7e-7 per check).
Z_PASS = 5.0
#: Survival is compared at up to this many grid times where the exact value is
#: between SURVIVAL_RANGE[0] and SURVIVAL_RANGE[1] (where the binomial error is useful).
SURVIVAL_TIMES = 3
SURVIVAL_RANGE = (0.05, 0.95)


@dataclass(frozen=True)
class CheckRow:
    """One comparison of a simulated statistic with its exact value."""

    point: int
    statistic: str
    simulated: float
    stderr: float
    exact: float
    z: float
    passed: bool
    source: str
    #: Expected discretisation bias of the simulated value (shifted-wall prediction for
    #: endpoint monitoring; 0 where the scheme is exact). Reported beside the verdict,
    #: never folded into the tolerance.
    allowance: float = 0.0


@dataclass(frozen=True)
class CheckReport:
    """All comparisons of a store, plus the points that have none."""

    store: str
    rows: tuple[CheckRow, ...]
    unchecked: tuple[tuple[int, str], ...]
    #: Tasks with a completion marker, and all tasks of the sweep: a check of an
    #: unfinished store covers the finished tasks only, and its verdict says so.
    tasks_done: int = 0
    tasks_total: int = 0

    @property
    def compared(self) -> int:
        """How many comparisons were made (0: nothing had a closed form)."""
        return len(self.rows)

    @property
    def passed(self) -> bool | None:
        """True when every comparison passed, False when one failed, None when nothing
        was compared (which is not a pass)."""
        if not self.rows:
            return None
        return all(r.passed for r in self.rows)

    @property
    def complete(self) -> bool:
        return self.tasks_done >= self.tasks_total

    @property
    def exit_code(self) -> int:
        """1 when a comparison failed, else 0 (also when nothing was compared)."""
        return 1 if self.passed is False else 0

    def verdict(self) -> str:
        """One line: all passed, how many failed, or that nothing could be compared
        (no point has a closed form), which is not a pass; an unfinished store adds
        how many tasks are done and what that means."""
        return self.outcome() + self.incomplete_note()

    def outcome(self) -> str:
        """The verdict without the note on an unfinished store."""
        if not self.rows:
            text = (
                "nothing compared: no point could be checked (the reason is given "
                "for each point)"
            )
        elif self.passed:
            text = f"all {len(self.rows)} checks passed"
        else:
            failed = sum(not r.passed for r in self.rows)
            text = f"{failed} of {len(self.rows)} checks FAILED"
        return text

    def incomplete_note(self) -> str:
        """ "" for a finished store, else what an unfinished one means for the verdict."""
        if self.complete:
            return ""
        return (
            f"; store INCOMPLETE: {self.tasks_done} of {self.tasks_total} tasks done, "
            "so these checks cover the finished walkers only (points without any are "
            "not checked); rerun `sweep run` to finish"
        )

    def to_json(self) -> str:
        return json.dumps(
            {
                "store": self.store,
                "compared": self.compared,
                "passed": self.passed,
                "verdict": self.verdict(),
                "complete": self.complete,
                "tasks_done": self.tasks_done,
                "tasks_total": self.tasks_total,
                "z_pass": Z_PASS,
                "rows": [_finite(asdict(r)) for r in self.rows],
                "unchecked": [{"point": p, "reason": why} for p, why in self.unchecked],
            },
            indent=2,
        )


def check_store(path: str | Path) -> CheckReport:
    """Compare every point of the store at ``path`` with its analytic results."""
    ds = store.open_dataset(path, verify=True)
    sweep = store.load_sweep(path)
    return check_dataset(ds, sweep, str(path))


def check_dataset(ds: xr.Dataset, sweep: Sweep, name: str = "") -> CheckReport:
    """Like :func:`check_store` for an opened Dataset and its sweep."""
    rows: list[CheckRow] = []
    unchecked: list[tuple[int, str]] = []
    per_walker = "first_passage_time" in ds or "fpt_histogram" in ds
    surv = stats.survival(ds)
    mean = stats.mean_first_passage_time(ds) if per_walker else None
    split = stats.splitting_probability(ds) if per_walker else None
    cosines = exit_cosines(ds, sweep)
    for p, point in enumerate(sweep.points):
        if int(ds["walkers_done"][p]) == 0:
            unchecked.append((p, "no finished tasks yet"))
            continue
        censored = float(mean["censored"][p]) if mean is not None else math.nan
        if point.force is not None:  # the potential's references: sweep/check_force.py
            from sweep.check_force import force_rows

            one = {"point": p}
            found, reason = force_rows(
                p,
                point,
                None if mean is None else mean.isel(one),
                None if split is None else split.isel(one),
                censored,
                ds.isel(one),
            )
            rows += found
            if reason:
                unchecked.append((p, reason))
            continue
        reason = unsupported(point)
        if reason:
            if concentric(point) and split is not None and censored == 0.0:
                rows += _concentric_rows(p, point, split.isel(point=p))
                unchecked.append((p, "survival and mean: " + reason))
            else:
                unchecked.append((p, reason))
            continue
        found = _survival_rows(p, point, surv.isel(point=p))
        if mean is not None and split is not None and censored == 0.0:
            found += _mean_rows(p, point, mean.isel(point=p))
            found += _splitting_rows(p, point, split.isel(point=p))
            if cosines is not None:
                found += _exit_rows(p, point, cosines.isel(point=p))
        if not found:
            unchecked.append((p, _nothing_comparable(point, censored)))
        rows += found
    return CheckReport(
        store=name,
        rows=tuple(rows),
        unchecked=tuple(unchecked),
        tasks_done=int(ds["done"].sum()),
        tasks_total=int(ds["done"].size),
    )


# --------------------------------------------------------------------------- which


def unsupported(point: PointSpec) -> str:
    """Why a point has no analytic counterpart ("" when it has one)."""
    m, dom = point.motion, point.domain
    if m.start is None:
        return "uniform start: no closed form implemented"
    if dom.targets:
        return "absorbing targets: no closed form"
    if not any(dom.wall_absorbing()):
        return "no absorbing wall: every walker is censored"
    if dom.shape == "ball":
        if not dom.surface_absorbing:
            return "reflecting ball: nothing absorbs"
        if any(v != 0.0 for v in m.drift):
            return "ball with drift: no closed form"
        if m.dimension not in (2, 3):
            return "ball in d > 3: no closed form implemented"
        return ""
    for i in range(m.dimension):
        reflecting = (math.isfinite(dom.lower[i]) and not dom.absorbing_low[i]) or (
            math.isfinite(dom.upper[i]) and not dom.absorbing_high[i]
        )
        absorbing = dom.absorbing_low[i] or dom.absorbing_high[i]
        if m.drift[i] != 0.0 and reflecting and absorbing:
            return "drift toward a reflecting wall: mirror reflection is not exact"
    return ""


def _nothing_comparable(point: PointSpec, censored: float) -> str:
    """Why a point with closed forms still gave no comparison."""
    low, high = SURVIVAL_RANGE
    why = f"the exact survival is outside {low:g}-{high:g} at every stored time"
    if censored > 0:
        why += (
            f"; the mean and splitting are compared only without censored walkers "
            f"({censored:.1%} censored: lengthen time.horizon)"
        )
    return why


def _walls(point: PointSpec) -> list[tuple[str, str]]:
    dom = point.domain
    kind = {True: "absorbing", False: "reflecting"}
    return [
        (kind[lo], kind[hi]) for lo, hi in zip(dom.absorbing_low, dom.absorbing_high)
    ]


def shifted(point: PointSpec) -> PointSpec | None:
    """The point with absorbing walls moved outward by beta sqrt(2 D dt), or None.

    Checking walls only at step ends behaves like a continuously monitored domain
    enlarged by that shift (Broadie, Glasserman & Kou 1997, Math. Finance 7(4)); the
    difference of the closed forms at the two domains is the expected bias.
    """
    if point.timing.monitoring != "endpoint":
        return None
    delta = analytic.discrete_monitoring_shift(
        point.motion.diffusivity, point.timing.dt
    )
    dom = point.domain
    if dom.shape == "ball":
        moved = dataclasses.replace(dom, radius=dom.radius + delta)
    else:
        moved = dataclasses.replace(
            dom,
            lower=tuple(
                lo - delta if a else lo for lo, a in zip(dom.lower, dom.absorbing_low)
            ),
            upper=tuple(
                hi + delta if a else hi for hi, a in zip(dom.upper, dom.absorbing_high)
            ),
        )
    return dataclasses.replace(point, domain=moved)


def _allowance(
    point: PointSpec, statistic: Callable[[PointSpec], float], exact: float
) -> float:
    moved = shifted(point)
    if moved is None:
        return 0.0
    return statistic(moved) - exact


def exact_survival(point: PointSpec, t: np.ndarray) -> np.ndarray:
    """Closed-form S(t) of a point that :func:`unsupported` accepts; raises
    NotImplementedError where the analytic library has no form."""
    m, dom = point.motion, point.domain
    assert m.start is not None
    if dom.shape == "ball":
        r0 = math.dist(m.start, dom.center)
        return np.asarray(
            analytic.ball_survival(t, r0, dom.radius, m.diffusivity, m.dimension)
        )
    return np.asarray(
        analytic.box_survival(
            t, m.start, dom.lower, dom.upper, _walls(point), m.diffusivity, m.drift
        )
    )


def exact_mean(point: PointSpec) -> float:
    """Closed-form mean first-passage time of a point :func:`unsupported` accepts."""
    m, dom = point.motion, point.domain
    assert m.start is not None
    if dom.shape == "ball":
        r0 = math.dist(m.start, dom.center)
        return float(
            analytic.ball_mean_exit_time(r0, dom.radius, m.diffusivity, m.dimension)
        )
    return float(
        analytic.box_mean_exit_time(
            m.start, dom.lower, dom.upper, _walls(point), m.diffusivity, m.drift
        )
    )


# --------------------------------------------------------------------------- rows


def _survival_rows(p: int, point: PointSpec, surv: xr.Dataset) -> list[CheckRow]:
    times = surv["time"].values
    try:
        exact = exact_survival(point, times)
    except NotImplementedError:
        return []
    inside = np.flatnonzero((exact > SURVIVAL_RANGE[0]) & (exact < SURVIVAL_RANGE[1]))
    if inside.size == 0:
        return []
    picks = inside[
        np.unique(np.linspace(0, inside.size - 1, SURVIVAL_TIMES).round().astype(int))
    ]
    n = float(surv["n"])
    source = (
        "ball survival series (Carslaw & Jaeger ch. IX; Redner 2001 ch. 6) [from memory]"
        if point.domain.shape == "ball"
        else "product of 1-D survivals: images / eigenfunction series (Redner 2001 ch. 2-3; "
        "Carslaw & Jaeger ch. III) [from memory]"
    )
    rows = []
    for k in picks:
        s_exact = float(exact[k])
        # The binomial standard error at the exact value: stable even when few walkers
        # survive, and what the z-score's null hypothesis implies.
        se = math.sqrt(s_exact * (1 - s_exact) / n)
        s_sim = float(surv["estimate"][k])
        t_k = times[k : k + 1]
        bias = _allowance(
            point, lambda q, t_k=t_k: float(exact_survival(q, t_k)[0]), s_exact
        )
        rows.append(
            _row(p, f"survival S(t={times[k]:.4g})", s_sim, se, s_exact, source, bias)
        )
    return rows


def _row(
    p: int, name: str, sim: float, se: float, exact: float, source: str, bias: float
) -> CheckRow:
    z = stats.zscore(sim, exact, se)
    return CheckRow(p, name, sim, se, exact, z, abs(z) <= Z_PASS, source, bias)


def _mean_rows(p: int, point: PointSpec, mean: xr.Dataset) -> list[CheckRow]:
    try:
        exact = exact_mean(point)
    except NotImplementedError:
        return []
    if not math.isfinite(exact):
        return []
    est, se = float(mean["estimate"]), float(mean["stderr"])
    if not (se > 0 and math.isfinite(se)):
        return []  # fewer than two absorbed walkers: no standard error to judge by
    bias = _allowance(point, exact_mean, exact)
    if point.domain.shape == "ball":
        source = "(R^2 - r0^2) / (2 d D) (Oksendal, Example 7.4.2) [from memory]"
    elif point.motion.dimension == 1:
        source = "interval mean exit time (Redner 2001 ch. 2; Karlin & Taylor 1981 ch. 15) [from memory]"
    else:
        source = "integral of the product of 1-D survivals (quadrature)"
    return [_row(p, "mean first-passage time", est, se, exact, source, bias)]


def _absorbing_axis(point: PointSpec) -> int | None:
    """The one axis of a box whose two faces absorb while no other face does, else
    None. Axes are independent in a box (analytic reference D), so the walker leaves
    through that axis' upper face with the 1-D interval's splitting probability along
    it, whatever the other axes (reflecting or unbounded) do."""
    m, dom = point.motion, point.domain
    if dom.shape != "box" or dom.targets or m.start is None:
        return None
    absorbing = [
        i for i in range(m.dimension) if dom.absorbing_low[i] or dom.absorbing_high[i]
    ]
    if len(absorbing) != 1:
        return None
    i = absorbing[0]
    return i if dom.absorbing_low[i] and dom.absorbing_high[i] else None


def _splitting_rows(p: int, point: PointSpec, split: xr.Dataset) -> list[CheckRow]:
    axis = _absorbing_axis(point)
    if axis is None:
        return []
    exact = _exact_splitting(point)
    wall = point.domain.wall_names()[2 * axis + 1]
    est = float(split["estimate"].sel(wall=wall))
    n = float(split["n"])
    se = math.sqrt(exact * (1 - exact) / n)
    bias = _allowance(point, _exact_splitting, exact)
    source = "splitting probability (Redner 2001 ch. 2) [from memory]"
    if point.motion.dimension > 1:
        source += "; axes independent in a box (product rule, analytic reference D)"
    return [_row(p, f"P(absorbed at {wall})", est, se, exact, source, bias)]


def _exact_splitting(point: PointSpec) -> float:
    m, dom = point.motion, point.domain
    axis = _absorbing_axis(point)
    assert m.start is not None and axis is not None
    length = dom.upper[axis] - dom.lower[axis]
    return float(
        analytic.interval_splitting(
            m.start[axis] - dom.lower[axis], length, m.diffusivity, m.drift[axis]
        )
    )


def concentric(point: PointSpec) -> bool:
    """An absorbing ball (d = 2, 3, no drift, a point start) around one target at its
    centre: the splitting between the two has a closed form (analytic reference J6),
    though survival and the mean first-passage time have none here."""
    m, dom = point.motion, point.domain
    return (
        dom.shape == "ball"
        and dom.surface_absorbing
        and m.dimension in (2, 3)
        and m.start is not None
        and all(v == 0.0 for v in m.drift)
        and len(dom.targets) == 1
        and tuple(dom.targets[0].center) == tuple(dom.center)
    )


def _concentric_rows(p: int, point: PointSpec, split: xr.Dataset) -> list[CheckRow]:
    m, dom = point.motion, point.domain
    assert m.start is not None
    target = dom.targets[0]
    r0 = math.dist(m.start, dom.center)

    def exact_of(q: PointSpec) -> float:
        return analytic.concentric_splitting(
            r0, target.radius, q.domain.radius, m.dimension
        )

    exact = exact_of(point)
    n = float(split["n"])
    est = float(split["estimate"].sel(wall="target_0"))
    se = math.sqrt(exact * (1 - exact) / n)
    # Endpoint monitoring: both spheres move outward (the target inward) by the
    # shift; only the outer one is moved here, like the other closed forms' columns.
    bias = _allowance(point, exact_of, exact)
    source = (
        "concentric absorbing spheres, harmonic in r (analytic reference J6; "
        "Redner 2001 ch. 6) [from memory]"
    )
    return [_row(p, "P(absorbed at target_0)", est, se, exact, source, bias)]


def _exit_geometry(
    point: PointSpec,
) -> tuple[np.ndarray, np.ndarray, float, float] | None:
    """(center, unit start direction, start radius r0, ball radius) of an
    absorbing-ball point with an off-centre start, else None: the points whose exit
    angle has a closed-form mean."""
    m, dom = point.motion, point.domain
    if dom.shape != "ball" or m.start is None or unsupported(point):
        return None
    center = np.asarray(dom.center, dtype=float)
    r0 = math.dist(m.start, dom.center)
    if r0 == 0.0:
        return None
    return center, (np.asarray(m.start) - center) / r0, r0, dom.radius


def exit_cosines(ds: xr.Dataset, sweep: Sweep) -> xr.Dataset | None:
    """Per point: count, mean and standard deviation of cos(theta), the exit point's
    angle from the start direction, over absorbed walkers (NaN where
    :func:`_exit_geometry` has none); None when no point qualifies or the store keeps
    no per-walker exit positions. One pass over the stored positions."""
    if "exit_position" not in ds:
        return None
    geometry = [_exit_geometry(point) for point in sweep.points]
    if all(g is None for g in geometry):
        return None
    d = ds.sizes["axis"]
    center = np.full((len(geometry), d), np.nan)
    direction = np.full((len(geometry), d), np.nan)
    radius = np.full(len(geometry), np.nan)
    for p, g in enumerate(geometry):
        if g is not None:
            center[p], direction[p], _, radius[p] = g
    dims = ("point", "axis")
    # cos(theta) = (X_exit - c) . u / R per walker; censored walkers' rows are NaN.
    cosine = (
        (ds["exit_position"] - xr.DataArray(center, dims=dims))
        * xr.DataArray(direction, dims=dims)
    ).sum("axis", skipna=False) / xr.DataArray(radius, dims="point")
    summary = xr.Dataset(
        {
            "n": cosine.count("walker"),
            "mean": cosine.mean("walker"),
            "std": cosine.std("walker", ddof=1),
        }
    )
    return summary.compute()


def _exit_rows(p: int, point: PointSpec, cosines: xr.Dataset) -> list[CheckRow]:
    """Where walkers leave an absorbing ball: the mean cosine of the exit angle
    against the harmonic measure's r0 / R."""
    geometry = _exit_geometry(point)
    n = int(cosines["n"])
    if geometry is None or n < 2:
        return []
    _, _, r0, radius = geometry
    est = float(cosines["mean"])
    se = float(cosines["std"]) / math.sqrt(n)
    exact = analytic.ball_exit_cos_mean(r0, radius)
    bias = _allowance(
        point, lambda q: analytic.ball_exit_cos_mean(r0, q.domain.radius), exact
    )
    source = (
        "harmonic measure of the ball, E[cos theta] = r0/R (Morters & Peres 2010 "
        "ch. 3) [from memory]"
    )
    return [_row(p, "E[cos exit angle]", est, se, exact, source, bias)]


# --------------------------------------------------------------------------- text


# ------------------------------------------------------------------ parameter names


def parameters(sweep: Sweep) -> dict[str, list[object]]:
    """Every swept parameter by its one name, the store's coordinate name
    (``diffusivity``, ``upper_x``, ``target_0_radius``), with its value per point;
    vectors split per axis as in the store. Tables, legends and plots use these."""
    return coordinate_columns(sweep)


def parameter_header(name: str, sweep: Sweep) -> str:
    """``name [unit]`` for a parameter with units, else the bare name."""
    quantity = key_quantity(name)
    return sweep.units.label(name, quantity) if quantity else name


def show_value(value: object) -> str:
    """A parameter value as a table cell (shortest exact float form)."""
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def point_labels(sweep: Sweep) -> list[str]:
    """``name=value, ...`` per point (legends and point lists), in parameter names;
    columns that do not vary (the fixed axes of a swept vector) are left out."""
    columns = {
        k: v
        for k, v in parameters(sweep).items()
        if len({show_value(x) for x in v}) > 1
    }
    if not columns:
        return ["point 0"] * sweep.n_points
    return [
        ", ".join(f"{k}={show_value(v[p])}" for k, v in columns.items())
        for p in range(sweep.n_points)
    ]


def describe(sweep: Sweep) -> str:
    """What the sweep simulates, in two lines with units: the domain and its walls,
    the motion, the time stepping, and which parameters vary (values of point 0
    for those)."""
    p0 = sweep.points[0]
    m, dom, tm, u = p0.motion, p0.domain, p0.timing, sweep.units

    def unit(quantity: str) -> str:
        text = u.of(quantity)
        return "" if text == "definition units" else f" {text}"

    def vec(values: Sequence[float]) -> str:
        return "[" + ", ".join(show_value(float(v)) for v in values) + "]"

    kinds = dict(zip(dom.wall_names(), dom.wall_absorbing(), strict=True))
    if dom.shape == "ball":
        where = (
            f"{m.dimension}-D ball, centre {vec(dom.center)}, radius "
            f"{show_value(dom.radius)}{unit('length')}, "
            f"{'absorbing' if dom.surface_absorbing else 'reflecting'} wall"
        )
    else:
        sides = ", ".join(
            f"{name} {'absorbing' if kinds[name] else 'reflecting'}"
            for name, lo_hi in zip(
                dom.wall_names(),
                [v for pair in zip(dom.lower, dom.upper, strict=True) for v in pair],
                strict=False,
            )
            if math.isfinite(lo_hi)
        )
        where = (
            f"{m.dimension}-D box from {vec(dom.lower)} to {vec(dom.upper)}"
            f"{unit('length')} ({sides})"
        )
    if dom.targets:
        where += "; absorbing targets " + ", ".join(
            f"target_{i} at {vec(t.center)} radius {show_value(t.radius)}"
            for i, t in enumerate(dom.targets)
        )
    start = "uniform" if m.start is None else vec(m.start)
    motion = (
        f"walkers from {start}, diffusivity {show_value(m.diffusivity)}"
        f"{unit('diffusivity')}"
    )
    if any(m.drift):
        motion += f", drift {vec(m.drift)}{unit('velocity')}"
    motion += (
        f"; dt {show_value(tm.dt)}{unit('time')}, horizon "
        f"{show_value(tm.horizon)}{unit('time')}"
    )
    varied = (
        f"; varied: {', '.join(parameters(sweep))} (values above: point 0)"
        if sweep.swept
        else ""
    )
    return (
        f"{sweep.name}: {sweep.n_points} point(s) x {sweep.walkers:,} walkers; "
        f"{where}\n{motion}{varied}"
    )


def format_table(report: CheckReport, sweep: Sweep | None = None) -> str:
    """The report as an aligned text table, one row per comparison; with ``sweep``,
    preceded by each point's parameter values."""
    biased = any(r.allowance for r in report.rows)
    header: tuple[str, ...] = ("point", "statistic", "simulated ± 95% CI", "exact", "z")
    header += ("expected dt bias", "verdict") if biased else ("verdict",)
    lines = [header]
    z95 = stats.z_value()
    for r in report.rows:
        row: tuple[str, ...] = (
            str(r.point),
            r.statistic,
            f"{r.simulated:.5g} ± {z95 * r.stderr:.2g}",
            f"{r.exact:.5g}",
            f"{r.z:+.2f}",
        )
        if biased:
            row += (f"{r.allowance:+.3g}" if r.allowance else "0",)
        lines.append((*row, "ok" if r.passed else "FAIL"))
    blocks = []
    if sweep is not None and sweep.swept:
        blocks.append(
            "points:\n"
            + "\n".join(
                f"  point {i}: {label}" for i, label in enumerate(point_labels(sweep))
            )
        )
    # No header over no rows: it would read like a table that lost its lines.
    table = [text_table(lines)] if report.rows else []
    table += [f"{who}: not checked ({why})" for who, why in _unchecked_runs(report)]
    blocks.append("\n".join(table))
    text = "\n\n".join(blocks)
    unfinished = report.incomplete_note().removeprefix("; ")
    unfinished = f"\n{unfinished[0].upper()}{unfinished[1:]}." if unfinished else ""
    if not report.rows:
        return f"{text}\n\n{report.outcome()}.{unfinished}"
    note = (
        "\nendpoint monitoring lets walkers slip out and back between steps; the expected "
        "bias column is the shifted-wall prediction (not added to the tolerance)."
        if biased
        else ""
    )
    return (
        f"{text}\n\n{report.outcome()} (|z| <= {Z_PASS:g}; z = (simulated - exact) / "
        f"standard error){note}{unfinished}"
    )


def text_table(rows: Sequence[Sequence[str]]) -> str:
    """Rows of text cells as left-aligned columns (the first row is the header)."""
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    return "\n".join(
        "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows
    )


def _unchecked_runs(report: CheckReport) -> list[tuple[str, str]]:
    """Unchecked points, consecutive ones with the same reason merged ("points 0-8")."""
    runs: list[list[object]] = []
    for p, why in report.unchecked:
        if runs and runs[-1][2] == why and runs[-1][1] == p - 1:
            runs[-1][1] = p
        else:
            runs.append([p, p, why])
    return [
        (f"point {a}" if a == b else f"points {a}-{b}", str(why)) for a, b, why in runs
    ]


def _finite(row: dict[str, object]) -> dict[str, object]:
    return {
        k: (None if isinstance(v, float) and not math.isfinite(v) else v)
        for k, v in row.items()
    }
