"""sweep.stats.validate: one check of level and selection for every statistic."""

from __future__ import annotations

import math
import pathlib
import re
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
import xarray as xr

import sweep
from sweep import stats
from sweep.errors import UsageError
from tests.stats.synthetic import aggregate_only, make_dataset
from tests.tolerances import RTOL_F64


def test_statistics_accept_one_point() -> None:
    # A selection without the point dimension gives that point's row of the sweep.
    rng = np.random.default_rng(22)
    ds = make_dataset(rng.exponential(size=(3, 1000)), 10.0, np.linspace(0, 2, 21))
    for func in (stats.fpt_moments, stats.survival_band, stats.fpt_quantiles):
        whole = func(ds).isel(point=2)
        single = func(ds.isel(point=2))
        xr.testing.assert_allclose(whole, single, rtol=RTOL_F64)


def test_statistics_reject_bad_arguments() -> None:
    rng = np.random.default_rng(23)
    ds = make_dataset(rng.exponential(size=(1, 100)), 2.0, [0.0], fpt_bins=10)
    with pytest.raises(ValueError, match="level must lie strictly between 0 and 1"):
        stats.survival_band(ds, level=95)
    with pytest.raises(ValueError, match="snapping to the stored fpt bins"):
        stats.fpt_density(aggregate_only(ds), bins=40)
    with pytest.raises(ValueError, match="probabilities in"):
        stats.fpt_quantiles(ds, q=1.5)
    with pytest.raises(ValueError, match="no first-passage data"):
        stats.fpt_moments(aggregate_only(ds).drop_vars("fpt_histogram"))


# ------------------------------------------------- one check for every statistic

#: Every public statistic that reads a Dataset, with the other arguments it needs on
#: the small store (conftest.SMALL_SPEC).
STATISTICS: dict[str, tuple[Callable[..., Any], dict[str, Any]]] = {
    "mean_first_passage_time": (stats.mean_first_passage_time, {}),
    "censored_fraction": (stats.censored_fraction, {}),
    "splitting_probability": (stats.splitting_probability, {}),
    "survival": (stats.survival, {}),
    "survival_band": (stats.survival_band, {}),
    "fpt_density": (stats.fpt_density, {"bins": 5}),
    "fpt_moments": (stats.fpt_moments, {}),
    "fpt_quantiles": (stats.fpt_quantiles, {"q": 0.5}),
    "restricted_mean": (stats.restricted_mean, {}),
    "tail_fit": (stats.tail_fit, {"s_max": 0.9, "min_count": 5}),
    "exit_position_histogram": (stats.exit_position_histogram, {"wall": "x_lower"}),
    "mean_square_displacement": (stats.mean_square_displacement, {}),
    "occupancy_density": (stats.occupancy_density, {}),
    "summary": (stats.summary, {}),
}
WITH_LEVEL = [n for n in STATISTICS if n != "censored_fraction"]
WITH_WALL = ["fpt_density", "exit_position_histogram"]
#: Not levels: on the edges, outside, not a number, a percentage, a string.
BAD_LEVELS = [0.0, 1.0, 1.5, -0.05, math.nan, 95, "0.95", True]
#: Functions of sweep.stats that take no Dataset (checked on their own below).
NO_DATASET = {"wilson_interval", "z_value", "zscore"}


def call(name: str, ds: Any, **kwargs: Any) -> Any:
    func, fixed = STATISTICS[name]
    return func(ds, **{**fixed, **kwargs})


def test_every_public_statistic_is_checked_here() -> None:
    public = {n for n in stats.__all__ if callable(getattr(stats, n))}
    assert public - NO_DATASET == set(STATISTICS)


@pytest.mark.parametrize("level", BAD_LEVELS, ids=repr)
@pytest.mark.parametrize("name", WITH_LEVEL)
def test_every_statistic_refuses_a_bad_level(
    small_store: pathlib.Path, name: str, level: Any
) -> None:
    """``survival(ds, level=1.5)`` once returned NaN bounds silently while
    ``survival_band`` raised: one message for all, before any data are read."""
    message = (
        f"sweep.stats.{name}: level must lie strictly between 0 and 1; got {level!r} "
        "(e.g. 0.95 for a 95% interval)."
    )
    with pytest.raises(ValueError, match=re.escape(message)):
        call(name, sweep.open(small_store), level=level)


