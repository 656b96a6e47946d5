"""Two stores of one study, point by point: which statistics moved beyond their intervals.

The README asks users to rerun a study with a smaller time step and with more walkers
before relying on a number. ``sweep compare STORE_A STORE_B`` does the bookkeeping of
that convergence check: it pairs the points of two stores by their swept parameters,
compares the headline statistics of each pair (censored fraction, mean first-passage
time, splitting probability per wall, survival at a few common times) and flags those
whose difference is larger than the two estimates' combined standard error allows.

Decisions (where the design is silent):

* Points are paired by every per-point parameter the two stores share, except the ones
  that are constant within each store but differ between them: those are *what
  changed* (typically ``dt`` or the walker count), reported once at the top.
* Many statistics are compared at once, so a fixed 95 % bound would flag about one in
  twenty identical-in-law pairs. The bound is Bonferroni-corrected: a pair is flagged
  when ``|z| > z_crit`` with ``z_crit = Φ⁻¹(1 − α / (2 m))`` for ``m`` comparisons and a
  family-wise false-alarm rate ``α`` (default 5 %). A flagged statistic is therefore
  strong evidence that the refinement moved the result; an unflagged one is not proof
  of convergence (the comparison has the power of the smaller ensemble).
* Proportions (censored fraction, splitting, survival) use the pooled two-proportion
  standard error; means use ``sqrt(se_a² + se_b²)``. Two identical proportions of 0 or
  1 give z = 0. Means over absorbed walkers only (some walkers censored) are marked:
  they are compared as the same conditional quantity, valid when both stores share the
  horizon.
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import xarray as xr
from scipy import special

from sweep import stats
from sweep.check import parameters, show_value
from sweep.errors import CompareError
from sweep.spec import PointSpec, Sweep
from sweep.store import load_sweep, open_dataset
from sweep.text import format_table as text_table

#: Default family-wise false-alarm rate of the comparison.
ALPHA = 0.05
#: Survival is compared at up to this many times common to both stores' grids.
SURVIVAL_TIMES = 3
#: Relative tolerance when matching the time samples of two stores' survival grids.
MATCH_RTOL = 1e-9
#: Time settings a refinement may change (they leave the study's question as it is).
REFINABLE_TIME_KEYS = ("dt", "monitoring", "scheme")
#: Everything a refinement may change, for messages.
REFINABLE = ("dt", "monitoring", "scheme", "walkers", "seed", "chunk", "record")


@dataclass(frozen=True)
class Difference:
    """One statistic of one pair of points.

    ``a``/``b`` are the two estimates, ``stderr_a``/``stderr_b`` their standard
    errors, ``z`` the standardised difference (b - a) / combined standard error.
    """

    point_a: int
    point_b: int
    statistic: str
    a: float
    stderr_a: float
    b: float
    stderr_b: float
    z: float
    flagged: bool


@dataclass(frozen=True)
class Comparison:
    """Everything ``sweep compare`` prints, as data.

    ``changed`` maps each parameter that is constant in each store but differs
    between them to its two values; ``labels`` maps a point of store A to a text
    naming its swept values; ``unmatched_a``/``unmatched_b`` are points without a
    partner; ``z_crit`` is the Bonferroni bound for ``len(rows)`` comparisons.
    """

    store_a: str
    store_b: str
    changed: dict[str, tuple[str, str]]
    rows: list[Difference]
    labels: dict[int, str]
    unmatched_a: list[int]
    unmatched_b: list[int]
    alpha: float
    z_crit: float
    notes: list[str] = field(default_factory=list)

    @property
    def flagged(self) -> list[Difference]:
        """The rows whose difference exceeds ``z_crit``."""
        return [r for r in self.rows if r.flagged]


def compare_stores(
    path_a: str | Path, path_b: str | Path, alpha: float = ALPHA
) -> Comparison:
    """Compare two stores of one study point by point.

    Parameters
    ----------
    path_a, path_b : str or Path
        Store directories made by ``sweep run`` (for example at dt and dt / 2).
    alpha : float
        Family-wise false-alarm rate, in (0, 1).

    Returns
    -------
    Comparison

    Raises
    ------
    CompareError
        When the stores are not of one study (different walls, no point in common)
        or ``alpha`` is outside (0, 1).
    """
    if not 0.0 < alpha < 1.0:
        raise CompareError(
            f"alpha must be a probability strictly between 0 and 1; got {alpha!r}."
        )
    ds_a = open_dataset(path_a, verify=True)
    ds_b = open_dataset(path_b, verify=True)
    name_a, name_b = str(path_a), str(path_b)
    walls_a, walls_b = list(ds_a.attrs["wall_names"]), list(ds_b.attrs["wall_names"])
    if walls_a != walls_b:
        raise CompareError(
            f"{name_a} and {name_b} are not stores of one study: their walls differ "
            f"({', '.join(walls_a)} against {', '.join(walls_b)}). Compare stores made "
            f"from one definition with only {', '.join(REFINABLE)} changed."
        )
    sweep_a, sweep_b = load_sweep(path_a), load_sweep(path_b)
    changed = _changed(sweep_a, sweep_b)
    pairs, unmatched_a, unmatched_b = _pairs(sweep_a, sweep_b)
    if not pairs:
        raise CompareError(
            f"{name_a} and {name_b} are not stores of one study: no point of one has "
            f"the motion, domain and horizon of a point of the other. Compare stores "
            f"made from one definition with only {', '.join(REFINABLE)} changed."
        )
    raw: list[tuple[int, int, str, float, float, float, float, float]] = []
    notes: list[str] = []
    if "walkers" in changed and "seed" not in changed:
        # Task streams depend on (seed, point, chunk) only, so with one seed the
        # smaller ensemble is the first chunks of the larger: the two are not
        # independent and the bound below is conservative.
        notes.append(
            "both stores use one seed, so A's walkers are among B's: differences are "
            "understated. For an independent check, give B another [sweep] seed."
        )
    sum_a, sum_b = stats.summary(ds_a), stats.summary(ds_b)
    surv_a = stats.survival(ds_a) if "survival_count" in ds_a else None
    surv_b = stats.survival(ds_b) if "survival_count" in ds_b else None
    times = _common_times(ds_a, ds_b)
    for pa, pb in pairs:
        raw += _point_rows(sum_a, sum_b, pa, pb, walls_a)
        if surv_a is not None and surv_b is not None:
            for ta, tb in times:
                raw.append(
                    _proportion_row(
                        pa,
                        pb,
                        f"survival S(t={ds_a['time'].values[ta]:g})",
                        float(surv_a["estimate"].values[pa, ta]),
                        float(surv_b["estimate"].values[pb, tb]),
                        float(sum_a["walkers"].values[pa]),
                        float(sum_b["walkers"].values[pb]),
                    )
                )
    if any("*" in r[2] for r in raw):
        notes.append(
            "* mean over absorbed walkers only (some walkers censored): a conditional "
            "mean, comparable only when both stores share the horizon."
        )
    z_crit = float(-special.ndtri(alpha / (2 * max(len(raw), 1))))
    rows = [
        Difference(*r, flagged=bool(math.isfinite(r[-1]) and abs(r[-1]) > z_crit))
        for r in raw
    ]
    labels = {pa: _label(sweep_a, pa) for pa, _ in pairs}
    return Comparison(
        name_a,
        name_b,
        changed,
        rows,
        labels,
        unmatched_a,
        unmatched_b,
        alpha,
        z_crit,
        notes,
    )


def _study_key(point: PointSpec) -> str:
    """A point's parameters without those a refinement may change (JSON text)."""
    canonical = point.canonical()
    canonical.pop("record")  # what is recorded, not what is simulated
    canonical["time"] = {
        k: v for k, v in canonical["time"].items() if k not in REFINABLE_TIME_KEYS
    }
    return json.dumps(canonical, sort_keys=True)


