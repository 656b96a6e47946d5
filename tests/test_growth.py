"""Growing a finished store: more walkers, more grid values, more zip rows.

"Bit-identical point by point" (docs/store-format.md, "Growing a store"): a grown
store and a store made at once from the final definition hold the same points, maybe
at other indices (a grown store appends the points it gained). Matched by their
parameter coordinates, every array with a ``point`` dimension holds the same bits
for each point; the arrays without one are equal as a whole; only ``point`` (the
index itself) differs.
"""

from __future__ import annotations

import json
import shutil
import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
import zarr

import sweep
from sweep.errors import StoreError, StoreMismatchError
from sweep.execute import RunOptions, run
from tests.conftest import SMALL_SPEC, build_store, kill_run_at, run_cli

REPO = Path(__file__).resolve().parent.parent

#: SMALL_SPEC grown: 4000 walkers (8 tasks of 500 instead of 6) and a third
#: diffusivity listed between the two old ones, so the definition's product order
#: differs from the grown store's (old points first).
GROWN_SPEC = SMALL_SPEC.replace("walkers = 3000", "walkers = 4000").replace(
    '"motion.diffusivity" = [0.5, 1.0]', '"motion.diffusivity" = [0.5, 0.75, 1.0]'
)


def _arrays(path: Path) -> tuple[dict[str, np.ndarray], dict[str, list[str]]]:
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Object at _", category=UserWarning)
        group = zarr.open_group(str(path), mode="r")
        arrays = {name: np.asarray(a[...]) for name, a in group.arrays()}
        dims = {
            name: list(a.metadata.dimension_names or ()) for name, a in group.arrays()
        }
    return arrays, dims


def _point_keys(path: Path, arrays: dict[str, np.ndarray]) -> list[str]:
    attrs = json.loads((path / "zarr.json").read_text())["attributes"]
    names = attrs["brownian_sweep"]["parameter_coordinates"]
    n = len(arrays["point"])
    return [json.dumps([arrays[c][p].tolist() for c in names]) for p in range(n)]


def assert_same_points(a: Path, b: Path) -> None:
    """Stores ``a`` and ``b`` hold bit-identical points, matched by parameters."""
    left, dims = _arrays(a)
    right, _ = _arrays(b)
    assert sorted(left) == sorted(right)
    keys_a, keys_b = _point_keys(a, left), _point_keys(b, right)
    assert sorted(keys_a) == sorted(keys_b)
    assert len(set(keys_a)) == len(keys_a)
    to_b = [keys_b.index(k) for k in keys_a]
    for name, values in left.items():
        if name == "point":
            continue
        other = right[name]
        if dims[name][:1] == ["point"]:
            other = other[to_b]
        np.testing.assert_array_equal(values, other, err_msg=name, strict=True)


def _store_attrs(path: Path) -> dict:
    return json.loads((path / "zarr.json").read_text())["attributes"]["brownian_sweep"]


