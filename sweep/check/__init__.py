"""``sweep check``: every stored point against the analytic results that exist for it.

For each point whose geometry has a closed form (intervals, half-lines, boxes as products
of intervals, absorbing balls), the simulated statistic with its standard error is
compared with the exact value (survival, mean first-passage time, splitting probability,
and for balls the mean cosine of the exit angle): z = (simulated - exact) / stderr, and
the check passes when |z| <= Z_PASS. Points without an analytic counterpart are listed
as such.

One module per job; every public name is re-exported here (``from sweep.check import X``):

* :mod:`~sweep.check.exact`: which closed form applies to a point, its exact values and
  the endpoint-monitoring shift;
* :mod:`~sweep.check.comparisons`: the comparisons of a store (:func:`check_store`,
  :func:`check_dataset`), one row per statistic;
* :mod:`~sweep.check.twin`: consistency rows without a closed form: a centred target
  in a periodic or reflecting box against a companion run of its mirror twin
  (identity J7; the one place the check simulates, through ``sweep.simulate``);
* :mod:`~sweep.check.verdict`: rows, the report, its verdict and JSON;
* :mod:`~sweep.check.table`: the text table and verdict line;
* :mod:`~sweep.check.labels`: parameter names, headers, cells and point labels that
  the tables and figures of other commands share.

To check a new closed form: say in :func:`unsupported` (or a predicate like
:func:`concentric`) which points it covers, compute its exact value in ``exact``, and add
a ``_..._rows`` function to ``comparisons`` naming the source.
"""

from __future__ import annotations

from sweep.check.comparisons import (
    SURVIVAL_RANGE,
    SURVIVAL_TIMES,
    check_dataset,
    check_store,
    exit_cosines,
)
from sweep.check.exact import (
    concentric,
    exact_mean,
    exact_survival,
    shifted,
    unsupported,
)
from sweep.check.labels import (
    describe,
    parameter_header,
    parameters,
    point_labels,
    show_value,
)
from sweep.check.table import format_table, text_table
from sweep.check.twin import COMPANION_WALKERS, mirror_twin
from sweep.check.verdict import Z_PASS, CheckReport, CheckRow

__all__ = [
    "COMPANION_WALKERS",
    "SURVIVAL_RANGE",
    "SURVIVAL_TIMES",
    "Z_PASS",
    "CheckReport",
    "CheckRow",
    "check_dataset",
    "check_store",
    "concentric",
    "describe",
    "exact_mean",
    "exact_survival",
    "exit_cosines",
    "format_table",
    "mirror_twin",
    "parameter_header",
    "parameters",
    "point_labels",
    "show_value",
    "shifted",
    "text_table",
    "unsupported",
]