def _changed(a: Sweep, b: Sweep) -> dict[str, tuple[str, str]]:
    """What differs between the two studies' settings, as display text."""
    changed: dict[str, tuple[str, str]] = {}
    for key in REFINABLE_TIME_KEYS:
        va = sorted({str(getattr(p.timing, key, "-")) for p in a.points})
        vb = sorted({str(getattr(p.timing, key, "-")) for p in b.points})
        if va != vb:
            changed[key] = (", ".join(va), ", ".join(vb))
    for key in ("walkers", "seed"):
        if getattr(a, key) != getattr(b, key):
            changed[key] = (str(getattr(a, key)), str(getattr(b, key)))
    return changed


def _pairs(a: Sweep, b: Sweep) -> tuple[list[tuple[int, int]], list[int], list[int]]:
    """Points of A and B with equal study parameters (in order; first match wins)."""
    free_b: dict[str, list[int]] = {}
    for pb, point in enumerate(b.points):
        free_b.setdefault(_study_key(point), []).append(pb)
    pairs: list[tuple[int, int]] = []
    unmatched_a: list[int] = []
    for pa, point in enumerate(a.points):
        matches = free_b.get(_study_key(point))
        if matches:
            pairs.append((pa, matches.pop(0)))
        else:
            unmatched_a.append(pa)
    return pairs, unmatched_a, sorted(pb for left in free_b.values() for pb in left)


def _common_times(ds_a: xr.Dataset, ds_b: xr.Dataset) -> list[tuple[int, int]]:
    """Up to SURVIVAL_TIMES interior time samples present in both survival grids."""
    if "time" not in ds_a.coords or "time" not in ds_b.coords:
        return []
    ta, tb = ds_a["time"].values, ds_b["time"].values
    common = [
        (i, j)
        for i, t in enumerate(ta)
        if t > 0
        for j in np.flatnonzero(np.isclose(tb, t, rtol=MATCH_RTOL, atol=0.0))[:1]
    ]
    if len(common) <= SURVIVAL_TIMES:
        return common
    # Evenly spread over the common grid, the last (often near zero survival) left out.
    picks = np.linspace(0, len(common) - 1, SURVIVAL_TIMES + 2)[1:-1]
    return [common[int(round(k))] for k in picks]


