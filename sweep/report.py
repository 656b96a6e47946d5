"""``sweep report``: PNG figures and one HTML page summarising a store.

Figures: survival curves with pointwise 95 % intervals against the analytic curve where
one exists; first-passage-time densities; splitting probabilities across the first
swept parameter; occupancy heat maps (or profiles in 1-D); and the ``sweep check``
table. Matplotlib runs with the non-interactive Agg backend.
"""

from __future__ import annotations

import html
import math
from pathlib import Path

import matplotlib

matplotlib.use("Agg")  # files only; no display on compute nodes

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import xarray as xr  # noqa: E402

from sweep import check, stats, store  # noqa: E402
from sweep.spec import Sweep  # noqa: E402

#: Line plots show at most this many points (evenly spread over the sweep).
MAX_CURVES = 8
#: Occupancy maps are drawn for at most this many points.
MAX_MAPS = 3
DPI = 110


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
    labels = _labels(sweep)
    shown = _pick(sweep.n_points)
    figures.append(
        (
            _survival_figure(ds, sweep, shown, labels, out),
            "Survival with 95 % intervals",
        )
    )
    if "first_passage_time" in ds or "fpt_histogram" in ds:
        figures.append(
            (_fpt_figure(ds, shown, labels, out), "First-passage-time densities")
        )
        figures.append((_splitting_figure(ds, sweep, out), "Splitting probabilities"))
    if "occupancy" in ds:
        figures.append(
            (_occupancy_figure(ds, labels, out), "Occupancy of free walkers")
        )
    page = out / "index.html"
    page.write_text(_html(sweep, ds, report, figures))
    return page


def headline_rows(ds: xr.Dataset, sweep: Sweep) -> list[list[str]]:
    """The headline numbers of every point as text cells, a header row first.

    Columns: the point, its swept values, walkers done, the censored fraction, the mean
    first-passage time with its 95 % interval (``estimate ± half-width``; over absorbed
    walkers only where some are censored, marked ``*``: then a lower bound of the
    unconditional mean), and the splitting probability of each wall that absorbs at
    some point, with its 95 % Wilson interval. From :func:`sweep.stats.summary`.
    """
    s = stats.summary(ds)
    header = ["point", *sweep.swept, "walkers", "censored"]
    has_mean = "mean_fpt" in s
    names = sweep.points[0].domain.wall_names()
    # Walls that absorb at some point (the others' splitting is 0 by construction).
    absorbing = [
        any(k) for k in zip(*(p.domain.wall_absorbing() for p in sweep.points))
    ]
    walls = [w for w, a in enumerate(absorbing) if a] if "splitting" in s else []
    if has_mean:
        header.append("mean first-passage time")
    header += [f"P({names[w]})" for w in walls]
    rows = [header]
    for p in range(sweep.n_points):
        at = s.isel(point=p)
        censored = float(at["censored"]) if "censored" in s else math.nan
        row = [
            str(p),
            *(str(v) for v in sweep.values[p]),
            f"{int(at['walkers'])}",
            f"{censored:.3%}" if math.isfinite(censored) else "-",
        ]
        if has_mean:
            mean = float(at["mean_fpt"])
            half = 0.5 * float(at["mean_fpt_upper"] - at["mean_fpt_lower"])
            mark = " *" if censored > 0 else ""
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


def headline_table(ds: xr.Dataset, sweep: Sweep) -> str:
    """:func:`headline_rows` as an aligned text table, with a footnote when a mean
    first-passage time leaves censored walkers out."""
    rows = headline_rows(ds, sweep)
    notes = [
        "mean ± half-width of its 95 % interval; P(wall): splitting probability"
        " [95 % Wilson interval]."
    ]
    if any(cell.endswith(" *") for row in rows[1:] for cell in row):
        notes.append(
            "* some walkers were still free at the horizon: the mean is over absorbed"
            " walkers only, a lower bound of the full mean; lengthen time.horizon."
        )
    return "\n".join([check.text_table(rows), *notes])


def _plus_minus(value: float, half: float) -> str:
    """``value ± half`` with ``half`` to two significant digits and ``value`` to the
    same decimal place (all of ``value``'s digits beyond are noise)."""
    if not (half > 0 and math.isfinite(half)):
        return f"{value:.5g} ± {half:.2g}"
    decimals = max(0, 1 - math.floor(math.log10(half)))
    return f"{value:.{decimals}f} ± {half:.{decimals}f}"


def _labels(sweep: Sweep) -> list[str]:
    if not sweep.swept:
        return ["point 0"]
    return [
        ", ".join(f"{k.split('.')[-1]}={_fmt(v)}" for k, v in zip(sweep.swept, values))
        for values in sweep.values
    ]


def _fmt(value: object) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    if isinstance(value, list):
        return "[" + ", ".join(_fmt(v) for v in value) + "]"
    return str(value)


def _pick(n: int) -> list[int]:
    if n <= MAX_CURVES:
        return list(range(n))
    return sorted({round(i) for i in np.linspace(0, n - 1, MAX_CURVES)})


