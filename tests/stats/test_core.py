"""sweep.stats.core: Wilson intervals at the edges of [0, 1]."""

from __future__ import annotations

import numpy as np

from sweep import stats


def test_wilson_interval_contains_its_estimate_at_zero_and_one() -> None:
    """At p-hat = 1 the formula's upper bound is 1 in exact arithmetic; in floating
    point it landed an ulp below for some n (the report's errorbar then failed)."""
    n = np.arange(1, 5001, dtype=np.float64)
    for successes in (np.zeros_like(n), n):
        lower, upper = stats.wilson_interval(successes, n)
        p = successes / n
        assert (lower <= p).all() and (p <= upper).all()
        assert (lower >= 0.0).all() and (upper <= 1.0).all()
    assert (stats.wilson_interval(n, n)[1] == 1.0).all()
    assert (stats.wilson_interval(np.zeros_like(n), n)[0] == 0.0).all()
