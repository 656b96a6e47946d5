"""Tests of ``sweep.spec.sections.timing``: the step, the horizon and monitoring."""

from __future__ import annotations

import pytest

from tests.spec.bases import LINE
from tests.spec.edit import assert_rejected, bad, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "monitoring-unknown",
        spec(LINE, time__monitoring="midpoint"),
        "[time.monitoring] must be 'bridge' or 'endpoint'; got \"midpoint\".",
    ),
    bad(
        "dt-equals-horizon",
        spec(LINE, time__dt=4.0),
        "[time.dt] must be smaller than time.horizon = 4.0; got 4.0.",
    ),
    bad(
        "dt-above-horizon",
        spec(LINE, time__dt=5.0),
        "[time.dt] must be smaller than time.horizon = 4.0; got 5.0.",
    ),
    bad(
        "too-many-steps",
        spec(LINE, time__dt=1e-300, time__horizon=1.0),
        "[time.horizon] needs more than 2^62 steps of dt = 1e-300.",
    ),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)
