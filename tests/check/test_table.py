"""``sweep.check.table``: the text form of a report."""

from __future__ import annotations

from sweep.check import CheckReport, format_table


def test_nothing_compared_is_not_a_pass_and_reasons_are_merged() -> None:
    unchecked = (
        (0, "uniform start"),
        (1, "uniform start"),
        (2, "no tasks"),
        (4, "no tasks"),
    )
    report = CheckReport("s.zarr", (), unchecked)
    text = format_table(report)
    assert "points 0-1: not checked (uniform start)" in text
    assert "point 2: not checked (no tasks)" in text
    assert "point 4: not checked (no tasks)" in text
    assert "point  statistic" not in text and "passed" not in text
    assert report.verdict().startswith("nothing compared")


def test_twin_rows_show_the_companion_and_leave_other_tables_alone() -> None:
    """A consistency row (J7) shows the twin's value with its interval, heads the
    column "exact or twin" and names the companion under the table; a table of
    closed forms only keeps its "exact" column and no such note."""
    from sweep.check import CheckRow
    from sweep.check.twin import twin_row

    twin = twin_row(
        3, "mean, reflecting twin (J7)", 1.0, 0.03, 1.1, 0.04, "J7", "reflecting twin: 400 walkers"
    )  # fmt: skip
    text = format_table(CheckReport("s.zarr", (twin,), ()))
    assert "exact or twin ± 95% CI" in text
    assert "1.1 ± 0.078 (twin)" in text  # 1.96 x 0.04
    assert "-2.00" in text  # -0.1 / hypot(0.03, 0.04)
    assert "\n  point 3: reflecting twin: 400 walkers" in text
    closed = CheckRow(0, "mean first-passage time", 1.0, 0.03, 1.1, -3.33, True, "C1")
    plain = format_table(CheckReport("s.zarr", (closed,), ()))
    assert "exact or twin" not in plain and "twin rows" not in plain
    assert plain.splitlines()[0].split() == [
        "point", "statistic", "simulated", "±", "95%", "CI", "exact", "z", "verdict"
    ]  # fmt: skip
