"""The compiled exactly rounded sums (kernels/sums.py: the general partials and the
superaccumulator for non-negative values, finished by sweep.precision) against their
reference, Python's ``math.fsum`` (exactly rounded, so they must agree to the last
bit)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from kernels.sums import SCALE_BITS, exact_sum, nonnegative_sum_buckets
from sweep.precision import chunk_moments, exactly_rounded_sum


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


# ------------------------------------------------ the superaccumulator (non-negative)

TINIEST = 5e-324  # 2**-1074, the least subnormal
LARGEST = np.finfo(np.float64).max
ULP_ONE = 2.0**-52  # the spacing of doubles just above 1


def _nonnegative_cases() -> dict[str, np.ndarray]:
    rng = np.random.default_rng(12)
    times = rng.exponential(size=100_000) * 3.0
    return {
        "empty": np.array([]),
        "one": np.array([0.1]),
        "zero": np.array([0.0]),
        "zeros and one": np.array([0.0, 0.0, 3.5, 0.0]),
        "times": times,
        "squared deviations": (times - times.mean()) ** 2,
        "uniform": rng.random(54_321),
        "huge dynamic range": 10.0 ** rng.uniform(-320, 300, 20_000),
        "every exponent": 2.0 ** np.arange(-1074, 1023, dtype=np.float64),
        "subnormals": rng.random(10_000) * 1e-310,
        "subnormals crossing into normals": np.full(3000, 2.0**-1022 / 1000),
        "least subnormal twice": np.array([TINIEST, TINIEST]),
        # A sum exactly halfway between two doubles rounds to the even one.
        "tie to even (down)": np.array([1.0, 2.0**-53]),
        "tie to even (up)": np.array([1.0 + ULP_ONE, 2.0**-53]),
        "just above a tie": np.array([1.0, 2.0**-53, TINIEST]),
        "tie split over many": np.concatenate([[1.0], np.full(1024, 2.0**-63)]),
        "tie below the subnormals' last bit": np.array([TINIEST, 2.0**-1022]),
        "a million equal values": np.full(1_000_000, 0.1),
        "full mantissas, one bucket": np.full(300_000, np.nextafter(2.0, 0.0)),
        "near the largest": np.full(3, LARGEST / 4),
        "largest": np.array([LARGEST]),
        "largest and tiny": np.array([LARGEST, TINIEST, 1.0]),
    }


@pytest.mark.parametrize("name", list(_nonnegative_cases()))
def test_superaccumulator_equals_math_fsum(name: str) -> None:
    """Reference: Python's math.fsum (exactly rounded), bit for bit, in any order."""
    values = _nonnegative_cases()[name]
    reference = math.fsum(values.tolist())
    for order in (values, values[::-1].copy()):
        _, ok = nonnegative_sum_buckets(order.view(np.int64))
        assert ok
        got = exactly_rounded_sum(order)
        assert got == reference  # exact: both exactly rounded
        assert math.copysign(1.0, got) == math.copysign(1.0, reference)


def test_superaccumulator_buckets_are_the_exact_sum() -> None:
    """The buckets are binary digits whose value is the exact rational sum
    (fractions.Fraction, from Python's standard library, as the reference)."""
    from fractions import Fraction

    values = np.concatenate(
        [np.random.default_rng(5).random(1000) * 1e10, [TINIEST, 2.0**-1022]]
    )
    buckets, ok = nonnegative_sum_buckets(values.view(np.int64))
    assert ok
    assert set(np.unique(buckets).tolist()) <= {0, 1}
    exact = sum(Fraction(int(b) << i, 1 << SCALE_BITS) for i, b in enumerate(buckets))
    assert exact == sum(Fraction(v) for v in values.tolist())


@pytest.mark.parametrize(
    "values",
    [
        np.array([1.0, -1.0]),
        np.array([-0.0]),
        np.array([1.0, np.inf]),
        np.array([np.nan, 1.0]),
    ],
    ids=["negative", "negative zero", "infinite", "nan"],
)
def test_superaccumulator_refuses_what_it_cannot_sum(values: np.ndarray) -> None:
    """Negatives, -0.0 and non-finite values go to the general sums instead."""
    assert not nonnegative_sum_buckets(values.view(np.int64))[1]
    if np.all(np.isfinite(values)):
        got = exactly_rounded_sum(values)
        reference = math.fsum(values.tolist())  # Python's math.fsum
        assert got == reference
        assert math.copysign(1.0, got) == math.copysign(1.0, reference)


def test_an_overflowing_nonnegative_sum_raises_as_math_fsum_does() -> None:
    big = np.array([LARGEST, LARGEST])
    with pytest.raises(OverflowError):
        math.fsum(big.tolist())
    with pytest.raises(OverflowError):
        exactly_rounded_sum(big)


def test_chunk_moments_of_real_tasks_are_those_of_math_fsum() -> None:
    """Task outputs of the small sweep (absorbed and censored walkers): the moments
    equal math.fsum's, which the compiled partials gave before too."""
    from sweep.plan import make_plan
    from sweep.simulate import simulate_task
    from sweep.spec import parse_spec
    from tests.conftest import SMALL_SPEC

    short = SMALL_SPEC.replace("horizon = 3.0", "horizon = 0.3").replace(
        "stop = 1.0", "stop = 0.3"
    )
    plan = make_plan(parse_spec(short, source="small"))
    for task in plan.tasks[:4]:
        t = simulate_task(task)[0].time
        finite = t[np.isfinite(t)]
        assert 0 < finite.size < t.size  # some walkers censored, some absorbed
        mean = math.fsum(finite.tolist()) / finite.size
        m2 = math.fsum(((finite - mean) ** 2).tolist())
        assert chunk_moments(t) == [finite.size, mean, m2]
        assert mean == exact_sum(finite) / finite.size
        assert m2 == exact_sum((finite - mean) ** 2)
