"""Precision targets: the definition key, the stopping rule, and its reproducibility.

The rule (sweep/precision.py): a point is judged only at its checkpoints (first
round, then doubling chunk counts), over exactly chunks 0..m-1, so its chunk count
does not depend on which tasks finished first. The end-to-end tests run one
definition with one thread, two threads, two worker processes, and killed and
resumed, and require the same chunks per point and the same bits.
"""

from __future__ import annotations

import math
import shutil
from pathlib import Path

import numpy as np
import pytest

import sweep
from sweep import precision
from sweep.errors import SpecError
from sweep.execute import RunOptions, run
from sweep.spec import parse_spec
from tests.conftest import (
    assert_stores_identical,
    build_store,
    kill_run_at,
    run_cli,
)

#: Pooled moments from chunk sums agree with a two-pass computation over all
#: walkers to rounding (relative), the sums being exactly rounded per chunk.
POOLED_RTOL = 1e-12

#: Two points of one interval [0, 1] with absorbing ends: started at the middle the
#: first-passage time's coefficient of variation is about 0.6 (so about 600 walkers
#: meet a 5 % relative half-width), started next to a wall about 2.5 (about 10^4:
#: more than the ceiling of 8000). Rounds: 2, 4, 8, 16, 32 chunks of 250.
TARGET_SPEC = """
[sweep]
name = "targeted"
seed = 11
walkers = 500
chunk = 250
precision = { statistic = "mean_first_passage_time", relative_halfwidth = 0.05, max_walkers = 8000 }

[motion]
dimension = 1
diffusivity = 0.5
start = [0.5]

[time]
dt = 1e-3
horizon = 3.0

[domain]
lower = [0.0]
upper = [1.0]
walls = { x_lower = "absorbing", x_upper = "absorbing" }

[record]
survival = { stop = 1.0, points = 11 }

[grid]
"motion.start" = [[0.5], [0.05]]
"""


def _spec(**precision_table: object) -> str:
    inner = ", ".join(
        f"{k} = {v!r}".replace("'", '"') for k, v in precision_table.items()
    )
    lines = TARGET_SPEC.splitlines()
    return "\n".join(
        f"precision = {{ {inner} }}" if line.startswith("precision =") else line
        for line in lines
    )


@pytest.mark.parametrize(
    ("table", "expect"),
    [
        (
            {"statistic": "median", "relative_halfwidth": 0.1, "max_walkers": 1000},
            "[sweep.precision.statistic] must be one of",
        ),
        (
            {
                "statistic": "mean_first_passage_time",
                "relative_halfwidth": 0.1,
                "max_walkers": 1000,
                "level": 0.9,
            },
            "[sweep.precision.level] is not a key of sweep.precision",
        ),
        (
            {
                "statistic": "mean_first_passage_time",
                "relative_halfwidth": 0.0,
                "max_walkers": 1000,
            },
            "[sweep.precision.relative_halfwidth] must be a finite number above 0",
        ),
        (
            {
                "statistic": "mean_first_passage_time",
                "relative_halfwidth": -0.1,
                "max_walkers": 1000,
            },
            "must be a finite number above 0",
        ),
        (
            {
                "statistic": "mean_first_passage_time",
                "absolute_halfwidth": 0.1,
                "max_walkers": 1000,
            },
            "[sweep.precision.absolute_halfwidth] does not apply to statistic",
        ),
        (
            {"statistic": "mean_first_passage_time", "relative_halfwidth": 0.1},
            "[sweep.precision.max_walkers] is missing",
        ),
        (
            {
                "statistic": "mean_first_passage_time",
                "relative_halfwidth": 0.1,
                "max_walkers": 100,
            },
            "[sweep.precision.max_walkers] must hold at least one chunk of 250",
        ),
        (
            {"statistic": "splitting", "absolute_halfwidth": 0.01, "max_walkers": 1000},
            "[sweep.precision.wall] must name the wall or target",
        ),
        (
            {
                "statistic": "splitting",
                "absolute_halfwidth": 0.01,
                "max_walkers": 1000,
                "wall": "y_upper",
            },
            "[sweep.precision.wall] names no absorbing wall or target of the domain; "
            "allowed: x_lower, x_upper",
        ),
        (
            {
                "statistic": "splitting",
                "absolute_halfwidth": 0.5,
                "max_walkers": 1000,
                "wall": "x_upper",
            },
            "[sweep.precision.absolute_halfwidth] must be a finite number between 0 "
            "and 0.5",
        ),
    ],
)
def test_bad_precision_is_refused_with_one_message(table: dict, expect: str) -> None:
    with pytest.raises(SpecError) as err:
        parse_spec(_spec(**table), source="t.toml")
    assert expect in str(err.value)
    assert str(err.value).startswith("t.toml: ")