def _point_rows(
    sum_a: xr.Dataset, sum_b: xr.Dataset, pa: int, pb: int, walls: Sequence[str]
) -> list[tuple[int, int, str, float, float, float, float, float]]:
    na, nb = float(sum_a["walkers"].values[pa]), float(sum_b["walkers"].values[pb])
    rows = []
    if "censored" in sum_a and "censored" in sum_b:
        ca, cb = (
            float(sum_a["censored"].values[pa]),
            float(sum_b["censored"].values[pb]),
        )
        rows.append(_proportion_row(pa, pb, "censored fraction", ca, cb, na, nb))
        if "mean_fpt" in sum_a and "mean_fpt" in sum_b:
            star = "*" if ca > 0 or cb > 0 else ""
            ma, mb = (
                float(sum_a["mean_fpt"].values[pa]),
                float(sum_b["mean_fpt"].values[pb]),
            )
            sa = float(sum_a["mean_fpt_stderr"].values[pa])
            sb = float(sum_b["mean_fpt_stderr"].values[pb])
            se = math.hypot(sa, sb)
            z = (mb - ma) / se if se > 0 else (0.0 if ma == mb else math.inf)
            rows.append((pa, pb, f"mean first-passage time{star}", ma, sa, mb, sb, z))
    if "splitting" in sum_a and "splitting" in sum_b:
        for w, wall in enumerate(walls):
            pa_w = float(sum_a["splitting"].values[pa, w])
            pb_w = float(sum_b["splitting"].values[pb, w])
            if pa_w == 0.0 and pb_w == 0.0:
                continue  # a wall that absorbs nothing (reflecting) says nothing
            rows.append(
                _proportion_row(pa, pb, f"splitting at {wall}", pa_w, pb_w, na, nb)
            )
    return rows


def _proportion_row(
    pa: int, pb: int, statistic: str, a: float, b: float, na: float, nb: float
) -> tuple[int, int, str, float, float, float, float, float]:
    """Two-proportion z with the pooled standard error (a standard test; any
    statistics text, e.g. Agresti, Categorical Data Analysis, 3rd ed., §3.1.3)."""
    se_a = math.sqrt(a * (1 - a) / na) if na > 0 else math.nan
    se_b = math.sqrt(b * (1 - b) / nb) if nb > 0 else math.nan
    pooled = (a * na + b * nb) / (na + nb) if na + nb > 0 else math.nan
    se = (
        math.sqrt(pooled * (1 - pooled) * (1 / na + 1 / nb))
        if na > 0 and nb > 0
        else math.nan
    )
    if se > 0:
        z = (b - a) / se
    elif math.isnan(se):
        z = math.nan
    else:
        z = 0.0 if a == b else math.inf
    return (pa, pb, statistic, a, se_a, b, se_b, z)


def _label(sweep: Sweep, p: int) -> str:
    # Parameters by their one name (the store's coordinates), as every table shows.
    return ", ".join(
        f"{name} = {show_value(values[p])}"
        for name, values in parameters(sweep).items()
        if name not in REFINABLE_TIME_KEYS
    )


def format_comparison(comparison: Comparison, every: bool = False) -> str:
    """The comparison as text: what changed, the flagged rows (all with ``every``)
    and a verdict line."""
    c = comparison
    lines = [f"comparing {c.store_a} (A) with {c.store_b} (B)"]
    if c.changed:
        lines.append(
            "changed: "
            + "; ".join(f"{k} {a} -> {b}" for k, (a, b) in c.changed.items())
        )
    shown = c.rows if every else c.flagged
    if shown:
        z95 = stats.z_value()
        table = [
            (
                "point A",
                "point B",
                "parameters",
                "statistic",
                "A ± 95% CI",
                "B ± 95% CI",
                "z",
                "verdict",
            )
        ]
        for r in shown:
            table.append(
                (
                    str(r.point_a),
                    str(r.point_b),
                    c.labels.get(r.point_a, "") or "-",
                    r.statistic,
                    f"{r.a:.5g} ± {z95 * r.stderr_a:.2g}",
                    f"{r.b:.5g} ± {z95 * r.stderr_b:.2g}",
                    f"{r.z:+.2f}",
                    "DIFFERS" if r.flagged else "ok",
                )
            )
        lines += ["", text_table(table)]
    lines += c.notes
    for which, points in (("A", c.unmatched_a), ("B", c.unmatched_b)):
        if points:
            lines.append(
                f"points of {which} without a partner (not compared): "
                + ", ".join(map(str, points))
            )
    n = len(c.rows)
    bound = f"|z| > {c.z_crit:.2f}: Bonferroni bound for {n} comparisons at a {c.alpha:g} family-wise false-alarm rate"
    if c.flagged:
        lines.append(
            f"\n{len(c.flagged)} of {n} statistics differ beyond their intervals ({bound})."
        )
    else:
        lines.append(
            f"\nno statistic differs beyond its interval ({n} compared; {bound}). "
            "This is evidence of convergence only to the precision of the smaller ensemble."
        )
    return "\n".join(lines)
