"""``sweep report``: PNG figures and one HTML page summarising a store.

Figures: survival curves with pointwise 95 % intervals against the analytic curve where
one exists; first-passage-time densities; splitting probabilities across the first
swept parameter; occupancy heat maps (or profiles in 1-D); and the ``sweep check``
table. Figures are :class:`matplotlib.figure.Figure` objects saved straight to PNG:
nothing here selects a backend or touches pyplot's figure list, so importing this
module (or ``sweep``) in a notebook leaves the user's plotting set-up as it was.
"""

from __future__ import annotations

import html
import math
from pathlib import Path

import numpy as np
import xarray as xr
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from sweep import check, stats, store, text
from sweep.spec import NO_UNITS, Sweep

#: Line plots show at most this many points (evenly spread over the sweep).
MAX_CURVES = 8
#: Occupancy figures show at most this many points (evenly spread; the caption
#: names the ones shown).
MAX_MAPS = 4
DPI = 110
#: Survival bands narrower than this (in S) are said to be hidden by their lines.
BAND_VISIBLE = 0.02


def write_report(path: str | Path, out: str | Path) -> Path:
    """Write figures and ``index.html`` for the store at ``path`` into ``out``.

    Returns
    -------
    Path
        The HTML page.
    """
    out = Path(out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise store.os_error(out, "create the report directory", err) from err
    ds = store.open_dataset(path, verify=True)
    sweep = store.load_sweep(path)
    report = check.check_dataset(ds, sweep, str(path))
    figures: list[tuple[str, str]] = []
    labels = check.point_labels(sweep)
    shown = _pick(sweep.n_points)
    figures.append(_survival_figure(ds, sweep, shown, labels, out))
    if "first_passage_time" in ds or "fpt_histogram" in ds:
        figures.append(_fpt_figure(ds, sweep, shown, labels, out))
        figures.append(_splitting_figure(ds, sweep, out))
    if "occupancy" in ds:
        figures.append(_occupancy_figure(ds, sweep, labels, out))
    from sweep.report_force import escape_time_figure  # force fields (issue 22)

    escape = escape_time_figure(sweep, report, out)
    if escape is not None:
        figures.append(escape)
    page = out / "index.html"
    page.write_text(_html(sweep, ds, report, figures))
    return page


def headline_rows(ds: xr.Dataset, sweep: Sweep) -> list[list[str]]:
    """The headline numbers of every point as text cells, a header row first.

    Columns: the point, its parameter values (by their store coordinate names, with
    units), walkers done, the censored fraction, the mean first-passage time with its
    95 % interval (``estimate ± half-width``; over absorbed walkers only where some
    are censored, marked ``*``: then a lower bound of the unconditional mean), and the
    splitting probability of each wall that absorbs at some point (the fraction of
    all walkers absorbed there, unconditional on absorption), with its 95 % Wilson
    interval. From :func:`sweep.stats.summary`.
    """
    s = stats.summary(ds)
    columns = check.parameters(sweep)
    header = [
        "point",
        *(check.parameter_header(name, sweep) for name in columns),
        "walkers",
        "censored",
    ]
    has_mean = "mean_fpt" in s
    names = sweep.points[0].domain.wall_names()
    # Walls that absorb at some point (the others' splitting is 0 by construction).
    absorbing = [
        any(k) for k in zip(*(p.domain.wall_absorbing() for p in sweep.points))
    ]
    walls = [w for w, a in enumerate(absorbing) if a] if "splitting" in s else []
    if has_mean:
        header.append(sweep.units.label("mean first-passage time", "time"))
    header += [f"P({names[w]})" for w in walls]
    rows = [header]
    for p in range(sweep.n_points):
        at = s.isel(point=p)
        censored = float(at["censored"]) if "censored" in s else math.nan
        row = [
            str(p),
            *(check.show_value(values[p]) for values in columns.values()),
            f"{int(at['walkers'])}",
            f"{censored:.3%}" if math.isfinite(censored) else "-",
        ]
        if has_mean:
            mean = float(at["mean_fpt"])
            half = 0.5 * float(at["mean_fpt_upper"] - at["mean_fpt_lower"])
            mark = " *" if bool(at["mean_fpt_censored"]) else ""
            row.append(_plus_minus(mean, half) + mark if math.isfinite(mean) else "-")
        for w in walls:
            split = at.isel(wall=w)
            if not math.isfinite(float(split["splitting"])):
                row.append("-")  # no finished walkers yet
                continue
            row.append(
                f"{float(split['splitting']):.4f} "
                f"[{float(split['splitting_lower']):.4f}, "
                f"{float(split['splitting_upper']):.4f}]"
            )
        rows.append(row)
    return rows


def headline_notes(ds: xr.Dataset, sweep: Sweep, rows: list[list[str]]) -> list[str]:
    """The footnotes of :func:`headline_rows`' table: what the columns mean, the
    units, and what censored walkers do to the numbers."""
    at = rows[0].index("censored")
    censored = any(row[at] not in ("0.000%", "-") for row in rows[1:])
    notes = [
        "mean ± half-width of its 95 % interval; P(wall): splitting probability, the "
        "fraction of all walkers absorbed at that wall [95 % Wilson interval]"
        + (
            "; censored walkers count at no wall, so the P(...) of a point add up to "
            "1 - censored."
            if censored
            else "."
        ),
        units_note(sweep),
    ]
    if any(cell.endswith(" *") for row in rows[1:] for cell in row):
        notes.append(
            "* some walkers were still free at the horizon: the mean is over absorbed"
            " walkers only, a lower bound of the full mean; lengthen time.horizon."
        )
    return notes


def units_note(sweep: Sweep) -> str:
    """One line naming the units of every number (or that none were named)."""
    u = sweep.units
    if u.length and u.time:
        return f"units: length {u.length}, time {u.time}."
    named = [f"{k} {v}" for k, v in (("length", u.length), ("time", u.time)) if v]
    return (
        f"units: {', '.join(named) + '; other ' if named else ''}{NO_UNITS} (name them "
        'in the definition: [sweep] units = { length = "um", time = "s" }).'
    )


def headline_table(ds: xr.Dataset, sweep: Sweep) -> str:
    """:func:`headline_rows` as an aligned text table with its footnotes."""
    rows = headline_rows(ds, sweep)
    return "\n".join([text.format_table(rows), *headline_notes(ds, sweep, rows)])


def _plus_minus(value: float, half: float) -> str:
    """``value ± half`` with ``half`` to two significant digits and ``value`` to the
    same decimal place (all of ``value``'s digits beyond are noise)."""
    if not (half > 0 and math.isfinite(half)):
        return f"{value:.5g} ± {half:.2g}"
    decimals = max(0, 1 - math.floor(math.log10(half)))
    return f"{value:.{decimals}f} ± {half:.{decimals}f}"


def _pick(n: int, most: int = MAX_CURVES) -> list[int]:
    if n <= most:
        return list(range(n))
    return sorted({round(i) for i in np.linspace(0, n - 1, most)})


def _left_out(shown: list[int], n: int) -> str:
    """ " (points 0, 4, 8 of 12 shown)" when some points are not drawn, else ""."""
    if len(shown) == n:
        return ""
    return f" (points {', '.join(map(str, shown))} of {n} shown)"


def _survival_figure(
    ds: xr.Dataset, sweep: Sweep, shown: list[int], labels: list[str], out: Path
) -> tuple[str, str]:
    surv = stats.survival(ds)
    t = ds["time"].values
    fig = Figure(figsize=(7, 4.5))
    ax = fig.subplots()
    widest = 0.0
    for i, p in enumerate(shown):
        colour = f"C{i % 10}"
        est = surv["estimate"].isel(point=p).values
        lower = surv["lower"].isel(point=p).values
        upper = surv["upper"].isel(point=p).values
        if np.isfinite(upper - lower).any():
            widest = max(widest, float(np.nanmax(upper - lower)))
        ax.fill_between(t, lower, upper, color=colour, alpha=0.3, linewidth=0)
        ax.plot(t, est, color=colour, linewidth=1.0, label=labels[p])
        exact = _exact_survival(sweep, p, t)
        if exact is not None:
            ax.plot(t, exact, color="black", linestyle="--", linewidth=0.8)
    if any(_exact_survival(sweep, p, t) is not None for p in shown):
        ax.plot([], [], color="black", linestyle="--", linewidth=0.8, label="analytic")
    ax.set_xlabel(sweep.units.label("time t", "time"))
    ax.set_ylabel("survival S(t)")
    ax.set_ylim(-0.02, 1.02)
    ax.legend(fontsize="small")
    ax.set_title("Fraction of walkers still free, shaded: pointwise 95 % interval")
    caption = (
        f"Survival with pointwise 95 % intervals (shaded; the widest is {widest:.2g} "
        "in S)"
    )
    # A band under ~0.02 (about six pixels of the 1.04-tall axis) hides under its
    # line: say so rather than leave the reader looking for it.
    if widest < BAND_VISIBLE:
        caption += "; the bands are about as narrow as the lines and hard to see"
    return _save(fig, out / "survival.png"), caption + _left_out(shown, sweep.n_points)


def _exact_survival(sweep: Sweep, p: int, t: np.ndarray) -> np.ndarray | None:
    point = sweep.points[p]
    if check.unsupported(point):
        return None
    try:
        return check.exact_survival(point, t)
    except NotImplementedError:
        return None


def _fpt_figure(
    ds: xr.Dataset, sweep: Sweep, shown: list[int], labels: list[str], out: Path
) -> tuple[str, str]:
    fig = Figure(figsize=(7, 4.5))
    ax = fig.subplots()
    drawn = 0
    for i, p in enumerate(shown):
        centres, density, err = _fpt_histogram(ds, p)
        if not np.isfinite(density).any():
            continue  # no finished walkers, or none absorbed
        drawn += 1
        ax.errorbar(
            centres,
            density,
            yerr=err,
            color=f"C{i % 10}",
            drawstyle="steps-mid",
            elinewidth=0.6,
            label=labels[p],
        )
    ax.set_xlabel(sweep.units.label("first-passage time", "time"))
    ax.set_ylabel(
        sweep.units.label("density", "rate") + "\n(integrates to the absorbed fraction)"
    )
    if drawn:
        ax.legend(fontsize="small")
    else:
        _empty(ax, "no walker absorbed yet")
    ax.set_title("First-passage-time densities with counting errors")
    caption = "First-passage-time densities" + _left_out(shown, sweep.n_points)
    return _save(fig, out / "fpt_density.png"), caption


def _empty(ax: Axes, text: str) -> None:
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center")


def _fpt_histogram(
    ds: xr.Dataset, p: int, bins: int = 60
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(centres, density, standard error) of one point's first-passage times; NaN
    density where the point has no finished walkers."""
    n = float(ds["walkers_done"][p])
    if "first_passage_time" in ds:
        # One point's times at a time: memory bounded by walkers per point.
        times = ds["first_passage_time"].isel(point=p).values
        times = times[np.isfinite(times)]
        top = float(np.quantile(times, 0.99)) if times.size else 1.0
        counts, edges = np.histogram(times, bins=bins, range=(0.0, top or 1.0))
    else:
        hist = ds["fpt_histogram"].isel(point=p).sum("wall").values
        width = float(ds["fpt_bin_width"][p])
        group = max(1, hist.size // bins)
        usable = hist[: hist.size // group * group].reshape(-1, group).sum(axis=1)
        counts = usable
        edges = np.arange(usable.size + 1) * width * group
    widths = np.diff(edges)
    scale = n * widths if n > 0 else np.full(widths.shape, np.nan)
    density = counts / scale
    err = np.sqrt(counts) / scale
    if not counts.any():
        density = np.full(widths.shape, np.nan)
    return 0.5 * (edges[1:] + edges[:-1]), density, err


def _splitting_figure(ds: xr.Dataset, sweep: Sweep, out: Path) -> tuple[str, str]:
    """Splitting probability of every wall that absorbed walkers against the first
    parameter that varies; with more parameters, one series per combination of the
    others' values (a legend entry each), so points at one x are never mixed."""
    split = stats.splitting_probability(ds)
    walls = [str(w) for w in split["wall"].values]
    used = [w for w in walls if float(split["count"].sel(wall=w).sum()) > 0]
    fig = Figure(figsize=(7.5, 4.8))
    ax = fig.subplots()
    columns = {
        k: np.asarray(v)
        for k, v in check.parameters(sweep).items()
        if np.unique(np.asarray(v).astype(str)).size > 1
    }
    xname = next((k for k, v in columns.items() if v.dtype.kind == "f"), None)
    censored = bool((split["count"].sum("wall") < split["n"]).any())
    caption = "Splitting probabilities: fraction of all walkers absorbed at each wall"
    if censored:
        caption += " (censored walkers count at no wall)"
    if not used:
        _empty(ax, "no walker absorbed yet")
    elif xname is not None:
        x = columns[xname]
        others = [k for k in columns if k != xname]
        groups: dict[tuple[str, ...], list[int]] = {}
        for p in range(sweep.n_points):
            key = tuple(check.show_value(columns[k][p].item()) for k in others)
            groups.setdefault(key, []).append(p)
        markers = "osD^v<>"
        series = 0
        for w_i, w in enumerate(used):
            est = split["estimate"].sel(wall=w).values
            lo = split["lower"].sel(wall=w).values
            hi = split["upper"].sel(wall=w).values
            for g_i, (key, members) in enumerate(groups.items()):
                idx = np.asarray(members)[np.argsort(x[members], kind="stable")]
                label = w + "".join(
                    f", {k}={v}" for k, v in zip(others, key, strict=True)
                )
                ax.errorbar(
                    x[idx],
                    est[idx],
                    yerr=[
                        np.clip(est - lo, 0, None)[idx],
                        np.clip(hi - est, 0, None)[idx],
                    ],
                    marker=markers[w_i % len(markers)],
                    linestyle="-",
                    linewidth=0.8,
                    capsize=2,
                    color=f"C{g_i % 10}",
                    label=label,
                )
                series += 1
        ax.set_xlabel(check.parameter_header(xname, sweep))
        ax.legend(fontsize="x-small" if series > 6 else "small")
    else:
        est = [float(split["estimate"].sel(wall=w).isel(point=0)) for w in used]
        lo = [float(split["lower"].sel(wall=w).isel(point=0)) for w in used]
        hi = [float(split["upper"].sel(wall=w).isel(point=0)) for w in used]
        ax.bar(used, est, color="C0")
        ax.errorbar(
            used,
            est,
            yerr=[
                np.clip(np.subtract(est, lo), 0, None),
                np.clip(np.subtract(hi, est), 0, None),
            ],
            linestyle="none",
            color="black",
            capsize=3,
        )
        ax.set_xlabel("wall")
    ylabel = "fraction of all walkers absorbed there\n(95 % Wilson interval)"
    ax.set_ylabel(ylabel)
    ax.set_ylim(-0.02, 1.02)
    ax.set_title(
        "Splitting probabilities"
        + (" (censored walkers count at no wall)" if censored else "")
    )
    return _save(fig, out / "splitting.png"), caption


def _occupancy_figure(
    ds: xr.Dataset, sweep: Sweep, labels: list[str], out: Path
) -> tuple[str, str]:
    """Density of free walkers (per unit length, area, ...) at each snapshot: 1-D
    profiles on one shared y axis, 2-D maps (3-D and more: projected on x, y) on one
    shared colour scale with a colour bar. Densities are per walker started, so
    panels of different points compare directly."""
    occ = ds["occupancy"]
    bin_dims = [d for d in occ.dims if d.endswith("_bin")]
    points = _pick(ds.sizes["point"], MAX_MAPS)
    n_snap = ds.sizes["snapshot"]
    n = ds["walkers_done"].values.astype(float)
    d = len(bin_dims)

    def density(p: int, s: int) -> np.ndarray:
        lo = ds["occupancy_lower"].isel(point=p).values
        hi = ds["occupancy_upper"].isel(point=p).values
        bins = occ.sizes[bin_dims[0]]
        counts = occ.isel(point=p, snapshot=s).values.astype(float)
        if d > 2:
            counts = counts.sum(axis=tuple(range(2, d)))  # projected on x, y
            lo, hi = lo[:2], hi[:2]
        cell = float(np.prod((hi - lo) / bins))
        with np.errstate(invalid="ignore", divide="ignore"):
            return counts / (n[p] * cell) if n[p] > 0 else np.full(counts.shape, np.nan)

    per = min(d, 2)
    unit = sweep.units.of("length", 0)
    dens_unit = f"1/{unit}" if per == 1 else f"1/{unit}^2"
    if unit == NO_UNITS:
        dens_unit = NO_UNITS
    caption = "Occupancy of free walkers" + _left_out(points, sweep.n_points)
    if d > 2:
        caption += "; projected on the x, y plane"
    if d == 1:
        fig = Figure(figsize=(3.6 * len(points) + 0.6, 3.6))
        axes = fig.subplots(1, len(points), squeeze=False, sharey=True)
        for ax, p in zip(axes[0], points):
            lo = float(ds["occupancy_lower"].isel(point=p, axis=0))
            hi = float(ds["occupancy_upper"].isel(point=p, axis=0))
            bins = occ.sizes[bin_dims[0]]
            centres = lo + (np.arange(bins) + 0.5) * (hi - lo) / bins
            for s in range(n_snap):
                t = float(ds["snapshot_time"].isel(point=p, snapshot=s))
                ax.step(
                    centres,
                    density(p, s),
                    where="mid",
                    label=f"t={t:.3g} {sweep.units.of('time')}".replace(
                        f" {NO_UNITS}", ""
                    ),
                )
            ax.set_title(f"point {p}: {labels[p]}", fontsize="small")
            ax.set_xlabel(sweep.units.label("x", "length"))
            ax.legend(fontsize="x-small")
        axes[0][0].set_ylabel(f"density of free walkers [{dens_unit}]")
    else:
        maps = {(p, s): density(p, s) for p in points for s in range(n_snap)}
        finite = [m[np.isfinite(m)] for m in maps.values()]
        top = max((float(m.max()) for m in finite if m.size), default=1.0) or 1.0
        fig = Figure(figsize=(3.3 * n_snap + 1.2, 3.0 * len(points) + 0.4))
        axes = fig.subplots(len(points), n_snap, squeeze=False)
        image = None
        for row, p in enumerate(points):
            for s in range(n_snap):
                ext = [
                    float(ds["occupancy_lower"].isel(point=p, axis=0)),
                    float(ds["occupancy_upper"].isel(point=p, axis=0)),
                    float(ds["occupancy_lower"].isel(point=p, axis=1)),
                    float(ds["occupancy_upper"].isel(point=p, axis=1)),
                ]
                ax = axes[row][s]
                image = ax.imshow(
                    maps[p, s].T,
                    origin="lower",
                    extent=ext,
                    aspect="auto",
                    cmap="viridis",
                    vmin=0.0,
                    vmax=top,
                )
                t = float(ds["snapshot_time"].isel(point=p, snapshot=s))
                tu = sweep.units.of("time")
                ts = f"t={t:.3g}" + ("" if tu == NO_UNITS else f" {tu}")
                ax.set_title(f"point {p}: {labels[p]}\n{ts}", fontsize="x-small")
                ax.set_xlabel(sweep.units.label("x", "length"), fontsize="small")
                ax.set_ylabel(sweep.units.label("y", "length"), fontsize="small")
        fig.suptitle(
            "Occupancy of free walkers (one colour scale for all panels)"
            + _left_out(points, sweep.n_points)
        )
        fig.tight_layout()
        assert image is not None
        bar = fig.colorbar(image, ax=axes.ravel().tolist(), shrink=0.9)
        bar.set_label(f"density of free walkers per walker started [{dens_unit}]")
        fig.savefig(out / "occupancy.png", dpi=DPI)
        return "occupancy.png", caption
    fig.suptitle(
        "Occupancy of free walkers per walker started (shared y axis)"
        + _left_out(points, sweep.n_points)
    )
    return _save(fig, out / "occupancy.png"), caption


def _save(fig: Figure, path: Path) -> str:
    """Lay out and write ``fig`` as PNG (the Agg renderer, chosen by the suffix);
    the figure belongs to no pyplot manager, so nothing is left to close."""
    fig.tight_layout()
    fig.savefig(path, dpi=DPI)
    return path.name


def _html(
    sweep: Sweep,
    ds: xr.Dataset,
    report: check.CheckReport,
    figures: list[tuple[str, str]],
) -> str:
    e = html.escape
    all_rows = headline_rows(ds, sweep)
    notes = "".join(f"<p>{e(n)}</p>" for n in headline_notes(ds, sweep, all_rows))
    head, *body = all_rows
    headline = "<tr>" + "".join(f"<th>{e(c)}</th>" for c in head) + "</tr>"
    headline += "".join(
        "<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>" for row in body
    )
    rows = "".join(
        "<tr>"
        f"<td>{r.point}</td><td>{e(r.statistic)}</td>"
        f"<td>{r.simulated:.5g} ± {stats.z_value() * r.stderr:.2g}</td>"
        f"<td>{_reference_cell(r)}</td><td>{r.z:+.2f}</td>"
        f"<td class={'ok' if r.passed else 'fail'}>{'ok' if r.passed else 'FAIL'}</td>"
        "</tr>"
        for r in report.rows
    )
    unchecked = "".join(f"<li>point {p}: {e(why)}</li>" for p, why in report.unchecked)
    points = "".join(
        f"<li>point {i}: {e(label)}</li>"
        for i, label in enumerate(check.point_labels(sweep))
    )
    verdict = report.verdict()
    # With a precision target only the planned tasks count (sweep.precision).
    done = int((ds["done"] & ds.get("planned", True)).sum())
    total = int(ds["planned"].sum() if "planned" in ds else ds["done"].size)
    unfinished = (
        ""
        if done == total
        else f"<p class=fail>The store is INCOMPLETE ({done} of {total} tasks done): "
        "every number below is over the finished tasks only.</p>"
    )
    images = "".join(
        f"<figure><img src='{e(name)}' alt='{e(caption)}'><figcaption>{e(caption)}"
        "</figcaption></figure>"
        for name, caption in figures
    )
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8">
<title>{e(sweep.name)}: brownian-sweep report</title>
<style>
body {{ font-family: sans-serif; max-width: 60em; margin: 2em auto; color: #222; }}
table {{ border-collapse: collapse; }} td, th {{ padding: 0.2em 0.8em; border-bottom: 1px solid #ddd; }}
.ok {{ color: #1a7f37; }} .fail {{ color: #c00; font-weight: bold; }}
img {{ max-width: 100%; }} figure {{ margin: 1.5em 0; }}
</style></head><body>
<h1>{e(sweep.name)}</h1>
<p>{sweep.n_points} points × {sweep.walkers:,} walkers; {done}/{total} tasks done.
Definition: <code>{e(sweep.source)}</code>; definition hash <code>{e(ds.attrs["spec_hash"][:16])}</code>.
{e(units_note(sweep).capitalize())}</p>{unfinished}
<p><strong>Simulation results need convergence checks (time step, walker count) before
they are relied on.</strong></p>
<h2>Points</h2><ul>{points}</ul>
<h2>Headline numbers</h2>
<table>{headline}</table>
{notes}
<h2>Analytic checks: {e(verdict)}</h2>
<table><tr><th>point</th><th>statistic</th><th>simulated ± 95 % CI</th><th>exact</th>
<th>z</th><th>verdict</th></tr>{rows}</table>
<ul>{unchecked}</ul>
<p>z = (simulated - exact) / standard error; a check passes when |z| &le; {check.Z_PASS:g}.</p>
<h2>Figures</h2>{images}
</body></html>
"""


def _reference_cell(row: check.CheckRow) -> str:
    """The report's "exact" cell: the closed form's value, or a companion run's value
    with its 95 % interval (a consistency row, ``sweep.check.twin``)."""
    if not row.companion:
        return f"{row.exact:.5g}"
    half = stats.z_value() * row.reference_stderr
    # The companion names its kind ("reflecting twin: 2000 walkers, ..."): no prefix.
    return html.escape(f"{row.exact:.5g} ± {half:.2g} ({row.companion})")
