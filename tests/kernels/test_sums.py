"""The compiled exactly rounded sum (kernels/sums.py) against its reference, Python's
``math.fsum`` (exactly rounded, so the two must agree to the last bit)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from kernels.sums import exact_sum
from sweep.precision import chunk_moments


def _cases() -> dict[str, np.ndarray]:
    rng = np.random.default_rng(11)
    wide = rng.standard_normal(5000) * 10.0 ** rng.integers(-300, 300, 5000)
    return {
        "empty": np.array([]),
        "one": np.array([0.1]),
        "times": rng.exponential(size=100_000),
        "mixed signs": rng.standard_normal(20_000),
        "cancelling": np.array([1e100, 1.0, -1e100, 1e-100, -1.0, 3.0]),
        "wide exponents": wide,
        "half-even ties": np.array([1.0, 2.0**-53, 2.0**-106]),
        "ties the other way": np.array([1.0, 2.0**-53, -(2.0**-106)]),
        "tiny": rng.random(1000) * 1e-310,
        "repeated tenth": np.full(10_001, 0.1),
    }


@pytest.mark.parametrize("name", list(_cases()))
def test_exact_sum_equals_math_fsum(name: str) -> None:
    values = _cases()[name]
    assert exact_sum(values) == math.fsum(
        values.tolist()
    )  # exact: both exactly rounded
    assert exact_sum(values[::-1].copy()) == math.fsum(values.tolist())


def test_overflowing_partials_give_nan_and_chunk_moments_falls_back() -> None:
    """Beyond the doubles' range the compiled sum says NaN, and chunk_moments hands
    the values to math.fsum, which behaves as it always did (it raises)."""
    big = np.array([1.7e308, 1.7e308, -1.7e308])
    assert math.isnan(exact_sum(big))
    with pytest.raises(OverflowError):
        math.fsum(big.tolist())
    with pytest.raises(OverflowError):
        chunk_moments(big)


def test_chunk_moments_unchanged() -> None:
    """The markers' moments are those of math.fsum, as stored before (fsum written
    out here as the reference)."""
    t = np.random.default_rng(3).exponential(size=50_000)
    t[::7] = np.nan
    finite = t[np.isfinite(t)]
    mean = math.fsum(finite.tolist()) / finite.size
    m2 = math.fsum(((finite - mean) ** 2).tolist())
    assert chunk_moments(t) == [finite.size, mean, m2]
