"""`sweep check`'s consistency rows for identity J7 (``sweep/check/twin.py``): a
target at the centre of a periodic box and of a reflecting box of the same sides has
one first-passage law (mirror symmetry; docs/analytic-reference.md, J7, derived
there), so a stored point of either kind is compared with a companion run of its
twin. Scenarios of our own (a square cell with a central receptor).
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import sweep
from sweep.check import check_store, twin
from sweep.plan import point_digest
from sweep.spec import parse_spec
from tests.conftest import build_store, run_cli
from tests.tolerances import RTOL_F64, Z_STAT

PERIODIC = '{ x_lower = "periodic", x_upper = "periodic", y_lower = "periodic", y_upper = "periodic" }'
REFLECTING = PERIODIC.replace("periodic", "reflecting")
FORCE = '[force]\npotential = "harmonic"\ncenter = [0.5, 0.5]\nstiffness = [4.0, 4.0]'

CELL = """
[sweep]
name = "receptor-cell"
seed = 7
walkers = 2000
chunk = 1000
[motion]
dimension = 2
diffusivity = 1.0
drift = {drift}
start = {start}
[time]
dt = 1e-3
horizon = 6.0
{scheme}
[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = {walls}
targets = [{{ center = {center}, radius = {radius}{reactivity} }}]
{obstacles}
{grid}
"""


def cell(
    walls: str = PERIODIC,
    start: str = '"uniform"',
    center: str = "[0.5, 0.5]",
    radius: float = 0.1,
    grid: str = "",
    **extra: str,
) -> str:
    """The square cell's definition; ``extra`` fills drift, scheme, reactivity,
    obstacles (each empty by default)."""
    return CELL.format(
        walls=walls,
        start=start,
        center=center,
        radius=radius,
        grid=grid,
        drift=extra.get("drift", "[0.0, 0.0]"),
        scheme=extra.get("scheme", ""),
        reactivity=extra.get("reactivity", ""),
        obstacles=extra.get("obstacles", ""),
    )


def point_of(text: str):  # type: ignore[no-untyped-def]
    return parse_spec(text, "cell.toml").points[0]


def test_twin_is_the_mirrored_definition() -> None:
    """The twin of a periodic cell is the reflecting cell's own point (same digest,
    so the same random streams as `sweep run` of that definition), and back."""
    periodic = point_of(cell(PERIODIC, start="[0.2, 0.3]"))
    reflecting = point_of(cell(REFLECTING, start="[0.2, 0.3]"))
    to_reflecting = twin.mirror_twin(periodic)
    to_periodic = twin.mirror_twin(reflecting)
    assert to_reflecting is not None and to_periodic is not None
    assert to_reflecting.domain == reflecting.domain
    assert to_periodic.domain == periodic.domain
    assert point_digest(to_reflecting) == point_digest(reflecting)
    assert point_digest(to_periodic) == point_digest(periodic)
    assert twin.twin_kind(to_reflecting) == "reflecting"
    assert twin.twin_kind(to_periodic) == "periodic"
    mixed = cell(PERIODIC.replace('y_lower = "periodic"', 'y_lower = "reflecting"'))
    mixed = mixed.replace('y_upper = "periodic"', 'y_upper = "reflecting"')
    mixed_twin = twin.mirror_twin(point_of(mixed))
    assert mixed_twin is not None and mixed_twin.domain.periodic == (False, True)
    assert twin.twin_kind(mixed_twin) == "mixed"
    reactive = point_of(cell(reactivity=", reactivity = 2.0"))
    assert twin.mirror_twin(reactive) is not None


@pytest.mark.parametrize(
    ("why", "text"),
    [
        ("target off the centre", cell(center="[0.4, 0.5]")),
        ("drift breaks the mirror symmetry", cell(drift="[0.3, 0.0]")),
        ("an absorbing face", cell(REFLECTING.replace('x_lower = "reflecting"', 'x_lower = "absorbing"'))),
        ("a reactive face", cell(REFLECTING.replace('x_lower = "reflecting"', "x_lower = { reactivity = 1.0 }"))),
        ("nothing reacts", cell(reactivity=", reactivity = 0.0")),
        ("an obstacle", cell(obstacles='obstacles = [{ center = [0.25, 0.25], radius = 0.05 }]')),
        ("spheres scheme", cell(REFLECTING, scheme='scheme = "spheres"')),
        ("target within 4 steps of a face", cell(REFLECTING, radius=0.45)),
        ("a force", cell(REFLECTING, obstacles=FORCE)),
    ],
)  # fmt: skip
def test_no_twin_where_the_identity_does_not_hold(why: str, text: str) -> None:
    assert twin.mirror_twin(point_of(text)) is None, why


def test_no_twin_with_two_targets_or_a_half_line() -> None:
    two = cell().replace(
        "radius = 0.1 }]", "radius = 0.1 }, { center = [0.25, 0.25], radius = 0.05 }]"
    )
    assert twin.mirror_twin(point_of(two)) is None
    point = point_of(cell(REFLECTING))
    open_box = dataclasses.replace(
        point, domain=dataclasses.replace(point.domain, upper=(1.0, math.inf))
    )
    assert twin.mirror_twin(open_box) is None


def test_twin_row_verdict_on_synthetic_numbers() -> None:
    """z divides the difference by the combined standard error of the two runs:
    0.2 / hypot(0.03, 0.04) = 4 passes, 0.3 / 0.05 = 6 fails (|z| <= 5)."""
    ok = twin.twin_row(0, "mean", 1.0, 0.03, 1.2, 0.04, "J7", "reflecting twin")
    assert ok.z == pytest.approx(-4.0) and ok.passed
    assert ok.stderr == 0.03 and ok.reference_stderr == 0.04
    bad = twin.twin_row(0, "mean", 1.3, 0.03, 1.0, 0.04, "J7", "reflecting twin")
    assert bad.z == pytest.approx(6.0) and not bad.passed
    from sweep.check import CheckReport

    report = CheckReport("s", (ok, bad), ())
    assert report.passed is False
    row = json.loads(report.to_json())["rows"][0]
    assert row["companion"] == "reflecting twin" and row["reference_stderr"] == 0.04


def test_companion_walkers_are_capped_by_steps() -> None:
    """10 000 walkers at most, fewer where they would take over 2e8 walker-steps
    (judged by the stored mean and censored fraction), at least 100, never more than
    the store holds."""
    point = point_of(cell())  # dt = 1e-3, horizon 6

    def mean(estimate: float, censored: float = 0.0) -> xr.Dataset:
        return xr.Dataset({"estimate": estimate, "censored": censored})

    assert twin.companion_walkers(point, 2000, mean(0.17)) == 2000
    assert twin.companion_walkers(point, 10**6, mean(0.17)) == twin.COMPANION_WALKERS
    # 20 s per walker = 2e4 steps: 2e8 / 2e4 = 1e4; 200 s: 1e3.
    slow = dataclasses.replace(
        point, timing=dataclasses.replace(point.timing, horizon=1000.0)
    )
    assert twin.companion_walkers(slow, 10**6, mean(200.0)) == 1000
    # Half censored at the horizon of 1000: (100 + 500) s = 6e5 steps -> 333.
    assert twin.companion_walkers(slow, 10**6, mean(200.0, 0.5)) == 333
    # No stored times: the horizon (1e6 steps) -> 200; everything slower: the floor.
    assert twin.companion_walkers(slow, 10**6, None) == 200
    assert twin.companion_walkers(slow, 10**6, mean(math.nan, 1.0)) == 200
    glacial = dataclasses.replace(
        slow, timing=dataclasses.replace(point.timing, horizon=1e5)
    )
    assert twin.companion_walkers(glacial, 10**6, None) == twin.MIN_COMPANION_WALKERS
    assert twin.companion_walkers(glacial, 50, None) == 50
    # A thousand points share 2e9 walker-steps: 2e6 each -> 100 walkers at 200 s; with
    # ten points the per-point cap (2e8) rules.
    assert twin.companion_walkers(slow, 10**6, mean(200.0), sharing=1000) == 100
    assert twin.companion_walkers(slow, 10**6, mean(200.0), sharing=10) == 1000


def test_periodic_store_passes_against_its_reflecting_twin(tmp_path: Path) -> None:
    """A periodic cell, uniform start, centred and off-centre targets of two radii:
    the centred points get survival and mean rows against a reflecting companion
    (|z| <= 5, J7), deterministic across two checks; the off-centre ones keep their
    reason and no row."""
    grid = (
        '[grid]\n"domain.targets.0.radius" = [0.1, 0.2]\n'
        '"domain.targets.0.center" = [[0.5, 0.5], [0.4, 0.5]]'
    )
    store = build_store(cell(grid=grid), tmp_path / "periodic.zarr", threads=2)
    result = run_cli("check", store, "--json")
    assert result.returncode == 0, result.stdout + result.stderr
    report = json.loads(result.stdout)
    rows = report["rows"]
    assert {r["point"] for r in rows} == {0, 2}
    for r in rows:
        # Two independent runs of one law (J7, mirror symmetry): z-test at 5 se.
        assert abs(r["z"]) <= Z_STAT, r
        assert r["statistic"].endswith("reflecting twin (J7)")
        assert "J7" in r["source"] and "not a closed form" in r["source"]
        assert r["companion"] == "reflecting twin: 2000 walkers, seed 7, chunks of 1000"
    assert sum(r["statistic"].startswith("mean first-passage time") for r in rows) == 2
    assert [u["point"] for u in report["unchecked"]] == [1, 3]
    assert all(
        u["reason"].startswith("periodic faces: no closed form")
        for u in report["unchecked"]
    )
    # A fixed seed: the companion, hence the whole report, is reproducible.
    assert check_store(store) == check_store(store)
    text = run_cli("check", store)
    assert "exact or twin ± 95% CI" in text.stdout
    assert "point 0: reflecting twin: 2000 walkers" in text.stdout


def test_reflecting_store_gets_the_periodic_twin_sweep_run_would_store(
    tmp_path: Path,
) -> None:
    """A reflecting cell from a point start is compared with a periodic companion
    that is bit for bit the periodic cell's own store (same seed, chunks, streams),
    and each store's twin row passes."""
    start = "[0.2, 0.3]"
    reflecting = build_store(cell(REFLECTING, start=start), tmp_path / "r.zarr")
    periodic = build_store(cell(PERIODIC, start=start), tmp_path / "p.zarr")
    for store, other, kind in (
        (reflecting, periodic, "periodic"),
        (periodic, reflecting, "reflecting"),
    ):
        rows = check_store(store).rows
        (mean,) = [r for r in rows if r.statistic.startswith("mean")]
        assert mean.statistic == f"mean first-passage time, {kind} twin (J7)"
        expected = sweep.stats.mean_first_passage_time(sweep.open(other))
        # The same walkers, reduced in another order (dask chunks vs one array).
        assert mean.exact == pytest.approx(float(expected["estimate"][0]), RTOL_F64)
        se = float(expected["stderr"][0])
        assert mean.reference_stderr == pytest.approx(se, RTOL_F64)
        assert all(abs(r.z) <= Z_STAT for r in rows), rows  # J7, mirror symmetry
    definition = parse_spec(cell(REFLECTING, start=start), "cell.toml")
    mirrored = twin.mirror_twin(definition.points[0])
    assert mirrored is not None
    ds = twin.companion_dataset(mirrored, definition, 2000, per_walker=True)
    stored = sweep.open(periodic)["first_passage_time"].values[0]
    np.testing.assert_array_equal(ds["first_passage_time"].values[0], stored)
