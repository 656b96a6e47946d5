"""The package's contract, kept by the series helpers (:mod:`sweep.analytic.series`):
arrays in, float64 arrays out, t = 0 allowed, bad input rejected, every public name
cites its source.
"""

from __future__ import annotations

import inspect
from collections.abc import Callable

import numpy as np
import pytest

from sweep import analytic as an
from tests.analytic.sheet import (
    AR,
    MIXED,
    R0,
    RR,
    X0,
    D,
    L,
    R,
    T,
    V,
)


@pytest.mark.parametrize(
    ("call", "match"),
    [
        pytest.param(
            lambda: an.interval_survival(T, X0, L, D, walls=("absorbing", "sticky")),
            "wall kind",
            id="kind",
        ),
        pytest.param(
            lambda: an.interval_survival(T, X0, L, D, walls="absorbing"),
            "pair",
            id="str",
        ),
        pytest.param(
            lambda: an.interval_survival(T, 2.5, L, D), "must lie in", id="x0"
        ),
        pytest.param(
            lambda: an.interval_survival(-1.0, X0, L, D), "t must be", id="t<0"
        ),
        pytest.param(
            lambda: an.interval_survival(T, X0, L, -D), "diffusivity", id="D<0"
        ),
        pytest.param(
            lambda: an.halfline_survival(T, -0.1, D), "x0 must be", id="half-x0"
        ),
    ],
)
def test_analytic_rejects_bad_input(call: Callable[[], object], match: str) -> None:
    with pytest.raises(ValueError, match=match):
        call()


TIME_FUNCTIONS = {
    "halfline_survival": lambda t: an.halfline_survival(t, X0, D, -V),
    "halfline_fpt_density": lambda t: an.halfline_fpt_density(t, X0, D, V),
    "interval_survival": lambda t: an.interval_survival(t, X0, L, D, 0.9),
    "interval_fpt_density": lambda t: an.interval_fpt_density(t, X0, L, D, walls=AR),
    "interval_exit_density": lambda t: an.interval_exit_density(t, X0, L, D, -1.3)[0],
    "interval_density": lambda t: an.interval_density(
        1.1, t, X0, L, D, walls=RR, drift=0.4
    ),
    "box_survival": lambda t: an.box_survival(t, **MIXED),
    "ball_survival-2": lambda t: an.ball_survival(t, R0, R, D, 2),
    "ball_survival-3": lambda t: an.ball_survival(t, R0, R, D, 3),
    "free_density": lambda t: an.free_density(0.4, t, 0.0, D, V),
}


@pytest.mark.parametrize("name", sorted(TIME_FUNCTIONS))
def test_time_functions_broadcast_and_return_float64(name: str) -> None:
    # Conventions of the module docstring: arrays in, float64 arrays of the same shape out,
    # t = 0 allowed (survival 1, densities 0) without warnings (warnings are errors here).
    t = np.array([[0.0, 1e-3, 0.05], [T, 1.0, 10.0]])
    result = TIME_FUNCTIONS[name](t)
    assert isinstance(result, np.ndarray)
    assert result.dtype == np.float64
    assert result.shape == t.shape
    assert np.all(np.isfinite(result))
    expected_at_zero = 1.0 if "survival" in name else 0.0
    np.testing.assert_array_equal(result[0, 0], expected_at_zero)


@pytest.mark.parametrize("name", an.__all__)
def test_public_names_document_their_source(name: str) -> None:
    # design.md: analytic checks name their published source; the sheet's citation status
    # markers are kept.
    obj = getattr(an, name)
    if not inspect.isfunction(obj):
        return
    doc = inspect.getdoc(obj) or ""
    assert "Source" in doc
    assert any(mark in doc for mark in ("[memory", "[seen", "[derived"))