@pytest.fixture(scope="module")
def at_once(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The store made at once from GROWN_SPEC."""
    return build_store(GROWN_SPEC, tmp_path_factory.mktemp("once") / "once.zarr")


def _grown_copy(small_store: Path, tmp_path: Path) -> tuple[Path, Path]:
    store = tmp_path / "s.zarr"
    shutil.copytree(small_store, store)
    spec = tmp_path / "grown.toml"
    spec.write_text(GROWN_SPEC)
    return store, spec


def test_grown_store_equals_store_made_at_once(
    small_store: Path, at_once: Path, tmp_path: Path
) -> None:
    store, spec = _grown_copy(small_store, tmp_path)
    before = sorted((store / "_tasks").iterdir())
    stamps = {m.name: m.stat().st_mtime_ns for m in before}
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    # 2 old points x 2 new chunks + 1 new point x 8 chunks; the 12 old tasks untouched.
    assert (summary.already_done, summary.completed) == (12, 12)
    assert {m.name: m.stat().st_mtime_ns for m in before} == stamps
    assert_same_points(store, at_once)
    attrs = _store_attrs(store)
    assert attrs["point_order"] == [0, 2, 1]
    assert attrs["format"] == 3
    (record,) = attrs["growth"]
    assert record["points"] == [2, 3] and record["walkers"] == [3000, 4000]
    assert record["from_spec_hash"] != record["to_spec_hash"] == attrs["spec_hash"]
    # A rerun of the final definition has nothing left to do.
    again = run(spec, store, RunOptions(threads=1, progress=False))
    assert (again.already_done, again.completed) == (24, 0)
    # Readers present the points in the definition's order, as the store made at
    # once does: the opened datasets are identical but for where they were read.
    grown, once = sweep.open(store), sweep.open(at_once)
    for ds in (grown, once):
        for name in ("store", "created"):
            ds.attrs.pop(name)
    xr.testing.assert_identical(grown, once)
    assert grown["diffusivity"].values.tolist() == [0.5, 0.75, 1.0]
    assert grown["walkers_done"].values.tolist() == [4000] * 3
    stored = sweep.store.load_sweep(store)
    assert [p.motion.diffusivity for p in stored.points] == [0.5, 0.75, 1.0]


def test_readers_handle_a_grown_store(
    small_store: Path, at_once: Path, tmp_path: Path
) -> None:
    store, spec = _grown_copy(small_store, tmp_path)
    run(spec, store, RunOptions(threads=1, progress=False))
    verify = run_cli("verify", store)
    assert verify.returncode == 0, verify.stderr
    assert "24/24 finished tasks" in verify.stdout
    status = run_cli("status", store)
    assert status.returncode == 0, status.stderr
    rows = [line.split() for line in status.stdout.splitlines()[2:5]]
    assert [(r[0], r[1], r[2]) for r in rows] == [
        ("0", "0.5", "8/8"),
        ("1", "0.75", "8/8"),
        ("2", "1", "8/8"),
    ]
    check = run_cli("check", store)
    assert check.returncode == 0, check.stdout + check.stderr
    compare = run_cli("compare", store, at_once)
    assert compare.returncode == 0, compare.stdout + compare.stderr
    summary = run_cli("summary", store)
    assert summary.returncode == 0, summary.stderr
    out = tmp_path / "grown.h5"
    export = run_cli("export", store, out)
    assert export.returncode == 0, export.stderr


ZIP_SPEC = SMALL_SPEC.replace(
    '[grid]\n"motion.diffusivity" = [0.5, 1.0]',
    '[[zip]]\n"motion.diffusivity" = [0.5, 1.0]\n"motion.start" = [[0.3], [0.6]]',
)


def test_zip_rows_grow_a_store(tmp_path: Path) -> None:
    store = build_store(ZIP_SPEC, tmp_path / "zip.zarr")
    grown = ZIP_SPEC.replace("[0.5, 1.0]", "[0.5, 1.0, 0.7]").replace(
        "[[0.3], [0.6]]", "[[0.3], [0.6], [0.2]]"
    )
    spec = tmp_path / "grown.toml"
    spec.write_text(grown)
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    assert (summary.already_done, summary.completed) == (12, 6)
    # Appended rows keep the definition's order: no point_order needed.
    assert "point_order" not in _store_attrs(store)
    assert_same_points(store, build_store(grown, tmp_path / "once.zarr"))


@pytest.mark.parametrize(
    ("edit", "expect"),
    [
        (("dt = 1e-3", "dt = 2e-3"), "time.dt: stored 0.001, now 0.002"),
        (("horizon = 3.0", "horizon = 2.0"), "time.horizon: stored 3.0, now 2.0"),
        (("chunk = 500", "chunk = 1000"), "sweep.chunk: stored 500, now 1000"),
        (("bins = 8", "bins = 16"), "record.occupancy_bins: stored 8, now 16"),
        (
            ("walkers = 3000", "walkers = 2500"),
            "sweep.walkers (fewer walkers): stored 3000, now 2500",
        ),
        (
            ("[0.5, 1.0]", "[0.5]"),
            "points removed (1; their values of motion.diffusivity: [1.0])",
        ),
        (("seed = 7", "seed = 9"), "sweep.seed: stored 7, now 9"),
    ],
)
def test_changes_that_do_not_only_add_work_are_refused(
    small_store: Path, tmp_path: Path, edit: tuple[str, str], expect: str
) -> None:
    store = tmp_path / "s.zarr"
    shutil.copytree(small_store, store)
    before = {p: p.read_bytes() for p in store.rglob("*") if p.is_file()}
    spec = tmp_path / "other.toml"
    # Grown as well (a new grid value), so a refusal is not for lack of work.
    spec.write_text(
        SMALL_SPEC.replace(*edit).replace("= [0.5, 1.0]", "= [0.5, 1.0, 2.0]")
        if "[0.5]" not in edit[1]
        else SMALL_SPEC.replace(*edit)
    )
    with pytest.raises(StoreMismatchError) as err:
        run(spec, store, RunOptions(threads=1, progress=False))
    message = str(err.value)
    assert expect in message, message
    assert "store path for the new definition" in message
    after = {p: p.read_bytes() for p in store.rglob("*") if p.is_file()}
    assert before == after


def test_partial_last_chunk_cannot_be_extended(tmp_path: Path) -> None:
    store = build_store(
        SMALL_SPEC.replace("walkers = 3000", "walkers = 2800"), tmp_path / "p.zarr"
    )
    spec = tmp_path / "more.toml"
    spec.write_text(SMALL_SPEC.replace("walkers = 3000", "walkers = 4000"))
    with pytest.raises(StoreMismatchError, match="not a whole chunk of 500"):
        run(spec, store, RunOptions(threads=1, progress=False))


def _growth_killed_at(step: str, store: Path, spec: Path) -> None:
    """Start growing ``store`` to ``spec`` in a process, SIGKILL it at ``step``."""
    kill_run_at(
        spec,
        store,
        f"growth paused at step {step}",
        f"step {step}",
        SWEEP_GROWTH_PAUSE=step,
    )


@pytest.mark.parametrize("step", ["built", "committed", "installing", "sealed"])
def test_growth_killed_at_any_step_is_finished_by_the_next_run(
    small_store: Path, at_once: Path, tmp_path: Path, step: str
) -> None:
    store, spec = _grown_copy(small_store, tmp_path)
    _growth_killed_at(step, store, spec)
    if step == "built":
        # Not committed: the old store, intact and readable as it was.
        verify = run_cli("verify", store)
        assert verify.returncode == 0, verify.stderr
        assert "12/12 finished tasks" in verify.stdout
        assert sweep.open(store).sizes["point"] == 2
        assert list(tmp_path.glob(".s.zarr.growing-*"))  # left for the next run
    else:
        # Committed: readers refuse the half-installed store and say what to do.
        with pytest.raises(StoreError, match="rerun `sweep run` with the new"):
            sweep.open(store)
        status = run_cli("status", store)
        assert status.returncode == 2 and "_growth.json exists" in status.stderr
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    assert summary.complete and summary.already_done == 12
    assert not list(tmp_path.glob(".s.zarr.growing-*"))
    assert not (store / "_growth.json").exists()
    assert len(_store_attrs(store)["growth"]) == 1
    verify = run_cli("verify", store)
    assert verify.returncode == 0, verify.stderr
    assert_same_points(store, at_once)


def test_grown_quickstart_equals_quickstart_made_at_once(tmp_path: Path) -> None:
    """The issue's "done when": the quickstart grown to 4x the walkers and one more
    grid value equals, point by point, the store made at once."""
    text = (REPO / "sweeps" / "quickstart.toml").read_text()
    # Fewer walkers than the shipped file (the test suite's time budget), the
    # growth itself as the issue states it.
    base = text.replace("walkers = 40_000", "walkers = 4_000").replace(
        "chunk = 10_000", "chunk = 1_000"
    )
    final = base.replace("walkers = 4_000", "walkers = 16_000").replace(
        '"motion.diffusivity" = [0.25, 0.5, 1.0]',
        '"motion.diffusivity" = [0.25, 0.5, 1.0, 2.0]',
    )
    assert final != base and "16_000" in final and "2.0]" in final
    store = build_store(base, tmp_path / "quick.zarr", threads=2)
    spec = tmp_path / "final.toml"
    spec.write_text(final)
    summary = run(spec, store, RunOptions(threads=2, progress=False))
    assert (summary.already_done, summary.completed) == (12, 52)
    assert_same_points(store, build_store(final, tmp_path / "once.zarr", threads=2))


def test_sweep_command_grows_and_says_so(small_store: Path, tmp_path: Path) -> None:
    store, spec = _grown_copy(small_store, tmp_path)
    done = run_cli("run", spec, "--store", store, "--threads", "1", "--quiet")
    assert done.returncode == 0, done.stderr
    assert "grown (1 point(s) added (2 → 3); walkers per point 3,000 → 4,000)" in (
        done.stderr
    )
