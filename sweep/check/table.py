"""``sweep check``'s text output: the comparisons as an aligned table, the points not
checked (runs of points with one reason merged), and the verdict line.
"""

from __future__ import annotations

from sweep import stats
from sweep.check.labels import point_labels
from sweep.check.verdict import Z_PASS, CheckReport
from sweep.spec import Sweep
from sweep.text import format_table as format_table_text


def format_table(report: CheckReport, sweep: Sweep | None = None) -> str:
    """The report as an aligned text table, one row per comparison; with ``sweep``,
    preceded by each point's parameter values."""
    biased = any(r.allowance for r in report.rows)
    twins = [r for r in report.rows if r.companion]
    # The reference column is headed "exact" unless consistency rows share it.
    reference = "exact or twin ± 95% CI" if twins else "exact"
    header: tuple[str, ...] = (
        "point",
        "statistic",
        "simulated ± 95% CI",
        reference,
        "z",
    )
    header += ("expected dt bias", "verdict") if biased else ("verdict",)
    lines = [header]
    z95 = stats.z_value()
    for r in report.rows:
        row: tuple[str, ...] = (
            str(r.point),
            r.statistic,
            f"{r.simulated:.5g} ± {z95 * r.stderr:.2g}",
            f"{r.exact:.5g} ± {z95 * r.reference_stderr:.2g} (twin)"
            if r.companion
            else f"{r.exact:.5g}",
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
    if twins:
        note += (
            "\ntwin rows (J7, mirror symmetry) compare with a companion run of the "
            "point's twin (periodic and reflecting faces swapped: the same law), not "
            "with a closed form; there z = (simulated - twin) / sqrt(se^2 + se_twin^2)."
        )
        companions = dict.fromkeys((r.point, r.companion) for r in twins)
        note += "".join(f"\n  point {p}: {c}" for p, c in companions)
    return (
        f"{text}\n\n{report.outcome()} (|z| <= {Z_PASS:g}; z = (simulated - exact) / "
        f"standard error){note}{unfinished}"
    )


#: The one table layout of the tool (kept under its former name for callers).
text_table = format_table_text


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