def test_a_target_sizes_the_store_by_its_ceiling() -> None:
    targeted = parse_spec(TARGET_SPEC, source="t.toml")
    assert targeted.walkers == 8000 and targeted.n_chunks == 32
    assert targeted.precision is not None
    assert targeted.precision.first_walkers == 500
    # Without `walkers`, the first round has DEFAULT_FIRST_WALKERS (capped).
    bare = parse_spec(TARGET_SPEC.replace("walkers = 500\n", ""), source="t.toml")
    assert bare.precision is not None and bare.precision.first_walkers == 8000


def test_checkpoints_double_up_to_the_ceiling() -> None:
    assert precision.checkpoints(2, 32) == [2, 4, 8, 16, 32]
    assert precision.checkpoints(3, 20) == [3, 6, 12, 20]
    assert precision.checkpoints(5, 5) == [5]
    assert precision.checkpoints(9, 4) == [4]


def _markers(times: list[np.ndarray]) -> dict[int, dict]:
    return {
        c: {
            "walkers": t.size,
            "censored": int(np.isnan(t).sum()),
            "absorbed_by": [int(np.isfinite(t).sum())],
            "fpt_moments": precision.chunk_moments(t),
        }
        for c, t in enumerate(times)
    }


def test_decision_reads_only_a_prefix_of_the_chunks() -> None:
    rng = np.random.default_rng(3)
    chunks = [rng.exponential(1.0, 100) for _ in range(8)]
    target = precision.Precision("mean_first_passage_time", 0.15, 800, None, 200)
    done = _markers(chunks)
    decision = precision.decide(target, 0, 2, 8, done)
    assert decision.final
    # Chunks finished beyond the deciding checkpoint change nothing ...
    extra = _markers([*chunks[: decision.chunks], *[c * 50 for c in chunks]])
    assert precision.decide(target, 0, 2, 8, extra) == decision
    # ... and a missing chunk before it keeps the point undecided at that checkpoint.
    gap = {c: m for c, m in done.items() if c != 1}
    assert precision.decide(target, 0, 2, 8, gap) == precision.Decision(2, False, None)
    # Pooled moments equal a two-pass computation over all the prefix's walkers.
    pooled = np.concatenate(chunks[: decision.chunks])
    last = decision.last
    assert last is not None
    np.testing.assert_allclose(last.estimate, pooled.mean(), rtol=POOLED_RTOL)
    half = precision.Z * pooled.std(ddof=1) / math.sqrt(pooled.size) / pooled.mean()
    np.testing.assert_allclose(last.halfwidth, half, rtol=POOLED_RTOL)


