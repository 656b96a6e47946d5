"""Tests of ``sweep.spec.magnitudes``: numbers whose squares or products would leave
double precision are refused.
"""

from __future__ import annotations

import re

import pytest

from sweep.errors import SpecError
from tests.spec.bases import LINE
from tests.spec.edit import parse, spec


def test_number_largest_float_integer_refused_by_the_magnitude_limit() -> None:
    # 2**1023 converts to a float, but its square would not: the limit is named.
    text = spec(LINE, motion__diffusivity=2**1023)
    with pytest.raises(
        SpecError, match=re.escape("[motion.diffusivity] must lie within +-1e+100")
    ):
        parse(text)
