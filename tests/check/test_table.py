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
