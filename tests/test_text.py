"""sweep.text: the one table layout, duration and byte formatter."""

from __future__ import annotations

import math

import pytest

from sweep.text import format_bytes, format_duration, format_table


def test_table_left_aligns_columns_and_strips_trailing_blanks() -> None:
    rows = [["point", "D", "note"], ["0", "0.5", ""], ["10", "1", "x"]]
    assert format_table(rows) == "point  D    note\n0      0.5\n10     1    x"


@pytest.mark.parametrize(
    ("seconds", "words", "clock"),
    [
        (0.4, "0 s", "00:00"),
        (119.0, "119 s", "01:59"),
        (600.0, "10 min", "10:00"),
        (3 * 3600 + 5, "3.0 h", "3:00:05"),
        (3 * 86400, "3.0 days", "72:00:00"),
        (math.inf, "?", "?"),
    ],
)
def test_duration_in_words_and_on_a_clock(
    seconds: float, words: str, clock: str
) -> None:
    assert format_duration(seconds) == words
    assert format_duration(seconds, "clock") == clock


def test_bytes_in_binary_units() -> None:
    assert format_bytes(512) == "512 B"
    assert format_bytes(1536) == "1.5 KiB"
    assert format_bytes(3 * 1024**3) == "3 GiB"
