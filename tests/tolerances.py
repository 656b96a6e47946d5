"""Named tolerances for the test suite; no bare numbers in assertions."""

#: Monte-Carlo estimate vs exact value: |estimate - exact| <= Z_STAT * standard error.
#: Two-sided false-failure rate per check about 5.7e-7 (normal tail at 5 sigma).
Z_STAT = 5.0

#: Same inputs, equivalent but differently ordered float64 arithmetic.
RTOL_F64 = 1e-12

#: Closed form vs an independent numerical computation (quadrature, series truncation).
RTOL_NUMERIC = 1e-8

#: Distribution-shape tests (Kolmogorov-Smirnov, chi-square) reject below this p-value.
P_MIN = 1e-4

#: Observed convergence order must lie within this distance of the theoretical order.
ORDER_TOL = 0.3