@pytest.mark.parametrize("level", BAD_LEVELS, ids=repr)
def test_interval_helpers_refuse_a_bad_level(level: Any) -> None:
    for name, func in (
        ("z_value", lambda: stats.z_value(level)),
        ("wilson_interval", lambda: stats.wilson_interval(1.0, 2.0, level)),
    ):
        with pytest.raises(ValueError, match=re.escape(f"sweep.stats.{name}: level")):
            func()


@pytest.mark.parametrize("name", STATISTICS)
def test_every_statistic_refuses_one_variable_for_the_dataset(
    small_store: pathlib.Path, name: str
) -> None:
    ds = sweep.open(small_store)
    with pytest.raises(
        UsageError,
        match=re.escape(
            f"sweep.stats.{name} needs a store's whole Dataset, as sweep.open(path) "
            "returns it (or a selection such as ds.isel(point=0)); got a DataArray "
            "('first_passage_time')."
        ),
    ):
        call(name, ds["first_passage_time"])


@pytest.mark.parametrize("name", STATISTICS)
def test_every_statistic_refuses_a_selection_of_no_point(
    small_store: pathlib.Path, name: str
) -> None:
    empty = sweep.open(small_store).isel(point=[])
    with pytest.raises(
        ValueError, match=re.escape(f"sweep.stats.{name}: the selection holds no point")
    ):
        call(name, empty)


@pytest.mark.parametrize("name", STATISTICS)
def test_every_statistic_names_the_variables_it_lacks(
    small_store: pathlib.Path, name: str
) -> None:
    ds = sweep.open(small_store)
    bare = ds.drop_vars(list(ds.data_vars))
    with pytest.raises(
        ValueError, match=re.escape(f"sweep.stats.{name}: the Dataset holds no ")
    ) as raised:
        call(name, bare)
    assert "in the sweep definition" in str(raised.value)


@pytest.mark.parametrize("wall", ["z_upper", 2, -1, 0.5])
@pytest.mark.parametrize("name", WITH_WALL)
def test_every_statistic_refuses_an_unknown_wall(
    small_store: pathlib.Path, name: str, wall: Any
) -> None:
    what = f"named {wall!r}" if isinstance(wall, str) else repr(wall)
    with pytest.raises(
        ValueError,
        match=re.escape(f"sweep.stats.{name}: no wall or target {what}; expected "),
    ) as raised:
        call(name, sweep.open(small_store), wall=wall)
    assert "'x_lower', 'x_upper'" in str(raised.value)


@pytest.mark.filterwarnings("ignore::sweep.errors.SweepWarning")
@pytest.mark.parametrize("name", STATISTICS)
def test_every_statistic_takes_one_point(small_store: pathlib.Path, name: str) -> None:
    """``ds.isel(point=p)`` gives the row p of the whole sweep's result (splitting
    probabilities and occupancy densities once refused a point without its
    dimension)."""
    ds = sweep.open(small_store)
    whole = call(name, ds).isel(point=1)
    single = call(name, ds.isel(point=1))
    assert "point" not in single.dims
    if isinstance(whole, xr.DataArray):
        whole, single = whole.to_dataset(name=name), single.to_dataset(name=name)
    xr.testing.assert_allclose(single, whole, rtol=RTOL_F64)


def test_no_statistic_names_a_variable_like_a_parameter(
    small_store: pathlib.Path,
) -> None:
    """Results carry the point coordinates, so a statistic's variable named like a
    swept parameter's coordinate (``force.upper`` is ``upper``) breaks the merge
    unless plan.RESERVED_NAMES makes that parameter ``force_upper``."""
    from sweep.plan import RESERVED_NAMES, _leaf_name
    from sweep.spec import SECTIONS, SWEEPABLE_SECTIONS

    leaves = {_leaf_name(f"{s}.{k}") for s in SWEEPABLE_SECTIONS for k in SECTIONS[s]}
    ds = sweep.open(small_store)
    for name in STATISTICS:
        result = call(name, ds)
        if isinstance(result, xr.DataArray):
            result = result.to_dataset(name=result.name or name)
        names = set(result.variables) - set(ds.variables)
        assert names & leaves <= RESERVED_NAMES, name