def test_splitting_judgement_and_stats_share_the_wilson_interval_to_the_bit() -> None:
    """The splitting target's half-width and sweep.stats' Wilson bounds are the score
    interval written out below (Wilson 1927, JASA 22:209; centre (p + z^2/2n) /
    (1 + z^2/n), half-width z / (1 + z^2/n) sqrt(p(1-p)/n + z^2/4n^2)), bit for bit."""
    from sweep import stats

    z = precision.Z
    assert z == stats.z_value(precision.LEVEL)
    target = precision.Precision("splitting", 0.01, 10**9, "x_upper")
    for walkers in (1, 2, 5, 500, 4000, 123_457, 10**7):
        hits = np.unique([0, 1, walkers // 3, walkers // 2, walkers - 1, walkers])
        n = np.full(hits.shape, float(walkers))
        p = hits / n
        half = z / (1 + z * z / n) * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
        centre = (p + z * z / (2 * n)) / (1 + z * z / n)
        lower, upper = stats.wilson_interval(hits.astype(float), n)
        np.testing.assert_array_equal(
            lower, np.clip(np.minimum(centre - half, p), 0, 1)
        )
        np.testing.assert_array_equal(
            upper, np.clip(np.maximum(centre + half, p), 0, 1)
        )
        for k, h in zip(hits.tolist(), half.tolist(), strict=True):
            marker = {"walkers": walkers, "censored": 0, "absorbed_by": [0, k]}
            assert precision.estimate(target, 1, [marker]).halfwidth == h


def test_censored_walkers_keep_a_mean_target_unmet() -> None:
    times = [np.array([0.1, 0.2, np.nan, 0.3] * 50)]
    target = precision.Precision("mean_first_passage_time", 10.0, 200, None, 200)
    est = precision.estimate(target, 0, list(_markers(times).values()))
    assert est.censored == 50 and not est.met
    assert "censored (raise time.horizon)" in precision.describe_estimate(target, est)


def _chunks_per_point(store: Path) -> list[list[int]]:
    done = sweep.open(store)["done"].values
    return [np.flatnonzero(row).tolist() for row in done]


@pytest.fixture(scope="module")
def targeted(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """TARGET_SPEC run once, on one thread."""
    return build_store(TARGET_SPEC, tmp_path_factory.mktemp("one") / "one.zarr")


def test_each_point_stops_at_its_first_checkpoint_that_meets_the_target(
    targeted: Path,
) -> None:
    spec = parse_spec(TARGET_SPEC)
    assert spec.precision is not None
    chunks = _chunks_per_point(targeted)
    # Whole prefixes only: chunks 0..m-1.
    assert [c == list(range(len(c))) for c in chunks] == [True, True]
    middle, near_wall = (len(c) for c in chunks)
    assert near_wall == 32  # the ceiling: its target needs about 10^4 walkers
    assert middle < near_wall
    from sweep import store

    by_point = store.markers_by_point(targeted)
    for p, m in enumerate((middle, near_wall)):
        markers = [by_point[p][c] for c in range(m)]
        final = precision.estimate(spec.precision, 0, markers)
        assert final.met == (m < 32)
        if m > 2:  # the checkpoint before did not meet it
            before = precision.estimate(spec.precision, 0, markers[: m // 2])
            assert not before.met
    ds = sweep.open(targeted)
    assert ds.attrs["complete"] == 1
    assert ds["walkers_done"].values.tolist() == [middle * 250, 8000]
    status = run_cli("status", targeted)
    assert status.returncode == 0, status.stderr
    assert "(ceiling reached)" in status.stdout and "<= 5.00%" in status.stdout
    check = run_cli("check", targeted)
    assert check.returncode == 0 and "INCOMPLETE" not in check.stdout, check.stdout


def test_other_threads_and_processes_give_the_same_chunks_and_bits(
    targeted: Path, tmp_path: Path
) -> None:
    two = build_store(TARGET_SPEC, tmp_path / "two.zarr", threads=2)
    assert_stores_identical(targeted, two)
    spec = tmp_path / "targeted.toml"
    spec.write_text(TARGET_SPEC)
    procs = run_cli(
        "run", spec, "--store", tmp_path / "procs.zarr", "--processes", "2", "--quiet"
    )
    assert procs.returncode == 0, procs.stderr
    assert_stores_identical(targeted, tmp_path / "procs.zarr")
    assert _chunks_per_point(tmp_path / "procs.zarr") == _chunks_per_point(targeted)


def test_killed_and_resumed_targeted_run_gives_the_same_store(
    targeted: Path, tmp_path: Path
) -> None:
    spec = tmp_path / "targeted.toml"
    spec.write_text(TARGET_SPEC)
    store = tmp_path / "killed.zarr"
    # Killed before its third round (SWEEP_ROUND_PAUSE only makes it wait there) ...
    kill_run_at(
        spec,
        store,
        "run paused before round 3",
        "its third round",
        SWEEP_ROUND_PAUSE="3",
    )
    # ... after rounds of 2 and then 4 chunks per point: 8 tasks done.
    markers = store / "_tasks"
    assert len(list(markers.glob("p*-c*.json"))) == 8
    # A kill in the middle of round 2 leaves some of its tasks unfinished: so does
    # removing one marker (completion is read from markers only).
    (markers / "p1-c3.json").unlink()
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    assert summary.complete
    assert_stores_identical(targeted, store)


def test_censoring_is_reported_and_keeps_the_target_unmet(tmp_path: Path) -> None:
    short = (
        TARGET_SPEC.replace("horizon = 3.0", "horizon = 0.3")
        .replace("stop = 1.0", "stop = 0.3")
        .replace("max_walkers = 8000", "max_walkers = 1000")
    )
    store = build_store(short, tmp_path / "short.zarr")
    assert _chunks_per_point(store) == [list(range(4))] * 2
    status = run_cli("status", store)
    assert "raise time.horizon" in status.stdout, status.stdout
    assert "not met" in status.stdout


def test_splitting_target(tmp_path: Path) -> None:
    text = TARGET_SPEC.replace(
        'precision = { statistic = "mean_first_passage_time", relative_halfwidth = 0.05',
        'precision = { statistic = "splitting", wall = "x_upper", '
        "absolute_halfwidth = 0.02",
    )
    store = build_store(text, tmp_path / "split.zarr", threads=2)
    spec = parse_spec(text)
    assert spec.precision is not None
    from sweep import store as store_module

    by_point = store_module.markers_by_point(store)
    for p, chunks in enumerate(_chunks_per_point(store)):
        est = precision.estimate(spec.precision, 1, [by_point[p][c] for c in chunks])
        assert est.met or len(chunks) == 32
    shutil.rmtree(store)


def test_plan_estimates_the_walkers_each_point_needs(tmp_path: Path) -> None:
    spec = tmp_path / "split.toml"
    spec.write_text(
        TARGET_SPEC.replace(
            'precision = { statistic = "mean_first_passage_time", '
            "relative_halfwidth = 0.05",
            'precision = { statistic = "splitting", wall = "x_upper", '
            "absolute_halfwidth = 0.02",
        )
    )
    out = run_cli("plan", spec)
    assert out.returncode == 0, out.stderr
    # Closed form: from the middle P(x_upper) = 1/2 (x0 / L, the interval's splitting
    # probability; Redner, "A Guide to First-Passage Processes", 2001, ch. 2; the
    # chapter from memory),
    # and the normal approximation's N = z^2 p (1 - p) / h^2 (common practice).
    needed = precision.Z**2 * 0.25 / 0.02**2
    assert f"point 0: needs about {needed:,.0f} walkers (closed form)" in out.stdout
    assert "the run gives it 4,000" in out.stdout  # checkpoint 16 chunks of 250
    mean = tmp_path / "mean.toml"
    mean.write_text(TARGET_SPEC)
    out = run_cli("plan", mean)
    assert out.returncode == 0, out.stderr
    assert "walkers (pilot of 2000 walkers); the run gives it" in out.stdout


def test_a_targeted_store_grows_by_points(targeted: Path, tmp_path: Path) -> None:
    from tests.test_growth import assert_same_points

    store = tmp_path / "grown.zarr"
    shutil.copytree(targeted, store)
    more = TARGET_SPEC.replace("= [[0.5], [0.05]]", "= [[0.5], [0.3], [0.05]]")
    spec = tmp_path / "more.toml"
    spec.write_text(more)
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    assert summary.complete
    assert_same_points(store, build_store(more, tmp_path / "once.zarr", threads=2))
    # The target itself cannot change on a store.
    tighter = more.replace("relative_halfwidth = 0.05", "relative_halfwidth = 0.04")
    spec.write_text(tighter)
    with pytest.raises(sweep.errors.StoreMismatchError, match="sweep.precision"):
        run(spec, store, RunOptions(threads=1, progress=False))