def _survival_figure(
    ds: xr.Dataset, sweep: Sweep, shown: list[int], labels: list[str], out: Path
) -> str:
    surv = stats.survival(ds)
    t = ds["time"].values
    fig, ax = plt.subplots(figsize=(7, 4.5))
    for i, p in enumerate(shown):
        colour = f"C{i % 10}"
        est = surv["estimate"].isel(point=p).values
        ax.fill_between(
            t,
            surv["lower"].isel(point=p).values,
            surv["upper"].isel(point=p).values,
            color=colour,
            alpha=0.25,
            linewidth=0,
        )
        ax.plot(t, est, color=colour, label=labels[p])
        exact = _exact_survival(sweep, p, t)
        if exact is not None:
            ax.plot(t, exact, color="black", linestyle="--", linewidth=0.8)
    ax.plot([], [], color="black", linestyle="--", linewidth=0.8, label="analytic")
    ax.set_xlabel("time t")
    ax.set_ylabel("survival S(t)")
    ax.set_ylim(-0.02, 1.02)
    ax.legend(fontsize="small")
    ax.set_title("Fraction of walkers still free")
    return _save(fig, out / "survival.png")


def _exact_survival(sweep: Sweep, p: int, t: np.ndarray) -> np.ndarray | None:
    point = sweep.points[p]
    if check.unsupported(point):
        return None
    try:
        return check.exact_survival(point, t)
    except NotImplementedError:
        return None


def _fpt_figure(ds: xr.Dataset, shown: list[int], labels: list[str], out: Path) -> str:
    fig, ax = plt.subplots(figsize=(7, 4.5))
    for i, p in enumerate(shown):
        centres, density, err = _fpt_histogram(ds, p)
        ax.errorbar(
            centres,
            density,
            yerr=err,
            color=f"C{i % 10}",
            drawstyle="steps-mid",
            elinewidth=0.6,
            label=labels[p],
        )
    ax.set_xlabel("first-passage time")
    ax.set_ylabel("density (integrates to the absorbed fraction)")
    ax.legend(fontsize="small")
    ax.set_title("First-passage-time densities with counting errors")
    return _save(fig, out / "fpt_density.png")


