"""Parameter set P of the analytic reference sheet and the independent computations
the tests of ``sweep.analytic`` share (quadrature, scipy.stats laws).

Every check in ``tests/analytic`` names its source beside it: the published result as
cited in the shared reference sheet (``docs/analytic-reference.md``, section ids such as
C2), keeping the sheet's citation status ([seen] / [memory] / [derived]); the independent
computation (``scipy.stats``, ``scipy.integrate.quad`` / ``quad_vec`` / ``solve_bvp``,
image sums against eigen-series); or "check value from shared reference sheet" for the
values the sheet tabulates for its parameter set P (D = 0.8, L = 2, x0 = 0.5, t = 0.3,
v = 0.6, R = 1.5, r0 = 0.6).
"""

from __future__ import annotations

from collections.abc import Callable

from scipy import integrate, stats

from tests.tolerances import RTOL_NUMERIC

# Parameter set P of the reference sheet.
D = 0.8
L = 2.0
X0 = 0.5
T = 0.3
V = 0.6
R = 1.5
R0 = 0.6

AA = ("absorbing", "absorbing")
AR = ("absorbing", "reflecting")
RA = ("reflecting", "absorbing")
RR = ("reflecting", "reflecting")

#: Relative accuracy requested from scipy.integrate.quad: two orders of magnitude below
#: RTOL_NUMERIC so that the quadrature error does not use up the comparison tolerance.
QUAD_RTOL = RTOL_NUMERIC * 1e-2

#: Relative residual tolerance handed to scipy.integrate.solve_bvp, for the same reason.
BVP_TOL = RTOL_NUMERIC * 1e-2


def quad(f: Callable[[float], float], a: float, b: float, **kwargs: object) -> float:
    """``scipy.integrate.quad`` with a purely relative tolerance."""
    kwargs.setdefault("limit", 200)
    return integrate.quad(f, a, b, epsabs=0.0, epsrel=QUAD_RTOL, **kwargs)[0]


def levy(x0: float) -> stats.rv_continuous:
    """Driftless first-passage law on the half-line: Levy(scale = x0^2 / (2D)) (B1)."""
    return stats.levy(loc=0.0, scale=x0**2 / (2.0 * D))


def inverse_gaussian(x0: float, v: float) -> stats.rv_continuous:
    """First-passage law with drift v toward the wall: IG(x0/v, x0^2/(2D)) (B2 [B10])."""
    shape = x0**2 / (2.0 * D)
    return stats.invgauss(mu=(x0 / v) / shape, scale=shape)


#: The mixed box of sheet section D (check values S(0.25) and E[T]).
MIXED = {
    "x0": [0.35, 0.3],
    "lower": [0.0, 0.0],
    "upper": [1.0, 0.7],
    "walls": [AA, AR],
    "diffusivity": D,
}
