"""The interval's engines (:mod:`sweep.analytic.interval_series`): image sums
against eigen-series where both converge (sheet sections C1-C5, H).
"""

from __future__ import annotations

import numpy as np
import pytest

from sweep.analytic.interval_series import _aa_eigen, _aa_image, _rr_eigen, _rr_image
from tests.analytic.sheet import (
    X0,
    D,
    L,
)
from tests.tolerances import RTOL_NUMERIC

IMAGE_KINDS = ["survival", "f0", "fL", "density"]


@pytest.mark.parametrize("kind", IMAGE_KINDS)
@pytest.mark.parametrize("drift", [0.0, 0.9, -1.3, 4.0], ids=lambda m: f"mu={m}")
@pytest.mark.parametrize("x0", [0.1, X0, 1.7], ids=lambda x: f"x0={x}")
def test_interval_aa_image_sum_agrees_with_eigen_series(
    kind: str, drift: float, x0: float
) -> None:
    # Sheet C1 [C1, C2, C6, C7] and C2: images vs eigen-series (Redner 2001 Ch. 2
    # [memory]; Carslaw & Jaeger Ch. III [memory]); drifted images [derived].
    tau = np.array([0.02, 0.05, 0.08, 0.15])
    t = tau * L**2 / D
    x = np.array([0.3, 0.9, 1.4, 1.9])
    image = _aa_image(kind, t, x0, L, D, drift, x)
    eigen = _aa_eigen(kind, t, x0, L, D, drift, x)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)


@pytest.mark.parametrize("drift", [0.0, 0.9, -1.3, -6.0], ids=lambda m: f"mu={m}")
@pytest.mark.parametrize("x0", [0.0, X0, 1.95], ids=lambda x: f"x0={x}")
def test_interval_rr_image_sum_agrees_with_eigen_series(
    drift: float, x0: float
) -> None:
    # Sheet C4 [C34] (images vs cosine series) and C5 [derived] (drifted eigen-series vs
    # its Poisson-summed image form [derived], whose m = 0 term is the Harrison kernel G2).
    tau = np.array([0.02, 0.05, 0.08, 0.15, 0.5])
    t = tau * L**2 / D
    x = np.array([0.0, 0.3, 0.9, 1.4, 2.0])
    image = _rr_image(t, x, x0, L, D, drift)
    eigen = _rr_eigen(t, x, x0, L, D, drift)
    np.testing.assert_allclose(image, eigen, rtol=RTOL_NUMERIC)
