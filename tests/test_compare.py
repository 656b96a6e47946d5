"""`sweep compare`: two stores of one study, point by point (the README's convergence
advice: rerun at dt / 2 and with more walkers, and see what moves)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sweep.compare import compare_stores
from sweep.errors import CompareError
from tests.conftest import SMALL_SPEC, build_store, run_cli


def _store(tmp_path: Path, name: str, spec_text: str) -> Path:
    return build_store(spec_text, tmp_path / f"{name}.zarr", threads=2)


def test_refined_time_step_is_not_flagged(tmp_path: Path, small_store: Path) -> None:
    # Bridge monitoring makes the interval's first passage exact up to the timestamp,
    # so halving dt must not move any statistic beyond the Bonferroni bound (the two
    # stores' streams are independent: dt enters every task's seed).
    a = small_store
    b = _store(tmp_path, "b", SMALL_SPEC.replace("dt = 1e-3", "dt = 5e-4"))
    result = compare_stores(a, b)
    assert not result.flagged
    assert result.changed == {"dt": ("0.001", "0.0005")}
    assert {r.point_a for r in result.rows} == {0, 1}
    assert all(r.point_a == r.point_b for r in result.rows)
    done = run_cli("compare", a, b)
    assert done.returncode == 0, done.stderr
    assert "no statistic differs" in done.stdout


def test_coarse_endpoint_store_is_flagged(tmp_path: Path, small_store: Path) -> None:
    # Endpoint monitoring at a coarse step lets walkers slip out and back between
    # steps: the mean exit time is biased by about +0.58 sqrt(2 D dt) L / (2 D)
    # (shifted-wall estimate; see docs and the check's bias column), far beyond the
    # intervals of 3000 walkers, so the comparison must flag it and exit 1.
    a = small_store
    coarse = SMALL_SPEC.replace("dt = 1e-3", 'dt = 2e-2\nmonitoring = "endpoint"')
    c = _store(tmp_path, "c", coarse)
    result = compare_stores(a, c)
    flagged = {r.statistic for r in result.flagged}
    assert "mean first-passage time" in flagged
    done = run_cli("compare", a, c, "--json")
    assert done.returncode == 1, done.stderr
    payload = json.loads(done.stdout)
    assert payload["differ"] == len(result.flagged) > 0
    assert payload["compared"] == len(result.rows)


def test_more_walkers_with_one_seed_is_noted(tmp_path: Path, small_store: Path) -> None:
    a = small_store
    b = _store(tmp_path, "b", SMALL_SPEC.replace("walkers = 3000", "walkers = 6000"))
    result = compare_stores(a, b)
    assert result.changed == {"walkers": ("3000", "6000")}
    assert any("one seed" in note for note in result.notes)


def test_stores_of_other_studies_are_refused(tmp_path: Path, small_store: Path) -> None:
    a = small_store
    half_line = (
        SMALL_SPEC.replace("upper = [1.0]", 'upper = ["inf"]')
        .replace(
            'walls = { x_lower = "absorbing", x_upper = "absorbing" }',
            'walls = { x_lower = "absorbing" }',
        )
        .replace("bins = 8 }", "bins = 8, lower = [0.0], upper = [4.0] }")
    )
    b = _store(tmp_path, "b", half_line)
    with pytest.raises(CompareError, match="not stores of one study"):
        compare_stores(a, b)
    done = run_cli("compare", a, b)
    assert done.returncode == 2
    assert "not stores of one study" in done.stderr
    assert "Traceback" not in done.stderr