def _fpt_histogram(
    ds: xr.Dataset, p: int, bins: int = 60
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(centres, density, standard error) of one point's first-passage times."""
    n = float(ds["walkers_done"][p])
    if "first_passage_time" in ds:
        # One point's times at a time: memory bounded by walkers per point.
        times = ds["first_passage_time"].isel(point=p).values
        times = times[np.isfinite(times)]
        top = float(np.quantile(times, 0.99)) if times.size else 1.0
        counts, edges = np.histogram(times, bins=bins, range=(0.0, top))
    else:
        hist = ds["fpt_histogram"].isel(point=p).sum("wall").values
        width = float(ds["fpt_bin_width"][p])
        group = max(1, hist.size // bins)
        usable = hist[: hist.size // group * group].reshape(-1, group).sum(axis=1)
        counts = usable
        edges = np.arange(usable.size + 1) * width * group
    widths = np.diff(edges)
    density = counts / (n * widths)
    err = np.sqrt(counts) / (n * widths)
    return 0.5 * (edges[1:] + edges[:-1]), density, err


def _splitting_figure(ds: xr.Dataset, sweep: Sweep, out: Path) -> str:
    split = stats.splitting_probability(ds)
    walls = [str(w) for w in split["wall"].values]
    used = [w for w in walls if float(split["count"].sel(wall=w).sum()) > 0]
    fig, ax = plt.subplots(figsize=(7, 4.5))
    xcoord = _first_scalar_coordinate(ds, sweep)
    if xcoord is not None:
        x = ds[xcoord].values
        order = np.argsort(x, kind="stable")
        for i, w in enumerate(used):
            est = split["estimate"].sel(wall=w).values
            lo = split["lower"].sel(wall=w).values
            hi = split["upper"].sel(wall=w).values
            ax.errorbar(
                x[order],
                est[order],
                yerr=[(est - lo)[order], (hi - est)[order]],
                marker="o",
                linestyle="none",
                color=f"C{i % 10}",
                label=w,
            )
        ax.set_xlabel(xcoord)
    else:
        est = [float(split["estimate"].sel(wall=w).isel(point=0)) for w in used]
        ax.bar(used, est)
        ax.set_xlabel("wall")
    ax.set_ylabel("fraction absorbed (Wilson 95 % interval)")
    ax.set_ylim(-0.02, 1.02)
    ax.legend(fontsize="small")
    ax.set_title("Splitting probabilities")
    return _save(fig, out / "splitting.png")


def _first_scalar_coordinate(ds: xr.Dataset, sweep: Sweep) -> str | None:
    for name, coord in ds.coords.items():
        if coord.dims == ("point",) and name != "point" and coord.dtype.kind == "f":
            if np.unique(coord.values).size > 1:
                return str(name)
    return None


def _occupancy_figure(ds: xr.Dataset, labels: list[str], out: Path) -> str:
    occ = ds["occupancy"]
    bin_dims = [d for d in occ.dims if d.endswith("_bin")]
    points = _pick(ds.sizes["point"])[:MAX_MAPS]
    n_snap = ds.sizes["snapshot"]
    n = ds["walkers_done"]
    if len(bin_dims) == 1:
        fig, axes = plt.subplots(
            1, len(points), figsize=(4 * len(points), 3.5), squeeze=False
        )
        for ax, p in zip(axes[0], points):
            lo = float(ds["occupancy_lower"].isel(point=p, axis=0))
            hi = float(ds["occupancy_upper"].isel(point=p, axis=0))
            bins = occ.sizes[bin_dims[0]]
            centres = lo + (np.arange(bins) + 0.5) * (hi - lo) / bins
            for s in range(n_snap):
                counts = occ.isel(point=p, snapshot=s).values
                density = counts / (float(n[p]) * (hi - lo) / bins)
                t = float(ds["snapshot_time"].isel(point=p, snapshot=s))
                ax.step(centres, density, where="mid", label=f"t={t:.3g}")
            ax.set_title(labels[p], fontsize="small")
            ax.set_xlabel("x")
            ax.legend(fontsize="x-small")
        axes[0][0].set_ylabel("density of free walkers")
    else:
        fig, axes = plt.subplots(
            len(points),
            n_snap,
            figsize=(3.2 * n_snap, 3 * len(points)),
            squeeze=False,
        )
        for row, p in enumerate(points):
            for s in range(n_snap):
                counts = occ.isel(point=p, snapshot=s)
                # 3-D and more: project onto the first two axes.
                plane = counts.sum(bin_dims[2:]) if len(bin_dims) > 2 else counts
                ext = [
                    float(ds["occupancy_lower"].isel(point=p, axis=0)),
                    float(ds["occupancy_upper"].isel(point=p, axis=0)),
                    float(ds["occupancy_lower"].isel(point=p, axis=1)),
                    float(ds["occupancy_upper"].isel(point=p, axis=1)),
                ]
                ax = axes[row][s]
                ax.imshow(
                    plane.values.T,
                    origin="lower",
                    extent=ext,
                    aspect="auto",
                    cmap="viridis",
                )
                t = float(ds["snapshot_time"].isel(point=p, snapshot=s))
                ax.set_title(f"{labels[p]}\nt={t:.3g}", fontsize="x-small")
                ax.set_xlabel("x")
                ax.set_ylabel("y")
    fig.suptitle("Occupancy of free walkers")
    return _save(fig, out / "occupancy.png")


def _save(fig: plt.Figure, path: Path) -> str:
    fig.tight_layout()
    fig.savefig(path, dpi=DPI)
    plt.close(fig)
    return path.name


def _html(
    sweep: Sweep,
    ds: xr.Dataset,
    report: check.CheckReport,
    figures: list[tuple[str, str]],
) -> str:
    e = html.escape
    head, *body = headline_rows(ds, sweep)
    headline = "<tr>" + "".join(f"<th>{e(c)}</th>" for c in head) + "</tr>"
    headline += "".join(
        "<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>" for row in body
    )
    rows = "".join(
        "<tr>"
        f"<td>{r.point}</td><td>{e(r.statistic)}</td>"
        f"<td>{r.simulated:.5g} ± {stats.z_value() * r.stderr:.2g}</td>"
        f"<td>{r.exact:.5g}</td><td>{r.z:+.2f}</td>"
        f"<td class={'ok' if r.passed else 'fail'}>{'ok' if r.passed else 'FAIL'}</td>"
        "</tr>"
        for r in report.rows
    )
    unchecked = "".join(f"<li>point {p}: {e(why)}</li>" for p, why in report.unchecked)
    points = "".join(
        f"<li>point {i}: {e(label)}</li>" for i, label in enumerate(_labels(sweep))
    )
    verdict = report.verdict()
    done = int(ds["done"].sum())
    total = int(ds["done"].size)
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
Definition: <code>{e(sweep.source)}</code>; spec hash <code>{e(ds.attrs["spec_hash"][:16])}</code>.</p>
<p><strong>Simulation results need convergence checks (time step, walker count) before
they are relied on.</strong></p>
<h2>Points</h2><ul>{points}</ul>
<h2>Headline numbers</h2>
<table>{headline}</table>
<p>Mean first-passage time ± half-width of its 95 % interval (* over absorbed walkers
only, where some were still free at the horizon: a lower bound of the full mean);
P(wall): splitting probability [95 % Wilson interval].</p>
<h2>Analytic checks: {e(verdict)}</h2>
<table><tr><th>point</th><th>statistic</th><th>simulated ± 95 % CI</th><th>exact</th>
<th>z</th><th>verdict</th></tr>{rows}</table>
<ul>{unchecked}</ul>
<h2>Figures</h2>{images}
</body></html>
"""
