"""Closed-form and series results for first-passage problems of Brownian walkers.

Pure numpy/scipy reference implementations used to check the simulators. One module per
family; every public name is re-exported here, so ``from sweep.analytic import X`` and
``sweep.analytic.X`` work for all of them:

* :mod:`~sweep.analytic.series`: helpers shared by the families (argument checks,
  truncation of eigen-series and image sums, ``SERIES_RTOL``, ``IMAGE_SWITCH``);
* :mod:`~sweep.analytic.free`: free motion (sheet section A);
* :mod:`~sweep.analytic.halfline`: the half-line absorbing at 0 (B);
* :mod:`~sweep.analytic.interval`: the interval's survival, exit densities and
  propagator (C), computed by :mod:`~sweep.analytic.interval_series`;
* :mod:`~sweep.analytic.interval_moments`: the interval's splitting probability and
  exit-time moments (C);
* :mod:`~sweep.analytic.box`: boxes by the product rule (D);
* :mod:`~sweep.analytic.ball`: the absorbing ball (E);
* :mod:`~sweep.analytic.concentric`: splitting between concentric spheres (J6);
* :mod:`~sweep.analytic.monitoring`: discrete monitoring and bridge crossings (F);
* :mod:`~sweep.analytic.reactive`: reactive walls and targets, reflecting obstacles,
  periodic boxes' mean-square displacement (J1-J5, A2);
* :mod:`sweep.exit_times`: the exit time of a ball from its centre and the spheres
  scheme's table (E2, J11), kept outside this package because ``plan`` needs it.

To add a closed form: put it in its family's module (or a new module for a new family),
cite its source in the docstring's Notes with the sheet's section and status marker,
export it here and in ``__all__``, and check it in ``tests/analytic/test_<family>.py``
against an independent computation.

Conventions (shared reference sheet, section 0)
------------------------------------------------
* Every Cartesian coordinate obeys ``dX = mu dt + sqrt(2 D) dW``, so each axis has variance
  ``2 D t``.  ``D`` (``diffusivity``) is in length**2 / time, ``mu`` (``drift``) in
  length / time, and ``mu > 0`` points towards ``+x``.
* "Survival" ``S(t) = P(T > t)``; "FPT density" ``f(t) = -dS/dt``; "propagator" or
  "density" is the density of *surviving* walkers, so ``integral p dx = S(t)``.
* Walls are ``"absorbing"`` (killed at first contact) or ``"reflecting"``.
* At ``t = 0`` survival is 1 and all densities are 0 (the initial delta function is not
  represented).  A walker that starts *on* an absorbing wall is killed at once: its survival
  is 0 for every ``t >= 0``.

Numerics
--------
Eigenfunction series are truncated once the neglected tail is below ``SERIES_RTOL`` (times a
safety factor of 1e-2) relative to the envelope of the slowest mode.  Where the dimensionless
time ``D t / L**2`` is below ``IMAGE_SWITCH`` (0.05, sheet section H) the method-of-images
sums are used instead; they are summed until the last pair of images changes the result by
less than ``SERIES_RTOL * 1e-2`` relative.

Citation markers follow the shared reference sheet (``docs/analytic-reference.md``):
[seen] = bibliographic data and key statement seen; [memory] = chapter / section / equation
number from memory, formula verified numerically; [derived] = derived (and verified) in the
sheet or in this module, no published source checked.
"""

from __future__ import annotations

from sweep.analytic.ball import (
    ball_exit_cos_mean,
    ball_harmonic_measure,
    ball_mean_exit_time,
    ball_survival,
)
from sweep.analytic.box import box_mean_exit_time, box_survival
from sweep.analytic.concentric import concentric_splitting
from sweep.analytic.free import free_covariance, free_density, free_mean, free_variance
from sweep.analytic.halfline import (
    halfline_fpt_density,
    halfline_hit_probability,
    halfline_mean_fpt,
    halfline_survival,
)
from sweep.analytic.interval import (
    interval_density,
    interval_exit_density,
    interval_fpt_density,
    interval_survival,
)
from sweep.analytic.interval_moments import (
    interval_conditional_mean_exit_time,
    interval_mean_exit_time,
    interval_second_moment,
    interval_splitting,
)
from sweep.analytic.monitoring import (
    BETA,
    bridge_crossing_probability,
    discrete_monitoring_shift,
)
from sweep.analytic.reactive import (
    ball_reactive_mean,
    centre_target_reactive_mean,
    free_msd,
    free_msd_variance,
    half_line_reactive_cdf,
    interval_reactive_mean,
    obstacle_ball_mean,
    sphere_capture_probability,
    sphere_reactive_cdf,
)
from sweep.analytic.series import IMAGE_SWITCH, SERIES_RTOL, FloatArray
from sweep.exit_times import (
    EXIT_TABLE_LOGIT,
    EXIT_TABLE_STEP,
    ExitTable,
    centre_exit_survival,
    centre_exit_table,
    hermite,
)

__all__ = [
    "BETA",
    "EXIT_TABLE_LOGIT",
    "EXIT_TABLE_STEP",
    "IMAGE_SWITCH",
    "SERIES_RTOL",
    "ExitTable",
    "FloatArray",
    "ball_exit_cos_mean",
    "ball_harmonic_measure",
    "ball_mean_exit_time",
    "ball_survival",
    "box_mean_exit_time",
    "box_survival",
    "bridge_crossing_probability",
    "centre_exit_survival",
    "centre_exit_table",
    "concentric_splitting",
    "discrete_monitoring_shift",
    "free_covariance",
    "free_density",
    "free_mean",
    "free_variance",
    "halfline_fpt_density",
    "halfline_hit_probability",
    "halfline_mean_fpt",
    "halfline_survival",
    "hermite",
    "interval_conditional_mean_exit_time",
    "interval_density",
    "interval_exit_density",
    "interval_fpt_density",
    "interval_mean_exit_time",
    "interval_second_moment",
    "interval_splitting",
    "interval_survival",
    "ball_reactive_mean",
    "centre_target_reactive_mean",
    "free_msd",
    "free_msd_variance",
    "half_line_reactive_cdf",
    "interval_reactive_mean",
    "obstacle_ball_mean",
    "sphere_capture_probability",
    "sphere_reactive_cdf",
]
