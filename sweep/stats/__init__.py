"""Statistics of stored ensembles, each with its standard error and confidence interval.

Functions take the lazy Dataset of :func:`sweep.open` (or a selection of it, one point
included) and return xarray objects. Every result is a Dataset with ``estimate``,
``stderr``, ``lower`` and ``upper`` (a two-sided interval at ``level``) and ``n``
(the sample size behind it). Every function checks its arguments the same way before
reading any data (:mod:`sweep.stats.validate`): ``level`` strictly between 0 and 1
(``ValueError``), a Dataset rather than one of its variables
(:class:`~sweep.errors.UsageError`), at least one point, the variables it reads and
the ``wall`` it is asked about (``ValueError``). Stores are read out of core, one
chunk at a time where a statistic cannot be a lazy reduction
(:mod:`sweep.stats.absorbed`); this package does not import dask.

Modules, one job each:

- :mod:`~sweep.stats.core`: intervals (normal, Wilson), z-scores, result layout;
- :mod:`~sweep.stats.validate`: the one check of level and selection;
- :mod:`~sweep.stats.absorbed`: first-passage times of either store layout, read
  chunk by chunk;
- :mod:`~sweep.stats.passage`: :func:`mean_first_passage_time`,
  :func:`censored_fraction`, :func:`splitting_probability`, :func:`fpt_density`,
  :func:`fpt_moments`, :func:`fpt_quantiles`;
- :mod:`~sweep.stats.survival`: :func:`survival` (pointwise Wilson),
  :func:`survival_band` (simultaneous DKW band), :func:`restricted_mean`,
  :func:`tail_fit`;
- :mod:`~sweep.stats.spatial`: :func:`exit_position_histogram`,
  :func:`occupancy_density`, :func:`mean_square_displacement`;
- :mod:`~sweep.stats.summary`: :func:`summary` (headline numbers per point).

To add a statistic: write it in the module of its kind, decorate it with
:func:`sweep.stats.validate.statistic` naming the variables it reads, re-export it
here and add it to the parametrized checks of ``tests/stats/test_validate.py``.
"""

from __future__ import annotations

from sweep.stats.core import (
    DEFAULT_BINS,
    LEVEL,
    wilson_interval,
    z_value,
    zscore,
)
from sweep.stats.passage import (
    censored_fraction,
    fpt_density,
    fpt_moments,
    fpt_quantiles,
    mean_first_passage_time,
    splitting_probability,
)
from sweep.stats.spatial import (
    exit_position_histogram,
    mean_square_displacement,
    occupancy_density,
)
from sweep.stats.summary import summary
from sweep.stats.survival import (
    TAIL_MIN_COUNT,
    TAIL_S_MAX,
    restricted_mean,
    survival,
    survival_band,
    tail_fit,
)

__all__ = [
    "DEFAULT_BINS",
    "LEVEL",
    "TAIL_MIN_COUNT",
    "TAIL_S_MAX",
    "censored_fraction",
    "exit_position_histogram",
    "fpt_density",
    "fpt_moments",
    "fpt_quantiles",
    "mean_first_passage_time",
    "mean_square_displacement",
    "occupancy_density",
    "restricted_mean",
    "splitting_probability",
    "summary",
    "survival",
    "survival_band",
    "tail_fit",
    "wilson_interval",
    "z_value",
    "zscore",
]
