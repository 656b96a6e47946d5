"""Headline numbers per point in one small in-memory Dataset (what ``sweep summary``,
``sweep report`` and ``sweep compare`` show): walkers, censored fraction, mean
first-passage time, splitting probabilities and the survival at the last grid time,
each with its interval.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from sweep.stats.core import LEVEL, finished_walkers, result_dataset
from sweep.stats.passage import mean_first_passage_time, splitting_probability
from sweep.stats.validate import WALKERS, statistic


@statistic(WALKERS)
def summary(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Headline numbers per point, in one small in-memory Dataset.

    ``mean_fpt`` is :func:`mean_first_passage_time` (over absorbed walkers: the
    conditional mean when ``censored`` > 0, no warning issued here), ``splitting``
    is :func:`splitting_probability`, ``survival_end`` the survival fraction at the
    last grid time. Variables a store cannot provide are left out.

    Parameters
    ----------
    ds : xarray.Dataset
        A store's Dataset (or selection).
    level : float
        Confidence level of the ``*_lower`` / ``*_upper`` intervals.

    Returns
    -------
    xarray.Dataset
        dims (point,) and (point, wall): ``walkers`` (int64), ``censored``,
        ``mean_fpt``, ``mean_fpt_censored`` (bool: some walkers censored, so
        ``mean_fpt`` is over absorbed walkers only, a lower bound of the full mean),
        ``mean_fpt_stderr``, ``mean_fpt_lower``, ``mean_fpt_upper``, ``splitting``
        (fraction of all finished walkers absorbed at the wall, unconditional on
        absorption: censored walkers count at no wall),
        ``splitting_stderr``, ``splitting_lower``, ``splitting_upper``,
        ``survival_end``. Select one point with ``.isel(point=p)``.

    Raises
    ------
    sweep.errors.UsageError
        ``ds`` is not a Dataset (for example one variable of it); see
        :mod:`sweep.stats.validate` for every check.
    """
    walkers = np.asarray(ds["walkers_done"].values, dtype=np.int64).reshape(-1)
    out = result_dataset(ds, ("point",), {"walkers": walkers})
    if "first_passage_time" in ds or "fpt_histogram" in ds:
        mean = mean_first_passage_time(ds, level)
        censored = np.asarray(mean["censored"].values, np.float64)
        out["censored"] = ("point", censored)
        # The CLI's `*`: a mean over absorbed walkers only, a lower bound of the
        # unconditional mean. False where nothing is finished (the mean is NaN).
        out["mean_fpt_censored"] = ("point", censored > 0)
        out["mean_fpt_censored"].attrs["description"] = (
            "True where some walkers were censored: mean_fpt is then over absorbed "
            "walkers only, a lower bound of the full mean first-passage time"
        )
        for key, name in (
            ("estimate", "mean_fpt"),
            ("stderr", "mean_fpt_stderr"),
            ("lower", "mean_fpt_lower"),
            ("upper", "mean_fpt_upper"),
        ):
            out[name] = ("point", np.asarray(mean[key].values, np.float64))
        if "absorbing_wall" in ds or "fpt_histogram" in ds:
            split = splitting_probability(ds, level).transpose("point", "wall")
            out = out.assign_coords(wall=list(ds.attrs["wall_names"]))
            for key, name in (
                ("estimate", "splitting"),
                ("stderr", "splitting_stderr"),
                ("lower", "splitting_lower"),
                ("upper", "splitting_upper"),
            ):
                out[name] = (("point", "wall"), np.asarray(split[key].values))
    if "survival_count" in ds and ds.sizes.get("time", 0):
        count = ds["survival_count"].transpose("point", "time").values[:, -1]
        with np.errstate(divide="ignore", invalid="ignore"):
            n = finished_walkers(ds)
            out["survival_end"] = ("point", count / np.where(n > 0, n, np.nan))
        out.attrs["survival_end_time"] = float(ds["time"].values[-1])
    out.attrs["level"] = level
    return out
